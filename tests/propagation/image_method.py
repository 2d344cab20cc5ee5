"""The image method in an isovelocity layer (test helper, not shipped).

A point source at depth zs in a layer of constant speed between a flat surface (depth 0) and a flat
seabed (depth D) is replaced by its images at depths 2nD + zs and 2nD - zs (n an integer); each
image's path is a straight line of length L = sqrt(r^2 + (z - z_n)^2) with the same grazing angle
at every bounce, theta = atan(|z - z_n| / r), and an amplitude prod(R_surface) prod(R_bottom) / L
relative to 1 m from the source. Bounce counts: image 2nD + zs has |n| surface and |n| seabed
bounces; 2nD - zs has |n| + 1 surface and |n| seabed bounces for n <= 0, n - 1 and n for n >= 1.
With R_surface = -1 and a rigid or pressure-release seabed the sum is exact; with a plane-wave
seabed coefficient it is the ray (geometric) approximation of the field.

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), ch. 2 (the Lloyd mirror and the ideal waveguide by images; from memory).
C. S. Clay and H. Medwin, Acoustical Oceanography (Wiley, 1977), ch. 2 (image sources; from memory).
"""

from __future__ import annotations

import numpy as np


def image_terms(ranges_m, depths_m, source_depth_m, water_depth_m, n_images, bottom=lambda th: 1.0,
                surface=-1.0):
    """Image amplitudes (relative to 1 m) and path lengths, each shape (R, Z, images)."""
    r = np.atleast_1d(np.asarray(ranges_m, dtype=float))[:, None, None]
    z = np.atleast_1d(np.asarray(depths_m, dtype=float))[None, :, None]
    n = np.arange(-n_images, n_images + 1)
    D, zs = float(water_depth_m), float(source_depth_m)
    z_img = np.concatenate([2 * n * D + zs, 2 * n * D - zs])
    n_s = np.concatenate([np.abs(n), np.where(n <= 0, np.abs(n) + 1, n - 1)])
    n_b = np.concatenate([np.abs(n), np.where(n <= 0, np.abs(n), n)])
    L = np.hypot(r, z - z_img)
    theta = np.arctan2(np.abs(z - z_img), r)
    amp = surface ** n_s * np.asarray(bottom(theta), dtype=complex) ** n_b / L
    return amp, L


def image_pressure(ranges_m, depths_m, source_depth_m, water_depth_m, k, n_images, **kw):
    """Complex pressure re 1 m, exp(+j omega t) convention: sum A_n exp(-j k L_n), shape (R, Z)."""
    amp, L = image_terms(ranges_m, depths_m, source_depth_m, water_depth_m, n_images, **kw)
    return np.sum(amp * np.exp(-1j * k * L), axis=-1)


def image_incoherent_tl_db(ranges_m, depths_m, source_depth_m, water_depth_m, n_images, **kw):
    """Incoherent TL, dB re 1 m: -10 log10 sum |A_n|^2, shape (R, Z)."""
    amp, _ = image_terms(ranges_m, depths_m, source_depth_m, water_depth_m, n_images, **kw)
    return -10.0 * np.log10(np.sum(np.abs(amp) ** 2, axis=-1))
