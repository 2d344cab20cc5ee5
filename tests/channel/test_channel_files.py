"""Tap lists and measured impulse responses from CSV and NetCDF files."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from aculink.channel import load_channel_file
from aculink.errors import AculinkError


def write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_csv_real_imag_with_band_comments(tmp_path):
    """delay_s,real,imag rows become paths with those gains (format definition, README)."""
    p = write(tmp_path, "probe.csv", "# carrier_hz = 12000\n# bandwidth_hz = 6000\n"
              "delay_s,real,imag\n0.0,1.0,0.0\n0.0015,0.0,-0.5\n0.004,0.25,0.25\n")
    ch = load_channel_file(p)
    np.testing.assert_allclose(ch.delay_s, [0.0, 0.0015, 0.004])
    np.testing.assert_allclose(ch.gain[:, 0], [1.0, -0.5j, 0.25 + 0.25j])
    assert ch.carrier_hz == 12000.0 and ch.bandwidth_hz == 6000.0


def test_csv_magnitude_phase_and_symbol_spaced_taps(tmp_path):
    """magnitude,phase_rad gives magnitude exp(j phase); tap,real,imag gives delay = tap / Rs
    (Proakis test channel b, [Salz1973]: taps 0.407, 0.815, 0.407 at 0, T, 2T)."""
    p = write(tmp_path, "mp.csv", "delay_s,magnitude,phase_rad\n0.001,2.0,1.5707963267948966\n")
    ch = load_channel_file(p, carrier_hz=10000.0, bandwidth_hz=4000.0)
    np.testing.assert_allclose(ch.gain[0, 0], 2j, atol=1e-15)
    q = write(tmp_path, "proakis_b.csv", "tap,real,imag\n0,0.407,0\n1,0.815,0\n2,0.407,0\n")
    ch = load_channel_file(q, carrier_hz=10000.0, bandwidth_hz=4000.0, symbol_rate_baud=2000.0)
    np.testing.assert_allclose(ch.delay_s, [0.0, 5e-4, 1e-3])
    with pytest.raises(AculinkError, match="symbol_rate_baud"):
        load_channel_file(q, carrier_hz=10000.0, bandwidth_hz=4000.0)


@pytest.mark.parametrize("text,match", [
    ("delay_s,real\n0,1\n", "missing column imag"),
    ("time,real,imag\n0,1,0\n", "missing column delay_s"),
    ("delay_s,real,imag\n0.002,1,0\n0.001,1,0\n", "delay_s is not strictly increasing"),
    ("delay_s,real,imag\n0.0,nan,0\n", "column real"),
    ("delay_s,real,imag\n0.0,1,abc\n", "column imag"),
    ("", "empty file"),
])
def test_bad_csv_files_give_one_line_naming_file_and_column(tmp_path, text, match):
    """Bad files: one line naming the file and the column (issue's bad-input list)."""
    p = write(tmp_path, "bad.csv", text)
    with pytest.raises(AculinkError, match=match) as info:
        load_channel_file(p, carrier_hz=12000.0, bandwidth_hz=6000.0)
    assert "bad.csv" in str(info.value) and "\n" not in str(info.value)


def test_missing_band_and_missing_file(tmp_path):
    p = write(tmp_path, "noband.csv", "delay_s,real,imag\n0,1,0\n")
    with pytest.raises(AculinkError, match="carrier_hz"):
        load_channel_file(p)
    with pytest.raises(AculinkError, match="not found"):
        load_channel_file(tmp_path / "nope.csv", carrier_hz=1e4, bandwidth_hz=1e3)


def test_netcdf_layout_round_trip(tmp_path):
    """NetCDF layout of the README: delay_s, gain_real, gain_imag over dim path; band attrs."""
    ds = xr.Dataset({"delay_s": ("path", [0.01, 0.012]), "gain_real": ("path", [0.5, -0.1]),
                     "gain_imag": ("path", [0.0, 0.2]), "doppler": ("path", [0.0, 1e-4])},
                    attrs={"carrier_hz": 9000.0, "bandwidth_hz": 3000.0})
    p = tmp_path / "measured.nc"
    ds.to_netcdf(p, engine="netcdf4")
    ch = load_channel_file(p)
    np.testing.assert_allclose(ch.gain[:, 0], [0.5, -0.1 + 0.2j])
    np.testing.assert_allclose(ch.doppler, [0.0, 1e-4])
    assert ch.carrier_hz == 9000.0
    bad = xr.Dataset({"delay_s": ("path", [0.01]), "gain_real": ("path", [0.5])},
                     attrs={"carrier_hz": 9000.0, "bandwidth_hz": 3000.0})
    q = tmp_path / "bad.nc"
    bad.to_netcdf(q, engine="netcdf4")
    with pytest.raises(AculinkError, match="gain_imag"):
        load_channel_file(q)
