"""Eigenrays: image method, reciprocity, absorption, surface roughness, dropping, bad input."""

from __future__ import annotations

import numpy as np
import pytest

from aculink.errors import AculinkError
from aculink.propagation import find_arrivals
from aculink.site.absorption import absorption_francois_garrison
from aculink.site.seabed import rayleigh_reflection
from aculink.site.surface import surface_coherent_reflection

D, ZS, ZR, C = 100.0, 30.0, 70.0, 1500.0


def image_paths(r, bottom, max_bounces):
    """Image sources of an isovelocity waveguide ([Jensen2011], exact): delay, ns, nb, amplitude."""
    out = []
    for n in range(-20, 21):
        for sign in (1, -1):
            zi = 2 * n * D + sign * ZS
            if sign > 0:
                ns = nb = abs(n)
            elif n <= 0:
                ns, nb = abs(n) + 1, abs(n)
            else:
                ns, nb = n - 1, n
            if ns + nb > max_bounces:
                continue
            L = np.hypot(r, ZR - zi)
            grazing = np.arctan2(abs(ZR - zi), r)
            out.append((L / C, ns, nb, (-1.0) ** ns * bottom(grazing) ** nb / L, L))
    return sorted(out)


def _bottoms(site):
    bed = site.seabed
    return {
        "rigid": (lambda th: np.ones_like(th, dtype=complex), None),
        "pressure-release": (lambda th: -np.ones_like(th, dtype=complex), None),
        "fluid": (lambda th: rayleigh_reflection(th, C, site.water.density_kgm3, bed.sound_speed_mps,
                                                 bed.density_kgm3, bed.attenuation_db_per_wavelength), "site"),
    }


@pytest.mark.parametrize("kind", ["rigid", "pressure-release", "fluid"])
def test_image_method(make_site, kind):
    """Isovelocity water over a flat seabed: every path with up to 8 bounces matches its image source.

    Source: image method, exact ([Jensen2011]); seabed coefficient R = +1 (rigid), -1 (pressure
    release) or the Rayleigh coefficient of a fluid bed (aculink.site.seabed, checked in the site
    tests against [Jensen2011]) at the image's grazing angle. Delays within 1 us, levels within 0.1 dB,
    phases within 0.01 rad, bounce counts exact. Absorption is divided out with the reported value.
    """
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS, receiver_depth_m=ZR, bed_speed_mps=1700.0,
                     bed_density_kgm3=1900.0, bed_attenuation=0.5)
    bottom, how = _bottoms(site)[kind]
    for r in (400.0, 1500.0):
        arr = find_arrivals(site, r, ZR, 12000.0, dynamic_range_db=120.0,
                            bottom_reflection=None if how == "site" else bottom)
        one = arr.isel(range=0, depth=0)
        n = int(one.n_arrivals)
        images = image_paths(r, bottom, 8)
        assert n >= len(images)
        for delay, ns, nb, amp, _ in images:
            same = [i for i in range(n) if (int(one.surface_bounces[i]), int(one.bottom_bounces[i])) == (ns, nb)]
            assert same, f"range {r}: no arrival with {ns} surface and {nb} seabed bounces"
            i = min(same, key=lambda i: abs(float(one.delay_s[i]) - delay))
            a = complex(one.amplitude[i, 0]) * 10 ** (float(one.absorption_db[i, 0]) / 20)
            assert float(one.delay_s[i]) == pytest.approx(delay, abs=1e-6)
            assert 20 * np.log10(abs(a)) == pytest.approx(20 * np.log10(abs(amp)), abs=0.1)
            assert abs(np.angle(a / amp)) < 0.01
            assert int(one.caustics[i]) == 0


