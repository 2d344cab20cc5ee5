"""The eigenray solver's steps one by one (candidates, prune, refine, merge), on synthetic fans."""

from __future__ import annotations

import numpy as np
import pytest

from aculink.propagation import _kernels as _k
from aculink.propagation import _kernels_eigen as _ke
from aculink.propagation import eigenrays as er


def _fold_fan(n=41, zc=30.0, curv=4.0e5, theta_c=0.1, dtheta=2.0e-4):
    """A one-range fan through a fold caustic: z = zc + curv (theta - theta_c)^2 / 2, the caustic
    count stepping from 0 to 1 at theta_c (rays, 1 range) and the arrays the cluster kernel reads."""
    th = theta_c + dtheta * (np.arange(n) - (n - 1) / 2 + 0.5)
    u = th - theta_c
    z = zc + 0.5 * curv * u ** 2
    dzdt = curv * u
    ones = np.ones_like(z)
    arrays = dict(z=z, t=1.0 + 1e-3 * u, zeta=1e-4 * ones, kappa=0.0 * ones, wz=np.abs(dzdt) * dtheta + 0.5,
                  amp=dtheta * np.sqrt(np.abs(dzdt)) / 1000.0, fac_re=ones, fac_im=0.0 * ones, ns=0.0 * ones,
                  nb=0.0 * ones, nc=(u > 0).astype(float))
    return {key: np.ascontiguousarray(v[:, None]) for key, v in arrays.items()}, th


@pytest.mark.parametrize("zr, n_arrivals, n_brackets", [(31.0, 2, 1), (29.0, 1, 0)])
def test_candidates_one_eigenray_per_arrival(zr, n_arrivals, n_brackets):
    """Lit side of a fold: its two eigenrays are two arrivals of one bracket each (each delay that of a
    true eigenray); shadow side: one arrival without a bracket.

    Source: the geometry of a fold (z(theta) has two roots above zc, none below); no numeric reference.
    """
    arrays, _ = _fold_fan()
    ints, delay, beam = er._candidates(arrays, np.array([zr]), np.array([8000.0]), np.array([100.0]))
    assert ints.shape[0] == n_arrivals
    assert np.all(ints[:, _ke.Q_N_BRACKETS] == n_brackets)
    assert np.all(np.isfinite(delay)) and np.all(np.isfinite(beam))
    if n_brackets:
        # the bracketing rays straddle the receiver on one side of the caustic each
        lo = ints[:, _ke.Q_BRACKET]
        z = arrays["z"][:, 0]
        assert np.all((z[lo] - zr) * (z[lo + 1] - zr) <= 0)
        assert sorted(arrays["nc"][lo, 0]) == [0.0, 1.0]
    else:
        assert ints[0, _ke.Q_CAUSTIC] == 1


def test_column_index_and_gather():
    """Each range's fan is its member rays in launch-angle order, padded (the contract of the
    per-range refinement; no outside source)."""
    member = np.array([[True, True], [False, True], [True, False], [True, True]])
    idx = er._column_index(member)
    np.testing.assert_array_equal(idx, [[0, 0], [2, 1], [3, 3]])
    thetas = np.array([0.1, 0.2, 0.3, 0.4])
    rec = np.arange(4 * 2 * 3, dtype=float).reshape(4, 2, 3)
    th, rows = er._gather(thetas, rec, np.vstack([idx, [-1, -1]]))
    np.testing.assert_array_equal(th[:3], [[0.1, 0.1], [0.3, 0.2], [0.4, 0.4]])
    assert np.all(np.isnan(th[3])) and np.all(np.isnan(rows[3]))
    np.testing.assert_array_equal(rows[1, 0], rec[2, 0])


def test_ray_spacing():
    """Half the distance between neighbours, one-sided at the ends and beside padding (definition)."""
    th = np.array([[0.0, 0.0], [1.0, 2.0], [3.0, np.nan]])
    np.testing.assert_allclose(er._ray_spacing(th), [[1.0, 2.0], [1.5, 2.0], [2.0, np.nan]])


def test_interpolated_records_are_exact_for_quadratics():
    """Records quadratic in the launch angle are interpolated exactly between three rays of one
    history, and linearly where the third ray has another history.

    Source: Lagrange interpolation through three points is exact for polynomials of degree 2
    (closed form); 1e-9 relative.
    """
    width = _k.record_width(1)
    thetas = np.array([0.10, 0.11, 0.12, 0.13])[:, None]
    rec = np.zeros((4, 1, width))
    for col in range(width):
        rec[:, 0, col] = 1.0 + col + 3.0 * thetas[:, 0] - 7.0 * (col + 1) * thetas[:, 0] ** 2
    for col in (_k.R_NS, _k.R_NB, _k.R_NC):
        rec[:, 0, col] = 2.0
    lo, hi, jj = np.array([1]), np.array([2]), np.array([0])
    theta = np.array([0.1137])
    rows = er._interpolate_rows(rec, thetas, lo, hi, jj, theta)
    expect = 1.0 + np.arange(width) + 3.0 * theta[0] - 7.0 * (np.arange(width) + 1) * theta[0] ** 2
    ok = np.ones(width, dtype=bool)
    ok[[_k.R_NS, _k.R_NB, _k.R_NC, _k.R_ORIENT]] = False
    np.testing.assert_allclose(rows[0, ok], expect[ok], rtol=1e-9)
    # both outer rays of another history: linear between the bracket
    rec[[0, 3], 0, _k.R_NB] = 3.0
    rows = er._interpolate_rows(rec, thetas, lo, hi, jj, theta)
    u = (theta[0] - 0.11) / 0.01
    linear = (1 - u) * rec[1, 0] + u * rec[2, 0]
    np.testing.assert_allclose(rows[0, ok], linear[ok], rtol=1e-12)


def test_within_keeps_by_the_strongest_at_each_receiver():
    """An arrival is kept when some frequency's level is within the margin of the strongest at its
    own receiver, and counted as dropped otherwise (the contract of prune and merge)."""
    ints = np.zeros((4, _ke.N_CLUSTER_INT), dtype=np.int64)
    ints[:, _ke.Q_RANGE] = [0, 0, 0, 1]
    level = np.array([[-60.0, -70.0], [-95.0, -80.0], [-101.0, -120.0], [-140.0, -150.0]])
    keep, dropped = er._within(ints, level, 30.0, (2, 1))
    np.testing.assert_array_equal(keep, [True, True, False, True])
    np.testing.assert_array_equal(dropped, [[1], [0]])
