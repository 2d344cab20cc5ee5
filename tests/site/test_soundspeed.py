"""Checks of the sound-speed equations against published check values and TEOS-10 (gsw)."""

import gsw
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from aculink.errors import AculinkError
from aculink.site import (
    depth_from_pressure,
    mackenzie_validity_warnings,
    pressure_from_depth,
    sound_speed_mackenzie,
    sound_speed_teos10,
    sound_speed_unesco,
    teos10_validity_warnings,
    unesco_validity_warnings,
)

# [IOC2010] cross-formula table [computed with gsw 3.6.23 at lon -30, lat 30]:
# SP, t90, p (dbar), z (m), gsw.sound_speed, Mackenzie(t, SP, z), UNESCO83(SP, t68, p)
CROSS_TABLE = [
    (35.0, 28.0, 10, 9.9, 1541.250, 1541.298, 1541.497),
    (36.0, 20.0, 100, 99.3, 1524.157, 1524.218, 1524.261),
    (33.0, 15.0, 50, 49.7, 1505.146, 1505.129, 1505.173),
    (34.0, 0.0, 100, 99.3, 1449.275, 1449.240, 1449.423),
    (35.0, 10.0, 500, 496.0, 1497.959, 1497.929, 1498.075),
    (34.9, 4.0, 1000, 990.8, 1482.683, 1482.672, 1482.949),
    (34.9, 2.0, 2000, 1976.9, 1490.657, 1490.668, 1491.095),
    (34.7, 1.5, 4000, 3935.7, 1522.153, 1522.012, 1522.762),
    (34.7, 1.8, 6000, 5877.5, 1558.280, 1557.985, 1558.928),
]
CROSS_LON, CROSS_LAT = -30.0, 30.0


def test_mackenzie_published_check_value():
    """Mackenzie (1981), J. Acoust. Soc. Am. 70(3), 807-812, check value [published]:
    T = 25 degC, S = 35, D = 1000 m -> 1550.744 m/s."""
    assert sound_speed_mackenzie(25.0, 35.0, 1000.0) == pytest.approx(1550.744, abs=5e-4)


@pytest.mark.parametrize("t, s, d, expected, tol", [
    (40.0, 40.0, 10000.0, 1718.774, 5e-4),
    (0.0, 30.0, 10.0, 1442.42, 5e-3),
    (10.0, 30.0, 10.0, 1483.78, 5e-3),
    (20.0, 30.0, 1000.0, 1532.24, 5e-3),
])
def test_mackenzie_arithmetic(t, s, d, expected, tol):
    """[Mackenzie1981] [computed] from the Mackenzie (1981) equation as printed, compared at
    the table's printed precision; the first point is outside the validity range and checks
    the arithmetic of the D^2 and T D^3 terms."""
    assert sound_speed_mackenzie(t, s, d) == pytest.approx(expected, abs=tol)


def test_unesco_published_check_value():
    """Fofonoff and Millard (1983), UNESCO Tech. Pap. Mar. Sci. 44, check value [published]:
    S = 40, T68 = 40 degC, p = 10000 dbar -> 1731.995 m/s."""
    assert sound_speed_unesco(40.0, 40.0, 10000.0, ipts68=True) == pytest.approx(1731.995,
                                                                                abs=5e-4)


def test_unesco_converts_its90_to_ipts68():
    """T68 = 1.00024 T90 ([FofonoffMillard1983], [published] scale relation): an ITS-90 input of
    40/1.00024 degC must give the same value as the IPTS-68 check value."""
    assert sound_speed_unesco(40.0 / 1.00024, 40.0, 10000.0) == pytest.approx(
        sound_speed_unesco(40.0, 40.0, 10000.0, ipts68=True), abs=1e-9)


