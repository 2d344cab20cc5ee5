"""`aculink channel` and the integration with the real ray tracer (find_arrivals)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from aculink.channel import channel_for_site, link_budget
from aculink.cli import main

from .conftest import ENVIRONMENTS

SITE = str(ENVIRONMENTS / "shelf_summer.toml")


@pytest.fixture(scope="module")
def traced():
    from aculink.propagation import find_arrivals
    from aculink.site.loader import load_site

    site = load_site(SITE)
    ch = channel_for_site(site, n_freq=5)
    freq = np.linspace(site.modem.carrier_hz - site.modem.bandwidth_hz / 2,
                       site.modem.carrier_hz + site.modem.bandwidth_hz / 2, 5)
    arr = find_arrivals(site, np.array([site.receiver.range_m]), np.array([site.receiver.depth_m]), freq_hz=freq)
    return site, ch, arr


def test_channel_from_real_arrivals_follows_the_contract(traced):
    """Integration with aculink.propagation.find_arrivals: the channel's steady paths are the
    arrivals, and their H(f) = sum amplitude exp(-j 2 pi f delay) at the arrivals' frequencies
    (the Arrivals and Channel contracts of DEVELOPERS.md); the rough sea adds scattered
    sub-paths behind surface paths only."""
    site, ch, arr = traced
    sel = arr.isel(range=0, depth=0)
    delay = sel["delay_s"].values
    ok = np.isfinite(delay)
    steady = ch.subset(~ch.scattered)
    assert steady.n_paths == int(ok.sum()) > 0
    assert np.any(ch.scattered) and np.all(ch.surface_bounces[ch.scattered] > 0)
    np.testing.assert_allclose(steady.delay_s, np.sort(delay[ok]), rtol=1e-12)
    amp = sel["amplitude"].transpose("arrival", "frequency").values[ok]
    f = sel["frequency"].values
    h = (amp * np.exp(-2j * np.pi * np.outer(delay[ok], f))).sum(axis=0)
    np.testing.assert_allclose(steady.transfer_function(f).values, h, rtol=1e-9)
    assert ch.surface is not None and ch.surface.active
    b = link_budget(site, ch)
    assert np.isfinite(b.snr_band_db)


def test_cli_json_fields_and_terms(capsys):
    """`aculink channel SITE --json`: one JSON object with the issue's fields; the budget terms
    add up (sonar equation, Urick 1983 ch. 2, from memory)."""
    assert main(["channel", SITE, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("rms_delay_spread_s", "spread_90_s", "spread_99_s", "coherence_bandwidth_hz",
                "tl_coherent_db", "tl_incoherent_db", "noise_band_db", "snr_band_db", "paths",
                "source_level_db", "directivity_index_db", "tl_db", "units", "caution"):
        assert key in out
    assert out["snr_band_db"] == pytest.approx(out["source_level_db"] - out["tl_db"] - out["noise_band_db"]
                                               + out["directivity_index_db"], abs=1e-9)
    assert out["paths"] >= 1


def test_cli_text_and_plot(tmp_path, capsys):
    """Text report (aligned, with the caution line) and the PNG (regression: the file exists)."""
    png = tmp_path / "ir.png"
    assert main(["channel", SITE, "--range-m", "2500", "--plot", str(png)]) == 0
    text = capsys.readouterr().out
    assert "Band SNR" in text and "Caution" in text and "dB re 1 uPa^2" in text
    assert png.stat().st_size > 10_000
    # an existing plot is not overwritten without --overwrite
    assert main(["channel", SITE, "--plot", str(png)]) == 2
    assert "exists" in capsys.readouterr().err


def test_cli_bad_input_is_one_line(capsys):
    """Bad user input: exit code 2 and one line on stderr (project rule)."""
    assert main(["channel", SITE, "--range-m", "-5"]) == 2
    err = capsys.readouterr().err.strip()
    assert ("range_m" in err or "range-m" in err) and "\n" not in err
