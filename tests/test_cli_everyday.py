"""Everyday use of the command line: pipes, file modes, option names and limits in messages.

These are contract checks of our own command line (common practice, no source), except where a
docstring names one.
"""

from __future__ import annotations

import os
import re
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
    (["channel", SHELF, "--depth-m", "70"], "the seabed is 60.9 m deep at range 4 km"),
    (["link", SHELF, "--rate-baud", "9000"], "allowed range is [18.75, 4800] Bd (the band allows 6000 Hz"),
    (["link", SHELF, "--rate-baud", "0.001"], "--rate-baud = 0.001 Bd: allowed range is [18.75, 4800] Bd"),
    (["link", SHELF, "--rate-baud", "1000", "--symbols", "20000000"],
     "--symbols = 20000000: allowed range is a whole number in [100, 10000000]"),
    (["channel", SHELF, "--depth-m", "61"], "--depth-m = 61 m: allowed range is (0, 60.9) m"),
    (["loss", SHELF, "--angles-deg", "1,1"], "--angles-deg = '1,1': a beam fan needs at least 2 launch angles, and they must differ"),
    (["loss", SHELF, "--ranges-m", "100:9000:100"], "--ranges-m = 6100 m: allowed range is (0, 6000] m"),
    (["loss", SHELF, "--frequency-hz", "2e6"], "--frequency-hz = 2e+06 Hz: allowed range is (0, 1e+06] Hz"),
    (["plan", SHELF, "--ranges-m", "1000:7000:1000"], "--ranges-m = 7000 m: allowed range is (0, 6000] m"),
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
    Communications, 5th ed., sect. 9.2), the README states margin 0-40 dB and wind 0-50 m/s. The
    seabed under the receiver is 60.857 m deep (linear between the file's seabed points): stated as
    60.9 m, not to 4 decimals. A rate of 0.001 Bd once asked the simulator for 110 GiB."""
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
    from aculink.io.reports import sent_text

    rep = {"frames": 1, "n_training": 1120, "n_payload": 6720, "symbols_requested": 2000}
    assert sent_text(rep) == ("1 frame = 7840 symbols (6720 payload); --symbols 2000 is rounded up to whole "
                              "frames of 6720 payload symbols")
    rep = {"frames": 2, "n_training": 100, "n_payload": 900, "symbols_requested": 20000}
    assert "stopped before --symbols 20000" in sent_text(rep)


#: Library parameter names a message must never show in place of the option typed.
INTERNAL = re.compile(r"(?<![-\w])(freq_hz|n_symbols|symbol_rate_baud|ranges_m|depths_m|angles_deg|workers|"
                      r"max_range_m|source_depth_m|max_errors|dynamic_range_db)(?![-\w])")


@pytest.mark.parametrize("argv", [
    ["loss", SHELF, "--angles-deg", "1,1"], ["loss", SHELF, "--angles-deg", "5:1:3"],
    ["loss", SHELF, "--frequency-hz", "-5"], ["arrivals", SHELF, "--frequency-hz", "nan"],
    ["link", SHELF, "--rate-baud", "1e9"], ["link", SHELF, "--rate-baud", "1000", "--symbols", "1"],
    ["link", SHELF, "--rate-baud", "1000", "--max-errors", "0"],
    ["sweep", SHELF, "--ranges-m", "1000", "--depths-m", "10", "-o", "x.nc", "--workers", "5000"],
    ["sweep", SHELF, "--ranges-m", "a:b:c", "--depths-m", "10", "-o", "x.nc"],
    ["rays", SHELF, "--max-range-m", "1e7"], ["rays", SHELF, "--dynamic-range-db", "0"],
    ["arrivals", SHELF, "--source-depth-m", "70"], ["plan", SHELF, "--ranges-m", "0"],
])
def test_messages_never_show_internal_names(argv, capsys, tmp_path, monkeypatch):
    """Every refusal names the option as typed (--frequency-hz, --symbols, ...), never the library's
    parameter (freq_hz, n_symbols, symbol_rate_baud, ranges_m, angles_deg, workers)."""
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    line = _one_error(capsys)
    assert not INTERNAL.search(line), line
    assert "--" in line, line


def _option_cases():
    """(argv, option, limits) for every option checked against LIMITS, just past each end it has."""
    from aculink.cli import build_parser
    from aculink.cli._common import GEOMETRY_DESTS, OPTION_LIMITS
    from aculink.site.model import LIMITS

    base = {"link": ["--rate-baud", "1000"], "sweep": ["--ranges-m", "1000", "--depths-m", "10", "-o", "x.nc"]}
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "command").choices
    cases = []
    for dest, (section, key) in OPTION_LIMITS.items():
        if dest in GEOMETRY_DESTS:
            continue  # checked against the site's own seabed above
        command = next((c for c in ("link", "plan", "sweep", "arrivals", "rays", "loss")
                        if dest in {a.dest for a in sub[c]._actions}), None)
        if command is None:
            continue
        option = next(max(a.option_strings, key=len) for a in sub[command]._actions if a.dest == dest)
        low, high = LIMITS[section][key][:2]
        for value in (high * 2 + 1, low - 1 if low >= 0 else low * 2):
            cases.append(([command, SHELF, *base.get(command, []), option, f"{value:g}" if isinstance(value, float)
                           else str(value)], option))
    return cases


@pytest.mark.parametrize("argv, option", _option_cases())
def test_every_limited_option_states_its_table_limit(argv, option, capsys, tmp_path, monkeypatch):
    """One table (LIMITS in aculink.site.model) serves the options: a value past either end is
    refused, naming the option as typed and "allowed range", before any work or file."""
    monkeypatch.chdir(tmp_path)
    assert main(argv) == 2
    line = _one_error(capsys)
    assert line.startswith(f"aculink: error: {option} = ") and "allowed range is" in line, line
    assert list(tmp_path.iterdir()) == []


def test_one_vocabulary_for_files_written_and_the_caution(tmp_path, capsys):
    """Every command says "wrote FILE" for each file and "Caution:" for the caution; the old words
    ("Plot written to", "Written:", "Grid written to", lowercase "caution:") are gone from the
    command line and the reports."""
    root = Path(__file__).resolve().parents[1] / "aculink"
    for path in [*sorted((root / "cli").glob("*.py")), root / "io" / "reports.py", root / "site" / "summary.py"]:
        text = path.read_text(encoding="utf-8")
        for old in ("Plot written", "plot written", "Written:", "Grid written", '"caution: ', "f\"caution: "):
            assert old not in text, (path.name, old)
    png = tmp_path / "s.png"
    assert main(["site", SHELF, "--plot", str(png)]) == 0
    out = capsys.readouterr().out
    assert f"wrote {png}" in out.splitlines() and "Caution:" in out


def test_link_json_uses_the_one_vocabulary():
    """The link report renames the simulator's keys: band SNR, measured and predicted output SNR,
    the receiver's position."""
    from aculink.io.reports import RENAMED_KEYS, link_report

    class Result:
        def to_dict(self):
            return {"snr_in_db": 20.0, "snr_out_db": 15.0, "snr_predicted_db": 15.5, "ber": 0.0}

    class Channel:
        name = "taps"
        geometry = {"range_m": 4000.0, "receiver_depth_m": 50.0, "source_depth_m": 20.0}

    rep = link_report(None, Channel(), Result())
    assert rep["snr_band_db"] == 20.0 and rep["snr_out_measured_db"] == 15.0 and rep["snr_out_predicted_db"] == 15.5
    assert rep["receiver_range_m"] == 4000.0 and rep["receiver_depth_m"] == 50.0
    for old in RENAMED_KEYS["link"]:
        assert old not in rep and old not in rep["units"]
    assert {"snr_band_db", "snr_out_measured_db", "snr_out_predicted_db"} <= set(rep["units"])


def test_plan_rows_use_the_one_vocabulary():
    from aculink.planning.table import ROW_KEYS, VERIFY_KEYS

    assert "snr_out_predicted_db" in ROW_KEYS and "snr_out_db" not in ROW_KEYS
    assert "snr_out_measured_db" in VERIFY_KEYS
