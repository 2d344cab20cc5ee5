"""Link availability: the rate a planner can count on over the site's declared variability.

Each member of the ensemble (:mod:`aculink.site.variability`) is one draw of what varies at the
site (water column, wind, positions, seabed, tide). Every member runs the ordinary chain (rays,
channel, budget, analytic prediction of every candidate configuration). Per range this gives:

* the **closure probability** of every candidate (receiver, symbol rate, modulation): the
  probability that it meets the target BER with the margin;
* the **rate available with probability p**: the highest net rate of a candidate whose closure
  probability is at least p (a planner fixes one modem setting before the deployment);
* the **median-case rate**: the median over members of each member's best rate;
* an **attribution** of the spread: how much of the variance of the members' best rates (in
  octaves) goes away when one factor is held at its nominal value (common random numbers: the
  same members, one factor reset), measured on the first :data:`ATTRIBUTION_MEMBERS` members so
  that it costs at most that many evaluations per factor whatever the ensemble's size.

Members are enumerated exactly when every factor is discrete and the product is small enough;
otherwise they are drawn from ``seed`` in batches until the 95 % Clopper-Pearson interval
[ClopperPearson1934] of each range's chosen closure probability is narrower than ``tolerance``
on either side, or ``members`` is reached.

Every member's candidates are all evaluated (the planner's skipping of candidates that cannot
beat the best is switched off by evaluating with an infinite margin and applying the real one
here), because a slower configuration that a member's best makes irrelevant can be the one
that closes most often.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import xarray as xr

from aculink.cautions import CAUTION
from aculink.errors import check_int, check_range
from aculink.site.variability import (FACTORS, draw_members, enumerate_members, member_site, moved_depth,
                                      nominal_member)

__all__ = ["plan_availability", "evaluate_member", "closure_interval", "weighted_quantile", "available_rate",
           "DEFAULT_PROBABILITIES", "BATCH_MEMBERS", "ATTRIBUTION_MEMBERS"]

#: Probabilities every availability result reports (the requested one is added).
DEFAULT_PROBABILITIES = (0.5, 0.9, 0.99)
#: Most members the attribution re-runs with each factor held at its nominal value (the share is
#: a ratio of two variances over the same members; 16 tell the main factor apart at a fraction
#: of the cost of the whole ensemble, common practice, no source).
ATTRIBUTION_MEMBERS = 16
#: Members drawn per batch before the stopping rule is checked again.
BATCH_MEMBERS = 8
#: Rates below this count as this in the octave spread (avoids log of zero), bit/s.
SPREAD_FLOOR_BPS = 50.0
#: Confidence of the reported intervals.
CONFIDENCE = 0.95


def closure_interval(k, n, confidence=CONFIDENCE):
    """Clopper-Pearson interval of a binomial proportion ``k / n`` ([ClopperPearson1934]).

    Works elementwise on arrays; ``n = 0`` gives (0, 1).
    """
    from scipy.stats import beta

    k = np.asarray(k, dtype=float)
    n = np.asarray(n, dtype=float)
    a = 0.5 * (1.0 - confidence)
    with np.errstate(invalid="ignore", divide="ignore"):
        low = np.where(k > 0, beta.ppf(a, k, n - k + 1), 0.0)
        high = np.where(k < n, beta.ppf(1 - a, k + 1, n - k), 1.0)
    return np.nan_to_num(low, nan=0.0), np.nan_to_num(high, nan=1.0)


def weighted_quantile(values, weights, q, axis=0):
    """Weighted quantile along ``axis`` (inverse of the weighted empirical distribution).

    The smallest value whose cumulative weight reaches ``q`` of the total.
    """
    v = np.moveaxis(np.asarray(values, dtype=float), axis, -1)
    w = np.asarray(weights, dtype=float)
    order = np.argsort(v, axis=-1, kind="stable")
    vs = np.take_along_axis(v, order, axis=-1)
    ws = w[order]
    cum = np.cumsum(ws, axis=-1)
    total = cum[..., -1:]
    idx = np.argmax(cum >= q * total * (1 - 1e-12), axis=-1)
    return np.take_along_axis(vs, idx[..., None], axis=-1)[..., 0]


def available_rate(closure, rate, probability):
    """Index and rate of the best candidate whose closure probability is at least ``probability``.

    Parameters
    ----------
    closure, rate : ndarray, shape (R, C)
        Closure probability and net rate per range and (flattened) candidate.
    probability : float

    Returns
    -------
    (index, rate) : ndarray (R,) each
        -1 and 0 where no candidate qualifies. Ties in rate go to the higher closure
        probability, then to the earlier candidate.
    """
    ok = (closure >= probability - 1e-12) & np.isfinite(rate) & (rate > 0)
    score = np.where(ok, rate, -np.inf)
    top = score.max(axis=-1, keepdims=True)
    tie = ok & (score >= top * (1 - 1e-12))
    idx = np.argmax(np.where(tie, closure, -np.inf), axis=-1)
    idx = np.where(ok.any(axis=-1), idx, -1)
    best = np.where(idx >= 0, np.take_along_axis(rate, np.maximum(idx, 0)[:, None], axis=-1)[:, 0], 0.0)
    return idx, best


@dataclasses.dataclass(frozen=True)
class _Shared:
    """What every member evaluation needs (sent once to each worker)."""

    site: object
    ranges: np.ndarray
    depth: float
    grid: object
    target_ber: float
    margin_db: float
    evaluate: object


def evaluate_member(shared: _Shared, member):
    """One member's (workable (R, C) bool, rate (R, C), best rate (R,), error (R,)).

    A module-level function, so that Dask workers can run it; it depends only on its arguments,
    which is why serial and distributed ensembles give the same numbers.
    """
    from aculink.planning import search

    evaluate = search.evaluate_block if shared.evaluate is None else shared.evaluate
    site = member_site(shared.site, member)
    max_r = site.seabed.max_range_m
    ranges = np.clip(shared.ranges + member.range_offset_m, 1.0, max_r if math.isfinite(max_r) else None)
    ranges = np.maximum.accumulate(ranges)  # clipping may tie neighbours; keep them ordered
    ranges = ranges + 1e-6 * np.arange(ranges.size)
    shallowest = float(np.min(site.seabed.depth_at(ranges)))
    depth = moved_depth(shared.depth, member.depth_offset_m, shallowest)
    block = search.evaluate_safely(evaluate, site, ranges, [depth], shared.grid, shared.target_ber, math.inf)
    sel = search.select_workable(block["snr_out_db"], block["ber_predicted"], block["net_bit_rate_bps"],
                                 block["snr_required_db"], target_ber=shared.target_ber, margin_db=shared.margin_db)
    n = len(shared.ranges)
    workable = sel["workable"][:, 0].reshape(n, -1)
    rate = np.asarray(block["net_bit_rate_bps"], dtype=float)[:, 0].reshape(n, -1)
    best = np.where(workable, rate, 0.0).max(axis=-1)
    failed = np.asarray(block["error"])[:, 0] != ""
    return workable & ~failed[:, None], rate, np.where(failed, 0.0, best), np.asarray(block["error"])[:, 0]


class _Ensemble:
    """Member evaluations, cached by what the member changes (so attribution reuses them), run
    a batch at a time on the runner (serial, or Dask workers)."""

    def __init__(self, shared, runner):
        self.shared, self.runner = shared, runner
        self.cache = {}

    @staticmethod
    def key(member):
        return (member.water, member.seabed, member.wind_mps, member.tide_m, member.range_offset_m,
                member.depth_offset_m, member.source_depth_offset_m)

    def run_all(self, members) -> list:
        """Results of ``members``, in their order (new ones evaluated together on the runner)."""
        todo, seen = [], set()
        for m in members:
            k = self.key(m)
            if k not in self.cache and k not in seen:
                seen.add(k)
                todo.append(m)
        if todo:
            self.runner.run(evaluate_member, self.shared, todo,
                            lambda m, result: self.cache.__setitem__(self.key(m), result), name="member")
        return [self.cache[self.key(m)] for m in members]

    def run(self, member):
        return self.run_all([member])[0]


def _aggregate(results, weights):
    w = np.asarray(weights, dtype=float)
    w = w / w.sum()
    workable = np.stack([r[0] for r in results])  # (N, R, C)
    rate = np.stack([r[1] for r in results])
    best = np.stack([r[2] for r in results])  # (N, R)
    closure = np.tensordot(w, workable.astype(float), axes=(0, 0))
    with np.errstate(invalid="ignore"):
        filled = np.where(np.isfinite(rate), rate, np.nan)
    median_rate = np.full(closure.shape, np.nan)
    finite = np.isfinite(filled).all(axis=0)
    if finite.any():
        med = weighted_quantile(np.where(np.isfinite(filled), filled, 0.0), w, 0.5, axis=0)
        median_rate = np.where(finite, med, np.nan)
    return closure, median_rate, best, w


def _octave_variance(best, w):
    x = np.log2(np.maximum(best, SPREAD_FLOOR_BPS))
    mean = np.tensordot(w, x, axes=(0, 0))
    return np.tensordot(w, (x - mean) ** 2, axes=(0, 0))


def _settled(closure, rate, n, probability, tolerance) -> bool:
    """True when every range's choice at ``probability`` is decided.

    The decisive candidates of a range are the chosen one and the faster candidate most likely
    to close (the one that would take over if its probability rose past ``probability``). Each
    is settled when its 95 % interval excludes ``probability`` or is within ``tolerance`` of
    its estimate on both sides.
    """
    idx, chosen = available_rate(closure, rate, probability)
    for i in range(closure.shape[0]):
        decisive = [idx[i]] if idx[i] >= 0 else []
        faster = np.nonzero(np.nan_to_num(rate[i], nan=-1.0) > chosen[i])[0]
        if faster.size:
            decisive.append(int(faster[np.argmax(closure[i, faster])]))
        for c in decisive:
            q = closure[i, c]
            lo, hi = closure_interval(np.round(q * n), n)
            if not (lo > probability or hi < probability or max(q - lo, hi - q) <= tolerance):
                return False
    return True


def plan_availability(site, ranges_m, *, depth_m=None, probability=0.9, members=64, tolerance=0.05,
                      seed=0, receivers="all", target_ber=None, margin_db=None, modulations=None,
                      symbol_rates_baud=None, evaluate=None, attribution=True, progress=None,
                      workers=0, scheduler=None):
    """The rate available with probability ``probability`` at each range, over the site's variability.

    Parameters
    ----------
    site : Site
        With a ``variability`` section (without one the ensemble is the nominal site alone and
        the result is the deterministic plan, with closure probabilities 0 or 1).
    ranges_m : array_like
        Receiver ranges, m, strictly increasing.
    depth_m : float, optional
        Nominal receiver depth, m (default: the site's).
    probability : float
        The availability asked for, in (0, 1).
    members : int
        Most members to draw (or the largest ensemble to enumerate exactly).
    tolerance : float
        Stop drawing once every range's chosen closure probability is known to within this (the
        95 % interval's distance from the estimate on either side), in (0, 0.5].
    seed : int
        Seed of the member draws (same seed, same members, same numbers).
    receivers, target_ber, margin_db, modulations, symbol_rates_baud, evaluate
        As for :func:`aculink.planning.plan_rates`.
    attribution : bool
        Also re-run the members with each declared factor held at its nominal value.
    progress : callable, optional
        ``progress(done, total)`` after each batch of members.
    workers, scheduler
        Where the members run: serially (``workers`` 0 or 1, the default), on a local Dask
        cluster of ``workers`` processes, or on the Dask scheduler at ``scheduler``
        (:func:`aculink.planning.dask_runner.open_runner`). The numbers do not depend on it.

    Returns
    -------
    xarray.Dataset
        Dims ``range``, ``probability``, ``member``, ``factor`` and the candidate axes. See
        the README's *Reading the outputs* for every variable.
    """
    from aculink.planning.sweep import candidate_grid, check_geometry

    p_main = check_range("availability", probability, 0.0, 1.0, low_open=True, high_open=True)
    cap = check_int("members", members, 1, 100000)
    tol = check_range("tolerance", tolerance, 0.0, 0.5, low_open=True)
    z = float(site.receiver.depth_m) if depth_m is None else check_range("depth_m", depth_m, 0.0, None,
                                                                         low_open=True, unit="m")
    ranges, _ = check_geometry(site, ranges_m, [z], every_range=True)
    grid = candidate_grid(site, receivers=receivers, modulations=modulations, symbol_rates_baud=symbol_rates_baud)
    tb = check_range("target_ber", site.modem.target_ber if target_ber is None else target_ber,
                     0.0, 0.5, low_open=True, high_open=True)
    md = check_range("margin_db", site.modem.margin_db if margin_db is None else margin_db, 0.0, 40.0, unit="dB")
    probs = tuple(sorted(set(DEFAULT_PROBABILITIES) | {p_main}))
    var = getattr(site, "variability", None)
    shared = _Shared(site, ranges, z, grid, tb, md, evaluate)
    from aculink.planning.dask_runner import open_runner

    with open_runner(workers=workers, scheduler=scheduler, n_points=cap * len(ranges), n_tasks=cap) as runner:
        ens = _Ensemble(shared, runner)

        if var is None or not var.factors:
            mode, member_list = "nominal", [nominal_member()]
        elif var.is_discrete and var.enumeration_size() <= cap:
            mode, member_list = "enumerated", enumerate_members(var, seed)
        else:
            mode, member_list = "drawn", None

        results = []
        if member_list is not None:
            results = ens.run_all(member_list)
            if progress:
                progress(len(member_list), len(member_list))
            converged = True
        else:
            converged = False
            drawn = draw_members(var, cap, seed)
            member_list = []
            while len(member_list) < cap:
                batch = drawn[len(member_list):len(member_list) + BATCH_MEMBERS]
                results.extend(ens.run_all(batch))
                member_list.extend(batch)
                if progress:
                    progress(len(member_list), cap)
                n = len(member_list)
                closure, med_rate, _, _ = _aggregate(results, [1.0] * n)
                if n >= 2 * BATCH_MEMBERS and _settled(closure, med_rate, n, p_main, tol):
                    converged = True
                    break
            # a drawn ensemble weighs its members equally
            member_list = [dataclasses.replace(m, weight=1.0 / len(member_list)) for m in member_list]

        weights = [m.weight for m in member_list]
        closure, med_rate, best, w = _aggregate(results, weights)
        n = len(member_list)
        if mode == "drawn":
            c_low, c_high = closure_interval(np.round(closure * n), n)
        else:
            c_low, c_high = closure.copy(), closure.copy()

        k, s, mm = grid.shape
        n_r = len(ranges)
        avail = {key: np.zeros((n_r, len(probs)), dtype=float) for key in
                 ("rate", "closure", "low", "high", "symbol_rate")}
        avail_mod = np.full((n_r, len(probs)), "", dtype=object)
        avail_rx = np.full((n_r, len(probs)), "", dtype=object)
        chosen_main = None
        for j, p in enumerate(probs):
            idx, rate = available_rate(closure, med_rate, p)
            ok = idx >= 0
            take = np.maximum(idx, 0)[:, None]
            avail["rate"][:, j] = rate
            for name, arr in (("closure", closure), ("low", c_low), ("high", c_high)):
                avail[name][:, j] = np.where(ok, np.take_along_axis(arr, take, axis=1)[:, 0], np.nan)
            rx_i, rs_i, mod_i = np.unravel_index(np.maximum(idx, 0), (k, s, mm))
            avail["symbol_rate"][:, j] = np.where(ok, np.asarray(grid.symbol_rates_baud)[rs_i], np.nan)
            avail_mod[:, j] = np.where(ok, np.asarray(grid.modulations, dtype=object)[mod_i], "")
            avail_rx[:, j] = np.where(ok, np.asarray(grid.receivers, dtype=object)[rx_i], "")
            if p == p_main:
                chosen_main = idx

        nominal = ens.run(nominal_member())[2]
        median_best = weighted_quantile(best, w, 0.5, axis=0)
        factors = tuple(var.factors) if var is not None else ()
        share = np.full((n_r, len(factors)), np.nan)
        closure_fixed = np.full((n_r, len(factors)), np.nan)
        if attribution and factors and n > 1:
            sub = member_list[:ATTRIBUTION_MEMBERS]
            w_sub = np.asarray(weights[:len(sub)], dtype=float)
            w_sub = w_sub / w_sub.sum()
            total = _octave_variance(best[:len(sub)], w_sub)
            held = ens.run_all([m.at_nominal(f) for f in factors for m in sub])
            for f_i in range(len(factors)):
                fixed = held[f_i * len(sub):(f_i + 1) * len(sub)]
                cl_f, _, best_f, _ = _aggregate(fixed, w_sub)
                var_f = _octave_variance(best_f, w_sub)
                with np.errstate(invalid="ignore", divide="ignore"):
                    share[:, f_i] = np.where(total > 1e-12, np.clip(1.0 - var_f / total, 0.0, 1.0), 0.0)
                closure_fixed[:, f_i] = np.where(chosen_main >= 0, np.take_along_axis(
                    cl_f, np.maximum(chosen_main, 0)[:, None], axis=1)[:, 0], np.nan)

    ds = _dataset(site, ranges, z, grid, probs, p_main, avail, avail_mod, avail_rx, closure, c_low, c_high,
                  med_rate, member_list, best, nominal, median_best, factors, share, closure_fixed,
                  {"mode": mode, "converged": converged, "tolerance": tol, "seed": int(seed), "cap": cap,
                   "target_ber": tb, "margin_db": md, "evaluations": len(ens.cache),
                   "attribution_members": min(n, ATTRIBUTION_MEMBERS) if attribution and factors else 0},
                  [r[3] for r in results])
    return ds


def _dataset(site, ranges, z, grid, probs, p_main, avail, avail_mod, avail_rx, closure, c_low, c_high,
             med_rate, member_list, best, nominal, median_best, factors, share, closure_fixed, info, errors):
    k, s, m = grid.shape
    cand = lambda a: a.reshape(len(ranges), k, s, m)  # noqa: E731
    cdims = ("range", "receiver", "symbol_rate", "modulation")
    pdims = ("range", "probability")
    one = {"units": "1"}
    data = {
        "available_net_bit_rate_bps": (pdims, avail["rate"], {
            "units": "bit s-1", "long_name": "highest net bit rate of one configuration that closes the link with "
                                             "at least this probability (0 when none does)"}),
        "available_closure_probability": (pdims, avail["closure"], {
            **one, "long_name": "closure probability of the available configuration"}),
        "available_closure_probability_low": (pdims, avail["low"], {
            **one, "long_name": "lower end of its 95 % Clopper-Pearson interval (equal to the estimate when the "
                                "ensemble is enumerated)"}),
        "available_closure_probability_high": (pdims, avail["high"], {
            **one, "long_name": "upper end of its 95 % Clopper-Pearson interval"}),
        "available_symbol_rate_baud": (pdims, avail["symbol_rate"], {
            "units": "s-1", "long_name": "symbol rate of the available configuration (baud)"}),
        "available_modulation": (pdims, avail_mod.astype(str), {"long_name": "modulation of the available "
                                                                             "configuration"}),
        "available_receiver": (pdims, avail_rx.astype(str), {"long_name": "receiver of the available configuration"}),
        "median_net_bit_rate_bps": ("range", median_best, {
            "units": "bit s-1", "long_name": "median over members of each member's highest workable net bit rate"}),
        "nominal_net_bit_rate_bps": ("range", nominal, {
            "units": "bit s-1", "long_name": "highest workable net bit rate of the nominal site (the deterministic "
                                             "plan)"}),
        "closure_probability": (cdims, cand(closure), {
            **one, "long_name": "probability that the candidate meets the target BER with the margin"}),
        "closure_probability_low": (cdims, cand(c_low), {**one, "long_name": "lower end of its 95 % interval"}),
        "closure_probability_high": (cdims, cand(c_high), {**one, "long_name": "upper end of its 95 % interval"}),
        "candidate_net_bit_rate_bps": (cdims, cand(med_rate), {
            "units": "bit s-1", "long_name": "net bit rate of each candidate (weighted median over members)"}),
        "member_net_bit_rate_bps": (("member", "range"), best, {
            "units": "bit s-1", "long_name": "highest workable net bit rate in each member"}),
        "member_weight": ("member", np.array([mb.weight for mb in member_list]), {
            **one, "long_name": "probability weight of each member"}),
        "member_water": ("member", np.array([mb.water for mb in member_list]), {
            "long_name": "water-column alternative of each member (-1: the site's own)"}),
        "member_seabed": ("member", np.array([mb.seabed for mb in member_list]), {
            "long_name": "seabed alternative of each member (-1: the site's own)"}),
        "member_wind_mps": ("member", np.array([np.nan if mb.wind_mps is None else mb.wind_mps
                                                for mb in member_list]), {
            "units": "m s-1", "long_name": "wind speed at 10 m in each member (NaN: the site's own)"}),
        "member_tide_m": ("member", np.array([mb.tide_m for mb in member_list]), {
            "units": "m", "long_name": "change of water depth in each member"}),
        "member_range_offset_m": ("member", np.array([mb.range_offset_m for mb in member_list]), {
            "units": "m", "long_name": "receiver range offset in each member"}),
        "member_depth_offset_m": ("member", np.array([mb.depth_offset_m for mb in member_list]), {
            "units": "m", "long_name": "receiver depth offset in each member", "positive": "down"}),
        "member_source_depth_offset_m": ("member", np.array([mb.source_depth_offset_m for mb in member_list]), {
            "units": "m", "long_name": "source depth offset in each member", "positive": "down"}),
        "member_surface_seed": ("member", np.array([mb.surface_seed for mb in member_list], dtype=np.int64), {
            "long_name": "seed of the random sea surface in each member (time-varying simulations)"}),
        "member_error": (("member", "range"), np.array(errors, dtype=object).astype(str), {
            "long_name": "why a member has no result at a range (empty when it has one)"}),
        "spread_share": (("range", "factor"), share, {
            **one, "long_name": "share of the variance of the members' best rates (in octaves) that goes away when "
                                "this factor is held at its nominal value (over the first attribution_members members)"}),
        "closure_probability_factor_nominal": (("range", "factor"), closure_fixed, {
            **one, "long_name": "closure probability of the available configuration with this factor held at its "
                                "nominal value"}),
    }
    coords = {
        "range": ("range", ranges, {"units": "m", "long_name": "horizontal range from the source"}),
        "probability": ("probability", np.asarray(probs), {**one, "long_name": "availability asked for"}),
        "member": ("member", np.arange(len(member_list))),
        "factor": ("factor", np.asarray(factors, dtype=str)),
        "receiver": ("receiver", np.asarray(grid.receivers, dtype=str)),
        "symbol_rate": ("symbol_rate", np.asarray(grid.symbol_rates_baud), {"units": "s-1",
                                                                            "long_name": "symbol rate (baud)"}),
        "modulation": ("modulation", np.asarray(grid.modulations, dtype=str)),
        "depth": ((), z, {"units": "m", "long_name": "nominal receiver depth", "positive": "down"}),
    }
    from aculink import __version__

    attrs = {"title": "aculink link availability", "aculink_version": __version__, "caution": CAUTION,
             "Conventions": "CF-1.10", "site_name": site.name, "site_text": getattr(site, "text", "") or "",
             "availability": p_main, "ensemble": info["mode"], "members": len(member_list),
             "member_cap": info["cap"], "converged": int(bool(info["converged"])), "tolerance": info["tolerance"],
             "seed": info["seed"], "target_ber": info["target_ber"], "margin_db": info["margin_db"],
             "receiver_depth_m": z, "source_depth_m": float(site.source.depth_m),
             "evaluations": info["evaluations"], "factors": ",".join(factors),
             "attribution_members": info["attribution_members"]}
    return xr.Dataset(data, coords=coords, attrs=attrs)


def main_factor(ds, i) -> str | None:
    """The factor whose nominal value removes most of the spread at range index ``i`` (or None)."""
    if ds.sizes.get("factor", 0) == 0:
        return None
    share = ds["spread_share"].values[i]
    if not np.isfinite(share).any() or np.nanmax(share) <= 0.05:
        return None
    return str(ds["factor"].values[int(np.nanargmax(share))])


FACTOR_WORDS = {"water": "the water column", "wind": "wind", "position": "position", "seabed": "the seabed",
                "tide": "tide"}
assert set(FACTOR_WORDS) == set(FACTORS)


# --------------------------------------------------------------------------- reports
#: JSON/CSV keys of an availability row (the rates at each reported probability follow).
AVAILABILITY_KEYS = ("range_m", "available_net_bit_rate_bps", "modulation", "symbol_rate_baud", "receiver",
                     "closure_probability", "closure_probability_low", "closure_probability_high",
                     "median_net_bit_rate_bps", "nominal_net_bit_rate_bps", "main_factor", "main_factor_share")


def _finite(v):
    v = float(v)
    return v if math.isfinite(v) else None


def availability_rows(ds) -> list:
    """One dict per range: the rate at the asked probability with its configuration, the closure
    probability and its interval, the median and nominal rates, the main spread factor, and
    ``rate_at_<p>_bps`` for every reported probability."""
    p = float(ds.attrs["availability"])
    at = ds.sel(probability=p)
    rows = []
    for i in range(ds.sizes["range"]):
        rate = float(at["available_net_bit_rate_bps"].values[i])
        ok = rate > 0
        factor = main_factor(ds, i)
        row = {
            "range_m": float(ds["range"].values[i]),
            "available_net_bit_rate_bps": rate,
            "modulation": str(at["available_modulation"].values[i]) if ok else None,
            "symbol_rate_baud": _finite(at["available_symbol_rate_baud"].values[i]) if ok else None,
            "receiver": str(at["available_receiver"].values[i]) if ok else None,
            "closure_probability": _finite(at["available_closure_probability"].values[i]) if ok else None,
            "closure_probability_low": _finite(at["available_closure_probability_low"].values[i]) if ok else None,
            "closure_probability_high": _finite(at["available_closure_probability_high"].values[i]) if ok else None,
            "median_net_bit_rate_bps": float(ds["median_net_bit_rate_bps"].values[i]),
            "nominal_net_bit_rate_bps": float(ds["nominal_net_bit_rate_bps"].values[i]),
            "main_factor": factor,
            "main_factor_share": (None if factor is None
                                  else float(ds["spread_share"].sel(factor=factor).values[i])),
        }
        for q in ds["probability"].values:
            row[f"rate_at_{_percent(q)}_bps"] = float(ds["available_net_bit_rate_bps"].sel(probability=q).values[i])
        rows.append(row)
    return rows


def _percent(q) -> str:
    return format(100.0 * float(q), "g")


def availability_heading(ds) -> str:
    """The first line of the text report: what the ensemble was."""
    n = int(ds.attrs["members"])
    how = {"nominal": "no [variability] section: the nominal site only",
           "enumerated": f"{n} members enumerated exactly",
           "drawn": f"{n} members drawn (seed {ds.attrs['seed']})"}[ds.attrs["ensemble"]]
    factors = ds.attrs.get("factors") or ""
    varies = f"; varying: {factors.replace(',', ', ')}" if factors else ""
    return (f"{ds.attrs['site_name']}: link availability, receiver {ds.attrs['receiver_depth_m']:g} m deep, target "
            f"BER {ds.attrs['target_ber']:.0e} with {ds.attrs['margin_db']:g} dB margin ({how}{varies})")


def availability_columns(ds) -> list:
    cols = [("range_km", "range\nkm", "g")]
    for q in ds["probability"].values:
        cols.append((f"rate_at_{_percent(q)}_kbps", f"rate {_percent(q)}%\nkbit/s", ".3g"))
    p = _percent(ds.attrs["availability"])
    cols += [("configuration", f"configuration at {p}%\n", ""), ("closure", "P(close)\n", ".2f"),
             ("interval", "95% interval\n", ""), ("median_kbps", "median\nkbit/s", ".3g"),
             ("nominal_kbps", "nominal\nkbit/s", ".3g"), ("spread", "spread mostly\n", "")]
    return cols


def availability_display(row: dict) -> dict:
    """A row in display units, for :func:`aculink.io.tables.format_table`."""
    out = {"range_km": row["range_m"] / 1000.0, "median_kbps": row["median_net_bit_rate_bps"] / 1000.0,
           "nominal_kbps": row["nominal_net_bit_rate_bps"] / 1000.0}
    for key, value in row.items():
        if key.startswith("rate_at_"):
            out[key.replace("_bps", "_kbps")] = value / 1000.0
    if row["modulation"]:
        out["configuration"] = f"{row['modulation']} {row['symbol_rate_baud']:.0f} Bd {row['receiver']}"
        out["closure"] = row["closure_probability"]
        lo, hi = row["closure_probability_low"], row["closure_probability_high"]
        out["interval"] = "exact" if lo == hi else f"{lo:.2f}-{hi:.2f}"
    else:
        out["configuration"] = "none workable"
    if row["main_factor"]:
        out["spread"] = f"{FACTOR_WORDS[row['main_factor']]} ({100 * row['main_factor_share']:.0f}%)"
    return out


def availability_reading(ds, rows) -> str:
    """One sentence a planner reads at a glance, for the farthest range with a rate at p."""
    p = _percent(ds.attrs["availability"])
    usable = [r for r in rows if r["available_net_bit_rate_bps"] > 0]
    if not usable:
        return f"Reading: no configuration closes the link {p} % of the time at any range asked for."
    r = usable[-1]
    rate = r["available_net_bit_rate_bps"]
    text = (f"Reading: at {r['range_m'] / 1000:g} km this site gives {rate / 1000:.3g} kbit/s {p} % of the time "
            f"({r['modulation']} at {r['symbol_rate_baud']:.0f} Bd, {r['receiver']} receiver)")
    if r["main_factor"]:
        text += f"; the spread is mostly {FACTOR_WORDS[r['main_factor']]}"
    if not int(ds.attrs["converged"]):
        text += (f". The member cap ({ds.attrs['member_cap']}) was reached before every probability was known to "
                 f"within {ds.attrs['tolerance']:g}: read the intervals")
    return text + "."
