"""Random command lines for the fuzz test of the ``aculink`` command line (and its benchmark script).

Each case is a command, a site argument and a random selection of its options, each value drawn
from valid values, values out of range, values of the wrong type, missing or broken files, and
outputs that already exist. Commands whose valid runs take more than a second or two (``loss``,
``channel``, ``link``, ``plan``, ``sweep``, ``demo``) always get at least one *early* mistake (one
the command must refuse before any work: an out-of-range or mistyped number, a missing file, an
existing output without ``--overwrite``), so a case costs milliseconds unless a refusal comes late,
which is itself a finding.

:func:`run_case` runs one in-process and returns what the checks need: the exit code, stdout,
stderr and whether any file in the work folder was created or changed.
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import os
from pathlib import Path

from hypothesis import strategies as st

ENV = Path(__file__).resolve().parents[1] / "environments"
SITES = ("shelf_summer", "shelf_winter", "polar_calm", "harbour_approach", "deep_channel")

# Value pools. "ok" values are valid on every bundled site; "early" values must be refused before
# any work; "late" values are wrong but only a deeper stage can tell (used for the cheap commands).
NUM_EARLY = ("0", "-1", "1e400", "nan", "x", "", "1e9")
SPAN_EARLY = ("5:1:1", "a:b:c", "1:2", "nan", "-5", "1:10:0", "")


def _files(work: Path) -> dict:
    """Paths inside the work folder that cases may name (made once per folder by :func:`prepare`)."""
    return {
        "new_png": str(work / "new.png"), "exists_png": str(work / "exists.png"),
        "txt_plot": str(work / "plot.txt"), "missing_dir_png": str(work / "nowhere" / "x.png"),
        "new_nc": str(work / "new.nc"), "exists_nc": str(work / "exists.nc"),
        "new_csv": str(work / "new.csv"), "exists_csv": str(work / "exists.csv"),
        "missing": str(work / "missing.toml"), "broken_toml": str(work / "broken.toml"),
        "csv_as_site": str(ENV / "shelf_summer_ctd.csv"), "taps": str(work / "taps.csv"),
        "bad_taps": str(work / "bad_taps.csv"), "folder": str(work / "folder"),
        "exists_dir": str(work / "full"),
        "sweep_nc": str(work / "sweep.nc"), "plan_json": str(work / "plan.json"), "bad_json": str(work / "bad.json"),
    }


def prepare(work: Path) -> dict:
    """Create the existing files the cases refer to and return the path table."""
    f = _files(work)
    for key in ("exists_png", "exists_nc", "exists_csv"):
        Path(f[key]).write_bytes(b"an earlier result")
    Path(f["broken_toml"]).write_text("name = 'x'\n[water\n")
    Path(f["taps"]).write_text("delay_s,real,imag\n0.0,0.01,0.0\n0.001,0.005,0.001\n")
    Path(f["bad_taps"]).write_text("delay_s,real\n0.0,zero\n")
    Path(f["folder"]).mkdir(exist_ok=True)
    Path(f["exists_dir"]).mkdir(exist_ok=True)
    (Path(f["exists_dir"]) / "keep.txt").write_text("keep")
    _results(f)
    return f


def _results(f) -> None:
    """A small sweep file and plan JSON for ``redraw`` (synthetic numbers on the bundled shelf)."""
    import json

    import numpy as np
    import xarray as xr

    from aculink.io.netcdf import write_netcdf

    site_file = ENV / "shelf_summer.toml"
    r, z = np.array([1000.0, 2000.0]), np.array([10.0, 40.0])
    ds = xr.Dataset({"net_bit_rate_bps": (("range", "depth"), np.array([[4000.0, 0.0], [2000.0, 1000.0]]))},
                    coords={"range": r, "depth": z},
                    attrs={"target_ber": 1e-4, "margin_db": 3.0, "source_depth_m": 20.0,
                           "site_text": site_file.read_text(), "site_path": str(site_file), "site_name": "shelf"})
    write_netcdf(ds, f["sweep_nc"], overwrite=True)
    rows = [{"range_m": 1000.0, "net_bit_rate_bps": 4000.0, "net_bit_rate_by_receiver_bps": {"none": 0.0, "dfe": 4000.0}},
            {"range_m": 2000.0, "net_bit_rate_bps": 0.0, "net_bit_rate_by_receiver_bps": {"none": 0.0, "dfe": None}}]
    Path(f["plan_json"]).write_text(json.dumps({
        "kind": "aculink plan", "site": "shelf", "receivers": ["none", "dfe"], "rows": rows, "receiver_depth_m": 50.0,
        "source_depth_m": 20.0, "target_ber": 1e-4, "margin_db": 3.0, "envelope_km_kbps": 40.0,
        "envelope_water": "shallow water"}))
    Path(f["bad_json"]).write_text('{"kind": "aculink plan", "rows": []}')


def snapshot(work: Path) -> dict:
    """Every file under ``work`` with its size and content hash."""
    out = {}
    for root, dirs, files in os.walk(work):
        for name in dirs:
            out[os.path.join(root, name)] = "dir"
        for name in files:
            p = os.path.join(root, name)
            with open(p, "rb") as fh:
                out[p] = hashlib.sha1(fh.read()).hexdigest()
    return out


def run_case(argv, work: Path):
    """Run ``aculink argv`` in-process; return (code, stdout, stderr, files_changed)."""
    from aculink.cli import main

    before = snapshot(work)
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue(), snapshot(work) != before


def _site(f):
    # the three smallest sites keep the valid runs of the cheap commands short
    return st.one_of(st.sampled_from([str(ENV / f"{s}.toml") for s in ("harbour_approach", "shelf_summer",
                                                                          "polar_calm")]),
                     st.sampled_from([f["missing"], f["broken_toml"], f["csv_as_site"], f["folder"]]))


def _options(f):
    """option -> (valid values, early mistakes, late mistakes); () for flags."""
    pngs_ok = (f["new_png"],)
    pngs_bad = (f["exists_png"], f["txt_plot"], f["missing_dir_png"])
    num = NUM_EARLY
    return {
        "site": {"--json": None, "--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None},
        "rays": {"--angles-deg": (("-5:5:5", "0:2:3", "-10:10:7"), ("-95:0:3", "0:1:1.5", "5:1:3") + SPAN_EARLY,
                                  ()),
                 "--max-range-m": (("800", "1500"), num, ("1e6",)),
                 "--source-depth-m": (("5", "8"), num, ("1e4",)),
                 "--shade": (("level", "angle", "boundaries"), ("levle", "bounces"), ()),
                 "--dynamic-range-db": (("20", "60"), ("0", "-3", "x", "1e9"), ()),
                 "--eigenrays": None, "--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None, "--json": None},
        "arrivals": {"--range-m": (("600", "1500"), num, ()), "--depth-m": (("5", "8"), num, ("300",)),
                     "--source-depth-m": (("4", "6"), num, ()),
                     "--frequency-hz": (("10000", "20000"), num, ()),
                     "--dynamic-range-db": (("20", "60"), ("0", "-3", "x"), ()), "--json": None,
                     "--csv": ((f["new_csv"],), (f["exists_csv"], f["missing_dir_png"]), ()),
                     "--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None},
        "loss": {"--ranges-m": (("500:1500:500",), SPAN_EARLY, ()), "--depths-m": (("5:8:1",), SPAN_EARLY, ()),
                 "--frequency-hz": (("12000",), num, ()), "--source-depth-m": (("4",), num, ()),
                 "--incoherent": None, "--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None, "--json": None},
        "channel": {"--range-m": (("1000",), num, ()), "--depth-m": (("6",), num, ()), "--json": None,
                    "--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None},
        "link": {"--rate-baud": (("500",), num + ("0.001", "1e5"), ()), "--modulation": (("qpsk", "bpsk"), (), ()),
                 "--receiver": (("dfe", "none"), (), ()), "--algorithm": (("rls", "nlms"), (), ()),
                 "--rolloff": (("0.25",), ("2", "-1", "x"), ()), "--symbols": (("500",), ("0", "2.5", "x", "-4"), ()),
                 "--max-errors": (("20",), ("0", "x"), ()), "--seed": (("3",), ("-1", "x", "1.5"), ()),
                 "--snr-db": (("15",), ("1000", "x", "nan"), ()),
                 "--channel-file": ((), (f["missing"], f["bad_taps"], f["folder"]), ()),
                 "--json": None, "--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None},
        "plan": {"--ranges-m": (("1000:2000:1000",), SPAN_EARLY, ()), "--depth-m": (("6",), num, ()),
                 "--receiver": (("all", "dfe"), (), ()), "--target-ber": (("1e-3",), ("0", "1", "x", "0.7"), ()),
                 "--margin-db": (("3",), ("50", "-1", "x"), ()), "--verify": None, "--seed": (("1",), ("-1", "x"), ()),
                 "--csv": ((f["new_csv"],), (f["exists_csv"], f["missing_dir_png"]), ()),
                 "--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None, "--json": None},
        "sweep": {"--ranges-m": (("1000:2000:1000",), SPAN_EARLY, ()), "--depths-m": (("5:7:2",), SPAN_EARLY, ()),
                  "--source-depths-m": (("3,5",), SPAN_EARLY + ("1e5",), ()),
                  "--wind-mps": (("2,10",), ("60", "-1") + SPAN_EARLY, ()),
                  "-o": ((f["new_nc"],), (f["exists_nc"], f["missing_dir_png"]), ()),
                  "--workers": (("0", "1"), ("2.5", "x", "-3", "5000"), ()), "--receiver": (("all", "dfe"), (), ()),
                  "--target-ber": (("1e-3",), ("0", "1", "x"), ()), "--margin-db": (("3",), ("50", "-1"), ()),
                  "--chunk-ranges": (("1",), ("0", "x", "1.5"), ()), "--resume": None, "--overwrite": None,
                  "--quiet": None, "--plot": (pngs_ok, pngs_bad, ()), "--json": None},
        "redraw": {"--plot": (pngs_ok, pngs_bad, ()), "--overwrite": None,
                   "--site": ((str(ENV / "shelf_summer.toml"),), (f["missing"], f["broken_toml"]), ())},
        "demo": {"--out": ((f["new_png"] + ".d",), (f["exists_dir"], f["exists_png"], f["missing_dir_png"]), ()),
                 "--site": (("shelf_summer",), ("atlantis", ""), ()), "--seed": (("1",), ("x", "-1"), ()),
                 "--quick": None, "--quiet": None},
    }


#: Commands whose valid runs are cheap enough to run in the fuzz test (with small fans).
CHEAP = ("site", "rays", "arrivals", "redraw")
#: Options a command cannot run without.
REQUIRED = {"link": ("--rate-baud",), "sweep": ("--ranges-m", "--depths-m", "-o"), "redraw": ("--plot",)}


def _result(f):
    """What ``redraw`` may be given: results it draws, and files it must refuse."""
    return st.sampled_from([f["sweep_nc"], f["plan_json"], f["bad_json"], f["broken_toml"], f["missing"],
                            f["exists_csv"], f["exists_nc"], f["folder"]])


@st.composite
def command_lines(draw, files):
    """One random command line (a list of strings) for the work folder's ``files``."""
    opts = _options(files)
    command = draw(st.sampled_from(sorted(opts)))
    table = opts[command]
    names = sorted(table)
    chosen = draw(st.lists(st.sampled_from(names), unique=True, max_size=5))
    for req in REQUIRED.get(command, ()):
        if req not in chosen and draw(st.integers(0, 9)) > 0:
            chosen.append(req)
    cheap = command in CHEAP
    # the option carrying the early mistake (always one for the costly commands)
    poisonable = [n for n in chosen if table[n] is not None and table[n][1]]
    if not cheap and not poisonable:
        spare = [n for n in names if table[n] is not None and table[n][1]]
        poison = draw(st.sampled_from(spare))
        chosen.append(poison)
    elif poisonable and (not cheap or draw(st.booleans())):
        poison = draw(st.sampled_from(poisonable))
    else:
        poison = None
    if poison is not None and "--overwrite" in chosen:
        chosen.remove("--overwrite")  # an existing output must stay a mistake
    argv = [command]
    if command == "redraw":
        argv.append(draw(_result(files)))
    elif command != "demo":
        argv.append(draw(_site(files)))
    for name in chosen:
        spec = table[name]
        if spec is None:
            argv.append(name)
            continue
        ok, early, late = spec
        if name == poison:
            pool = early
        else:
            pool = ok + (late if cheap else ()) + (early if cheap else ())
            if not pool:
                continue
        argv += [name, draw(st.sampled_from(pool))]
    return argv
