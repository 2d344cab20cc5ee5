"""Sweeps: the dataset's layout, checkpoints, resume after interruption, refusals.

These test the machinery with the small deterministic evaluator of ``synthetic_eval`` (invented
demo physics); the real-stage checks are in ``test_real_stages.py``.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import synthetic_eval
from aculink.errors import AculinkError
from aculink.planning import run_sweep, search
from aculink.planning import sweep as sweep_mod
from aculink.planning.checkpoint import parts_folder

RANGES = [500.0, 1000.0, 2000.0, 3000.0, 4000.0, 6000.0]
DEPTHS = [10.0, 20.0, 50.0]
OPTS = dict(receivers=list(synthetic_eval.RECEIVERS), modulations=list(synthetic_eval.MODULATIONS),
            chunk_ranges=2, workers=0, quiet=True)


def sweep(site, out, **kw):
    return run_sweep(site, RANGES, DEPTHS, out, **(OPTS | {"evaluate": synthetic_eval.evaluate} | kw))


def test_dataset_layout_units_and_attrs(flat_site, tmp_path):
    """The file opens with xarray.open_dataset and carries CF-style units/long_name on every
    variable and coordinate, the caution and the settings (CF conventions 1.10, sec. 3.1-3.2)."""
    out = tmp_path / "s.nc"
    ds = sweep(flat_site, out, source_depths_m=[10.0, 30.0], winds_mps=None)
    back = xr.open_dataset(out)
    assert dict(back.sizes) == {"source_depth": 2, "range": 6, "depth": 3, "receiver": 3,
                                "symbol_rate": 6, "modulation": 2}
    assert back["net_bit_rate_bps"].dims == ("source_depth", "range", "depth")
    assert back["candidate_ber_predicted"].dims == ("source_depth", "range", "depth", "receiver",
                                                    "symbol_rate", "modulation")
    for name in ("net_bit_rate_bps", "snr_band_db", "snr_out_predicted_db", "ber_predicted", "margin_db",
                 "spread_90_s", "tl_db", "best_symbol_rate_baud", "range", "depth", "source_depth"):
        assert back[name].attrs["units"] and back[name].attrs["long_name"], name
    assert back["range"].attrs["units"] == "m" and back["depth"].attrs["positive"] == "down"
    assert back["best_modulation"].dtype.kind in "OU" and back["error"].dtype.kind in "OU"
    assert "caution" in back.attrs and "settings" in back.attrs and "aculink_version" in back.attrs
    xr.testing.assert_identical(ds, back.load())
    assert not parts_folder(out).exists()


def test_chunking_does_not_change_results(flat_site, tmp_path):
    """Results do not depend on how the grid is cut (regression against the evaluator run on the
    whole grid at once, no outside source)."""
    ds = sweep(flat_site, tmp_path / "a.nc", chunk_ranges=4)
    grid = search.CandidateGrid(ds["symbol_rate"].values, OPTS["modulations"], OPTS["receivers"])
    whole = search.summarise_block(synthetic_eval.evaluate(flat_site, RANGES, DEPTHS, grid, 1e-4),
                                   grid, target_ber=1e-4, margin_db=3.0)
    np.testing.assert_array_equal(ds["net_bit_rate_bps"].values, whole["best_rate_bps"])
    np.testing.assert_array_equal(ds["candidate_snr_out_predicted_db"].values, whole["snr_out_db"])
    np.testing.assert_array_equal(ds["best_receiver"].values, whole["best_receiver"])


def test_failing_point_recorded_in_dataset(flat_site, tmp_path):
    """A failing grid point is recorded with its message; the sweep completes."""
    depths = [10.0, synthetic_eval.BAD_DEPTH_M, 50.0]
    ds = run_sweep(flat_site, RANGES, depths, tmp_path / "f.nc",
                   **(OPTS | {"evaluate": synthetic_eval.evaluate}))
    assert np.all(ds["error"].sel(depth=13.0).values == "ValueError: synthetic failure at depth 13.0 m")
    assert np.all(np.isnan(ds["net_bit_rate_bps"].sel(depth=13.0).values))
    assert np.all(ds["error"].sel(depth=[10.0, 50.0]).values == "")
    assert sweep_mod.report_failures(ds).startswith("6 of 18 grid points")


def test_simulated_ctrl_c_then_resume_equals_uninterrupted(flat_site, tmp_path, monkeypatch):
    """Interrupted after some chunks, --resume computes only the missing chunks and gives a dataset
    identical to an uninterrupted run (regression: the run against itself)."""
    kw = {"evaluate": synthetic_eval.evaluate_interruptible}
    ref = sweep(flat_site, tmp_path / "ref.nc", **kw)
    out = tmp_path / "cut.nc"
    monkeypatch.setattr(synthetic_eval, "INTERRUPT_AT_RANGE_M", 4000.0)
    with pytest.raises(KeyboardInterrupt):
        sweep(flat_site, out, **kw)
    assert not out.exists()
    saved = sorted(p.name for p in parts_folder(out).glob("chunk-*.npz"))
    assert saved == ["chunk-000000.npz", "chunk-000001.npz"]
    with pytest.raises(AculinkError, match="--resume"):
        sweep(flat_site, out, **kw)
    computed = []
    real = sweep_mod.compute_chunk
    monkeypatch.setattr(sweep_mod, "compute_chunk", lambda job, c: computed.append(c.index) or real(job, c))
    got = sweep(flat_site, out, resume=True, **kw)
    assert computed == [2]
    xr.testing.assert_identical(got, ref)
    xr.testing.assert_identical(xr.open_dataset(out).load(), xr.open_dataset(tmp_path / "ref.nc").load())


_CHILD = """
import sys
sys.path[:0] = [{main!r}, {here!r}]
import synthetic_eval
from synthetic_eval import make_site
from aculink.planning import run_sweep
run_sweep(make_site(), {ranges!r}, {depths!r}, {out!r}, receivers=list(synthetic_eval.RECEIVERS),
          modulations=list(synthetic_eval.MODULATIONS), chunk_ranges=1, workers=0, quiet=True,
          evaluate=synthetic_eval.evaluate)