def test_absorption_along_the_path(make_site):
    """Absorption of each path equals Francois-Garrison at 10 degC, 35 psu times the path length.

    Source: Francois and Garrison (1982) as implemented in aculink.site.absorption (checked there against
    the published table); the path length in isovelocity water is the image distance (exact). 1%, the
    spread of the formula's depth terms over 100 m.
    """
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS, receiver_depth_m=ZR)
    arr = find_arrivals(site, 2000.0, ZR, [5000.0, 20000.0], bottom_reflection=lambda th: np.ones_like(th))
    one = arr.isel(range=0, depth=0)
    n = int(one.n_arrivals)
    alpha = absorption_francois_garrison(np.array([5000.0, 20000.0]), 10.0, 35.0, D / 2, 8.0) / 1000.0
    for i in range(n):
        L = float(one.path_length_m[i])
        assert L >= np.hypot(2000.0, ZR - ZS) - 1e-6
        np.testing.assert_allclose(one.absorption_db.values[i], alpha * L, rtol=0.01)


def test_surface_roughness_per_bounce(make_site):
    """The rough-surface factor of a path is the product of Eckart coefficients at its grazing angles.

    Source: Eckart (1953), J. Acoust. Soc. Am. 25, 566-570, via aculink.site.surface (checked there against
    [Eckart1953]); grazing angle from the image method (exact). Ratio of amplitudes with and without
    roughness within 1e-5 relative, and the grazing sum within 1e-4 relative: the eigenray's values are
    interpolated between three fan rays 0.1 deg apart (quadratic, error third order in the spacing;
    linear interpolation erred by 1.3e-5 here).
    """
    rough = make_site(seabed_depth_m=(D,), source_depth_m=ZS, receiver_depth_m=ZR, rms_height_m=0.05)
    smooth = make_site(seabed_depth_m=(D,), source_depth_m=ZS, receiver_depth_m=ZR, rms_height_m=0.0)
    rigid = lambda th: np.ones_like(th)  # noqa: E731
    f = np.array([4000.0, 12000.0])
    a = find_arrivals(rough, 1000.0, ZR, f, bottom_reflection=rigid, dynamic_range_db=200).isel(range=0, depth=0)
    b = find_arrivals(smooth, 1000.0, ZR, f, bottom_reflection=rigid, dynamic_range_db=200).isel(range=0, depth=0)
    ns, nb, delay, angle, sin2, amp = (a[v].values[: int(a.n_arrivals)] for v in (
        "surface_bounces", "bottom_bounces", "delay_s", "arrival_angle_deg", "surface_grazing_sin2_sum", "amplitude"))
    theta = np.radians(np.abs(angle))
    expect = np.abs(surface_coherent_reflection(theta[:, None], f[None, :], 0.05, C)) ** ns[:, None]
    # below ~1e-300 doubles are subnormal and lose their relative precision: those are not compared
    check = np.flatnonzero(expect.min(axis=1) > 1e-280)
    assert check.size >= 20  # paths with up to ~10 surface bounces
    nb_b, ns_b, delay_b, amp_b = (b[v].values[: int(b.n_arrivals)] for v in (
        "bottom_bounces", "surface_bounces", "delay_s", "amplitude"))
    for i in check:
        # the same path without roughness, matched by bounces and delay
        same = np.flatnonzero((ns_b == ns[i]) & (nb_b == nb[i]))
        assert same.size, f"no smooth-surface arrival with {ns[i]} surface and {nb[i]} seabed bounces"
        j = same[np.argmin(np.abs(delay_b[same] - delay[i]))]
        np.testing.assert_allclose(np.abs(amp[i]) / np.abs(amp_b[j]), expect[i], rtol=1e-5)
        assert sin2[i] == pytest.approx(ns[i] * np.sin(theta[i]) ** 2, rel=1e-4)


