"""The site-file loader: every way of giving the water column, defaults, and every bad input."""

from __future__ import annotations

import math
from pathlib import Path

import gsw
import numpy as np
import pytest

from aculink.errors import AculinkError
from aculink.site.loader import load_site, munk_speed, read_ctd_csv, site_from_dict
from aculink.site.model import Modem, Receiver, Site, Source, Surface
from aculink.site.profile import SoundSpeedProfile

ENVIRONMENTS = Path(__file__).resolve().parents[2] / "environments"


# --------------------------------------------------------------------------- the [water] forms
def test_table_round_trip(base, write_site):
    """Tabulated speeds come back unchanged on their nodes (interpolation passes through the
    data; exact, no source needed)."""
    site = load_site(write_site(base))
    p = site.water.profile
    assert p.source == "table"
    np.testing.assert_allclose(p.depth_m, [0.0, 50.0, 100.0])
    np.testing.assert_allclose(p.speed([0.0, 50.0, 100.0]), [1500.0, 1495.0, 1494.0], atol=1e-9)
    assert p.temperature_c is None
    assert site.name == "test site"
    assert site.text.startswith('"name"')


def test_table_with_temperature_keeps_it_for_absorption(base, write_site):
    """temperature_c / salinity_psu beside a speed table are kept on the profile (a number
    broadcasts to every node)."""
    base["water"].update(temperature_c=[15.0, 12.0, 11.0], salinity_psu=35.0)
    p = load_site(write_site(base)).water.profile
    np.testing.assert_allclose(p.temperature_c, [15.0, 12.0, 11.0])
    np.testing.assert_allclose(p.salinity_psu, 35.0)


def test_table_starting_below_surface_is_carried_up(base, write_site):
    """A table whose first node is a few metres down gets a surface node with the same value."""
    base["water"] = {"depth_m": [2.0, 100.0], "sound_speed_mps": [1500.0, 1490.0]}
    p = load_site(write_site(base)).water.profile
    assert p.depth_m[0] == 0.0
    assert p.speed(0.0) == pytest.approx(1500.0)


def test_mackenzie_published_check_value(base, write_site):
    """Mackenzie (1981), J. Acoust. Soc. Am. 70(3) 807-812, check value: T = 25 degC, S = 35,
    D = 1000 m gives 1550.744 m/s [published]."""
    base["water"] = {"depth_m": [0.0, 1000.0], "temperature_c": 25.0, "salinity_psu": 35.0,
                     "equation": "mackenzie"}
    base["seabed"]["depth_m"] = 1000.0
    site = load_site(write_site(base))
    assert site.water.profile.source == "mackenzie"
    assert float(site.water.profile.speed(1000.0)) == pytest.approx(1550.744, abs=1e-3)


def test_unesco_converts_depth_to_pressure(base, write_site):
    """UNESCO check value (Fofonoff and Millard 1983, p. 48): S = 40, T68 = 40 degC,
    p = 10000 dbar gives 1731.995 m/s [published]. The depth is given; the loader must turn it
    back into 10000 dbar at the stated latitude (the depth comes from gsw.z_from_p, TEOS-10)."""
    lat = 30.0
    depth = float(-gsw.z_from_p(10000.0, lat))
    base["water"] = {"depth_m": [0.0, depth], "temperature_c": 40.0 / 1.00024, "salinity_psu": 40.0,
                     "equation": "unesco", "latitude_deg": lat}
    base["seabed"]["depth_m"] = depth
    base["receiver"]["depth_m"] = 5000.0
    p = load_site(write_site(base)).water.profile
    assert float(p.speed(depth)) == pytest.approx(1731.995, abs=2e-3)


