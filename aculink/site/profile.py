"""The water column's sound-speed profile c(z), smooth enough for a ray tracer.

A profile is tabulated on depth nodes and interpolated by the shape-preserving piecewise
cubic Hermite interpolant (:class:`scipy.interpolate.PchipInterpolator`; Fritsch and Carlson
1980, SIAM J. Numer. Anal. 17(2), 238-246). c and dc/dz are continuous, so ray travel times do
not pick up the first-order error a linear interpolation leaves at every kink (about 1 ms at
10 km against about 1 us for a smooth profile, measured on these machines). Unlike a C2
interpolating spline it never overshoots between sparse CTD nodes, which would invent sound
channels and caustics that are not in the data; d2c/dz2 is piecewise linear with jumps at the
nodes, which only the dynamic-ray (spreading) equations see. Collinear nodes give an exactly
linear profile; a single speed is isovelocity.

The coefficients are stored in the plain arrays ``knots`` and ``coef`` that the numba kernels
in :mod:`aculink.site._profile_kernels` read.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.interpolate import PchipInterpolator

from aculink.errors import AculinkError
from aculink.site import _profile_kernels as _k

__all__ = ["SoundSpeedProfile"]


@dataclass(frozen=True, eq=False)
class SoundSpeedProfile:
    """Sound speed against depth, with optional temperature and salinity on the same nodes.

    Parameters
    ----------
    depth_m : array_like
        Node depths, m, strictly increasing, the first at or above the surface (0 m).
    speed_mps : array_like
        Sound speed at the nodes, m/s.
    temperature_c, salinity_psu : array_like, optional
        In-situ temperature (deg C, ITS-90) and practical salinity at the nodes, when known; the
        absorption along a ray uses them. Missing values fall back to 10 deg C and 35.
    source : str
        How the speeds were obtained ("table", "mackenzie", "unesco", "teos10", "munk", ...).
    """

    depth_m: np.ndarray
    speed_mps: np.ndarray
    temperature_c: np.ndarray | None = None
    salinity_psu: np.ndarray | None = None
    source: str = "table"
    knots: np.ndarray = field(init=False, repr=False)
    coef: np.ndarray = field(init=False, repr=False)

    def __post_init__(self):
        z = np.atleast_1d(np.asarray(self.depth_m, dtype=float))
        c = np.atleast_1d(np.asarray(self.speed_mps, dtype=float))
        if z.shape != c.shape:
            raise AculinkError(f"sound_speed_mps has {c.size} values but depth_m has {z.size}: they must match")
        if not (np.all(np.isfinite(z)) and np.all(np.isfinite(c))):
            raise AculinkError("profile depth_m and sound_speed_mps must be finite numbers (found NaN or inf)")
        if np.any(np.diff(z) <= 0):
            raise AculinkError("profile depth_m must be strictly increasing")
        if np.any((c < 1300.0) | (c > 1800.0)):
            bad = c[(c < 1300.0) | (c > 1800.0)][0]
            raise AculinkError(f"sound_speed_mps = {bad:g} m/s: allowed range is [1300, 1800] m/s")
        if z.size == 1:
            z = np.array([z[0], z[0] + 1.0])
            c = np.array([c[0], c[0]])
        object.__setattr__(self, "depth_m", z)
        object.__setattr__(self, "speed_mps", c)
        for name in ("temperature_c", "salinity_psu"):
            v = getattr(self, name)
            if v is not None:
                v = np.broadcast_to(np.asarray(v, dtype=float), z.shape).copy()
                object.__setattr__(self, name, v)
        if z.size == 2:
            slope = (c[1] - c[0]) / (z[1] - z[0])
            coef = np.array([[c[0], slope, 0.0, 0.0]])
        else:
            spline = PchipInterpolator(z, c, extrapolate=True)
            # scipy stores the highest power first; the kernels want a0..a3.
            coef = np.ascontiguousarray(spline.c[::-1].T)
        object.__setattr__(self, "knots", np.ascontiguousarray(z))
        object.__setattr__(self, "coef", coef)

    @property
    def max_depth_m(self) -> float:
        """Deepest tabulated depth, m."""
        return float(self.depth_m[-1])

    def evaluate(self, depth_m):
        """Return ``(c, dc/dz, d2c/dz2)`` at the given depths (m/s, 1/s, 1/(m s))."""
        z = np.atleast_1d(np.asarray(depth_m, dtype=float)).ravel()
        c, dc, d2c = _k.evaluate_many(z, self.knots, self.coef)
        shape = np.shape(depth_m)
        return c.reshape(shape), dc.reshape(shape), d2c.reshape(shape)

    def speed(self, depth_m):
        """Sound speed at the given depths, m/s."""
        return self.evaluate(depth_m)[0]

    def temperature_at(self, depth_m):
        """Temperature at the given depths (deg C); 10 deg C where the profile has none."""
        if self.temperature_c is None:
            return np.full(np.shape(depth_m), 10.0)
        return np.interp(depth_m, self.depth_m, self.temperature_c)

    def salinity_at(self, depth_m):
        """Practical salinity at the given depths; 35 where the profile has none."""
        if self.salinity_psu is None:
            return np.full(np.shape(depth_m), 35.0)
        return np.interp(depth_m, self.depth_m, self.salinity_psu)