def _strong_match(a, b, within_db):
    """Pairs (i, j) of arrivals of ``a`` within ``within_db`` of its strongest and their match in ``b``."""
    la = 20 * np.log10(np.abs(a.amplitude.values[: int(a.n_arrivals)]))
    pairs = []
    for i in np.flatnonzero(la > la.max() - within_db):
        key = (int(a.surface_bounces[i]), int(a.bottom_bounces[i]))
        same = [j for j in range(int(b.n_arrivals))
                if (int(b.surface_bounces[j]), int(b.bottom_bounces[j])) == key]
        assert same, f"no reciprocal arrival for {key} at {float(a.delay_s[i]):.6f} s"
        pairs.append((i, min(same, key=lambda j: abs(float(b.delay_s[j]) - float(a.delay_s[i])))))
    return pairs


def test_reciprocity_range_independent(make_site):
    """Swapping source and receiver depths gives the same arrivals.

    Source: acoustic reciprocity of the point-source Green's function (Lord Rayleigh, The Theory of
    Sound, vol. 2; Jensen et al. 2011, ch. 2). Refracting PCHIP profile, flat fluid seabed, 8 kHz.
    Delays within 1 us, levels within 0.1 dB, phases within 0.01 rad, for every arrival within 20 dB of
    the strongest; the launch angle of one is minus the arrival angle of the other.
    """
    z = [0.0, 10.0, 25.0, 40.0, 80.0]
    c = [1512.0, 1511.0, 1503.0, 1499.0, 1498.0]
    site = make_site(z, c, seabed_depth_m=(60.0,), bed_speed_mps=1650.0, bed_density_kgm3=1800.0,
                     bed_attenuation=0.6)
    a = find_arrivals(site, 3000.0, 45.0, 8000.0, source_depth_m=18.0, tolerance_m=0.01)
    b = find_arrivals(site, 3000.0, 18.0, 8000.0, source_depth_m=45.0, tolerance_m=0.01)
    a, b = (x.isel(range=0, depth=0, frequency=0) for x in (a, b))
    pairs = _strong_match(a, b, 20.0)
    assert len(pairs) >= 10
    for i, j in pairs:
        assert float(b.delay_s[j]) == pytest.approx(float(a.delay_s[i]), abs=1e-6)
        assert 20 * np.log10(abs(complex(b.amplitude[j]))) == pytest.approx(
            20 * np.log10(abs(complex(a.amplitude[i]))), abs=0.1)
        assert abs(np.angle(complex(b.amplitude[j]) / complex(a.amplitude[i]))) < 0.01
        assert float(b.launch_angle_deg[j]) == pytest.approx(-float(a.arrival_angle_deg[i]), abs=1e-3)


def test_reciprocity_of_delays_over_a_sloping_seabed(make_site):
    """Over a sloping seabed, the reversed track gives the same delays (Fermat's principle).

    Source: reciprocity of travel time (Fermat's principle; Jensen et al. 2011, ch. 3), within 1 us for
    every arrival within 20 dB of the strongest. Levels are not compared: in cylindrical (N x 2D)
    geometry a range-dependent seabed is a cone around the source, and reversing the track is another
    3-D environment; the levels then differ by about 10 log10(cos theta_s / cos theta_r).
    """
    z = [0.0, 10.0, 25.0, 40.0, 80.0]
    c = [1512.0, 1511.0, 1503.0, 1499.0, 1498.0]
    kw = dict(bed_speed_mps=1650.0, bed_density_kgm3=1800.0, bed_attenuation=0.6)
    fwd = make_site(z, c, seabed_range_m=(0.0, 3000.0), seabed_depth_m=(50.0, 66.0), source_depth_m=18.0, **kw)
    rev = make_site(z, c, seabed_range_m=(0.0, 3000.0), seabed_depth_m=(66.0, 50.0), source_depth_m=45.0, **kw)
    a = find_arrivals(fwd, 3000.0, 45.0, 8000.0, tolerance_m=0.01).isel(range=0, depth=0, frequency=0)
    b = find_arrivals(rev, 3000.0, 18.0, 8000.0, tolerance_m=0.01).isel(range=0, depth=0, frequency=0)
    pairs = _strong_match(a, b, 20.0)
    assert len(pairs) >= 10
    for i, j in pairs:
        assert float(b.delay_s[j]) == pytest.approx(float(a.delay_s[i]), abs=1e-6)
        assert float(b.launch_angle_deg[j]) == pytest.approx(-float(a.arrival_angle_deg[i]), abs=1e-3)


