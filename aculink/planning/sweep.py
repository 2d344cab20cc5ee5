"""Grid sweeps: the workable rate over range x depth (x source depth x wind), resumable.

The grid is cut into chunks that each share one ray fan: one source depth, one wind speed, a
block of consecutive ranges and every receiver depth. The cut depends only on the grid (never
on the number of workers), and each chunk is computed by the same pure function wherever it
runs, so serial, local-cluster and external-cluster sweeps give identical datasets. Each
finished chunk is saved at once in ``OUT.parts/`` (see :mod:`aculink.planning.checkpoint`);
the final dataset is assembled from those files and written atomically, after which the
checkpoint folder is removed.
"""

from __future__ import annotations

import json
import math
import pickle
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from aculink import __version__
from aculink.errors import AculinkError, check_array, check_range
from aculink.io.atomic import check_output_path
from aculink.planning import search
from aculink.planning.checkpoint import Checkpoint, parts_folder
from aculink.site.surface import site_with_wind
from aculink.planning.dask_runner import open_runner
from aculink.planning.dataset import to_dataset
from aculink.planning.progress import Progress
from aculink.site.model import LIMITS as _LIMITS

__all__ = ["CHUNK_POINTS", "Chunk", "SweepJob", "strictly_increasing", "check_geometry", "make_chunks",
           "auto_chunk_ranges", "compute_chunk", "sweep_settings", "run_sweep", "check_sweep_output",
           "may_replace_outputs", "warm_up", "prepare_job", "candidate_grid", "merge_chunks",
           "report_failures"]

#: Receiver positions per chunk the automatic chunking aims at: with the real stages this
#: gives tasks of about a second, above the 0.5-1 s where Dask pays off on these machines
#: (measured: about 19 ms of scheduling per task on 2 local workers).
CHUNK_POINTS = 40


@dataclass(frozen=True)
class Chunk:
    """One task: a source depth, a wind speed and a block of ranges, all depths."""

    index: int
    source_index: int
    wind_index: int
    range_start: int
    range_stop: int


@dataclass(frozen=True)
class SweepJob:
    """What every chunk of one sweep shares (sent to each worker once)."""

    site: object
    ranges_m: np.ndarray
    depths_m: np.ndarray
    source_depths_m: np.ndarray
    winds_mps: np.ndarray | None
    grid: search.CandidateGrid
    target_ber: float
    margin_db: float
    evaluate: object


def strictly_increasing(field: str, values, low, high, *, unit="m", low_open=True) -> np.ndarray:
    """Validate a grid axis: non-empty, finite, inside [low, high], strictly increasing."""
    arr = np.atleast_1d(check_array(field, values, low, high, low_open=low_open, unit=unit))
    if arr.ndim != 1 or arr.size == 0:
        raise AculinkError(f"{field} is empty: give at least one value")
    if np.any(np.isnan(arr)):
        raise AculinkError(f"{field} contains NaN: expected numbers in [{low:g}, {high:g}] {unit}")
    if arr.size > 1 and np.any(np.diff(arr) <= 0):
        k = int(np.nonzero(np.diff(arr) <= 0)[0][0])
        raise AculinkError(f"{field} must be strictly increasing: {arr[k]:g} is followed by "
                           f"{arr[k + 1]:g} {unit}")
    return arr


def check_geometry(site, ranges_m, depths_m, *, every_range: bool):
    """Reject ranges past the site and depths below its seabed.

    ``every_range`` True (a table at one depth): the depth must be above the seabed at every
    range. False (a map): a depth must be above the seabed somewhere in the swept ranges;
    points below the local seabed are then recorded as such in the result.
    """
    max_r = site.seabed.max_range_m
    ranges = strictly_increasing("ranges_m", ranges_m, 0.0, max_r if math.isfinite(max_r) else None)
    seabed = np.asarray(site.seabed.depth_at(ranges), dtype=float)
    depths = strictly_increasing("depths_m", depths_m, 0.0, None, low_open=True)
    if every_range:
        below = depths[:, None] >= seabed[None, :]
        if below.any():
            j, i = np.argwhere(below)[0]
            raise AculinkError(f"depth_m = {depths[j]:g} m is at or below the seabed "
                               f"({seabed[i]:g} m) at range {ranges[i]:g} m")
    else:
        worst = depths >= seabed.max()
        if worst.any():
            raise AculinkError(f"depths_m = {depths[worst][0]:g} m is below the seabed at every "
                               f"swept range (deepest seabed {seabed.max():g} m)")
    return ranges, depths