"""


def test_kill_9_then_resume_equals_uninterrupted(flat_site, tmp_path):
    """A sweep process killed with SIGKILL after some chunks landed, resumed, equals an
    uninterrupted sweep (regression: the run against itself)."""
    out = tmp_path / "k.nc"
    here = str(Path(__file__).parent)
    main = str(Path(__file__).parents[2])
    code = _CHILD.format(main=main, here=here, ranges=RANGES, depths=DEPTHS, out=str(out))
    env = dict(os.environ, ACULINK_TEST_CHUNK_DELAY_S="0.4")
    child = subprocess.Popen([sys.executable, "-c", code], env=env)
    parts = parts_folder(out)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and len(list(parts.glob("chunk-*.npz"))) < 2:
        assert child.poll() is None, "the sweep ended before it could be killed"
        time.sleep(0.05)
    child.send_signal(signal.SIGKILL)
    child.wait()
    landed = len(list(parts.glob("chunk-*.npz")))
    assert 2 <= landed < len(RANGES) and not out.exists()
    got = run_sweep(flat_site, RANGES, DEPTHS, out, resume=True,
                    **(OPTS | {"chunk_ranges": 1, "evaluate": synthetic_eval.evaluate}))
    ref = run_sweep(flat_site, RANGES, DEPTHS, tmp_path / "r.nc",
                    **(OPTS | {"chunk_ranges": 1, "evaluate": synthetic_eval.evaluate}))
    xr.testing.assert_identical(got, ref)


def test_resume_refuses_a_different_sweep(flat_site, tmp_path, monkeypatch):
    """The manifest ties a checkpoint to its settings."""
    out = tmp_path / "m.nc"
    monkeypatch.setattr(synthetic_eval, "INTERRUPT_AT_RANGE_M", 2000.0)
    with pytest.raises(KeyboardInterrupt):
        sweep(flat_site, out, evaluate=synthetic_eval.evaluate_interruptible)
    with pytest.raises(AculinkError, match="margin_db differs"):
        sweep(flat_site, out, evaluate=synthetic_eval.evaluate_interruptible, resume=True, margin_db=6.0)
    # --overwrite starts over
    ds = sweep(flat_site, out, evaluate=synthetic_eval.evaluate_interruptible, overwrite=True)
    assert out.exists() and ds.sizes["range"] == len(RANGES)


def test_existing_output_is_never_replaced(flat_site, tmp_path):
    out = tmp_path / "o.nc"
    out.write_text("keep me")
    with pytest.raises(AculinkError, match="--overwrite"):
        sweep(flat_site, out)
    assert out.read_text() == "keep me"
    sweep(flat_site, out, overwrite=True)
    assert xr.open_dataset(out).sizes["range"] == len(RANGES)


@pytest.mark.parametrize("ranges, depths, match", [
    ([], DEPTHS, "ranges_m is empty"),
    ([2000.0, 1000.0], DEPTHS, "strictly increasing"),
    ([-5.0, 1000.0], DEPTHS, "ranges_m"),
    (RANGES, [10.0, 150.0], "below the seabed at every swept range"),
])
def test_bad_grid_is_one_clear_line(flat_site, tmp_path, ranges, depths, match):
    with pytest.raises(AculinkError, match=match) as info:
        run_sweep(flat_site, ranges, depths, tmp_path / "b.nc", **(OPTS | {"evaluate": synthetic_eval.evaluate}))
    assert "\n" not in str(info.value)
    assert not parts_folder(tmp_path / "b.nc").exists()


def test_unwritable_output_folder(flat_site, tmp_path):
    (tmp_path / "file").write_text("")
    for out in (tmp_path / "missing" / "x.nc", tmp_path / "file" / "x.nc"):
        with pytest.raises(AculinkError, match="output folder"):
            sweep(flat_site, out)


# ---------------------------------------------------------------------------------------------
# Options are checked before anything is written; the one rule of --resume and --overwrite
# ---------------------------------------------------------------------------------------------

@pytest.mark.parametrize("bad, match", [
    (dict(workers=-1), "workers = -1: allowed range is"),
    (dict(workers=2.5), "workers = 2.5"),
    (dict(workers=None, scheduler="not an address"), "scheduler = 'not an address'"),
    (dict(workers=2, scheduler="tcp://127.0.0.1:1"), "workers and scheduler together"),
    (dict(resume=True, overwrite=True), "--resume and --overwrite together"),
])
def test_bad_option_leaves_nothing_on_disk(flat_site, tmp_path, bad, match):
    """A sweep refused for an option writes nothing, so the corrected command then runs (the
    planner's documented contract, no outside source)."""
    out = tmp_path / "opt.nc"
    with pytest.raises(AculinkError, match=match) as info:
        sweep(flat_site, out, **bad)
    assert "\n" not in str(info.value)
    assert not parts_folder(out).exists() and not out.exists()
    ds = sweep(flat_site, out)
    assert out.exists() and ds.sizes["range"] == len(RANGES)


def test_resume_finishes_a_sweep_started_with_overwrite(flat_site, tmp_path, monkeypatch):
    """--overwrite over an existing file, interrupted; then --resume alone (the message's advice)
    finishes it and replaces the file, computing only the missing chunks (regression against an
    uninterrupted run)."""
    kw = {"evaluate": synthetic_eval.evaluate_interruptible}
    ref = sweep(flat_site, tmp_path / "ref.nc", **kw)
    out = tmp_path / "old.nc"
    out.write_text("an earlier result")
    monkeypatch.setattr(synthetic_eval, "INTERRUPT_AT_RANGE_M", 4000.0)
    with pytest.raises(KeyboardInterrupt):
        sweep(flat_site, out, overwrite=True, **kw)
    assert out.read_text() == "an earlier result"
    computed = []
    real = sweep_mod.compute_chunk
    monkeypatch.setattr(sweep_mod, "compute_chunk", lambda job, c: computed.append(c.index) or real(job, c))
    got = sweep(flat_site, out, resume=True, **kw)
    assert computed == [2]
    xr.testing.assert_identical(got, ref)
    xr.testing.assert_identical(xr.open_dataset(out).load(), ref)


def test_resume_and_overwrite_rule(flat_site, tmp_path, monkeypatch):
    """--resume with --overwrite is refused (they mean opposite things); --overwrite alone
    starts over; a resumed sweep started without --overwrite never replaces a file that has
    appeared meanwhile (the planner's documented rule, no outside source)."""
    kw = {"evaluate": synthetic_eval.evaluate_interruptible}
    out = tmp_path / "r.nc"
    monkeypatch.setattr(synthetic_eval, "INTERRUPT_AT_RANGE_M", 4000.0)
    with pytest.raises(KeyboardInterrupt):
        sweep(flat_site, out, **kw)
    with pytest.raises(AculinkError, match="choose one"):
        sweep(flat_site, out, resume=True, overwrite=True, **kw)
    assert len(list(parts_folder(out).glob("chunk-*.npz"))) == 2
    out.write_text("someone else's file")
    with pytest.raises(AculinkError, match="started without --overwrite"):
        sweep(flat_site, out, resume=True, **kw)
    assert out.read_text() == "someone else's file"
    computed = []
    real = sweep_mod.compute_chunk
    monkeypatch.setattr(sweep_mod, "compute_chunk", lambda job, c: computed.append(c.index) or real(job, c))
    sweep(flat_site, out, overwrite=True, **kw)
    assert computed == [0, 1, 2] and not parts_folder(out).exists()


def test_default_workers_rule():
    """The default runs serially unless the estimated saving repays a local cluster's start
    with the stated margin (the planner's own rule: n_points POINT_S (1 - 1/n) >= START_MARGIN
    LOCAL_START_S; common practice, no source)."""
    from aculink.planning import dask_runner as dr

    need = dr.START_MARGIN * dr.LOCAL_START_S / (dr.POINT_S * 0.5)
    assert dr.local_workers_for(int(need) - 1, 100, cores=2) == 1
    assert dr.local_workers_for(int(np.ceil(need)), 100, cores=2) == 2
    assert dr.local_workers_for(10_000, 1, cores=2) == 1          # one task: nothing to share
    assert dr.local_workers_for(10_000, 100, cores=1) == 1
    assert dr.local_workers_for(10_000, 3, cores=8) == 3          # never more workers than tasks


def test_small_default_sweep_starts_no_cluster(flat_site, tmp_path, monkeypatch):
    """A sweep too small to repay a cluster runs serially by default (no Dask cluster started)."""
    from aculink.planning import dask_runner as dr

    def refuse(n):
        raise AssertionError("a local cluster was started for a small sweep")

    monkeypatch.setattr(dr, "_local_client", refuse)
    ds = sweep(flat_site, tmp_path / "small.nc", workers=None)
    assert ds.sizes["range"] == len(RANGES)


def test_cli_interrupt_message_and_resume_after_overwrite(tmp_path, monkeypatch, capsys):
    """`aculink sweep --overwrite` interrupted says to rerun with --resume in place of
    --overwrite, and that command finishes the sweep over the old file (real chain, tiny grid)."""
    from aculink.cli import main

    site_file = Path(__file__).with_name("isovelocity_silt.toml")
    out = tmp_path / "c.nc"
    out.write_text("old")
    base = ["sweep", str(site_file), "--ranges-m", "1000,2000", "--depths-m", "30", "--receiver", "none",
            "--chunk-ranges", "1", "--workers", "0", "--quiet", "-o", str(out)]
    real = sweep_mod.compute_chunk

    def interrupted(job, chunk):
        if chunk.index == 1:
            raise KeyboardInterrupt
        return real(job, chunk)

    monkeypatch.setattr(sweep_mod, "compute_chunk", interrupted)
    assert main(base + ["--overwrite"]) == 130
    err = capsys.readouterr().err
    assert "rerun the same command with --resume in place of --overwrite" in err
    monkeypatch.setattr(sweep_mod, "compute_chunk", real)
    assert main(base + ["--resume"]) == 0
    capsys.readouterr()
    assert xr.open_dataset(out).sizes["range"] == 2