def test_unesco_cross_table():
    """[IOC2010] UNESCO83 column [computed, with t68 = 1.00024 t90], at the printed
    precision: this exercises the default ITS-90 input path over 10-6000 dbar."""
    sp, t, p, _, _, _, c_unesco = np.array(CROSS_TABLE).T
    np.testing.assert_allclose(sound_speed_unesco(t, sp, p), c_unesco, atol=5e-4)


def test_teos10_gsw_documented_examples():
    """gsw.sound_speed documentation example [published] ([IOC2010] table, 75-term,
    gsw 3.6.23): the examples give SA, CT and p, so we convert them back to the in-situ
    temperature and practical salinity our wrapper takes (gsw.t_from_CT, gsw.SP_from_SA at an
    arbitrary position, lon 188, lat 4) and expect the documented speeds."""
    sa = np.array([34.7118, 34.8915, 35.0256, 34.8472, 34.7366, 34.7324])
    ct = np.array([28.7856, 28.4329, 22.8103, 10.2600, 6.8863, 4.4036])
    p = np.array([10, 50, 125, 250, 600, 1000.0])
    expected = np.array([1542.426412426373, 1542.558891663385, 1530.801535436184,
                         1494.551099295314, 1487.622786765276, 1484.271672296205])
    lon, lat = 188.0, 4.0
    t = gsw.t_from_CT(sa, ct, p)
    sp = gsw.SP_from_SA(sa, p, lon, lat)
    c = sound_speed_teos10(t, sp, pressure_dbar=p, latitude_deg=lat, longitude_deg=lon)
    np.testing.assert_allclose(c, expected, rtol=0, atol=1e-8)


def test_teos10_cross_table_and_depth_conversion():
    """[IOC2010] [computed with gsw at lon -30, lat 30]: the gsw.sound_speed column
    through our wrapper from in-situ (SP, t, p), and the depth column from our pressure-to-depth
    conversion, both at the printed precision."""
    sp, t, p, z, c_gsw, _, _ = np.array(CROSS_TABLE).T
    c = sound_speed_teos10(t, sp, pressure_dbar=p, latitude_deg=CROSS_LAT,
                           longitude_deg=CROSS_LON)
    np.testing.assert_allclose(c, c_gsw, atol=5e-4)
    np.testing.assert_allclose(depth_from_pressure(p, CROSS_LAT), z, atol=0.05)


def test_teos10_from_depth_matches_from_pressure():
    """Giving depth must be the same as giving the pressure gsw.p_from_z assigns to that depth
    (TEOS-10, IOC Manuals and Guides 56, 2010) [computed]."""
    z = np.array([0.0, 50.0, 1000.0, 5000.0])
    c_depth = sound_speed_teos10(10.0, 35.0, depth_m=z, latitude_deg=60.0)
    c_pressure = sound_speed_teos10(10.0, 35.0, pressure_dbar=gsw.p_from_z(-z, 60.0),
                                    latitude_deg=60.0)
    np.testing.assert_allclose(c_depth, c_pressure, rtol=0, atol=1e-10)


def test_mackenzie_against_teos10_within_stated_tolerance():
    """[IOC2010] suggested tolerance [computed]: |Mackenzie - gsw| <= 0.1 m/s for
    z <= 2000 m and <= 0.5 m/s to 6000 m, Mackenzie at the depth from our conversion and gsw
    through our wrapper; the Mackenzie column itself is also reproduced at printed precision."""
    sp, t, p, _, _, c_mack_table, _ = np.array(CROSS_TABLE).T
    z = depth_from_pressure(p, CROSS_LAT)
    c_mack = sound_speed_mackenzie(t, sp, z)
    np.testing.assert_allclose(c_mack, c_mack_table, atol=5e-4)
    c_teos = sound_speed_teos10(t, sp, depth_m=z, latitude_deg=CROSS_LAT,
                                longitude_deg=CROSS_LON)
    diff = np.abs(c_mack - c_teos)
    assert np.all(diff[z <= 2000.0] <= 0.1)
    assert np.all(diff <= 0.5)


