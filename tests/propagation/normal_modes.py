"""A normal-mode reference for range-independent waveguides (test helper, not shipped).

The depth equation of a layer of constant density rho over a flat seabed at depth D,

    d^2 psi/dz^2 + (omega^2 / c(z)^2 - k_r^2) psi = 0,    psi(0) = 0 (pressure-release surface),

is discretised by second-order central differences on a uniform grid z_j = j h (Jensen et al. 2011,
sect. 5.7.1), which gives a symmetric tridiagonal eigenproblem for k_r^2
(eigenvalues by :func:`scipy.linalg.eigvalsh_tridiagonal`, eigenvectors by inverse iteration
with :func:`scipy.linalg.solve_banded`). The seabed condition is imposed with a ghost point and
the last row halved, so the matrix stays symmetric and the eigenvectors are orthonormal in the
trapezoid rule:

* ``"rigid"``: psi'(D) = 0;
* ``"soft"``: psi(D) = 0 (pressure release);
* :class:`FluidBottom` (c2, rho2), a homogeneous fluid half-space: psi'(D) / psi(D) = -(rho / rho2)
  gamma with gamma = sqrt(k_r^2 - omega^2 / c2^2) (trapped modes only, k_r > omega / c2). The
  condition depends on k_r only through the last diagonal entry of the matrix, a rank-one change of
  the gamma = 0 problem, so each mode is the root of a scalar secular equation between two
  eigenvalues of the gamma = 0 matrix (one full eigendecomposition, then bisection for all modes
  at once). The continuous spectrum (leaky energy beyond the critical angle) is left out, which is
  only right at ranges of several water depths and more.

The O(h^2) error of k_r^2 is removed by Richardson extrapolation from h and h/2 (Jensen et al. 2011,
sect. 5.7.3). Modes are normalised so that int psi^2 / rho dz = 1 (with the half-space tail
psi(D)^2 / (2 gamma rho2)). Volume attenuation alpha(z) (Np/m) enters by first-order perturbation
theory, k_m -> k_m + i (omega / k_m) int alpha psi_m^2 / (c rho) dz (Jensen et al. 2011, ch. 5,
from memory; it follows from k^2 = (omega/c)^2 (1 + i alpha c / omega)^2 to first order).

The field of a unit point source (free field exp(i k R) / (4 pi R), Jensen et al.'s exp(-i omega t)
convention) is

    p(r, z) = i / (4 rho) sum_m psi_m(zs) psi_m(z) H0^(1)(k_m r)
            ~ i exp(-i pi/4) / (rho sqrt(8 pi r)) sum_m psi_m(zs) psi_m(z) exp(i k_m r) / sqrt(k_m)

(Jensen et al. 2011, eqs. 5.13-5.14, from memory), so TL = -20 log10(4 pi |p|) dB re 1 m; the
incoherent TL drops the cross terms: -10 log10((pi / rho)^2 sum_m |psi_m(zs) psi_m(z) H0^(1)(k_m r)|^2).
The 4 pi is checked in ``test_normal_modes.py`` against the image sum in an isovelocity channel.

References
----------
F. B. Jensen, W. A. Kuperman, M. B. Porter and H. Schmidt, Computational Ocean Acoustics, 2nd ed.
(Springer, 2011), ch. 5 (normal modes: the depth equation, finite differences, Richardson
extrapolation, the modal field of a point source, perturbation theory for attenuation).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import CubicSpline, PchipInterpolator
from scipy.linalg import eigvalsh_tridiagonal, solve_banded
from scipy.special import hankel1

#: Grid points per shortest wavelength (on the finer of the two Richardson grids).
POINTS_PER_WAVELENGTH = 40


@dataclass(frozen=True)
class FluidBottom:
    """A homogeneous, lossless fluid half-space below the water: speed (m/s) and density (kg/m^3)."""

    speed_mps: float
    density_kgm3: float


@dataclass(frozen=True)
class ModeSet:
    """Modes of one waveguide at one frequency.

    ``k_r`` (M,) horizontal wavenumbers, rad/m (complex when attenuation is given, Im > 0 decays in
    exp(-i omega t)); ``z`` (N+1,) grid depths from 0 to D, m; ``psi`` (M, N+1) mode shapes with
    int psi^2 / rho dz = 1; ``density_kgm3`` the water density.
    """

    k_r: np.ndarray
    z: np.ndarray
    psi: np.ndarray
    density_kgm3: float

    def shapes(self, depths_m):
        """Mode shapes at ``depths_m`` (cubic spline through the grid values), shape (M, len(depths))."""
        d = np.atleast_1d(np.asarray(depths_m, dtype=float))
        return CubicSpline(self.z, self.psi, axis=1)(d)


def _speed(depths_m, speeds_mps):
    z = np.asarray(depths_m, dtype=float)
    c = np.asarray(speeds_mps, dtype=float)
    if z.size == 1:
        return lambda x: np.full(np.shape(x), float(c[0]))
    return PchipInterpolator(z, c, extrapolate=True)


def _matrix(k2, h, bottom):
    """Diagonal and off-diagonal of h^2 (d^2/dz^2 + k^2), symmetrised, gamma-free part."""
    if bottom == "soft":
        d = h * h * k2[1:-1] - 2.0
        e = np.ones(d.size - 1)
    else:
        d = h * h * k2[1:] - 2.0
        e = np.ones(d.size - 1)
        e[-1] = math.sqrt(2.0)  # the halved last row, symmetrised by psi_N = sqrt(2) u_N
    return d, e


def _log_det_ratio(mu, lead, full):
    """sign and log |[(T0 - mu)^-1]_NN| = prod(lead - mu) / prod(full - mu), for a vector of mu."""
    a = lead[:, None] - mu[None, :]
    b = full[:, None] - mu[None, :]
    sign = (-1.0) ** (np.sum(a < 0, axis=0) + np.sum(b < 0, axis=0))
    return sign, np.sum(np.log(np.abs(a)), axis=0) - np.sum(np.log(np.abs(b)), axis=0)


def _resolvent_vectors(d, e, mu, rhs):
    """Columns (T - mu_m)^-1 rhs_m for a symmetric tridiagonal T, normalised (inverse iteration)."""
    out = np.empty((d.size, mu.size))
    ab = np.zeros((3, d.size))
    ab[0, 1:] = e
    ab[2, :-1] = e
    for m, x in enumerate(mu):
        ab[1] = d - x
        out[:, m] = solve_banded((1, 1), ab, rhs[:, m])
    return out / np.linalg.norm(out, axis=0)


def _solve_grid(k2, h, bottom, omega, rho):
    """Eigenvalues k_r^2 (descending) and eigenvectors (u-variables, unit norm) on one grid."""
    d, e = _matrix(k2, h, bottom)
    n = d.size
    if not isinstance(bottom, FluidBottom):
        mu = np.sort(eigvalsh_tridiagonal(d, e, select="v", select_range=(0.0, np.inf)))[::-1]
        # two steps of inverse iteration with a shift just off each eigenvalue
        shift = mu * (1.0 - 1e-11) - 1e-13
        v = _resolvent_vectors(d, e, shift, np.ones((n, mu.size)))
        v = _resolvent_vectors(d, e, shift, v)
        return mu / (h * h), v
    # The half-space condition lowers the last diagonal entry by s(mu) = 2 h (rho / rho2) gamma(mu), a
    # rank-one change of the gamma = 0 matrix T0: mu is an eigenvalue of T0 - s e e^T exactly where the
    # secular function 1 - s(mu) [(T0 - mu)^-1]_NN vanishes (Golub 1973, SIAM Rev. 15, 318-334), with
    # [(T0 - mu)^-1]_NN = det(leading N-1 block - mu) / det(T0 - mu) from the two sets of eigenvalues.
    # One root lies between each pair of eigenvalues lam_{m+1} < mu < lam_m of T0 (the secular
    # function runs from +inf to -inf there), found for all modes at once by bisection.
    mu_floor = (h * omega / bottom.speed_mps) ** 2
    beta = rho / bottom.density_kgm3
    full = np.sort(eigvalsh_tridiagonal(d, e))
    lead = eigvalsh_tridiagonal(d[:-1], e[:-1])
    top = np.flatnonzero(full > mu_floor)[::-1]
    if top.size == 0:
        return np.zeros(0), np.zeros((n, 0))
    hi = full[top]
    lo = np.maximum(np.where(top > 0, full[np.maximum(top - 1, 0)], -np.inf), mu_floor)

    def secular_positive(mu):
        s = 2.0 * h * beta * np.sqrt(np.maximum(mu - mu_floor, 0.0)) / h
        sign, log_r = _log_det_ratio(mu, lead, full)
        return 1.0 - s * sign * np.exp(log_r) > 0.0

    for _ in range(200):
        mid = 0.5 * (lo + hi)
        pos = secular_positive(mid)
        lo = np.where(pos, mid, lo)
        hi = np.where(pos, hi, mid)
        if np.all(hi - lo <= 4.0 * np.finfo(float).eps * np.abs(hi)):
            break
    mu = 0.5 * (lo + hi)
    rhs = np.zeros((n, mu.size))
    rhs[-1] = 1.0
    return mu / (h * h), _resolvent_vectors(d, e, mu, rhs)  # the eigenvector is (T0 - mu)^-1 e_N


def modes(depths_m, speeds_mps, water_depth_m, freq_hz, *, bottom="rigid", density_kgm3=1000.0,
          attenuation_np_per_m=None, points_per_wavelength=POINTS_PER_WAVELENGTH):
    """Propagating (trapped) modes of a range-independent waveguide.

    Parameters
    ----------
    depths_m, speeds_mps : array_like
        Sound-speed profile nodes, interpolated by PCHIP (as aculink's profiles are).
    water_depth_m : float
        Depth D of the flat seabed, m.
    freq_hz : float
        Frequency, Hz.
    bottom : {"rigid", "soft"} or FluidBottom
        Seabed boundary condition.
    density_kgm3 : float
        Water density, kg/m^3.
    attenuation_np_per_m : callable, optional
        ``alpha(z) -> Np/m`` volume attenuation of the water (first-order perturbation).
    points_per_wavelength : int
        Grid resolution of the finer Richardson grid.

    Returns
    -------
    ModeSet

    References
    ----------
    Jensen et al. (2011), Computational Ocean Acoustics, ch. 5.
    """
    c_of = _speed(depths_m, speeds_mps)
    D = float(water_depth_m)
    omega = 2.0 * math.pi * float(freq_hz)
    zz = np.linspace(0.0, D, 4001)
    c_min = float(np.min(c_of(zz)))
    n_fine = 2 * int(math.ceil(0.5 * points_per_wavelength * D * freq_hz / c_min))
    results = []
    for n in (n_fine // 2, n_fine):
        z = np.linspace(0.0, D, n + 1)
        k2 = (omega / c_of(z)) ** 2
        results.append((z, *_solve_grid(k2, D / n, bottom, omega, density_kgm3)))
    (z1, w1, _), (z, w2, v2) = results
    m = min(w1.size, w2.size)
    kr2 = (4.0 * w2[:m] - w1[:m]) / 3.0
    keep = kr2 > 0.0
    kr2, v = kr2[keep], v2[:, :m][:, keep]
    h = D / n_fine
    rho = density_kgm3
    psi = np.zeros((kr2.size, z.size))
    if bottom == "soft":
        psi[:, 1:-1] = v.T
    else:
        psi[:, 1:] = v.T
        psi[:, -1] *= math.sqrt(2.0)
    # trapezoid: h * |u|^2 = h; add the half-space tail psi(D)^2 / (2 gamma rho2)
    norm = h * np.sum(v * v, axis=0) / rho
    if isinstance(bottom, FluidBottom):
        gamma = np.sqrt(np.maximum(w2[:m][keep] - (omega / bottom.speed_mps) ** 2, 1e-30))
        norm = norm + psi[:, -1] ** 2 / (2.0 * gamma * bottom.density_kgm3)
    psi /= np.sqrt(norm)[:, None]
    k_r = np.sqrt(kr2).astype(complex)
    if attenuation_np_per_m is not None:
        alpha = np.asarray(attenuation_np_per_m(z), dtype=float) * np.ones(z.size)
        wts = np.full(z.size, h)
        wts[[0, -1]] *= 0.5
        integral = (psi ** 2) @ (wts * alpha / (c_of(z) * rho))
        k_r = k_r + 1j * omega / k_r.real * integral
    return ModeSet(k_r=k_r, z=z, psi=psi, density_kgm3=rho)


def _terms(mode_set, ranges_m, depths_m, source_depth_m):
    r = np.atleast_1d(np.asarray(ranges_m, dtype=float))
    zr = np.atleast_1d(np.asarray(depths_m, dtype=float))
    ps = mode_set.shapes([source_depth_m])[:, 0]
    pr = mode_set.shapes(zr)
    hank = hankel1(0, mode_set.k_r[:, None] * r[None, :])  # (M, R)
    return ps[:, None, None] * pr[:, None, :] * hank[:, :, None]  # (M, R, Z)


def pressure(mode_set, ranges_m, depths_m, source_depth_m):
    """Complex pressure of a unit point source, exp(-i omega t) convention, shape (R, Z)."""
    return 0.25j / mode_set.density_kgm3 * np.sum(_terms(mode_set, ranges_m, depths_m, source_depth_m), axis=0)


def tl_coherent_db(mode_set, ranges_m, depths_m, source_depth_m):
    """Coherent TL, dB re 1 m, shape (R, Z): -20 log10(4 pi |p|)."""
    p = pressure(mode_set, ranges_m, depths_m, source_depth_m)
    return -20.0 * np.log10(4.0 * math.pi * np.abs(p))


def tl_incoherent_db(mode_set, ranges_m, depths_m, source_depth_m):
    """Incoherent (mode-intensity) TL, dB re 1 m, shape (R, Z)."""
    t = _terms(mode_set, ranges_m, depths_m, source_depth_m)
    s = np.sum(np.abs(t) ** 2, axis=0)
    return -10.0 * np.log10((math.pi / mode_set.density_kgm3) ** 2 * s)
