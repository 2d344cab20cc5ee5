"""Everyday use of the command line: pipes, file modes, option names and limits in messages.

These are contract checks of our own command line (common practice, no source), except where a
docstring names one.
"""

from __future__ import annotations

import os
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from aculink.cli import main

ENV = Path(__file__).resolve().parents[1] / "environments"
SHELF = str(ENV / "shelf_summer.toml")


def _one_error(capsys):
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    assert "Traceback" not in err[0]
    return err[0]


def test_reader_going_away_is_quiet():
    """`aculink site FILE | head -0`: the reader closes the pipe before anything is written; the
    command ends with 141 (128 + SIGPIPE, what a shell reports for a command stopped by a closed
    pipe; POSIX sh convention) and prints nothing on stderr."""
    proc = subprocess.Popen([sys.executable, "-m", "aculink", "site", SHELF], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, cwd=ENV.parent)
    proc.stdout.close()  # the reader goes away at once
    err = proc.stderr.read().decode()
    proc.stderr.close()
    assert proc.wait(timeout=120) == 141
    assert err == ""


def test_broken_pipe_in_process(monkeypatch):
    """The same inside `main`: a BrokenPipeError from printing becomes exit code 141, no traceback."""
    import aculink.cli.site as site_cmd

    def run(args):
        raise BrokenPipeError(32, "Broken pipe")

    monkeypatch.setattr(site_cmd, "run", run)
    assert main(["site", SHELF]) == 141


def test_created_files_follow_the_umask(tmp_path):
    """Files written atomically get mode 0666 & ~umask like any file the user creates (POSIX
    open(2) with O_CREAT; mkstemp alone would leave 0600)."""
    from aculink.io.atomic import write_text_atomic

    old = os.umask(0o027)
    try:
        path = write_text_atomic(tmp_path / "a.txt", "x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(path.stat().st_mode) == 0o640
    old = os.umask(0o002)
    try:
        path = write_text_atomic(tmp_path / "b.txt", "x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(path.stat().st_mode) == 0o664


@pytest.mark.parametrize("argv, wanted", [
    (["channel", SHELF, "--range-m", "0"], "--range-m = 0 m: allowed range is (0, 6000] m"),
    (["arrivals", SHELF, "--range-m", "7000"], "--range-m = 7000 m: allowed range is (0, 6000] m"),
    (["channel", SHELF, "--depth-m", "70"], "the seabed is 60.9 m deep at range 4000 m"),
    (["link", SHELF, "--rate-baud", "9000"], "allowed range is (0, 4800] Bd"),
    (["link", SHELF, "--rate-baud", "1000", "--symbols", "2.5"], "--symbols"),
    (["link", SHELF, "--rate-baud", "1000", "--symbols", "10"], "--symbols = 10"),
    (["arrivals", SHELF, "--frequency-hz", "0"], "--frequency-hz = 0 Hz"),
    (["plan", SHELF, "--margin-db", "50"], "--margin-db = 50 dB: allowed range is [0, 40] dB"),
    (["sweep", SHELF, "--ranges-m", "1000", "--depths-m", "10", "-o", "x.nc", "--wind-mps", "60"],
     "--wind-mps = 60 m/s: allowed range is [0, 50] m/s"),
    (["sweep", SHELF, "--ranges-m", "1000", "--depths-m", "10", "-o", "x.nc", "--workers", "-1"],
     "--workers = -1"),
    (["rays", SHELF, "--angles-deg", "-95:0:3"], "--angles-deg = -95 deg"),
    (["rays", SHELF, "--nonsense"], "unrecognized arguments: --nonsense"),
])
def test_messages_name_the_option_and_the_real_limit(argv, wanted, capsys, tmp_path, monkeypatch):
    """One line naming the option as typed and the limit that applies at this site: the seabed
    track of shelf_summer ends at 6000 m, its band allows B / (1 + rolloff) = 6000 / 1.25 =
    4800 Bd (the Nyquist bandwidth of a raised-cosine pulse, Proakis and Salehi 2008, Digital
    Communications, 5th ed., sect. 9.2), the README states margin 0-40 dB and wind 0-50 m/s."""
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    line = _one_error(capsys)
    assert wanted in line
    assert list(tmp_path.iterdir()) == []


def test_short_receiver_range_is_warned(tmp_path, capsys):
    """A receiver range of 4 (km meant, metres read) is closer than the water is deep: warned."""
    text = Path(SHELF).read_text().replace("range_m = 4000.0", "range_m = 4.0")
    (tmp_path / "shelf_summer_ctd.csv").write_bytes((ENV / "shelf_summer_ctd.csv").read_bytes())
    site = tmp_path / "short.toml"
    site.write_text(text)
    assert main(["site", str(site)]) == 0
    err = capsys.readouterr().err
    assert "[receiver] range_m = 4 m is shorter than the water is deep" in err
    assert "did you mean 4000 m?" in err


def test_relative_tap_file_with_a_site_budget_is_refused(tmp_path, capsys):
    """Gains of 1 and 0.5 are relative (0 dB of loss is spreading to 1 m, 20 log10(10) = 20 dB to
    10 m: spherical spreading, Urick 1983, Principles of Underwater Sound, 3rd ed., ch. 5); with a
    site budget they would give an absurd band SNR, so the command refuses and asks for --snr-db."""
    taps = tmp_path / "taps.csv"
    taps.write_text("delay_s,real,imag\n0.0,1.0,0.0\n0.001,0.5,0.1\n")
    assert main(["link", SHELF, "--rate-baud", "1000", "--channel-file", str(taps)]) == 2
    line = _one_error(capsys)
    assert "look relative" in line and "--snr-db" in line


def test_sent_symbols_are_explained():
    """The report says how many symbols went out and why that is not --symbols."""
    from aculink.cli.link import sent_text

    rep = {"frames": 1, "n_training": 1120, "n_payload": 6720, "symbols_requested": 2000}
    assert sent_text(rep) == ("1 frame = 7840 symbols (6720 payload); --symbols 2000 is rounded up to whole "
                              "frames of 6720 payload symbols")
    rep = {"frames": 2, "n_training": 100, "n_payload": 900, "symbols_requested": 20000}
    assert "stopped before --symbols 20000" in sent_text(rep)