@settings(max_examples=50, deadline=None)
@given(st.floats(0.0, 8000.0), st.floats(-80.0, 80.0))
def test_depth_pressure_round_trip(depth_m, latitude_deg):
    """depth_from_pressure inverts pressure_from_depth (TEOS-10 z_from_p / p_from_z, IOC
    Manuals and Guides 56) to 1 mm [computed], and pressure grows about 1 % faster than depth
    (closed form p ~ rho g z: 1.00-1.03 dbar per metre over 0-8 km, common practice, no
    source)."""
    p = pressure_from_depth(depth_m, latitude_deg)
    assert depth_from_pressure(p, latitude_deg) == pytest.approx(depth_m, abs=1e-3)
    if depth_m > 1.0:
        assert 1.0 < p / depth_m < 1.04


def test_broadcasting():
    """Profiles broadcast: (n,) temperatures against (m, 1) depths give (m, n) [computed]."""
    t = np.linspace(0.0, 25.0, 4)
    z = np.linspace(0.0, 3000.0, 3)[:, None]
    assert sound_speed_mackenzie(t, 35.0, z).shape == (3, 4)
    assert sound_speed_unesco(t, 35.0, z).shape == (3, 4)
    assert sound_speed_teos10(t, 35.0, depth_m=z).shape == (3, 4)


def test_nan_propagates():
    """NaN marks missing data and gives NaN, not an error (project convention)."""
    c = sound_speed_mackenzie([10.0, np.nan], 35.0, 100.0)
    assert np.isfinite(c[0]) and np.isnan(c[1])


@pytest.mark.parametrize("call, field", [
    (lambda: sound_speed_mackenzie(10.0, 35.0, -1.0), "depth_m"),
    (lambda: sound_speed_mackenzie(10.0, -1.0, 10.0), "salinity_psu"),
    (lambda: sound_speed_unesco(10.0, 35.0, [10.0, -5.0]), "pressure_dbar"),
    (lambda: sound_speed_unesco(np.inf, 35.0, 10.0), "temperature_c"),
    (lambda: sound_speed_teos10(10.0, 35.0), "depth_m"),
    (lambda: sound_speed_teos10(10.0, 35.0, depth_m=1.0, pressure_dbar=1.0), "depth_m"),
    (lambda: pressure_from_depth(10.0, 95.0), "latitude_deg"),
])
def test_bad_input_is_one_line_error(call, field):
    """Bad input raises AculinkError with a one-line message naming the field (project rule)."""
    with pytest.raises(AculinkError) as err:
        call()
    assert field in str(err.value) and "\n" not in str(err.value)


def test_validity_warnings():
    """Validity ranges as stated by Mackenzie (1981) (T -2..30 degC, S 25..40, D 0..8000 m) and
    Fofonoff and Millard (1983) for UNESCO (T 0..40, S 0..40, P 0..1000 bar) [published]; the
    TEOS-10 75-term funnel via gsw.infunnel (p <= 8000 dbar) and CT <= 40 degC (McDougall et
    al. 2003, from memory)."""
    assert mackenzie_validity_warnings([0.0, 30.0], 35.0, [0.0, 8000.0]) == []
    notes = mackenzie_validity_warnings([5.0, 31.0], 20.0, 9000.0)
    assert len(notes) == 3
    assert "temperature 31" in notes[0] and "salinity 20" in notes[1] and "depth 9000" in notes[2]
    assert unesco_validity_warnings(40.0, 40.0, 10000.0) == []
    (note,) = unesco_validity_warnings(-1.0, 35.0, 100.0)
    assert "temperature -1" in note
    assert teos10_validity_warnings(10.0, 35.0, depth_m=1000.0) == []
    assert len(teos10_validity_warnings(10.0, 35.0, depth_m=9000.0)) == 1
    (hot,) = teos10_validity_warnings(45.0, 35.0, depth_m=10.0)
    assert "conservative temperature" in hot and "up to 40 degC" in hot