@pytest.mark.parametrize("lat", [0.0, 75.0])
def test_teos10_matches_gsw_with_latitude(base, write_site, lat):
    """TEOS-10 path against the gsw library directly (SA_from_SP, CT_from_t, sound_speed at
    p_from_z at the site's latitude and longitude; IOC Manuals and Guides 56, 2010)."""
    z = np.array([0.0, 1000.0, 3000.0])
    t = np.array([20.0, 5.0, 2.0])
    s = np.array([35.5, 34.9, 34.8])
    base["water"] = {"depth_m": z.tolist(), "temperature_c": t.tolist(), "salinity_psu": s.tolist(),
                     "equation": "teos10", "latitude_deg": lat, "longitude_deg": -30.0}
    base["seabed"]["depth_m"] = 3000.0
    p = load_site(write_site(base)).water.profile
    pr = gsw.p_from_z(-z, lat)
    sa = gsw.SA_from_SP(s, pr, -30.0, lat)
    expected = gsw.sound_speed(sa, gsw.CT_from_t(sa, t, pr), pr)
    np.testing.assert_allclose(p.speed(z), expected, atol=1e-9)


def test_default_equation_is_teos10(base, write_site):
    """Without `equation` the TEOS-10 path is used (documented default)."""
    base["water"] = {"depth_m": [0.0, 100.0], "temperature_c": 10.0, "salinity_psu": 35.0}
    assert load_site(write_site(base)).water.profile.source == "teos10"


def test_ctd_file_with_depth(base, write_site, tmp_path):
    """A CTD CSV (comments, a column to ignore, columns in any order) gives the cast's nodes,
    keeps temperature and salinity, and matches Mackenzie (1981) at T = 25, S = 35, D = 1000 m,
    1550.744 m/s [published]."""
    (tmp_path / "cast.csv").write_text(
        "# invented cast\nSalinity_PSU,depth_m,oxygen,temperature_c\n35,0,7,25\n35,500,6,25\n35,1000,5,25\n")
    base["water"] = {"ctd_file": "cast.csv", "equation": "mackenzie"}
    base["seabed"]["depth_m"] = 1000.0
    p = load_site(write_site(base)).water.profile
    np.testing.assert_allclose(p.depth_m, [0.0, 500.0, 1000.0])
    np.testing.assert_allclose(p.temperature_c, 25.0)
    assert float(p.speed(1000.0)) == pytest.approx(1550.744, abs=1e-3)


def test_ctd_file_with_pressure(base, write_site, tmp_path):
    """A pressure column is turned into depth with gsw.z_from_p at the site's latitude (TEOS-10)."""
    (tmp_path / "cast.csv").write_text("pressure_dbar,temperature_c,salinity_psu\n0,10,35\n"
                                       "500,8,35\n1020,4,35\n")
    base["water"] = {"ctd_file": "cast.csv", "latitude_deg": 60.0}
    base["seabed"]["depth_m"] = 1000.0
    p = load_site(write_site(base)).water.profile
    np.testing.assert_allclose(p.depth_m, -gsw.z_from_p([0.0, 500.0, 1020.0], 60.0), atol=1e-9)


def test_bundled_summer_shelf_reads_its_cast():
    """The summer shelf uses environments/shelf_summer_ctd.csv: the profile has the cast's
    rows (plus a surface node carried up from the first row at 1 m)."""
    site = load_site(ENVIRONMENTS / "shelf_summer.toml")
    cast = read_ctd_csv(ENVIRONMENTS / "shelf_summer_ctd.csv")
    assert site.water.profile.depth_m.size == cast["depth_m"].size + 1
    np.testing.assert_allclose(site.water.profile.temperature_c[1:], cast["temperature_c"])
    assert site.receiver.range_m == 4000.0


def test_isovelocity_and_linear_profiles(base, write_site):
    """Analytic profiles reach the seabed: isovelocity is constant; linear is c0 + g z exactly
    (closed form)."""
    base["water"] = {"profile": "isovelocity", "sound_speed_mps": 1480.0}
    p = load_site(write_site(base)).water.profile
    assert p.max_depth_m == 100.0
    np.testing.assert_allclose(p.speed([0.0, 37.0, 100.0]), 1480.0)
    base["water"] = {"profile": "linear", "surface_speed_mps": 1450.0, "gradient_per_s": 0.017}
    p = load_site(write_site(base)).water.profile
    z = np.array([0.0, 12.5, 100.0])
    np.testing.assert_allclose(p.speed(z), 1450.0 + 0.017 * z, atol=1e-9)
    np.testing.assert_allclose(p.evaluate(z)[1], 0.017, atol=1e-12)


