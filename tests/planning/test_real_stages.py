"""The planner on the real chain (rays -> channel -> modem) at a small test site of our own."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import aculink.propagation
from aculink.cli import main
from aculink.constants import RATE_RANGE_ENVELOPE_SHALLOW_KM_KBPS
from aculink.modem.constellations import MODULATIONS as BITS
from aculink.planning import plan_rates, plan_rows, run_sweep
from aculink.site.loader import load_site
from aculink.site.model import Seabed

SITE_FILE = Path(__file__).with_name("isovelocity_silt.toml")
RANGES = np.arange(1000.0, 6001.0, 1000.0)


@pytest.fixture(scope="module")
def site():
    return load_site(SITE_FILE)


@pytest.fixture(scope="module")
def table(site):
    return plan_rates(site, RANGES, depth_m=30.0, receivers=["dfe"])


def test_rate_never_increases_with_range_where_spread_does_not_shrink(table):
    """Isovelocity water over a flat seabed: with range the SNR falls and, where the multipath
    spread does not shrink either, the workable rate cannot rise (physical sanity property,
    common practice, no source). Compared on the configuration's gross rate Rs log2(M): the net
    rate also carries a training overhead that the modem sizes per channel."""
    gross = np.array([0.0 if r["net_bit_rate_bps"] == 0 else r["symbol_rate_baud"] * BITS[r["modulation"]]
                      for r in plan_rows(table)])
    spread = table["spread_90_s"].values
    assert np.all(np.isfinite(spread)) and np.all(table["error"].values == "")
    pairs = [(k, k + 1) for k in range(len(gross) - 1) if spread[k + 1] >= spread[k]]
    assert pairs, "the test needs at least one pair of ranges whose spread does not shrink"
    for a, b in pairs:
        assert gross[b] <= gross[a], (RANGES[a], RANGES[b], gross[a], gross[b])
    # and the band SNR falls with range everywhere (spreading and absorption)
    assert np.all(np.diff(table["snr_band_db"].values) < 0)


def test_rates_inside_the_fielded_envelope(table):
    """Workable (range, rate) pairs stay below about 40 km kbit/s in shallow water (Kilfoyle and
    Baggeroer 2000, IEEE J. Oceanic Eng. 25(1): a sanity envelope, not a bound; allowed 2x)."""
    product = RANGES / 1000.0 * table["net_bit_rate_bps"].values / 1000.0
    assert np.all(product < 2.0 * RATE_RANGE_ENVELOPE_SHALLOW_KM_KBPS)


def test_one_ray_fan_for_all_ranges(site, monkeypatch):
    """A plan traces one fan for all its ranges (a design rule of the planner: one fan per block)."""
    calls = []
    real = aculink.propagation.find_arrivals

    def counting(*args, **kw):
        calls.append(np.atleast_1d(args[1]).size)
        return real(*args, **kw)

    monkeypatch.setattr(aculink.propagation, "find_arrivals", counting)
    plan_rates(site, [1000.0, 2000.0, 3000.0], depth_m=30.0, receivers=["none"], symbol_rates_baud=[800.0])
    assert calls == [3]


@pytest.mark.slow
def test_cli_verify_reports_the_exact_binomial_interval_and_a_verdict(capsys):
    """`plan --verify --json` on the real chain: every checked row carries a verdict word, its
    interval is the exact Clopper-Pearson one of its counts when the batches show no clustering
    (scipy.stats.binomtest(...).proportion_ci(method="exact"); Clopper and Pearson 1934,
    Biometrika 26, 404-413), and "fails" is said exactly when that interval is above the target."""
    import scipy.stats

    from aculink.planning.table import VERDICTS

    code, out, _ = run_cli(capsys, "plan", SITE_FILE, "--ranges-m", "3000", "--depth-m", "30", "--receiver",
                           "dfe", "--target-ber", "1e-3", "--margin-db", "0", "--verify", "--json")
    assert code == 0
    doc = json.loads(out)
    assert doc["verify"]["confidence"] == 0.95
    row = doc["rows"][0]
    assert row["net_bit_rate_bps"] > 0 and row["verify_verdict"] in VERDICTS
    if row["ber_dispersion"] == 1.0:
        k = int(round(row["ber_measured"] * row["bits_measured"]))
        ci = scipy.stats.binomtest(k, int(row["bits_measured"])).proportion_ci(method="exact")
        assert row["ber_measured_low"] == pytest.approx(ci.low, rel=1e-9, abs=1e-15)
        assert row["ber_measured_high"] == pytest.approx(ci.high, rel=1e-9)
    assert (row["verify_verdict"] == "fails") == (row["ber_measured_low"] > 1e-3)


def test_sweep_masks_points_below_a_sloping_seabed(site, tmp_path):
    """Grid points below the local seabed carry that reason; the others a result."""
    sloping = site.replace(seabed=Seabed(np.array([0.0, 4000.0]), np.array([60.0, 100.0]), 1520.0, 1500.0, 1.0))
    ds = run_sweep(sloping, [1000.0, 3000.0], [30.0, 80.0], tmp_path / "s.nc", workers=0, quiet=True,
                   receivers=["dfe"], symbol_rates_baud=[1600.0, 800.0])
    err = ds["error"].values
    assert "below the seabed" in err[0, 1] and err[1, 1] == "" and err[0, 0] == ""
    assert math.isnan(ds["net_bit_rate_bps"].values[0, 1])
    assert np.isfinite(ds["net_bit_rate_bps"].values[[0, 1, 1], [0, 0, 1]]).all()


def run_cli(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_cli_plan_table_json_csv_plot(capsys, tmp_path):
    """`aculink plan` prints the documented JSON rows, an aligned table with the caution, CSV, PNG."""
    args = ("plan", SITE_FILE, "--ranges-m", "1000:3000:1000", "--receiver", "dfe")
    code, out, _ = run_cli(capsys, *args, "--json")
    assert code == 0
    doc = json.loads(out)
    keys = {"range_m", "net_bit_rate_bps", "modulation", "symbol_rate_baud", "receiver", "snr_band_db",
            "snr_out_predicted_db", "ber_predicted", "margin_db", "spread_90_s", "tl_db"}
    assert [r["range_m"] for r in doc["rows"]] == [1000.0, 2000.0, 3000.0]
    assert all(keys <= set(r) for r in doc["rows"]) and "caution" in doc
    code, out, _ = run_cli(capsys, *args, "--csv", tmp_path / "t.csv", "--plot", tmp_path / "t.png")
    assert code == 0 and "Caution:" in out and "planning estimate" in out.lower()
    lines = [row for row in out.splitlines() if row.strip()[:1].isdigit()]
    assert len(lines) == 3 and len({len(row) for row in lines}) == 1
    assert (tmp_path / "t.csv").read_text().splitlines()[0].startswith("range_m,net_bit_rate_bps")
    assert (tmp_path / "t.png").read_bytes()[:4] == b"\x89PNG"
    code, _, err = run_cli(capsys, *args, "--csv", tmp_path / "t.csv")
    assert code == 2 and "--overwrite" in err


@pytest.mark.parametrize("extra, words", [
    (("--ranges-m", "3000:1000:500"), "reversed"),
    (("--ranges-m", "1000", "--depth-m", "120"), "seabed"),
    (("--ranges-m", "1000", "--receiver", "dfee"), "did you mean"),
    (("--ranges-m", "1000", "--verify", "--verify-max-bits", "10"), "verify_max_bits"),
])
def test_cli_plan_bad_input_is_one_line(capsys, extra, words):
    code, out, err = run_cli(capsys, "plan", SITE_FILE, *extra)
    assert code == 2 and out == "" and words in err and err.count("\n") == 1


def test_cli_sweep_writes_netcdf_and_map(capsys, tmp_path):
    out = tmp_path / "g.nc"
    args = ("sweep", SITE_FILE, "--ranges-m", "1000,2000", "--depths-m", "20,60", "--receiver", "dfe",
            "-o", out, "--workers", "0", "--quiet")
    code, text, _ = run_cli(capsys, *args, "--plot", tmp_path / "g.png")
    assert code == 0 and "Caution:" in text
    ds = xr.open_dataset(out)
    assert ds["net_bit_rate_bps"].dims == ("range", "depth") and "site_text" in ds.attrs
    assert "Isovelocity test shelf" in ds.attrs["site_text"]
    assert (tmp_path / "g.png").exists()
    code, _, err = run_cli(capsys, *args)
    assert code == 2 and "exists" in err and err.count("\n") == 1