def make_chunks(n_sources: int, n_winds: int, n_ranges: int, chunk_ranges: int) -> list:
    """The chunk list of a grid, in a fixed order."""
    chunks = []
    for s in range(n_sources):
        for w in range(n_winds):
            for start in range(0, n_ranges, chunk_ranges):
                chunks.append(Chunk(len(chunks), s, w, start, min(n_ranges, start + chunk_ranges)))
    return chunks


def auto_chunk_ranges(n_ranges: int, n_depths: int) -> int:
    """Ranges per chunk so a chunk holds about CHUNK_POINTS receiver positions."""
    return int(max(1, min(n_ranges, round(CHUNK_POINTS / max(1, n_depths)))))


def compute_chunk(job: SweepJob, chunk: Chunk) -> dict:
    """Every receiver of one chunk: evaluator result plus the workable choice (arrays).

    The BLAS runs single-threaded here whatever runs the chunk: multithreaded BLAS rounds
    differently with the thread count, and serial, local-cluster and remote runs must give
    identical datasets (Dask workers already pin their BLAS to one thread).
    """
    from threadpoolctl import threadpool_limits

    # the modem's estimate caches live on each channel object, so they go with the chunk's channels
    with threadpool_limits(limits=1, user_api="blas"):
        return _compute_chunk(job, chunk)


def _compute_chunk(job: SweepJob, chunk: Chunk) -> dict:
    site = job.site.with_geometry(source_depth_m=float(job.source_depths_m[chunk.source_index]))
    if job.winds_mps is not None:
        site = site_with_wind(site, float(job.winds_mps[chunk.wind_index]), field="wind_mps")
    ranges = job.ranges_m[chunk.range_start:chunk.range_stop]
    block = search.evaluate_safely(job.evaluate, site, ranges, job.depths_m, job.grid, job.target_ber,
                                   job.margin_db)
    return search.summarise_block(block, job.grid, target_ber=job.target_ber, margin_db=job.margin_db)


def _site_identity(site) -> str:
    if getattr(site, "text", ""):
        return site.text
    import hashlib

    return "pickle-sha256:" + hashlib.sha256(pickle.dumps(site)).hexdigest()


def _evaluator_name(evaluate) -> str:
    return f"{getattr(evaluate, '__module__', '?')}.{getattr(evaluate, '__qualname__', repr(evaluate))}"


def sweep_settings(job: SweepJob, chunk_ranges: int) -> dict:
    """JSON-able description of a sweep (manifest and the dataset's ``settings`` attribute)."""
    return {
        "aculink_version": __version__,
        "site": _site_identity(job.site),
        "ranges_m": job.ranges_m.tolist(),
        "depths_m": job.depths_m.tolist(),
        "source_depths_m": job.source_depths_m.tolist(),
        "winds_mps": None if job.winds_mps is None else job.winds_mps.tolist(),
        "candidates": job.grid.to_dict(),
        "target_ber": job.target_ber,
        "margin_db": job.margin_db,
        "chunk_ranges": int(chunk_ranges),
        "evaluator": _evaluator_name(job.evaluate),
    }