def test_munk_profile_values(base, write_site):
    """Munk (1974) canonical profile with its defaults (axis 1300 m, scale 1300 m, 1500 m/s,
    epsilon 0.00737): c = 1548.5210, 1500.0000, 1518.6666, 1551.9107 m/s at 0, 1300, 3000,
    5000 m ([Munk1974], [computed] from the formula) to 1e-3 m/s on the tabulated grid."""
    base["water"] = {"profile": "munk"}
    base["seabed"]["depth_m"] = 5000.0
    base["receiver"]["depth_m"] = 1000.0
    p = load_site(write_site(base)).water.profile
    assert p.source == "munk" and p.max_depth_m == 5000.0
    np.testing.assert_allclose(p.speed([0.0, 1300.0, 3000.0, 5000.0]),
                               [1548.5210, 1500.0, 1518.6666, 1551.9107], atol=1e-3)
    assert munk_speed(1300.0) == pytest.approx(1500.0)


def test_analytic_temperature_is_uniform(base, write_site):
    """With an analytic profile, temperature_c / salinity_psu are single numbers for absorption."""
    base["water"] = {"profile": "isovelocity", "temperature_c": -1.0, "salinity_psu": 34.0}
    p = load_site(write_site(base)).water.profile
    np.testing.assert_allclose(p.temperature_at([0.0, 100.0]), -1.0)
    np.testing.assert_allclose(p.salinity_at([0.0, 100.0]), 34.0)


# --------------------------------------------------------------------------- other sections
def test_sediment_preset_scales_with_the_water(base, write_site):
    """Medium sand: speed ratio 1.1782, density ratio 1.845, 0.886 dB/wavelength (APL-UW TR
    9407 (1994) sediment table, [APLUW1994]) [published]) against the water at the
    deepest seabed point (1494 m/s) and the water density (default 1025 kg/m^3)."""
    bed = load_site(write_site(base)).seabed
    assert bed.sediment == "medium sand"
    assert bed.sound_speed_mps == pytest.approx(1.1782 * 1494.0)
    assert bed.density_kgm3 == pytest.approx(1.845 * 1025.0)
    assert bed.attenuation_db_per_wavelength == pytest.approx(0.886)


def test_explicit_seabed_values_override_the_preset(base, write_site):
    base["seabed"].update(sound_speed_mps=1700.0)
    bed = load_site(write_site(base)).seabed
    assert bed.sound_speed_mps == 1700.0 and bed.density_kgm3 == pytest.approx(1.845 * 1025.0)
    base["seabed"] = {"depth_m": 100.0, "sound_speed_mps": 1600.0, "density_kgm3": 1800.0,
                      "attenuation_db_per_wavelength": 0.5}
    bed = load_site(write_site(base)).seabed
    assert bed.sediment is None and bed.sound_speed_mps == 1600.0


def test_sloping_seabed(base, write_site):
    """A piecewise-linear seabed interpolates linearly between its points."""
    base["seabed"].update(depth_m=[80.0, 100.0], range_m=[0.0, 4000.0])
    bed = load_site(write_site(base)).seabed
    assert not bed.is_flat and bed.max_range_m == 4000.0
    assert float(bed.depth_at(2000.0)) == pytest.approx(90.0)


def test_surface_from_wind_and_from_wave_height(base, write_site):
    """Pierson-Moskowitz (1964): sigma = 0.052311 U19.5^2 / g with U19.5 = 1.06 U10
    ([PiersonMoskowitz1964] [computed] closed form; the 1.06 factor is aculink.constants'). Given only
    the rms height, the wind is the one that produces it."""
    site = load_site(write_site(base))
    u195 = 1.06 * 5.0
    assert site.surface.rms_height_m == pytest.approx(0.052311 * u195 ** 2 / 9.80665, rel=1e-4)
    assert site.noise.wind_speed_mps == 5.0
    base["surface"] = {"rms_height_m": 0.5}
    s = load_site(write_site(base)).surface
    assert 0.052311 * (1.06 * s.wind_speed_mps) ** 2 / 9.80665 == pytest.approx(0.5, rel=1e-4)