def test_dynamic_range_drops_and_counts(make_site):
    """Arrivals more than the dynamic range below the strongest are dropped and counted.

    Source: definition of the contract (DEVELOPERS.md, Propagation); common practice, no source.
    """
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS, receiver_depth_m=ZR, bed_speed_mps=1600.0)
    wide = find_arrivals(site, 2000.0, ZR, 12000.0, dynamic_range_db=200.0).isel(range=0, depth=0)
    narrow = find_arrivals(site, 2000.0, ZR, 12000.0, dynamic_range_db=20.0).isel(range=0, depth=0)
    lw = 20 * np.log10(np.abs(wide.amplitude.values[: int(wide.n_arrivals), 0]))
    ln = 20 * np.log10(np.abs(narrow.amplitude.values[: int(narrow.n_arrivals), 0]))
    assert np.all(ln >= lw.max() - 20.0)
    assert int(narrow.n_arrivals) == int(np.sum(lw >= lw.max() - 20.0))
    assert int(narrow.n_dropped) >= int(wide.n_arrivals) - int(narrow.n_arrivals)
    assert np.all(np.diff(narrow.delay_s.values[: int(narrow.n_arrivals)]) >= 0)


def test_grid_shape_padding_and_units(make_site):
    """Dims, padding values and units of the Dataset (contract in DEVELOPERS.md; no outside source)."""
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS)
    arr = find_arrivals(site, [500.0, 1500.0, 1000.0], [20.0, 80.0], [8000.0, 12000.0])
    assert dict(arr.sizes) == {"range": 3, "depth": 2, "arrival": arr.sizes["arrival"], "frequency": 2}
    assert list(arr.range.values) == [500.0, 1500.0, 1000.0]
    for name in ("delay_s", "amplitude", "launch_angle_deg", "arrival_angle_deg", "surface_bounces",
                 "bottom_bounces", "caustics", "path_length_m", "absorption_db", "n_arrivals", "n_dropped"):
        assert "units" in arr[name].attrs, name
    n = arr.n_arrivals.values
    for j in range(3):
        for k in range(2):
            assert np.all(np.isnan(arr.delay_s.values[j, k, n[j, k]:]))
            assert np.all(arr.surface_bounces.values[j, k, n[j, k]:] == -1)
            assert np.all(arr.amplitude.values[j, k, n[j, k]:] == 0)
    # the farther receiver hears the direct path later
    d = arr.delay_s.isel(depth=0, arrival=0).values
    assert d[0] < d[2] < d[1]


def test_empty_result_has_a_reason(make_site):
    """A fan that reaches the range but brackets no path gives an empty set with a reason, not an error.

    Source: contract (DEVELOPERS.md, Propagation); no outside source.
    """
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS)
    arr = find_arrivals(site, 1000.0, 95.0, angles_deg=np.linspace(-1.0, 1.0, 21))
    assert int(arr.n_arrivals.values[0, 0]) == 0
    assert "reason" in arr.attrs and "no eigenray" in arr.attrs["reason"]


@pytest.mark.parametrize("kwargs, text", [
    (dict(ranges_m=-5.0), "range_m = -5"),
    (dict(depths_m=120.0), "depth_m = 120"),
    (dict(source_depth_m=0.0), "source_depth_m = 0"),
    (dict(source_depth_m=130.0), "source_depth_m = 130"),
    (dict(freq_hz=-1.0), "freq_hz = -1"),
    (dict(angles_deg=[95.0]), "angles_deg = 95"),
    (dict(tolerance_m=0.0), "tolerance_m = 0"),
])
def test_bad_input_is_one_line(make_site, kwargs, text):
    """Bad input raises AculinkError naming the value and the limit (contract; no outside source)."""
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS)
    with pytest.raises(AculinkError) as err:
        find_arrivals(site, **kwargs)
    assert text in str(err.value) and "\n" not in str(err.value)