def run_sweep(site, ranges_m, depths_m, out, *, source_depths_m=None, winds_mps=None,
              receivers="all", modulations=None, symbol_rates_baud=None, target_ber=None,
              margin_db=None, workers=None, scheduler=None, resume=False, overwrite=False,
              quiet=False, chunk_ranges=None, evaluate=None, keep_parts=False, stream=None,
              stats_out=None):
    """Sweep the workable rate over a grid, checkpointing every chunk; write NetCDF.

    Parameters
    ----------
    site : Site
    ranges_m, depths_m : array_like
        Receiver ranges and depths, m (strictly increasing).
    out : str or Path
        The NetCDF file to write (never replaced unless ``overwrite``).
    source_depths_m, winds_mps : array_like, optional
        Extra sweep axes; each adds a dimension (``source_depth``, ``wind``) to the result.
        Without them the site's source depth and wind are used.
    receivers : str or list
        Receiver names or "all".
    modulations, symbol_rates_baud : list, optional
        Candidate modulations (default: all the modem offers) and symbol rates (default:
        :func:`aculink.planning.search.candidate_symbol_rates` over the site's band).
    target_ber, margin_db : float, optional
        Default: the site's ``[modem]`` values.
    workers : int, optional
        Local Dask worker processes, 0 to 4 x cores (0 or 1: serial, in this process; None:
        one per core when the sweep is large enough to repay starting them, else serial; see
        :func:`aculink.planning.dask_runner.local_workers_for`).
    scheduler : str, optional
        Address of an existing Dask scheduler, e.g. ``tcp://10.0.0.5:8786``.
    resume : bool
        Continue an interrupted sweep from its checkpoint folder ``OUT.parts`` (the same
        settings; it may replace ``out`` if it was started with ``overwrite``).
    overwrite : bool
        Start over: discard an unfinished sweep's checkpoints and replace an existing ``out``.
        Excludes ``resume`` (:data:`aculink.planning.checkpoint.RULE`).
    quiet : bool
        No progress bar.
    chunk_ranges : int, optional
        Ranges per chunk (default: about CHUNK_POINTS receivers per chunk).
    evaluate : callable, optional
        The evaluator (default :func:`aculink.planning.search.evaluate_block`).
    keep_parts : bool
        Keep the checkpoint folder after the dataset is written.
    stats_out : list, optional
        Receives the run's :class:`aculink.planning.dask_runner.RunStats` (task times, where
        they ran, the cluster's overhead per task): the figures to size a cluster with.

    Returns
    -------
    xarray.Dataset
        Dims ``range``, ``depth`` (and ``source_depth``, ``wind`` when swept) and the
        candidate axes ``receiver``, ``symbol_rate``, ``modulation``.

    Raises
    ------
    AculinkError
        Bad grid or option, output that exists (without ``overwrite``) or cannot be written,
        a checkpoint of a different sweep, an unreachable scheduler: all before anything is
        written. Nothing computed is lost: finished chunks stay in the checkpoint folder.
    """
    out = Path(out)
    job, chunk_ranges = prepare_job(site, ranges_m, depths_m, source_depths_m=source_depths_m,
                                    winds_mps=winds_mps, receivers=receivers,
                                    modulations=modulations, symbol_rates_baud=symbol_rates_baud,
                                    target_ber=target_ber, margin_db=margin_db,
                                    chunk_ranges=chunk_ranges, evaluate=evaluate)
    chunks = make_chunks(len(job.source_depths_m), 1 if job.winds_mps is None else len(job.winds_mps),
                         len(job.ranges_m), chunk_ranges)
    settings = sweep_settings(job, chunk_ranges)
    # Every option is checked before the first write: a refused sweep leaves nothing behind.
    ckpt = Checkpoint(parts_folder(out), settings, resume=resume, overwrite=overwrite)
    replace = check_sweep_output(out, ckpt, overwrite=overwrite)
    done = ckpt.done()
    todo = [c for c in chunks if c.index not in done]
    n_points = sum((c.range_stop - c.range_start) for c in todo) * len(job.depths_m)
    warm = warm_up if job.evaluate is search.evaluate_block else None
    with open_runner(workers=workers, scheduler=scheduler, n_points=n_points, n_tasks=len(todo),
                     warm_up=warm) as runner:
        ckpt.start(replace_output=replace)
        bar = Progress(len(chunks), already=len(chunks) - len(todo), enabled=False if quiet else None,
                       stream=stream)

        def save(chunk, result):
            ckpt.save(chunk.index, result)
            bar.update()

        try:
            runner.run(compute_chunk, job, todo, save, name="chunk")
        finally:
            bar.close()
        if stats_out is not None:
            stats_out.append(runner.stats)
        if getattr(runner, "start_error", None) and not quiet:
            print(f"aculink: note: ran serially: {runner.start_error}", file=stream or sys.stderr)
    ds = merge_chunks(job, chunks, ckpt, settings, source_swept=source_depths_m is not None)
    from aculink.io.netcdf import write_netcdf

    write_netcdf(ds, out, overwrite=replace)
    if not keep_parts:
        ckpt.discard()
    return ds


