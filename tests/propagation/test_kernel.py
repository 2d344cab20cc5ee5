"""Ray kernel: closed forms, Snell's law, a scipy twin, dynamic ray tracing against finite differences."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from aculink.propagation import _kernels as _k
from aculink.propagation.rays import prepare_medium, run_fan, trace_rays

# [Jensen2011] worked example: c = 1500 + 0.017 z, source 200 m, launched 10 deg down [computed there]
LINEAR = dict(p=6.55053714e-4, turning_depth=1564.257, turning_range=15593.528, turning_time=10.319166,
              z1000_angle=6.4264, z1000_range=5542.575, z1000_time=3.707550, back_range=31187.057,
              back_time=20.638333)


@pytest.fixture(scope="module")
def linear_site(make_site):
    return make_site([0.0, 5000.0], [1500.0, 1500.0 + 0.017 * 5000.0], seabed_depth_m=(5000.0,),
                      source_depth_m=200.0, receiver_depth_m=200.0, receiver_range_m=31187.057)


def _dz_dtheta(row):
    return row[_k.R_DZ] - row[_k.R_ZETA] / row[_k.R_XI] * row[_k.R_DX]


def test_linear_gradient_turning_point(linear_site):
    """Turning depth, range and time to the turning point of a circular-arc ray.

    Source: [Jensen2011] worked example (closed forms for c = c0 + g z, Jensen et al. 2011, ch. 3,
    values computed and verified by quadrature there), 1e-6 relative.
    """
    fan = trace_rays(linear_site, angles_deg=[10.0], max_range_m=31187.057 + 10.0)
    ray = fan.isel(ray=0)
    turn = int(np.nanargmin(np.abs(ray.angle_deg.values)))
    assert abs(ray.angle_deg.values[turn]) < 1e-9  # the turning point is a path point, not interpolated
    assert ray.depth_m.values[turn] == pytest.approx(LINEAR["turning_depth"], rel=1e-6)
    assert ray.range_m.values[turn] == pytest.approx(LINEAR["turning_range"], rel=1e-6)
    assert ray.time_s.values[turn] == pytest.approx(LINEAR["turning_time"], rel=1e-6)


def test_linear_gradient_eigenray_times(linear_site):
    """Eigenray back at the source depth, and at 1000 m going down: range, time and angle.

    Source: [Jensen2011] worked example (circular-arc closed forms), 1e-6 relative.
    """
    from aculink.propagation import find_arrivals

    arr = find_arrivals(linear_site, [LINEAR["z1000_range"], LINEAR["back_range"]], [200.0, 1000.0], 100.0,
                        angles_deg=np.linspace(-20, 20, 401), tolerance_m=1e-3)
    back = arr.sel(range=LINEAR["back_range"], depth=200.0)
    i = int(np.nanargmin(np.abs(back.launch_angle_deg.values - 10.0)))
    assert back.launch_angle_deg.values[i] == pytest.approx(10.0, abs=1e-4)
    assert back.delay_s.values[i] == pytest.approx(LINEAR["back_time"], rel=1e-6)
    mid = arr.sel(range=LINEAR["z1000_range"], depth=1000.0)
    i = int(np.nanargmin(np.abs(mid.launch_angle_deg.values - 10.0)))
    assert mid.delay_s.values[i] == pytest.approx(LINEAR["z1000_time"], rel=1e-6)
    assert mid.arrival_angle_deg.values[i] == pytest.approx(LINEAR["z1000_angle"], rel=1e-4)


def test_snell_invariant_along_refracting_path(make_site, munk):
    """cos(theta)/c is constant along a refracting ray between boundaries.

    Source: Snell's law for a horizontally stratified medium (Jensen et al. 2011, ch. 3), 1e-9 relative.
    """
    z, c = munk(4000.0, 50.0)
    site = make_site(z, c, seabed_depth_m=(4000.0,), source_depth_m=1000.0, receiver_range_m=40000.0)
    fan = trace_rays(site, angles_deg=[-8.0, 3.0, 11.0], max_range_m=40000.0)
    prof = site.water.profile
    for ray in range(3):
        r = fan.isel(ray=ray)
        ok = np.isfinite(r.depth_m.values)
        inv = np.cos(np.radians(r.angle_deg.values[ok])) / prof.speed(r.depth_m.values[ok])
        assert int(r.surface_bounces) == 0 and int(r.bottom_bounces) == 0
        np.testing.assert_allclose(inv, inv[0], rtol=1e-9)


@pytest.mark.parametrize("theta0, cycle_km", [(14.38, 65.369), (10.0, 56.174)])
def test_munk_cycle_distance(theta0, cycle_km, make_site, munk):
    """Cycle distance of rays from a source on the Munk axis.

    Source: [Munk1974] [computed by quadrature there]; Munk (1974), J. Acoust. Soc. Am. 55, 220-226.
    The surface-grazing ray (14.3809 deg) repeats every 65.369 km; 14.38 deg turns 6 cm below the surface
    (cycle 0.002% shorter). Tolerance 0.1%.
    """
    z, c = munk(5000.0, 10.0)
    site = make_site(z, c, seabed_depth_m=(5000.0,), source_depth_m=1300.0, receiver_depth_m=1300.0,
                      receiver_range_m=70000.0)
    fan = trace_rays(site, angles_deg=[theta0], max_range_m=70000.0)
    ray = fan.isel(ray=0)
    ok = np.isfinite(ray.depth_m.values)
    r, d = ray.range_m.values[ok], ray.depth_m.values[ok] - 1300.0
    crossings = np.flatnonzero((d[:-1] < 0) & (d[1:] >= 0))  # upward-going... from above to below
    # the second downward crossing of the axis after launch closes one cycle
    x = [r[i] - d[i] * (r[i + 1] - r[i]) / (d[i + 1] - d[i]) for i in crossings]
    assert x[0] / 1000.0 == pytest.approx(cycle_km, rel=1e-3)
    assert int(ray.surface_bounces) == 0


def _reference_ray(site, theta0_deg, zs, r_end):
    """scipy.integrate.solve_ivp (DOP853, rtol 1e-12) on the ray equations in range: the slow twin."""
    prof = site.water.profile
    c0 = float(prof.speed(zs))
    xi = np.cos(np.radians(theta0_deg)) / c0

    def rhs(x, y):
        z, zeta, _ = y
        c, cz, _ = prof.evaluate(np.array([z]))
        c, cz = float(c[0]), float(cz[0])
        # d/dx = (1/(c xi)) d/ds
        return [zeta / xi, -cz / (c * c) / (c * xi), 1.0 / (c * c * xi)]

    sol = solve_ivp(rhs, (0.0, r_end), [zs, np.sin(np.radians(theta0_deg)) / c0, 0.0], method="DOP853",
                    rtol=1e-12, atol=1e-12)
    return sol.y[0, -1], sol.y[2, -1]


def test_kernel_against_scipy_twin(make_site):
    """Depth and travel time at 3 km through a smooth cubic-piece profile without boundaries.

    Source: general-purpose reference, scipy.integrate.solve_ivp (DOP853, rtol 1e-12) on the same ray
    equations written in range (computed); RK4 with 5 m steps must agree to 1e-4 m and 0.05 us.
    """
    z = np.array([0.0, 100.0, 200.0, 300.0, 400.0, 500.0, 1000.0])
    c = np.array([1520.0, 1510.0, 1495.0, 1490.0, 1492.0, 1496.0, 1505.0])
    site = make_site(z, c, seabed_depth_m=(1000.0,), source_depth_m=250.0, receiver_range_m=3000.0)
    for theta in (-4.0, 2.0, 6.0):
        fan = trace_rays(site, angles_deg=[theta], max_range_m=3000.0)
        ray = fan.isel(ray=0)
        assert int(ray.surface_bounces) == 0 and int(ray.bottom_bounces) == 0
        last = int(np.flatnonzero(np.isfinite(ray.range_m.values))[-1])
        z_ref, t_ref = _reference_ray(site, theta, 250.0, 3000.0)
        assert ray.range_m.values[last] == pytest.approx(3000.0, abs=1e-9)
        assert ray.depth_m.values[last] == pytest.approx(z_ref, abs=1e-4)
        assert ray.time_s.values[last] == pytest.approx(t_ref, abs=5e-8)


def test_dynamic_rays_against_finite_differences(make_site):
    """dz/dtheta0 from dynamic ray tracing equals the central finite difference of two traced rays.

    Source: Cerveny (2001), Seismic Ray Theory, sect. 4.2 (the dynamic-ray vector is the derivative of
    the ray with respect to its launch angle); the check is computed with a slow, obviously correct
    twin (two extra rays at +-1e-6 rad). PCHIP profile with interior knots, sloping seabed, surface
    bounces; 0.5% (the difference of two 5 m-step rays limits it).
    """
    site = make_site([0.0, 10.0, 20.0, 30.0, 60.0], [1520.0, 1519.0, 1510.0, 1500.0, 1499.0],
                      seabed_range_m=(0.0, 1500.0, 4000.0), seabed_depth_m=(55.0, 60.0, 58.0),
                      source_depth_m=21.0)
    medium = prepare_medium(site, None)
    h = 1e-6
    for theta in np.radians([2.0, -3.0, 8.0, -0.6]):
        rec, _, _ = run_fan(medium, np.array([theta - h, theta, theta + h]), 21.0, np.array([1000.0, 3000.0]),
                            3000.0, parallel=False)
        for j in range(2):
            fd = (rec[2, j, _k.R_Z] - rec[0, j, _k.R_Z]) / (2 * h)
            assert _dz_dtheta(rec[1, j]) == pytest.approx(fd, rel=5e-3)


def test_bounce_counts_match_the_path(make_site):
    """Surface and seabed bounce counts equal the path points lying on those boundaries.

    Source: definition (a bounce is a path point on the boundary; the kernel lands on them exactly).
    """
    site = make_site([0.0, 30.0, 60.0], [1510.0, 1500.0, 1505.0], seabed_range_m=(0.0, 2000.0, 5000.0),
                      seabed_depth_m=(50.0, 60.0, 45.0), source_depth_m=25.0, receiver_range_m=5000.0)
    fan = trace_rays(site, angles_deg=np.linspace(-25, 25, 51), max_range_m=5000.0)
    bed = site.seabed.depth_at(np.nan_to_num(fan.range_m.values))
    on_surface = (fan.depth_m.values == 0.0).sum(axis=1)
    on_bed = (np.abs(fan.depth_m.values - bed) < 1e-7).sum(axis=1)
    np.testing.assert_array_equal(on_surface, fan.surface_bounces.values)
    np.testing.assert_array_equal(on_bed, fan.bottom_bounces.values)
    assert np.all(np.isfinite(fan.time_s.values[:, 0]))


def _layered_medium(make_site, z, c):
    """Kernel medium of the site with c exactly linear between ``z`` (flat seabed at z[-1])."""
    import dataclasses

    from layered_rays import linear_pieces

    site = make_site(z, c, seabed_depth_m=(z[-1],), source_depth_m=18.0, receiver_range_m=5000.0)
    knots, coef = linear_pieces(z, c)
    return dataclasses.replace(prepare_medium(site, None), knots=knots, coef=coef)


def test_layered_medium_against_exact_circular_arcs(make_site):
    """Depth and travel time at 5 km through constant-gradient layers, with surface and seabed bounces.

    Source: closed form, rays in a constant-gradient layer are circular arcs ([Jensen2011] ch. 3;
    tests/propagation/layered_rays.py). A summer-like cast (weak mixed layer, sharp thermocline),
    rays turning in the mixed layer and bouncing; 0.2 us and 1 mm (the kernel's step control and
    Snell projection give about 0.01 us here; 10 m fixed RK4 steps without them miss by microseconds).
    """
    from layered_rays import layered_ray

    z = np.array([0.0, 8.0, 12.0, 16.0, 22.0, 30.0, 45.0, 60.0])
    c = np.array([1511.9, 1511.8, 1511.2, 1509.0, 1502.0, 1495.0, 1493.5, 1493.0])
    medium = _layered_medium(make_site, z, c)
    thetas = np.radians(np.linspace(-12.0, 12.0, 25))
    rec, _, _ = run_fan(medium, thetas, 18.0, np.array([5000.0]), 5000.0)
    surface = 0
    for i, th in enumerate(thetas):
        z_ref, t_ref, n_s, n_b = layered_ray(th, 18.0, z, c, 60.0, 5000.0)
        row = rec[i, 0]
        assert (row[_k.R_NS], row[_k.R_NB]) == (n_s, n_b)
        assert row[_k.R_Z] == pytest.approx(z_ref, abs=1e-3)
        assert row[_k.R_T] == pytest.approx(t_ref, abs=2e-7)
        surface += n_s > 0
    assert 0 < surface < thetas.size  # rays turning below the surface and rays reaching it were checked


def test_parallel_and_serial_fans_are_identical(make_site, munk):
    """The parallel fan driver gives bit-identical records to the serial one.

    Source: definition (both drivers call the same per-ray kernel; rays are independent).
    """
    z, c = munk(4000.0, 50.0)
    site = make_site(z, c, seabed_depth_m=(4000.0,), source_depth_m=1000.0)
    medium = prepare_medium(site, [3000.0, 12000.0])
    thetas = np.radians(np.linspace(-15.0, 15.0, 64))
    ranges = np.linspace(1000.0, 20000.0, 7)
    rec_p, info_p, _ = run_fan(medium, thetas, 1000.0, ranges, 20000.0, parallel=True)
    rec_s, info_s, _ = run_fan(medium, thetas, 1000.0, ranges, 20000.0, parallel=False)
    np.testing.assert_array_equal(rec_p, rec_s)
    np.testing.assert_array_equal(info_p, info_s)
    assert np.isfinite(rec_s[:, :, _k.R_T]).all()


def _spline_pieces(z, c):
    """A C2 natural cubic spline through (z, c) in the kernel's piece layout, and the spline."""
    from scipy.interpolate import CubicSpline

    spline = CubicSpline(z, c, bc_type="natural")
    coef = np.ascontiguousarray(spline.c[::-1].T)  # scipy keeps the highest power first
    return np.ascontiguousarray(z, dtype=float), coef, spline