def test_range_beyond_seabed_and_unreachable_fan(make_site):
    """A range beyond the seabed description, and a fan whose rays are all turned back (contract)."""
    site = make_site(seabed_range_m=(0.0, 2000.0), seabed_depth_m=(100.0, 100.0), source_depth_m=ZS)
    with pytest.raises(AculinkError, match="range_m = 2500 m: allowed range is"):
        find_arrivals(site, 2500.0, 50.0)
    steep = make_site(seabed_range_m=(0.0, 300.0, 2000.0), seabed_depth_m=(100.0, 20.0, 20.0), source_depth_m=60.0)
    with pytest.raises(AculinkError, match="no ray of the fan reaches range 1500 m"):
        find_arrivals(steep, 1500.0, 10.0, angles_deg=[60.0, 70.0])



def _by_path(one):
    """{(surface bounces, seabed bounces): [(delay, level dB without absorption, launch angle deg)]}
    of one receiver (first frequency)."""
    out = {}
    for i in range(int(one.n_arrivals)):
        key = (int(one.surface_bounces[i]), int(one.bottom_bounces[i]))
        with np.errstate(divide="ignore"):  # a very rough surface takes steep paths to exactly 0
            level = 20 * np.log10(np.abs(one.amplitude.values[i, 0])) + float(one.absorption_db.values[i, 0])
        out.setdefault(key, []).append((float(one.delay_s[i]), level, float(one.launch_angle_deg[i])))
    return out


def _check_images(got, images, r, within_db=None):
    """Every image path (within ``within_db`` of the strongest, if given) is an arrival with the image's
    delay (1 us) and level (0.1 dB); returns the number checked."""
    top = max(20 * np.log10(abs(amp)) for *_, amp, _ in images)
    n = 0
    for delay, ns, nb, amp, _ in images:
        level = 20 * np.log10(abs(amp))
        if within_db is not None and level < top - within_db:
            continue
        assert (ns, nb) in got, f"range {r}: no arrival with {ns} surface and {nb} seabed bounces"
        d, lv, _ = min(got[(ns, nb)], key=lambda v: abs(v[0] - delay))
        assert d == pytest.approx(delay, abs=1e-6), (ns, nb)
        assert lv == pytest.approx(level, abs=0.1), (ns, nb)
        n += 1
    return n


def test_pruning_keeps_rough_surface_paths_by_their_smooth_level(make_site):
    """At high roughness a steep surface path far below the dynamic range coherently, but within it
    with a smooth surface, is kept, with the Eckart-reduced amplitude.

    Source: image method (exact, [Jensen2011]) for the smooth path; Eckart (1953) via
    aculink.site.surface (checked there) for the coherent factor. sigma = 0.1 m at 12 kHz puts the
    steep paths (3 or more surface bounces, 25-35 deg) more than 100 dB below the direct path
    coherently, while their smooth levels are within 3 dB of it: with a 40 dB dynamic range they stay
    (the channel stage scatters their lost power back). Delays within 1 us, levels within 0.1 dB.
    """
    sigma, r, f = 0.1, 1000.0, 12000.0
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS, receiver_depth_m=ZR, rms_height_m=sigma)
    rigid = lambda th: np.ones_like(th)  # noqa: E731
    one = find_arrivals(site, r, ZR, f, bottom_reflection=rigid, dynamic_range_db=40.0).isel(range=0, depth=0)
    got = _by_path(one)
    rough = []
    for delay, ns, nb, amp, L in image_paths(r, rigid, 8):
        theta = np.arccos(r / L)  # the image's grazing angle at every bounce
        coherent = np.abs(surface_coherent_reflection(theta, f, sigma, C)) ** ns
        if ns >= 3 and 20 * np.log10(abs(amp)) > -20 * np.log10(np.hypot(r, ZR - ZS)) - 3.0:
            rough.append((delay, ns, nb, amp * coherent, L))
            assert coherent < 1e-5  # more than 100 dB below the dynamic range coherently
    assert len(rough) >= 2
    assert _check_images(got, rough, r) == len(rough)


