"""Rate search: which (symbol rate, modulation, receiver) is the highest workable one?

The search runs on arrays. An *evaluator* fills, for a block of receivers (ranges x depths
that share one ray fan), the analytic prediction of every candidate configuration; then
:func:`select_workable` picks, per receiver position, the configuration with the highest net
bit rate whose predicted BER meets the target with the required SNR margin to spare.

Margin. A configuration with predicted output SNR ``snr_out`` and modulation ``m`` has the
margin ``snr_out - snr_required(m, target_ber)``, where ``snr_required`` is the output SNR at
which the modulation's error-rate curve reaches the target. It is workable when that margin is
at least ``margin_db`` (so the target is still met with the output SNR reduced by the margin)
and the predicted BER itself meets the target.

Candidate symbol rates fill the band: the fastest is ``Rs = B / (1 + rolloff)`` (a raised-
cosine spectrum of excess bandwidth ``rolloff`` occupies ``Rs (1 + rolloff)``), then a halving
ladder below it, so every modulation's bit rate is tried at each octave of symbol rate.

The default evaluator, :func:`evaluate_block`, chains the real stages: one
``find_arrivals`` call for the whole block, then per receiver a :class:`Channel`, its 90%
energy spread, the link budget and ``predict_link`` for the candidates that can still win
(:func:`predict_point`; the modem stage designs each receiver once per symbol rate).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from aculink.errors import AculinkError, check_range, closest

__all__ = ["PRACTICAL_RECEIVERS", "DEFAULT_LADDER_STEPS", "DEFAULT_LADDER_RATIO", "CandidateGrid",
           "candidate_symbol_rates", "resolve_receivers", "select_workable", "one_line",
           "modem_required_snr_db", "evaluate_block", "predict_point", "modulation_bits", "spread_90_s",
           "BAND_FREQUENCIES", "band_frequencies", "POINT_FIELDS", "CANDIDATE_FIELDS", "empty_block",
           "evaluate_safely", "summarise_block"]

#: What "all" receivers means: the ones a modem really runs (adaptive, trained). The modem
#: stage's "mmse-dfe" is the design on a perfectly known channel, a bound rather than a
#: receiver, so it is planned for only when named.
PRACTICAL_RECEIVERS = ("none", "linear", "dfe")
#: Default number of rungs in the symbol-rate ladder (fastest rate, then halvings).
DEFAULT_LADDER_STEPS = 6
#: Ratio between successive rungs of the ladder.
DEFAULT_LADDER_RATIO = 0.5


@dataclass(frozen=True)
class CandidateGrid:
    """The configurations the search tries: symbol rates x modulations x receivers."""

    symbol_rates_baud: tuple
    modulations: tuple
    receivers: tuple

    def __post_init__(self):
        object.__setattr__(self, "symbol_rates_baud", tuple(float(r) for r in self.symbol_rates_baud))
        object.__setattr__(self, "modulations", tuple(str(m) for m in self.modulations))
        object.__setattr__(self, "receivers", tuple(str(r) for r in self.receivers))
        for field in ("symbol_rates_baud", "modulations", "receivers"):
            if len(getattr(self, field)) == 0:
                raise AculinkError(f"{field} is empty: at least one candidate is needed")

    @property
    def shape(self) -> tuple:
        """(receivers, symbol rates, modulations): the candidate axes, in this order."""
        return (len(self.receivers), len(self.symbol_rates_baud), len(self.modulations))

    def to_dict(self) -> dict:
        return {"symbol_rates_baud": list(self.symbol_rates_baud),
                "modulations": list(self.modulations), "receivers": list(self.receivers)}


def candidate_symbol_rates(bandwidth_hz, rolloff, *, steps=DEFAULT_LADDER_STEPS,
                           ratio=DEFAULT_LADDER_RATIO) -> np.ndarray:
    """Symbol rates that fill the band, fastest first.

    Parameters
    ----------
    bandwidth_hz : float
        Occupied passband bandwidth B, Hz.
    rolloff : float
        Raised-cosine excess bandwidth beta, 0..1.
    steps : int
        Number of rungs.
    ratio : float
        Ratio between successive rungs (0.5: halving).

    Returns
    -------
    numpy.ndarray
        ``B / (1 + beta) * ratio**k`` for ``k = 0 .. steps-1``, symbols per second.

    References
    ----------
    Proakis and Salehi, *Digital Communications*, 5th ed. 2008, sec. 9.2: a raised-cosine
    pulse of excess bandwidth beta at symbol rate Rs occupies ``Rs (1 + beta)``.
    """
    b = check_range("bandwidth_hz", bandwidth_hz, 0.0, None, low_open=True, unit="Hz")
    beta = check_range("rolloff", rolloff, 0.0, 1.0)
    r = check_range("ladder ratio", ratio, 0.0, 1.0, low_open=True, high_open=True)
    if int(steps) != steps or steps < 1:
        raise AculinkError(f"ladder steps = {steps!r}: expected a whole number >= 1")
    return b / (1.0 + beta) * r ** np.arange(int(steps))


def resolve_receivers(choice, available) -> tuple:
    """Turn a receiver choice ("dfe", "all", a list) into a tuple of known receiver names."""
    available = tuple(available)
    if choice is None or (isinstance(choice, str) and choice == "all"):
        return available
    names = [choice] if isinstance(choice, str) else list(choice)
    for name in names:
        if name not in available:
            raise AculinkError(f"receiver = {name!r}: choose one of {', '.join(available)} or all"
                               f"{closest(name, available)}")
    return tuple(dict.fromkeys(names))


def select_workable(snr_out_db, ber_predicted, net_bit_rate_bps, snr_required_db, *,
                    target_ber, margin_db):
    """Pick the workable configuration with the highest net bit rate at every position.

    Parameters
    ----------
    snr_out_db, ber_predicted, net_bit_rate_bps : ndarray, shape (..., K, S, M)
        Predictions per position (leading axes) and candidate (receiver, symbol rate,
        modulation).
    snr_required_db : ndarray, shape (M,)
        Output SNR each modulation needs to reach ``target_ber``, dB.
    target_ber, margin_db : float

    Returns
    -------
    dict
        ``margin_db`` (..., K, S, M): margin available per candidate; ``workable`` (..., K, S,
        M) bool; ``best`` (...,) flat candidate index or -1; ``best_by_receiver`` (..., K)
        flat (S, M) index or -1. Ties in net bit rate go to the larger margin, then to the
        earlier candidate (simpler receiver, faster symbol rate, lower-order modulation, in
        the order given).
    """
    snr_out = np.asarray(snr_out_db, dtype=float)
    ber = np.asarray(ber_predicted, dtype=float)
    rate = np.asarray(net_bit_rate_bps, dtype=float)
    need = np.asarray(snr_required_db, dtype=float)
    margin = snr_out - need
    with np.errstate(invalid="ignore"):
        workable = (np.isfinite(margin) & np.isfinite(ber) & np.isfinite(rate) & (rate > 0)
                    & (ber <= target_ber) & (margin >= margin_db))
    lead = snr_out.shape[:-3]
    k, s, m = snr_out.shape[-3:]

    def pick(rate_flat, margin_flat, ok_flat):
        score = np.where(ok_flat, rate_flat, -np.inf)
        top = score.max(axis=-1, keepdims=True)
        # Among the fastest (to a relative 1e-12), the largest margin; argmax takes the first.
        tie = ok_flat & (score >= top * (1.0 - 1e-12))
        second = np.where(tie, margin_flat, -np.inf)
        idx = np.argmax(second, axis=-1)
        return np.where(ok_flat.any(axis=-1), idx, -1)

    best = pick(rate.reshape(lead + (-1,)), margin.reshape(lead + (-1,)),
                workable.reshape(lead + (-1,)))
    best_rx = pick(rate.reshape(lead + (k, s * m)), margin.reshape(lead + (k, s * m)),
                   workable.reshape(lead + (k, s * m)))
    return {"margin_db": margin, "workable": workable, "best": best, "best_by_receiver": best_rx}


# ---------------------------------------------------------------------------------------------
# The evaluator that chains the real stages
# ---------------------------------------------------------------------------------------------

def one_line(exc: BaseException) -> str:
    """An exception as one line for the per-point ``error`` record."""
    text = " ".join(str(exc).split())
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def modem_required_snr_db(modulations, target_ber) -> np.ndarray:
    """Output SNR (Es/N0, dB) each modulation needs to reach ``target_ber`` in white noise.

    The exact Gray-mapped error rates come from the modem stage (``es_n0_for_ber``).
    """
    from aculink.modem.ber import es_n0_for_ber

    with np.errstate(divide="ignore"):  # the bracket's far end underflows to BER 0; harmless
        return np.array([10.0 * math.log10(es_n0_for_ber(m, target_ber)) for m in modulations])


def evaluate_block(site, ranges_m, depths_m, grid: CandidateGrid, target_ber, margin_db) -> dict:
    """Analytic predictions of every candidate at a block of receivers sharing one ray fan.

    Parameters
    ----------
    site : Site
        The site, with the source depth and wind already set.
    ranges_m, depths_m : array_like
        Receiver ranges and depths, m; every combination is a receiver (one
        ``find_arrivals`` call serves them all).
    grid : CandidateGrid
    target_ber, margin_db : float
        What makes a candidate workable (used to skip candidates that cannot win).

    Returns
    -------
    dict of ndarray
        Per position (R, Z): ``snr_band_db``, ``tl_db``, ``spread_90_s``, ``error`` (str,
        empty when fine); per candidate (R, Z, K, S, M): ``snr_out_db``, ``ber_predicted``,
        ``net_bit_rate_bps`` (NaN where skipped, see :func:`predict_point`); per modulation
        (M,): ``snr_required_db``. Positions below the seabed get an error message and NaN;
        a position no path reaches has NaN predictions (so no workable rate) and no error.
    """
    from aculink.propagation import find_arrivals

    ranges = np.atleast_1d(np.asarray(ranges_m, dtype=float))
    depths = np.atleast_1d(np.asarray(depths_m, dtype=float))
    out = empty_block(len(ranges), len(depths), grid)
    out["snr_required_db"] = modem_required_snr_db(grid.modulations, target_ber)
    seabed = np.asarray(site.seabed.depth_at(ranges), dtype=float)
    inside = depths[None, :] < seabed[:, None]
    for i, j in zip(*np.nonzero(~inside)):
        out["error"][i, j] = (f"receiver depth {depths[j]:g} m is below the seabed "
                              f"({seabed[i]:g} m at range {ranges[i]:g} m)")
    keep = inside.any(axis=0)
    if not keep.any():
        return out
    from threadpoolctl import threadpool_limits

    rolloff = site.modem.rolloff
    # one BLAS thread: the matrices are small, a threaded BLAS on a busy host spends far more time
    # waiting than computing (measured: a 128 x 70 complex product 0.6 ms on one thread, 17 ms on
    # two with the other core busy), and the rounding is then the same for a table, a serial
    # sweep and a Dask worker
    with threadpool_limits(limits=1, user_api="blas"):
        arrivals = find_arrivals(site, ranges, depths[keep], freq_hz=band_frequencies(site))
        _evaluate_points(out, arrivals, site, ranges, depths, keep, inside, grid, rolloff, target_ber,
                         margin_db)
    return out


def _evaluate_points(out, arrivals, site, ranges, depths, keep, inside, grid, rolloff, target_ber,
                     margin_db) -> None:
    from aculink.channel import Channel, link_budget

    for i, r in enumerate(ranges):
        for j in np.nonzero(keep)[0]:
            if not inside[i, j]:
                continue
            try:
                channel = Channel.from_arrivals(arrivals, site, range_m=r, depth_m=depths[j])
                here = site.with_geometry(range_m=r, depth_m=depths[j])
                budget = link_budget(here, channel)
                out["snr_band_db"][i, j] = float(budget.snr_band_db)
                out["tl_db"][i, j] = float(budget.tl_db)
                out["spread_90_s"][i, j] = spread_90_s(channel)
                if not channel.is_empty:
                    predict_point(out, (i, j), channel, budget, grid, rolloff, target_ber, margin_db)
            except AculinkError as exc:
                out["error"][i, j] = one_line(exc)
            except (ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
                out["error"][i, j] = one_line(exc)


def predict_point(out, at, channel, budget, grid, rolloff, target_ber, margin_db) -> None:
    """Fill the predictions of one receiver position, skipping candidates that cannot win.

    The modem stage keeps everything of an estimate that does not depend on the modulation
    (the receiver's spans, its finite-length design and output SNR, the frame) on the channel
    object, so the design is computed once per (receiver, symbol rate) and each further
    modulation costs only its error rate (which carries the modem's per-modulation error
    propagation, so it is not a function of the output SNR alone).

    Skip rule (exact). The net bit rate of a candidate is ``Rs log2(M) f`` with the frame's
    payload fraction ``f < 1`` (every frame carries its sync preamble and tail,
    :mod:`aculink.modem.frames`), and ``f`` is the same for every modulation at one (receiver,
    symbol rate). Per receiver, symbol rates are tried fastest first and, at each rate,
    modulations from the most bits per symbol down; ``best`` is the receiver's highest
    workable net rate found so far. A candidate is skipped (its entries left NaN) when

    * ``Rs log2(M) <= best``: its net rate is strictly below ``best``, or
    * a modulation with more bits per symbol is workable at the same (receiver, rate): its net
      rate is smaller by the factor of their bits.

    Either way its rate is below ``best`` by far more than the relative 1e-12 that
    :func:`select_workable` counts as a tie, so it can neither win nor tie: the choice per
    receiver (and overall) is exactly that of the full search (tested against the loop over
    every candidate).
    """
    from aculink.modem import predict_link

    need = out["snr_required_db"]
    bits = modulation_bits(grid.modulations)
    by_bits = np.argsort(-bits, kind="stable")
    rates = np.asarray(grid.symbol_rates_baud)
    for a, rx in enumerate(grid.receivers):
        best = 0.0
        for b in np.argsort(-rates, kind="stable"):
            rs = float(rates[b])
            won_bits = 0.0
            for c in by_bits:
                if rs * bits[c] <= best or bits[c] < won_bits:
                    continue
                p = predict_link(channel, budget, rs, grid.modulations[c], rx, rolloff=rolloff)
                snr, ber, rate = float(p.snr_out_db), float(p.ber_predicted), float(p.net_bit_rate_bps)
                out["snr_out_db"][at + (a, b, c)] = snr
                out["ber_predicted"][at + (a, b, c)] = ber
                out["net_bit_rate_bps"][at + (a, b, c)] = rate
                if ber <= target_ber and snr - need[c] >= margin_db and rate > 0:
                    won_bits = max(won_bits, bits[c])
                    best = max(best, rate)


def modulation_bits(modulations) -> np.ndarray:
    """Bits per symbol, log2(M), of each modulation (from the modem stage's table)."""
    from aculink.modem.constellations import MODULATIONS as BITS

    return np.array([BITS[m] for m in modulations], dtype=float)


def spread_90_s(channel) -> float:
    """The shortest delay window holding 90% of the path energy, s (NaN for no paths).

    The one channel statistic the planner stores; computed alone, the same way as the channel
    stage's ``statistics()["spread_90_s"]``, without the correlation scans the others need.
    """
    from aculink.channel.stats import energy_spread, path_powers

    if channel.is_empty:
        return math.nan
    power = path_powers(channel)
    return energy_spread(channel.delay_s, power, 0.9) if power.sum() > 0 else math.nan


#: Frequencies across the modem band at which the arrivals are evaluated (as the channel stage's
#: ``channel_for_site`` does), so absorption and reflection vary across the band.
BAND_FREQUENCIES = 17


def band_frequencies(site) -> np.ndarray:
    """The passband grid [fc - B/2, fc + B/2] the arrivals are evaluated on, Hz."""
    fc, b = site.modem.carrier_hz, site.modem.bandwidth_hz
    return np.linspace(fc - b / 2.0, fc + b / 2.0, BAND_FREQUENCIES)


#: Per-position fields an evaluator fills, with their fill value.
POINT_FIELDS = ("snr_band_db", "tl_db", "spread_90_s")
#: Per-candidate fields an evaluator fills.
CANDIDATE_FIELDS = ("snr_out_db", "ber_predicted", "net_bit_rate_bps")


def empty_block(n_ranges: int, n_depths: int, grid: CandidateGrid) -> dict:
    """An evaluator result full of NaN (and empty error strings) for a block."""
    out = {f: np.full((n_ranges, n_depths), np.nan) for f in POINT_FIELDS}
    out.update({f: np.full((n_ranges, n_depths) + grid.shape, np.nan) for f in CANDIDATE_FIELDS})
    out["error"] = np.full((n_ranges, n_depths), "", dtype=object)
    out["snr_required_db"] = np.full(len(grid.modulations), np.nan)
    return out


def evaluate_safely(evaluate, site, ranges_m, depths_m, grid, target_ber, margin_db) -> dict:
    """Run an evaluator on a block; if the block fails, retry each range alone, then each point.

    A failing position is recorded with its one-line error and NaN values; it never takes the
    rest of the block down.
    """
    ranges = np.atleast_1d(np.asarray(ranges_m, dtype=float))
    depths = np.atleast_1d(np.asarray(depths_m, dtype=float))
    try:
        return _checked(evaluate(site, ranges, depths, grid, target_ber, margin_db), len(ranges), len(depths), grid)
    except Exception as exc:  # noqa: BLE001 - recorded per point, the sweep goes on
        if ranges.size * depths.size == 1:
            out = empty_block(1, 1, grid)
            out["error"][0, 0] = one_line(exc)
            return out
    out = empty_block(len(ranges), len(depths), grid)
    parts = ([(i, slice(None)) for i in range(len(ranges))] if len(ranges) > 1
             else [(0, j) for j in range(len(depths))])
    for i, j in parts:
        jj = np.arange(len(depths))[j] if isinstance(j, slice) else np.array([j])
        sub = evaluate_safely(evaluate, site, ranges[[i]], depths[jj], grid, target_ber, margin_db)
        for key in POINT_FIELDS + CANDIDATE_FIELDS + ("error",):
            out[key][i, jj] = sub[key][0]
        if np.all(np.isnan(out["snr_required_db"])):
            out["snr_required_db"] = sub["snr_required_db"]
    return out


def _checked(result, n_ranges, n_depths, grid) -> dict:
    """Check an evaluator's result against the shapes the planner relies on."""
    want = empty_block(n_ranges, n_depths, grid)
    for key, proto in want.items():
        if key not in result:
            raise KeyError(f"evaluator result lacks {key!r}")
        arr = np.asarray(result[key])
        if arr.shape != proto.shape:
            raise ValueError(f"evaluator result {key!r} has shape {arr.shape}, expected {proto.shape}")
    out = {k: np.asarray(result[k], dtype=float) for k in POINT_FIELDS + CANDIDATE_FIELDS + ("snr_required_db",)}
    out["error"] = np.asarray(result["error"], dtype=object)
    return out


def summarise_block(block: dict, grid: CandidateGrid, *, target_ber, margin_db) -> dict:
    """Add the workable choice to an evaluator result (arrays only; nothing is recomputed).

    Returns the block's fields plus, per position: ``net_bit_rate_bps``-best as ``best_rate``,
    ``best_symbol_rate_baud``, ``best_modulation``, ``best_receiver`` (str, empty when nothing
    is workable), ``best_snr_out_db``, ``best_ber_predicted``, ``best_margin_db``,
    ``best_training_index`` (flat candidate index, -1); per position and receiver
    ``rate_by_receiver_bps``; per candidate ``margin_db``.
    """
    sel = select_workable(block["snr_out_db"], block["ber_predicted"], block["net_bit_rate_bps"],
                          block["snr_required_db"], target_ber=target_ber, margin_db=margin_db)
    lead = block["snr_band_db"].shape
    flat = lambda a: a.reshape(lead + (-1,))  # noqa: E731
    best = sel["best"]
    ok = best >= 0
    take = np.where(ok, best, 0)[..., None]

    def pick(a):
        return np.where(ok, np.take_along_axis(flat(a), take, axis=-1)[..., 0], np.nan)

    k, s, m = grid.shape
    rx_i, rs_i, mod_i = np.unravel_index(np.where(ok, best, 0), (k, s, m))
    names = lambda seq, idx: np.where(ok, np.asarray(seq, dtype=object)[idx], "")  # noqa: E731
    out = dict(block)
    out["margin_db"] = sel["margin_db"]
    out["best_rate_bps"] = np.where(ok, pick(block["net_bit_rate_bps"]), 0.0)
    out["best_symbol_rate_baud"] = np.where(ok, np.asarray(grid.symbol_rates_baud)[rs_i], np.nan)
    out["best_modulation"] = names(grid.modulations, mod_i).astype(object)
    out["best_receiver"] = names(grid.receivers, rx_i).astype(object)
    out["best_snr_out_db"] = pick(block["snr_out_db"])
    out["best_ber_predicted"] = pick(block["ber_predicted"])
    out["best_margin_db"] = pick(sel["margin_db"])
    br = sel["best_by_receiver"]
    okr = br >= 0
    rate_rx = block["net_bit_rate_bps"].reshape(lead + (k, s * m))
    out["rate_by_receiver_bps"] = np.where(
        okr, np.take_along_axis(rate_rx, np.where(okr, br, 0)[..., None], axis=-1)[..., 0], 0.0)
    # A position that failed has no rate at all, not a rate of zero.
    failed = block["error"] != ""
    out["best_rate_bps"] = np.where(failed, np.nan, out["best_rate_bps"])
    out["rate_by_receiver_bps"] = np.where(failed[..., None], np.nan, out["rate_by_receiver_bps"])
    return out