def test_defaults(base, write_site):
    """Sections [surface], [noise] and [modem] may be left out; the README states these defaults."""
    for section in ("surface", "noise", "modem"):
        del base[section]
    base["source"] = {"depth_m": 20.0}
    site = load_site(write_site(base))
    assert site.surface.wind_speed_mps == 5.0
    assert site.noise.shipping == 0.5 and site.noise.extra_db == 0.0
    assert site.source.level_db == 180.0 and site.source.speed_mps == 0.0
    m = site.modem
    assert (m.carrier_hz, m.bandwidth_hz, m.rolloff, m.target_ber, m.margin_db) == (12000.0, 6000.0, 0.25, 1e-4, 3.0)
    assert site.water.ph == 8.0 and site.water.latitude_deg == 45.0
    assert m.band_hz == (9000.0, 15000.0) and m.max_symbol_rate_baud == pytest.approx(4800.0)


def test_site_from_dict_and_with_geometry(base):
    """The Python path: site_from_dict without a file; with_geometry still moves the receiver."""
    site = site_from_dict(base, name="py")
    moved = site.with_geometry(range_m=3000.0, depth_m=70.0, source_depth_m=10.0)
    assert (moved.receiver.range_m, moved.receiver.depth_m, moved.source.depth_m) == (3000.0, 70.0, 10.0)
    assert site.receiver.range_m == 2000.0


@pytest.mark.parametrize("name", sorted(p.stem for p in ENVIRONMENTS.glob("*.toml")))
def test_bundled_environments_load(name):
    site = load_site(ENVIRONMENTS / f"{name}.toml")
    assert site.name and site.description
    assert site.water.profile.max_depth_m >= site.seabed.max_depth_m
    text = (ENVIRONMENTS / f"{name}.toml").read_text()
    assert text.startswith("#") and "illustrative" in text.split("\n\n")[0]


def test_five_bundled_environments_exist():
    names = {p.stem for p in ENVIRONMENTS.glob("*.toml")}
    assert {"shelf_summer", "shelf_winter", "harbour_approach", "deep_channel", "polar_calm"} <= names


# --------------------------------------------------------------------------- bad input
def _set(path, value):
    def change(d):
        *head, last = path
        for key in head:
            d = d[key]
        if value is _DELETE:
            del d[last]
        else:
            d[last] = value
    return change


_DELETE = object()