@pytest.mark.parametrize("zr", [1.0, 3.0, 97.0, 99.0])
def test_levels_near_the_surface_and_the_seabed(make_site, zr):
    """Receivers within 5 m of the surface or the seabed: every path with up to 6 bounces matches its
    image source in delay (1 us) and level (0.1 dB), and the incoherent sum matches the image method
    over the images within the 60 dB dynamic range (0.1 dB).

    Source: image method, exact for a rigid seabed ([Jensen2011]; tests/propagation/image_method.py).
    The beam sum truncated there (a beam's half beyond the boundary belongs to the reflected branch)
    was 2-4 dB low; the ray-theory eigenray amplitude is not truncated.
    """
    from image_method import image_terms

    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS)
    rigid = lambda th: np.ones_like(th)  # noqa: E731
    r = 1500.0
    one = find_arrivals(site, r, zr, 12000.0, bottom_reflection=rigid, dynamic_range_db=60.0).isel(range=0, depth=0)
    got = _by_path(one)
    images = []
    for n in range(-4, 5):
        for sign in (1, -1):
            zi = 2 * n * D + sign * ZS
            ns, nb = (abs(n), abs(n)) if sign > 0 else ((abs(n) + 1, abs(n)) if n <= 0 else (n - 1, n))
            L = np.hypot(r, zr - zi)
            if ns + nb <= 6:
                images.append((L / C, ns, nb, (-1.0) ** ns / L, L))
    assert _check_images(got, images, r) == len(images)
    power = np.sum(np.abs(one.amplitude.values[: int(one.n_arrivals), 0]) ** 2
                   * 10 ** (one.absorption_db.values[: int(one.n_arrivals), 0] / 10))
    # the image sum over the images within the 60 dB asked for (up to ~140 bounces here)
    amp = np.abs(image_terms(r, zr, ZS, D, 100)[0].ravel())
    reference = -10 * np.log10(np.sum(amp[amp >= amp.max() * 1e-3] ** 2))
    assert -10 * np.log10(power) == pytest.approx(reference, abs=0.1)


def test_steep_paths_match_the_image_method(make_site):
    """Paths launched steeper than 60 deg with five to twelve bounces match their image sources.

    Source: image method, exact for a rigid seabed ([Jensen2011]). At 300 m range in 100 m of water,
    images 2nD +- zs with |n| >= 3 leave at more than 60 deg. Delays within 1 us, levels within 0.1 dB,
    launch angles within 1e-3 deg of atan(|z_image - zs| / r) (sign: down for images below).
    """
    site = make_site(seabed_depth_m=(D,), source_depth_m=ZS)
    rigid = lambda th: np.ones_like(th)  # noqa: E731
    r = 300.0
    one = find_arrivals(site, r, ZR, 12000.0, bottom_reflection=rigid, dynamic_range_db=60.0).isel(range=0, depth=0)
    got = _by_path(one)
    checked = 0
    for delay, ns, nb, amp, L in image_paths(r, rigid, 12):
        steep = np.degrees(np.arccos(r / L))
        if steep <= 60.0:
            continue
        assert _check_images(got, [(delay, ns, nb, amp, L)], r) == 1
        d, _, launch = min(got[(ns, nb)], key=lambda v: abs(v[0] - delay))
        assert abs(launch) == pytest.approx(steep, abs=1e-3)
        checked += 1
    assert checked >= 6