def check_sweep_output(out: Path, ckpt: Checkpoint, *, overwrite: bool) -> bool:
    """Refuse an output the sweep may not replace; return whether it may replace one.

    ``overwrite`` gives the permission; a resumed sweep keeps the one it was started with
    (stored in its manifest), so "the same command with --resume in place of --overwrite"
    finishes it (:data:`aculink.planning.checkpoint.RULE`).
    """
    replace = bool(overwrite or ckpt.replace_output)
    if ckpt.resuming and not replace and out.exists():
        raise AculinkError(f"{out} exists and the unfinished sweep in {ckpt.folder} was started without "
                           f"--overwrite: move {out} away and rerun with --resume, or start over with "
                           "--overwrite")
    check_output_path(out, overwrite=replace)
    return replace


def may_replace_outputs(out, *, resume: bool, overwrite: bool) -> bool:
    """Whether a sweep to ``out`` may replace existing outputs (OUT itself, its picture).

    True with ``overwrite``, or with ``resume`` when the unfinished sweep in ``OUT.parts`` was
    started with ``overwrite``; reads only.
    """
    if overwrite:
        return True
    if not resume:
        return False
    manifest = parts_folder(Path(out)) / "manifest.json"
    try:
        return bool(json.loads(manifest.read_text(encoding="utf-8")).get("replace_output", False))
    except (OSError, ValueError, AttributeError):
        return False


def warm_up() -> None:
    """Run the real stages once on a tiny site of our own, so a fresh process (a Dask worker)
    loads, or compiles, the numba kernels a sweep uses before its first chunk."""
    from aculink.site.model import Modem, Noise, Receiver, Seabed, Site, Source, Surface, Water
    from aculink.site.profile import SoundSpeedProfile

    site = Site(name="warm-up", water=Water(profile=SoundSpeedProfile(np.array([0.0, 60.0]),
                                                                      np.array([1500.0, 1490.0]))),
                seabed=Seabed(range_m=np.array([0.0]), depth_m=np.array([60.0]), sound_speed_mps=1650.0,
                              density_kgm3=1900.0, attenuation_db_per_wavelength=0.8),
                surface=Surface(4.0, 0.1), noise=Noise(0.5, 4.0, 0.0),
                source=Source(depth_m=20.0, level_db=170.0), receiver=Receiver(depth_m=30.0, range_m=800.0),
                modem=Modem(carrier_hz=12000.0, bandwidth_hz=4000.0, rolloff=0.25, target_ber=1e-4,
                            margin_db=3.0))
    grid = candidate_grid(site, symbol_rates_baud=[1000.0])
    search.evaluate_safely(search.evaluate_block, site, [800.0], [30.0], grid, 1e-4, 3.0)


def prepare_job(site, ranges_m, depths_m, *, source_depths_m=None, winds_mps=None,
                receivers="all", modulations=None, symbol_rates_baud=None, target_ber=None,
                margin_db=None, chunk_ranges=None, evaluate=None):
    """Validate a sweep's inputs and bundle them (see :func:`run_sweep`)."""
    ranges, depths = check_geometry(site, ranges_m, depths_m, every_range=False)
    surface_bed = float(site.seabed.depth_at(np.array([0.0]))[0])
    if source_depths_m is None:
        sources = np.array([float(site.source.depth_m)])
    else:
        sources = strictly_increasing("source_depths_m", source_depths_m, 0.0, surface_bed)
        if sources[-1] >= surface_bed:
            raise AculinkError(f"source_depths_m = {sources[-1]:g} m is at or below the seabed "
                               f"at the source ({surface_bed:g} m)")
    winds = None if winds_mps is None else strictly_increasing("winds_mps", winds_mps, 0.0, _LIMITS["surface"]["wind_speed_mps"][1],
                                                              unit="m/s", low_open=False)
    grid = candidate_grid(site, receivers=receivers, modulations=modulations,
                          symbol_rates_baud=symbol_rates_baud)
    tb = check_range("target_ber", site.modem.target_ber if target_ber is None else target_ber,
                     0.0, 0.5, low_open=True, high_open=True)
    md = check_range("margin_db", site.modem.margin_db if margin_db is None else margin_db,
                     *_LIMITS["modem"]["margin_db"][:2], unit="dB")
    if chunk_ranges is None:
        chunk_ranges = auto_chunk_ranges(len(ranges), len(depths))
    elif int(chunk_ranges) != chunk_ranges or chunk_ranges < 1:
        raise AculinkError(f"chunk_ranges = {chunk_ranges!r}: expected a whole number >= 1")
    job = SweepJob(site=site, ranges_m=ranges, depths_m=depths, source_depths_m=sources,
                   winds_mps=winds, grid=grid, target_ber=tb, margin_db=md,
                   evaluate=search.evaluate_block if evaluate is None else evaluate)
    return job, int(chunk_ranges)