BAD = {
    "unknown section": (_set(["watr"], {"ph": 8.0}), ["watr", "did you mean 'water'"]),
    "unknown key": (_set(["source", "levl_db"], 170.0), ["[source] levl_db", "did you mean 'level_db'"]),
    "key in wrong section": (_set(["noise", "wind_speed_mps"], 3.0), ["[noise] wind_speed_mps", "[surface]"]),
    "wrong type": (_set(["source", "depth_m"], "twenty"), ["[source] depth_m", "'twenty'"]),
    "bool as number": (_set(["modem", "rolloff"], True), ["[modem] rolloff", "True"]),
    "list for scalar": (_set(["receiver", "range_m"], [1.0, 2.0]), ["[receiver] range_m"]),
    "negative profile depth": (_set(["water", "depth_m"], [-5.0, 50.0, 100.0]), ["[water] depth_m[0]", "-5"]),
    "non-increasing depth": (_set(["water", "depth_m"], [0.0, 50.0, 50.0]), ["[water] depth_m[2]", "increasing"]),
    "length mismatch": (_set(["water", "sound_speed_mps"], [1500.0, 1490.0]), ["sound_speed_mps", "depth_m"]),
    "speed in wrong unit": (_set(["water", "sound_speed_mps"], [1500.0, 1495.0, 149.0]),
                            ["[water] sound_speed_mps[2]", "149", "[1300, 1800]"]),
    "profile short of seabed": (_set(["seabed", "depth_m"], 120.0), ["[water] depth_m", "100", "120"]),
    "negative seabed depth": (_set(["seabed", "depth_m"], -10.0), ["[seabed] depth_m", "-10"]),
    "seabed range not from 0": (lambda d: d["seabed"].update(depth_m=[90.0, 100.0], range_m=[10.0, 5000.0]),
                                ["[seabed] range_m[0]", "10"]),
    "seabed ranges not increasing": (lambda d: d["seabed"].update(depth_m=[90.0, 95.0, 100.0],
                                                                  range_m=[0.0, 3000.0, 3000.0]),
                                     ["[seabed] range_m[2]", "3000", "increasing"]),
    "seabed list lengths": (lambda d: d["seabed"].update(depth_m=[90.0, 100.0], range_m=[0.0]),
                            ["[seabed] range_m", "1", "2"]),
    "receiver below seabed": (_set(["receiver", "depth_m"], 100.5), ["[receiver] depth_m", "100.5", "seabed"]),
    "receiver below sloping seabed": (lambda d: (d["seabed"].update(depth_m=[100.0, 40.0], range_m=[0.0, 4000.0]),
                                                 d["receiver"].update(depth_m=75.0)),
                                      ["[receiver] depth_m", "75", "70 m deep at range 2000"]),
    "receiver beyond track": (lambda d: d["seabed"].update(depth_m=[100.0, 90.0], range_m=[0.0, 1000.0]),
                              ["[receiver] range_m", "2000", "1000"]),
    "source above surface": (_set(["source", "depth_m"], -1.0), ["[source] depth_m", "-1"]),
    "source at surface": (_set(["source", "depth_m"], 0.0), ["[source] depth_m", "0"]),
    "rolloff above 1": (_set(["modem", "rolloff"], 1.5), ["[modem] rolloff", "1.5", "[0, 1]"]),
    "carrier below half bandwidth": (lambda d: d["modem"].update(carrier_hz=2000.0, bandwidth_hz=6000.0),
                                     ["[modem] bandwidth_hz", "6000", "4000"]),
    "target ber zero": (_set(["modem", "target_ber"], 0.0), ["[modem] target_ber", "(0, 0.5)"]),
    "shipping above 1": (_set(["noise", "shipping"], 2.0), ["[noise] shipping", "2", "[0, 1]"]),
    "nan": (_set(["source", "level_db"], float("nan")), ["[source] level_db", "nan"]),
    "inf": (_set(["water", "sound_speed_mps"], [1500.0, float("inf"), 1494.0]), ["[water] sound_speed_mps[1]"]),
    "unknown equation": (lambda d: d.update(water={"depth_m": [0.0, 100.0], "temperature_c": 10.0,
                                                   "salinity_psu": 35.0, "equation": "mackenzy"}),
                         ["[water] equation", "mackenzy", "did you mean 'mackenzie'"]),
    "temperature in kelvin": (lambda d: d.update(water={"depth_m": [0.0, 100.0], "temperature_c": 283.0,
                                                        "salinity_psu": 35.0}),
                              ["[water] temperature_c", "283", "[-3, 40]"]),
    "unknown sediment": (_set(["seabed", "sediment"], "medium sandd"), ["[seabed] sediment", "medium sandd",
                                                                         "did you mean 'medium sand'"]),
    "no seabed properties": (_set(["seabed", "sediment"], _DELETE), ["[seabed]", "sediment"]),
    "unknown profile": (lambda d: d.update(water={"profile": "munck"}), ["[water] profile", "munck", "'munk'"]),
    "key of another form": (lambda d: d.update(water={"profile": "munk", "gradient_per_s": 0.01}),
                            ["[water] gradient_per_s", "profile = 'munk'"]),
    "linear without gradient": (lambda d: d.update(water={"profile": "linear"}), ["[water] gradient_per_s",
                                                                                   "missing"]),
    "no water column": (lambda d: d.update(water={"ph": 8.0}), ["[water]", "ctd_file"]),
    "missing section": (_set(["receiver"], _DELETE), ["[receiver]", "missing"]),
    "missing key": (_set(["receiver", "range_m"], _DELETE), ["[receiver] range_m", "missing"]),
    "section not a table": (_set(["surface"], 3.0), ["[surface]", "3.0"]),
    "name not text": (_set(["name"], 5), ["name", "5"]),
    "ph out of range": (_set(["water", "ph"], 12.0), ["[water] ph", "12", "[6.5, 9]"]),
    "missing ctd file": (lambda d: d.update(water={"ctd_file": "nowhere.csv"}), ["ctd_file", "nowhere.csv",
                                                                                 "not found"]),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_input_is_one_line_naming_file_key_and_value(base, write_site, case):
    change, needles = BAD[case]
    change(base)
    path = write_site(base)
    with pytest.raises(AculinkError) as info:
        load_site(path)
    msg = str(info.value)
    assert "\n" not in msg
    assert msg.startswith(str(path))
    for needle in needles:
        assert needle in msg, (needle, msg)


def _ctd_case(base, write_site, tmp_path, text):
    (tmp_path / "cast.csv").write_text(text)
    base["water"] = {"ctd_file": "cast.csv"}
    with pytest.raises(AculinkError) as info:
        load_site(write_site(base))
    msg = str(info.value)
    assert "\n" not in msg and "cast.csv" in msg
    return msg


def test_ctd_missing_column(base, write_site, tmp_path):
    msg = _ctd_case(base, write_site, tmp_path, "depth_m,temperature_c\n0,10\n100,9\n")
    assert "salinity_psu" in msg and "missing" in msg


def test_ctd_missing_depth_column(base, write_site, tmp_path):
    msg = _ctd_case(base, write_site, tmp_path, "temperature_c,salinity_psu\n10,35\n9,35\n")
    assert "depth_m or pressure_dbar" in msg


def test_ctd_text_in_a_number_cell(base, write_site, tmp_path):
    msg = _ctd_case(base, write_site, tmp_path, "depth_m,temperature_c,salinity_psu\n0,10,35\n100,warm,35\n")
    assert "line 3" in msg and "temperature_c" in msg and "'warm'" in msg


def test_ctd_upcast_rows_rejected(base, write_site, tmp_path):
    msg = _ctd_case(base, write_site, tmp_path, "depth_m,temperature_c,salinity_psu\n0,10,35\n100,9,35\n50,9,35\n")
    assert "line 4" in msg and "downcast" in msg


def test_ctd_cast_short_of_seabed(base, write_site, tmp_path):
    msg = _ctd_case(base, write_site, tmp_path, "depth_m,temperature_c,salinity_psu\n0,10,35\n80,9,35\n")
    assert "80" in msg and "100" in msg


def test_ctd_empty(base, write_site, tmp_path):
    msg = _ctd_case(base, write_site, tmp_path, "# nothing\n\n")
    assert "empty" in msg


def test_toml_syntax_error_names_the_line(write_site):
    path = write_site('name = "x"\n[water]\ndepth_m = [0.0, 10.0\n')
    with pytest.raises(AculinkError) as info:
        load_site(path)
    msg = str(info.value)
    assert msg.startswith(str(path)) and "TOML syntax error" in msg and "line" in msg and "\n" not in msg


def test_missing_site_file(tmp_path):
    with pytest.raises(AculinkError, match="not found"):
        load_site(tmp_path / "absent.toml")
    with pytest.raises(AculinkError, match="not a file"):
        load_site(tmp_path)


def test_binary_site_file(tmp_path):
    path = tmp_path / "site.toml"
    path.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(AculinkError, match="UTF-8"):
        load_site(path)


def test_dict_errors_name_the_site(base):
    """Without a file, messages start with the site name given."""
    base["modem"]["rolloff"] = -0.1
    with pytest.raises(AculinkError, match=r"^mysite: \[modem\] rolloff"):
        site_from_dict(base, name="mysite")


# --------------------------------------------------------------------------- the Python API
@pytest.mark.parametrize("make", [
    lambda: Modem(rolloff=2.0),
    lambda: Modem(carrier_hz=1000.0, bandwidth_hz=5000.0),
    lambda: Receiver(depth_m=float("nan"), range_m=1000.0),
    lambda: Receiver(depth_m=10.0, range_m=0.0),
    lambda: Source(depth_m="deep"),
    lambda: Surface(wind_speed_mps=-1.0),
])
def test_dataclasses_validate(make):
    with pytest.raises(AculinkError):
        make()


def test_site_rejects_a_profile_short_of_the_seabed(base):
    site = site_from_dict(base)
    short = SoundSpeedProfile(depth_m=[0.0, 50.0], speed_mps=[1500.0, 1500.0])
    with pytest.raises(AculinkError, match="deepest seabed point"):
        site.replace(water=type(site.water)(profile=short))
    assert isinstance(site, Site) and math.isfinite(site.seabed.sound_speed_mps)