def test_landing_knots_are_where_smoothness_breaks():
    """Runs of pieces a step may cross: split at every knot of a piecewise-linear (C0) or PCHIP (C1)
    profile, none for a C2 cubic spline; a linear profile with one kink splits there only.

    Source: definitions (a piecewise-linear interpolant has slope jumps at its knots, PCHIP is C1 with
    jumps of the second derivative, a natural cubic spline is C2: de Boor, A Practical Guide to
    Splines, 1978, ch. IV and V, from memory).
    """
    from layered_rays import linear_pieces

    from aculink.site.profile import SoundSpeedProfile

    z = np.array([0.0, 10.0, 20.0, 35.0, 60.0])
    c = np.array([1512.0, 1511.0, 1503.0, 1496.0, 1495.0])
    lo, hi = _k.landing_pieces(*linear_pieces(z, c))
    np.testing.assert_array_equal(lo, [0, 1, 2, 3])
    np.testing.assert_array_equal(hi, [0, 1, 2, 3])
    prof = SoundSpeedProfile(z, c)
    lo, hi = _k.landing_pieces(prof.knots, prof.coef)
    np.testing.assert_array_equal(lo, np.arange(prof.knots.size - 1))
    knots, coef, _ = _spline_pieces(z, c)
    lo, hi = _k.landing_pieces(knots, coef)
    np.testing.assert_array_equal(lo, [0, 0, 0, 0])
    np.testing.assert_array_equal(hi, [3, 3, 3, 3])
    # one kink at 20 m between two straight lines sampled at extra collinear knots
    lo, hi = _k.landing_pieces(*linear_pieces(np.array([0.0, 10.0, 20.0, 40.0, 60.0]),
                                              np.array([1500.0, 1501.0, 1502.0, 1501.0, 1500.0])))
    np.testing.assert_array_equal(lo, [0, 0, 2, 2])
    np.testing.assert_array_equal(hi, [1, 1, 3, 3])