def candidate_grid(site, *, receivers="all", modulations=None, symbol_rates_baud=None):
    """The candidate configurations: the modem stage's modulations and receivers by default."""
    explicit = modulations is not None and receivers is not None and not isinstance(receivers, str)
    if explicit:
        known_mods, known_rx = tuple(modulations), tuple(receivers)
    else:
        from aculink.modem import MODULATIONS, RECEIVERS

        known_mods, known_rx = tuple(MODULATIONS), tuple(RECEIVERS)
    if isinstance(receivers, str) and receivers == "all" and not explicit:
        rx = tuple(r for r in known_rx if r in search.PRACTICAL_RECEIVERS)
    else:
        rx = search.resolve_receivers(receivers, known_rx)
    mods = known_mods if modulations is None else search.resolve_receivers(modulations, known_mods)
    if symbol_rates_baud is None:
        rates = search.candidate_symbol_rates(site.modem.bandwidth_hz, site.modem.rolloff)
    else:
        rates = np.atleast_1d(check_array("symbol_rates_baud", symbol_rates_baud, 0.0, None,
                                          low_open=True, unit="baud"))
    return search.CandidateGrid(tuple(rates), mods, rx)


def merge_chunks(job: SweepJob, chunks, ckpt: Checkpoint, settings: dict, *, source_swept: bool):
    """Assemble the dataset from the chunk files, one file in memory at a time."""
    n_s = len(job.source_depths_m)
    n_w = 1 if job.winds_mps is None else len(job.winds_mps)
    lead = (n_s, n_w, len(job.ranges_m), len(job.depths_m))
    full = None
    required = None
    for chunk in chunks:
        part = ckpt.load(chunk.index)
        if full is None:
            full = {}
            for key, arr in part.items():
                if key == "snr_required_db":
                    continue
                fill = "" if arr.dtype == object else np.nan
                full[key] = np.full(lead + arr.shape[2:], fill, dtype=arr.dtype)
        for key, arr in part.items():
            if key == "snr_required_db":
                if required is None or (np.all(np.isnan(required)) and not np.all(np.isnan(arr))):
                    required = arr
                continue
            full[key][chunk.source_index, chunk.wind_index, chunk.range_start:chunk.range_stop] = arr
        del part
    full["snr_required_db"] = required
    coords = {"source_depth": job.source_depths_m,
              "wind": job.winds_mps if job.winds_mps is not None else [np.nan],
              "range": job.ranges_m, "depth": job.depths_m}
    site = job.site
    attrs = {"site_name": site.name, "site_text": getattr(site, "text", "") or "",
             "site_path": str(getattr(site, "path", "") or ""),
             "settings": json.dumps({k: v for k, v in settings.items() if k != "site"}, sort_keys=True),
             "target_ber": job.target_ber, "margin_db": job.margin_db}
    ds = to_dataset(full, coords, job.grid, attrs=attrs)
    if not source_swept:
        ds = ds.isel(source_depth=0)
    if job.winds_mps is None:
        ds = ds.isel(wind=0).drop_vars("wind")
    return ds


def report_failures(ds, stream=None) -> str | None:
    """One line summarising grid points without a result (None when all have one)."""
    err = np.asarray(ds["error"].values, dtype=object)
    bad = err != ""
    if not bad.any():
        return None
    below = np.char.find(err[bad].astype(str), "below the seabed") >= 0
    first = next(e for e in err[bad].ravel() if "below the seabed" not in e) if (~below).any() else None
    text = f"{int(bad.sum())} of {err.size} grid points have no result"
    if below.any():
        text += f" ({int(below.sum())} below the seabed)"
    if first:
        text += f"; first other error: {first}"
    if stream is not None:
        print(f"aculink: note: {text}", file=stream if stream else sys.stderr)
    return text