def test_a_receiver_does_not_depend_on_the_others(make_site):
    """Arrivals at (r, z) asked alone equal those at the same receiver inside a 10 x 10 grid.

    Source: the contract (a receiver's answer depends on the site and that receiver only); the
    tolerance, delays 1 us and levels 0.01 dB, is far below what a modem sees (common practice, no
    source). Refracting profile with caustics, fluid seabed, 0.3-5 km.
    """
    z = [0.0, 10.0, 25.0, 40.0, 80.0]
    c = [1512.0, 1511.0, 1503.0, 1499.0, 1498.0]
    site = make_site(z, c, seabed_depth_m=(60.0,), bed_speed_mps=1650.0, bed_density_kgm3=1800.0,
                     bed_attenuation=0.6, source_depth_m=18.0)
    ranges = np.linspace(300.0, 5000.0, 10)
    depths = np.linspace(3.0, 57.0, 10)
    grid = find_arrivals(site, ranges, depths, 8000.0)
    for j, k in [(6, 7), (2, 0), (9, 9)]:
        alone = find_arrivals(site, ranges[j], depths[k], 8000.0).isel(range=0, depth=0)
        inside = grid.isel(range=j, depth=k)
        n = int(alone.n_arrivals)
        assert n >= 5 and int(inside.n_arrivals) == n
        for name in ("surface_bounces", "bottom_bounces"):
            np.testing.assert_array_equal(inside[name].values[:n], alone[name].values[:n])
        np.testing.assert_allclose(inside.delay_s.values[:n], alone.delay_s.values[:n], rtol=0, atol=1e-6)
        levels = [20 * np.log10(np.abs(x.amplitude.values[:n, 0])) for x in (inside, alone)]
        np.testing.assert_allclose(levels[0], levels[1], rtol=0, atol=0.01)


def test_interpolated_eigenrays_match_the_reshot_twin(make_site):
    """Eigenrays interpolated from the fan equal those re-shot one by one (the slow twin,
    ``refine="reshoot"``, Newton on the launch angle to 1 mm at the receiver).

    Source: the re-shot eigenray (an independent computation: a new ray per Newton step). Refracting
    profile, fluid seabed: delays within 0.1 us, levels within 0.05 dB, launch angles within 1e-3 deg.
    """
    z = [0.0, 10.0, 25.0, 40.0, 80.0]
    c = [1512.0, 1511.0, 1503.0, 1499.0, 1498.0]
    site = make_site(z, c, seabed_depth_m=(60.0,), bed_speed_mps=1650.0, bed_density_kgm3=1800.0,
                     bed_attenuation=0.6, source_depth_m=18.0)
    kw = dict(dynamic_range_db=30.0, tolerance_m=1e-3)
    fast = find_arrivals(site, [1200.0, 4100.0], [7.0, 33.0], 8000.0, **kw)
    slow = find_arrivals(site, [1200.0, 4100.0], [7.0, 33.0], 8000.0, refine="reshoot", **kw)
    assert fast.attrs["n_interpolated"] > 0 and slow.attrs["n_interpolated"] == 0
    checked = 0
    for j in range(2):
        for k in range(2):
            a, b = fast.isel(range=j, depth=k), slow.isel(range=j, depth=k)
            n = int(a.n_arrivals)
            assert n >= 5 and int(b.n_arrivals) == n
            np.testing.assert_allclose(a.delay_s.values[:n], b.delay_s.values[:n], rtol=0, atol=1e-7)
            np.testing.assert_allclose(a.launch_angle_deg.values[:n], b.launch_angle_deg.values[:n], rtol=0,
                                       atol=1e-3)
            la, lb = (20 * np.log10(np.abs(x.amplitude.values[:n, 0])) for x in (a, b))
            np.testing.assert_allclose(la, lb, rtol=0, atol=0.05)
            checked += n
    assert checked >= 20
