"""The site summary: profile features, seabed, absorption and noise facts against outside values."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from aculink.cli._common import _jsonable
from aculink.site.loader import load_site, site_from_dict
from aculink.site.profile import SoundSpeedProfile
from aculink.site.summary import CAUTION, format_summary, profile_features, summarize_site

ENVIRONMENTS = Path(__file__).resolve().parents[2] / "environments"


def _site(base, **sections):
    for name, value in sections.items():
        base[name] = value
    return site_from_dict(base, name="summary test")


def test_munk_axis_and_critical_depth(base):
    """Munk (1974) canonical profile: axis at 1300 m (1500 m/s) and critical depth 4799.9 m,
    where c returns to the surface speed 1548.52 m/s ([Munk1974] [computed]; tolerance
    0.1%). No surface duct: the speed falls from the surface to the axis."""
    site = _site(base, water={"profile": "munk"}, seabed={"depth_m": 5200.0, "sediment": "clay"},
                 receiver={"depth_m": 1300.0, "range_m": 20000.0})
    w = summarize_site(site)["water"]
    assert w["channel_axis_depth_m"] == pytest.approx(1300.0, rel=1e-3)
    assert w["channel_axis_speed_mps"] == pytest.approx(1500.0, abs=1e-2)
    assert w["critical_depth_m"] == pytest.approx(4799.9, rel=1e-3)
    assert w["depth_excess_m"] == pytest.approx(5200.0 - 4799.9, abs=5.0)
    assert w["surface_speed_mps"] == pytest.approx(1548.52, abs=0.01)
    assert w["surface_duct_depth_m"] is None
    assert w["regime"] == "sound channel"


def test_munk_in_water_too_shallow_for_the_critical_depth(base):
    """With the seabed at 4000 m the Munk water never gets back to the surface speed (it is
    1535.04 m/s at 4000 m, [Munk1974] [computed]): axis yes, critical depth no, and a
    warning says so."""
    site = _site(base, water={"profile": "munk"}, seabed={"depth_m": 4000.0, "sediment": "clay"},
                 receiver={"depth_m": 1300.0, "range_m": 20000.0})
    s = summarize_site(site)
    assert s["water"]["channel_axis_depth_m"] == pytest.approx(1300.0, rel=1e-3)
    assert s["water"]["critical_depth_m"] is None
    assert any("critical depth" in x for x in s["warnings"])


def test_surface_duct_depth_is_the_speed_maximum():
    """Definition (Urick 1983, ch. 5: the sonic layer depth is the depth of the near-surface
    speed maximum): a profile rising to 40 m and falling below has its duct at 40 m; the
    shape-preserving interpolation keeps the maximum on the node (Fritsch and Carlson 1980)."""
    p = SoundSpeedProfile(depth_m=[0.0, 20.0, 40.0, 70.0, 100.0],
                          speed_mps=[1500.0, 1500.3, 1500.6, 1495.0, 1493.0])
    f = profile_features(p, 100.0)
    assert f["surface_duct_depth_m"] == pytest.approx(40.0, abs=0.01)
    assert f["channel_axis_depth_m"] is None
    assert f["regime"] == "surface duct over a downward-refracting layer"


def test_regimes_of_simple_profiles():
    """Linear profiles (closed form): decreasing is downward refracting, increasing upward; a
    spread under 1 m/s is near isovelocity (aculink's threshold; common practice, no source)."""
    down = SoundSpeedProfile(depth_m=[0.0, 100.0], speed_mps=[1510.0, 1490.0])
    up = SoundSpeedProfile(depth_m=[0.0, 100.0], speed_mps=[1490.0, 1495.0])
    flat = SoundSpeedProfile(depth_m=[0.0, 100.0], speed_mps=[1490.0, 1490.5])
    assert profile_features(down, 100.0)["regime"] == "downward refracting"
    assert profile_features(up, 100.0)["regime"] == "upward refracting"
    assert profile_features(flat, 100.0)["regime"] == "near isovelocity"
    f = profile_features(down, 100.0)
    assert (f["speed_min_mps"], f["speed_max_mps"]) == pytest.approx((1490.0, 1510.0))


def test_critical_grazing_angle_and_bottom_loss(base):
    """Rayleigh reflection, sand of [Jensen2011] table (a): m = 1.9, c2/c1 = 1.1,
    0.8 dB/wavelength. Critical grazing angle arccos(c1/c2) = 24.620 deg (Snell's law, closed
    form); bottom loss 0.719 dB at 10 deg, 5.255 dB at 30 deg, 9.050 dB at 90 deg
    ([computed] from the formula, memory form)."""
    site = _site(base, water={"profile": "isovelocity", "sound_speed_mps": 1500.0, "density_kgm3": 1000.0},
                 seabed={"depth_m": 100.0, "sound_speed_mps": 1650.0, "density_kgm3": 1900.0,
                         "attenuation_db_per_wavelength": 0.8})
    b = summarize_site(site)["seabed"]
    assert b["critical_grazing_angle_deg"] == pytest.approx(math.degrees(math.acos(1500.0 / 1650.0)), abs=0.01)
    assert b["critical_grazing_angle_deg"] == pytest.approx(24.620, abs=0.01)
    loss = dict(zip(b["bottom_loss_grazing_deg"], b["bottom_loss_db"]))
    assert loss[10.0] == pytest.approx(0.719, abs=0.01)
    assert loss[30.0] == pytest.approx(5.255, abs=0.01)
    assert loss[90.0] == pytest.approx(9.050, abs=0.01)
    assert b["intromission_grazing_angle_deg"] is None


def test_slow_seabed_has_no_critical_angle_but_an_intromission_angle(base):
    """APL-UW clay (m = 1.145, nu = 0.980): no critical angle, lossless intromission angle
    21.352 deg ([Jensen2011] table (c) [computed])."""
    site = _site(base, water={"profile": "isovelocity", "sound_speed_mps": 1500.0, "density_kgm3": 1000.0},
                 seabed={"depth_m": 100.0, "sound_speed_mps": 1470.0, "density_kgm3": 1145.0,
                         "attenuation_db_per_wavelength": 0.0})
    b = summarize_site(site)["seabed"]
    assert b["critical_grazing_angle_deg"] is None
    assert b["intromission_grazing_angle_deg"] == pytest.approx(21.352, abs=0.01)


def test_noise_at_the_carrier_and_over_the_band(base):
    """Wenz-curve fits (Coates 1989; [Coates1990] [computed]): s = 0.5, w = 5 m/s gives
    46.09 dB re 1 uPa^2/Hz at 10 kHz; over 10-20 kHz the band level is 83.25 dB re 1 uPa^2.
    extra_db adds to both."""
    site = _site(base, surface={"wind_speed_mps": 5.0}, noise={"shipping": 0.5},
                 modem={"carrier_hz": 10000.0, "bandwidth_hz": 4000.0})
    assert summarize_site(site)["noise"]["psd_at_carrier_db_re_1upa2_per_hz"] == pytest.approx(46.09, abs=0.01)
    site = _site(base, modem={"carrier_hz": 15000.0, "bandwidth_hz": 10000.0}, noise={"shipping": 0.5, "extra_db": 2.0})
    n = summarize_site(site)["noise"]
    assert n["band_level_db_re_1upa2"] == pytest.approx(83.25 + 2.0, abs=0.01)


def test_absorption_at_the_carrier(base):
    """Francois and Garrison (1982) check table: T = 10 degC, S = 35, 10 kHz gives
    0.963 dB/km [published]; a 10 m column barely changes it (depth factors of order 1e-3),
    so the column mean is within 0.5%. Over 2 km that is about 1.93 dB."""
    site = _site(base, water={"profile": "isovelocity", "temperature_c": 10.0, "salinity_psu": 35.0, "ph": 8.0},
                 seabed={"depth_m": 10.0, "sediment": "sand"}, source={"depth_m": 5.0},
                 receiver={"depth_m": 5.0, "range_m": 2000.0}, modem={"carrier_hz": 10000.0, "bandwidth_hz": 4000.0})
    a = summarize_site(site)["absorption"]
    assert a["column_mean_db_per_km"] == pytest.approx(0.963, rel=5e-3)
    assert a["loss_at_receiver_range_db"] == pytest.approx(2 * 0.963, rel=1e-2)
    assert a["band_low_db_per_km"] < a["column_mean_db_per_km"] < a["band_high_db_per_km"]


def test_surface_coherent_loss_at_the_carrier(base):
    """Eckart (1953): loss = 4.343 Gamma^2 dB with Gamma = 2 k sigma sin(theta). With
    sigma = 0.05 m, 10 kHz, c = 1500 m/s the loss is 0.579 dB at 5 deg and 2.298 dB at 10 deg
    ([Eckart1953] [computed])."""
    site = _site(base, water={"profile": "isovelocity", "sound_speed_mps": 1500.0},
                 surface={"rms_height_m": 0.05}, modem={"carrier_hz": 10000.0, "bandwidth_hz": 4000.0})
    f = summarize_site(site)["surface"]
    loss = dict(zip(f["coherent_loss_grazing_deg"], f["coherent_loss_db"]))
    assert loss[5.0] == pytest.approx(0.579, abs=0.01)
    assert loss[10.0] == pytest.approx(2.298, abs=0.01)


def test_validity_warnings_appear(base):
    """Inputs outside a formula's stated range are reported: Mackenzie (1981) stops at 30 degC
    and Francois-Garrison (1982) below 200 Hz."""
    site = _site(base, water={"depth_m": [0.0, 100.0], "temperature_c": 33.0, "salinity_psu": 35.0,
                              "equation": "mackenzie"},
                 modem={"carrier_hz": 150.0, "bandwidth_hz": 100.0})
    warnings = " | ".join(summarize_site(site)["warnings"])
    assert "Mackenzie" in warnings and "temperature" in warnings
    assert "Francois-Garrison" in warnings and "frequency" in warnings


def test_missing_temperature_is_flagged(base):
    site = site_from_dict(base)
    assert any("10 degC" in w for w in summarize_site(site)["warnings"])


@pytest.mark.parametrize("name", sorted(p.stem for p in ENVIRONMENTS.glob("*.toml")))
def test_bundled_summaries_are_complete_and_json_ready(name):
    """Every bundled site summarises, keeps its units in the key names, and survives JSON."""
    s = summarize_site(load_site(ENVIRONMENTS / f"{name}.toml"))
    text = format_summary(s)
    assert CAUTION in text and s["site"]["name"] in text
    assert "dB re 1 uPa^2/Hz" in text and "critical grazing angle" in text
    obj = json.loads(json.dumps(_jsonable(s), allow_nan=False))
    assert obj["modem"]["carrier_hz"] > 0
    assert "psd_at_carrier_db_re_1upa2_per_hz" in obj["noise"]


def test_bundled_sites_have_their_intended_character():
    """The bundled scenarios show the situation each one's header describes (a check on our
    own demo data, common practice for what the words mean, no source)."""
    regime = {p.stem: summarize_site(load_site(p))["water"] for p in ENVIRONMENTS.glob("*.toml")}
    assert regime["shelf_summer"]["regime"] == "downward refracting"
    assert regime["shelf_winter"]["regime"] == "near isovelocity"
    assert regime["polar_calm"]["regime"] == "upward refracting"
    deep = regime["deep_channel"]
    assert deep["channel_axis_depth_m"] is not None and 700.0 < deep["channel_axis_depth_m"] < 1400.0
    assert deep["critical_depth_m"] is not None and deep["depth_excess_m"] > 0
    harbour = load_site(ENVIRONMENTS / "harbour_approach.toml").seabed
    assert not harbour.is_flat and "mud" in harbour.sediment


def test_summary_numbers_are_plain_floats(base):
    s = summarize_site(site_from_dict(base))
    assert all(isinstance(v, (float, type(None))) for v in s["seabed"]["bottom_loss_db"])
    assert np.isfinite(s["noise"]["band_level_db_re_1upa2"])
