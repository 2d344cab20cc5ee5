"""The ``aculink link`` command and the modem over the channel stage's Channel."""

import json

import numpy as np
import pytest

from aculink.cli import main
from aculink.modem import predict_link, simulate_link

from .conftest import PROAKIS_B


def _tap_file(tmp_path, taps, rate):
    lines = ["# carrier_hz = 12000", "# bandwidth_hz = 6000", f"# symbol_rate_baud = {rate}", "tap,real,imag"]
    lines += [f"{k},{complex(t).real},{complex(t).imag}" for k, t in enumerate(taps)]
    path = tmp_path / "taps.csv"
    path.write_text("\n".join(lines) + "\n")
    return path


def test_cli_json_fields_over_channel_file(tmp_path, capsys):
    """Issue contract: --json prints one object with ber, ber_low, ber_high, bit_errors, bits,
    snr_band_db, snr_out_measured_db, snr_out_predicted_db, net_bit_rate_bps; BER inside its own interval and
    the measured SNR within 1.5 dB of the prediction on a static tap channel (Al-Dhahir and
    Cioffi 1995 design, plus RLS misadjustment)."""
    f = _tap_file(tmp_path, [1.0, 0.0, 0.45j, -0.2], 2000)
    code = main(["link", "--channel-file", str(f), "--rate-baud", "2000", "--receiver", "dfe",
                 "--snr-db", "20", "--symbols", "4000", "--json"])
    assert code == 0
    rep = json.loads(capsys.readouterr().out)
    for key in ("ber", "ber_low", "ber_high", "bit_errors", "bits", "snr_band_db", "snr_out_measured_db",
                "snr_out_predicted_db", "net_bit_rate_bps", "caution"):
        assert key in rep
    assert rep["ber_low"] <= rep["ber"] <= rep["ber_high"]
    assert rep["snr_band_db"] == 20
    assert rep["snr_out_measured_db"] == pytest.approx(rep["snr_out_predicted_db"], abs=1.5)
    assert 0 < rep["net_bit_rate_bps"] < 2 * 2000


def test_cli_bad_input_exit_2(tmp_path, capsys):
    """Project rule: bad input gives one line on stderr and exit code 2."""
    f = _tap_file(tmp_path, [1.0, 0.3], 2000)
    code = main(["link", "--channel-file", str(f), "--rate-baud", "2000", "--receiver", "dfee", "--snr-db", "20"])
    err = capsys.readouterr().err
    assert code == 2 and "did you mean 'dfe'" in err and err.count("\n") == 1
    code = main(["link", "--channel-file", str(f), "--rate-baud", "5000", "--snr-db", "20"])
    assert code == 2 and "allowed range is [18.75, 4800] Bd" in capsys.readouterr().err


def test_cli_plot(tmp_path, capsys):
    """The picture is written (PNG signature) and --overwrite guards an existing file."""
    f = _tap_file(tmp_path, [1.0, 0.5], 1000)
    png = tmp_path / "link.png"
    args = ["link", "--channel-file", str(f), "--rate-baud", "1000", "--snr-db", "15", "--symbols", "2000",
            "--plot", str(png)]
    assert main(args) == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert main(args) == 2
    assert main(args + ["--overwrite"]) == 0


def test_channel_from_symbol_taps_matches_tap_list():
    """Consistency with the channel stage: a Channel built from symbol-spaced taps
    (Channel.from_taps; [ProakisSalehi2008]: a path at tau = nT gives h[k] = A delta[k - n] after
    the raised cosine) predicts the same MMSE-DFE as the tap list, within 0.3 dB once the band SNR
    (received power over noise in B, with the power spread evenly over B: mean |H|^2 over B) is
    converted to the tap list's Es/sigma^2 = band SNR (B / Rs) sum|h|^2 / mean_B |H|^2."""
    from aculink.channel import Channel

    rs, b = 1000.0, 1250.0
    taps = PROAKIS_B * np.exp(-2j * np.pi * 12000 * np.arange(3) / rs)  # undo the carrier phase
    ch = Channel.from_taps(np.arange(3) / rs, taps, 12000.0, b)
    f = np.linspace(12000 - b / 2, 12000 + b / 2, 4001)
    band_mean = np.mean(np.abs(ch.transfer_function(f).values) ** 2)
    conv = 10 * np.log10(b / rs * np.sum(PROAKIS_B ** 2) / band_mean)
    p_ch = predict_link(ch, None, rs, "qpsk", "mmse-dfe", rolloff=0.25, snr_db=20 - conv)
    p_taps = predict_link(PROAKIS_B, None, rs, "qpsk", "mmse-dfe", rolloff=0.25, snr_db=20)
    assert p_ch.snr_out_db == pytest.approx(p_taps.snr_out_db, abs=0.3)
    assert p_ch.mmse_dfe_db == pytest.approx(p_taps.mmse_dfe_db, abs=0.3)


def test_static_channel_simulation_meets_prediction():
    """Al-Dhahir and Cioffi (1995): over a static multipath Channel (from_taps, fractional delays)
    the simulated RLS DFE's measured SNR is within 1 dB of predict_link's finite-length estimate."""
    from aculink.channel import Channel

    ch = Channel.from_taps([0.0, 0.7e-3, 2.3e-3, 4.1e-3], [1.0, 0.6j, -0.4, 0.25], 12000.0, 6000.0)
    r = simulate_link(ch, symbol_rate_baud=4000, modulation="qpsk", receiver="dfe", snr_db=25,
                      n_symbols=6000, seed=1)
    assert r.snr_out_db == pytest.approx(r.snr_predicted_db, abs=1.0)


@pytest.mark.slow
def test_site_static_channel_dfe_meets_prediction():
    """Al-Dhahir and Cioffi (1995) over a real site channel (channel_for_site, bundled
    shelf_summer environment, link budget with coloured Wenz noise): with the channel frozen the
    simulated RLS DFE measures within 1.5 dB of predict_link's estimate."""
    from pathlib import Path

    from aculink.channel import channel_for_site, link_budget
    from aculink.site.loader import load_site

    site = load_site(Path(__file__).resolve().parents[2] / "environments" / "shelf_summer.toml")
    ch = channel_for_site(site)
    b = link_budget(site, ch)
    r = simulate_link(ch, symbol_rate_baud=2000, modulation="qpsk", receiver="dfe", budget=b,
                      n_symbols=3000, time_varying=False, seed=0)
    assert r.snr_out_db == pytest.approx(r.snr_predicted_db, abs=1.5)
