"""Transducer beam patterns (aculink.site.transducer) against the baffled-piston closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import special

from aculink.errors import AculinkError
from aculink.site.loader import site_from_dict
from aculink.site.transducer import BeamPattern, directivity_index_db, off_axis_deg, parse_beam, response

C = 1500.0


def test_piston_half_power_and_first_null_angles():
    """A baffled piston of diameter D is 3 dB down at sin(theta) = 0.5145 lambda / D and has its first
    null at sin(theta) = 1.2197 lambda / D ([Kinsler2000] ch. 7; the numbers from memory: the roots
    of 2 J1(x) / x = 1 / sqrt(2) at x = 1.6163 and of J1 at x = 3.8317)."""
    d, f = 0.2, 30000.0
    lam = C / f
    p = BeamPattern("piston", 0.0, d, floor_db=-200.0)
    half = math.degrees(math.asin(0.5145 * lam / d))
    null = math.degrees(math.asin(1.2197 * lam / d))
    b = response(p, [0.0, half, null], [f], C)[:, 0]
    assert b[0] == pytest.approx(1.0, abs=1e-12)
    assert 20 * math.log10(b[1]) == pytest.approx(-3.01, abs=0.01)
    assert abs(b[2]) < 1e-4


def test_piston_is_zero_behind_the_baffle_and_floored():
    p = BeamPattern("piston", 0.0, 0.1, floor_db=-50.0)
    b = response(p, [120.0, 180.0], [20000.0], C)[:, 0]
    np.testing.assert_allclose(np.abs(b), 10 ** (-50 / 20), rtol=1e-12)


@pytest.mark.parametrize("ka", [0.5, 2.0, 6.0, 20.0])
def test_piston_directivity_index_closed_form(ka):
    """DI of a baffled piston in isotropic noise, 10 log10((ka)^2 / (1 - J1(2ka) / (ka)))
    ([Kinsler2000] ch. 7), within 0.01 dB of the numerical integral of the pattern."""
    f = 20000.0
    d = 2 * ka * C / (2 * math.pi * f)
    p = BeamPattern("piston", 0.0, d, floor_db=-200.0)
    closed = 10 * math.log10(ka ** 2 / (1 - special.j1(2 * ka) / ka))
    assert directivity_index_db(p, f, C) == pytest.approx(closed, abs=0.01)


def test_table_pattern_interpolates_in_db_and_omni_has_zero_di():
    t = BeamPattern("table", 0.0, angle_deg=(0.0, 30.0, 180.0), level_db=(0.0, -6.0, -30.0))
    b = response(t, [15.0, 30.0], [10000.0, 20000.0], C)
    np.testing.assert_allclose(20 * np.log10(b), [[-3.0, -3.0], [-6.0, -6.0]], atol=1e-12)
    omni = BeamPattern("table", 0.0, angle_deg=(0.0, 180.0), level_db=(0.0, 0.0))
    assert directivity_index_db(omni, 12000.0, C) == pytest.approx(0.0, abs=1e-9)


def test_off_axis_angles_follow_the_arrival_convention():
    """Source: |theta - tilt|. Receiver: the path comes from (-cos alpha, -sin alpha), |alpha + tilt|
    off an axis pointing back along the track, tilt below the horizontal (geometry)."""
    p = BeamPattern("table", 10.0, angle_deg=(0.0, 180.0), level_db=(0.0, -10.0))
    np.testing.assert_allclose(off_axis_deg(p, [10.0, -20.0], "source"), [0.0, 30.0])
    # a path travelling 10 deg downward comes from 10 deg above: 20 deg off an axis tilted 10 deg down
    np.testing.assert_allclose(off_axis_deg(p, [10.0, -10.0], "receiver"), [20.0, 0.0])


@pytest.mark.parametrize("beam, words", [
    ({"kind": "horn"}, "kind = 'horn'"),
    ({"kind": "piston"}, "aperture_m: required"),
    ({"kind": "piston", "aperture_m": 50.0}, "aperture_m = 50 m: allowed range is [0.0001, 10] m"),
    ({"kind": "table", "angle_deg": [0.0, 90.0], "level_db": [-3.0, -10.0]}, "level_db[0]"),
    ({"kind": "table", "angle_deg": [0.0, 90.0, 45.0], "level_db": [0.0, -3.0, -10.0]}, "must start at 0"),
    ({"kind": "piston", "aperture_m": 0.1, "width": 3}, "width: unknown key"),
])
def test_bad_beam_tables_are_one_line_errors(beam, words):
    with pytest.raises(AculinkError) as err:
        parse_beam(beam, "[source.beam]")
    assert words in str(err.value) and "\n" not in str(err.value)


def test_site_file_beam_sections(base):
    base["source"]["beam"] = {"kind": "piston", "aperture_m": 0.08, "tilt_deg": 5.0}
    base["receiver"]["beam"] = {"kind": "table", "angle_deg": [0.0, 60.0, 180.0], "level_db": [0.0, -6.0, -20.0]}
    site = site_from_dict(base)
    assert site.source.beam.kind == "piston" and site.source.beam.tilt_deg == 5.0
    assert site.receiver.beam.level_db == (0.0, -6.0, -20.0)
    base["receiver"]["directivity_index_db"] = 3.0
    with pytest.raises(AculinkError, match="give one"):
        site_from_dict(base)