def test_steps_cross_the_knots_of_a_c2_profile(make_site):
    """Depth, travel time and dz/dtheta0 at 3 km through a C2 spline profile whose knots steps cross.

    Source: general-purpose reference, scipy.integrate.solve_ivp (DOP853, rtol 1e-12) on the ray
    equations in range through the same spline (computed), 1e-4 m and 0.05 us; dz/dtheta0 against
    the central finite difference of two traced rays (Cerveny 2001, sect. 4.2), 0.5%. 2 m knots: a
    5 m step crosses up to three, each RK stage evaluating its own piece; landing on them instead
    would take more steps, so the step count shows that they are crossed.
    """
    z = np.arange(0.0, 1000.0 + 1.0, 2.0)
    c = 1490.0 + 0.017 * z + 12.0 * np.exp(-z / 150.0) + 1.5 * np.sin(z / 37.0)
    knots, coef, spline = _spline_pieces(z, c)
    import dataclasses

    site = make_site(z, c, seabed_depth_m=(1000.0,), source_depth_m=250.0, receiver_range_m=3000.0)
    medium = dataclasses.replace(prepare_medium(site, None), knots=knots, coef=coef)
    dspline = spline.derivative()
    h = 1e-6
    for theta_deg in (-5.0, 3.0, 8.0):
        th = np.radians(theta_deg)
        rec, info, paths = run_fan(medium, np.array([th - h, th, th + h]), 250.0, np.array([3000.0]), 3000.0,
                                   path_points=2000, parallel=False)
        row = rec[1, 0]
        assert row[_k.R_NS] == 0 and row[_k.R_NB] == 0
        c0 = float(spline(250.0))
        xi = np.cos(th) / c0

        def rhs(x, y, xi=xi):
            cz, dcz = float(spline(y[0])), float(dspline(y[0]))
            return [y[1] / xi, -dcz / (cz * cz) / (cz * xi), 1.0 / (cz * cz * xi)]

        sol = solve_ivp(rhs, (0.0, 3000.0), [250.0, np.sin(th) / c0, 0.0], method="DOP853", rtol=1e-12,
                        atol=1e-12)
        assert row[_k.R_Z] == pytest.approx(sol.y[0, -1], abs=1e-4)
        assert row[_k.R_T] == pytest.approx(sol.y[2, -1], abs=5e-8)
        fd = (rec[2, 0, _k.R_Z] - rec[0, 0, _k.R_Z]) / (2 * h)
        assert _dz_dtheta(row) == pytest.approx(fd, rel=5e-3)
        # knots crossed between path points (one per step): landing on each would add about one
        # step per crossing to the path length over the largest step
        zp = paths[1][1][np.isfinite(paths[1][1])]
        crossed = np.abs(np.diff(np.floor(zp / 2.0))).sum()
        steps = info[1, _k.I_STEPS]
        assert crossed > 50
        assert steps < 3000.0 / np.cos(th) / medium.step_m + 20


def test_event_root_search_is_compiled_once():
    """The Hermite root search serves every event kind with one compiled version.

    Source: definition (its arguments are all floats: the events enter as the coefficients of a line
    in (x, z, zeta), not as integer constants that numba would compile one version each for). A fresh
    (uncached) caller of the event search is compiled here, so that numba types every call inside it.
    """
    import numba as nb

    @nb.njit
    def probe(hstep, x, z, zeta, x1, z1, e1):
        return _k._first_event(hstep, x, z, zeta, x1, z1, e1, 1e-3, 1e-4, 1e-7, 1e-3, -1e-4, -1e-7, 60.0,
                               0.0, 0.0, 100.0)

    kind, h = probe(5.0, 95.0, 1.0, -1e-5, 100.5, -0.5, 1e-6)  # crosses surface, range and turning point
    assert kind in (1, 3, 4) and 0.0 < h < 5.0
    assert len(_k._hermite_root.signatures) == 1
