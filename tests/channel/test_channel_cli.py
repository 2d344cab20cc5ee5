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


def _coates_band_noise_db(f_lo_hz, f_hi_hz, shipping, wind_mps):
    """Band noise level, dB re 1 uPa^2, integrated from the four empirical spectra of [Coates1990]
    (turbulence 17 - 30 log f, shipping 40 + 20 (s - 0.5) + 26 log f - 60 log(f + 0.03), wind
    50 + 7.5 w^0.5 + 20 log f - 40 log(f + 0.4), thermal -15 + 20 log f; f in kHz, dB re 1 uPa^2/Hz),
    written out here independently of aculink.site.noise."""
    from scipy import integrate

    def psd(f_hz):
        f = f_hz / 1e3
        lg = np.log10
        levels = (17 - 30 * lg(f), 40 + 20 * (shipping - 0.5) + 26 * lg(f) - 60 * lg(f + 0.03),
                  50 + 7.5 * np.sqrt(wind_mps) + 20 * lg(f) - 40 * lg(f + 0.4), -15 + 20 * lg(f))
        return sum(10 ** (lv / 10) for lv in levels)

    power, _ = integrate.quad(psd, f_lo_hz, f_hi_hz, epsrel=1e-10)
    return 10 * np.log10(power)


def test_cli_json_fields_and_terms(capsys):
    """`aculink channel SITE --json`: one JSON object with the documented fields, whose budget terms
    match values computed here from the site file alone: source level and directivity as written,
    band noise from the [Coates1990] spectra integrated over the band (0.01 dB), and the band SNR
    by the sonar equation SNR = SL - TL - NL + DI ([Urick1983] ch. 2, from memory)."""
    import tomllib

    assert main(["channel", SITE, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("rms_delay_spread_s", "spread_90_s", "spread_99_s", "coherence_bandwidth_hz",
                "tl_coherent_db", "tl_incoherent_db", "noise_band_db", "snr_band_db", "paths",
                "source_level_db", "directivity_index_db", "tl_db", "units", "caution"):
        assert key in out
    with open(SITE, "rb") as fh:
        toml = tomllib.load(fh)
    f0, bw = toml["modem"]["carrier_hz"], toml["modem"]["bandwidth_hz"]
    nl = _coates_band_noise_db(f0 - bw / 2, f0 + bw / 2, toml["noise"]["shipping"],
                               toml["surface"]["wind_speed_mps"])
    sl = toml["source"]["level_db"]
    di = toml["receiver"]["directivity_index_db"]
    assert out["source_level_db"] == sl and out["directivity_index_db"] == di
    assert out["noise_band_db"] == pytest.approx(nl, abs=0.01)
    assert out["snr_band_db"] == pytest.approx(sl - out["tl_db"] - nl + di, abs=0.01)
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
