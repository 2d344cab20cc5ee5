"""The digits a result supports: :mod:`aculink.io.formats` and the reports that use it.

The rules (BER floor 1e-12, depths to 0.1 m, ranges to 10 m beyond 1 km, three significant
figures for times) are a choice of ours: common practice, no source. The significant-figure
rounding is checked against Python's own ``%g`` formatting, an independent twin.
"""

from __future__ import annotations

import numpy as np
import pytest

from aculink.io.formats import ber_text, db_text, depth_text, hz_text, km_text, range_text, seconds_text, sig


@pytest.mark.parametrize("value, text", [
    (5.5e-176, "< 1e-12"), (0.0, "< 1e-12"), (9.99e-13, "< 1e-12"), (1e-12, "1e-12"), (2.75e-10, "2.7e-10"),
    (1e-4, "1e-4"), (0.0123, "0.012"), (0.5, "0.5"), (float("nan"), "n/a"), (None, "n/a"),
])
def test_ber_below_the_floor_is_not_printed_to_176_digits(value, text):
    assert ber_text(value) == text


def test_a_measured_zero_is_zero():
    """No error counted is a count, not a model value below the floor."""
    assert ber_text(0.0, measured=True) == "0"
    assert ber_text(1e-20, measured=True) == "< 1e-12"


@pytest.mark.parametrize("func, value, text", [
    (seconds_text, 1278.842, "1280 s"), (seconds_text, 0.0041712, "4.17 ms"), (seconds_text, 2.6591, "2.66 s"),
    (depth_text, 50.1167, "50.1"), (depth_text, 20.0, "20"), (depth_text, 0.05, "0.05"),
    (range_text, 4.0, "4 m"), (range_text, 500.0, "500 m"), (range_text, 4000.0, "4 km"),
    (range_text, 12345.0, "12.35 km"), (km_text, 500.0, "0.5"), (km_text, 4000.0, "4"),
    (hz_text, 12000.0, "12 kHz"), (hz_text, 2e6, "2 MHz"), (hz_text, 850.0, "850 Hz"),
    (db_text, 37.2149, "37.2 dB"), (db_text, float("inf"), "n/a"),
])
def test_quantities_keep_sensible_digits(func, value, text):
    """Not 1278.842 s, 50.1167 m or 0.004 km."""
    assert func(value) == text


def test_significant_figures_match_printf():
    """``sig(x, n)`` has the value of C's ``%.{n}g`` (Python's printf twin) and never an exponent
    between 1e-4 and 1e7."""
    rng = np.random.default_rng(7)
    for x in 10.0 ** rng.uniform(-8, 9, 400) * rng.choice([-1, 1], 400):
        for n in (2, 3, 4):
            text = sig(x, n)
            assert float(text) == float(f"{x:.{n}g}"), (x, n, text)
            if 1e-4 <= abs(float(f"{x:.{n}g}")) < 1e7:
                assert "e" not in text, text


def test_plan_table_prints_the_floor():
    """A row whose prediction is 5.5e-176 reads "< 1e-12" in the printed table."""
    from aculink.io.reports import plan_columns, plan_display_row
    from aculink.io.tables import format_table

    row = {"range_m": 4.0, "net_bit_rate_bps": 7883.0, "modulation": "qpsk", "symbol_rate_baud": 4800.0,
           "receiver": "dfe", "snr_band_db": 37.2, "snr_out_predicted_db": 30.0, "ber_predicted": 5.5e-176,
           "margin_db": 12.0, "spread_90_s": 0.00417, "tl_db": 61.9, "error": None}
    text = format_table(plan_columns(False), [plan_display_row(row)])
    assert "< 1e-12" in text and "e-176" not in text
    assert text.splitlines()[-1].split()[0] == "0", "4 m is 0 km to 10 m"
