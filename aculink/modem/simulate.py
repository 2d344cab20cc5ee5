"""Monte Carlo link simulation: ``simulate_link``.

Frames of ``[training | payload | tail marker]`` are shaped, sent through the channel (the
channel stage's application for a site channel, a symbol-spaced convolution for a tap list),
noise is added, and the receiver front end and the chosen receiver recover the payload. Frames
are run until ``max_errors`` bit errors have been counted or ``n_symbols`` payload symbols
have been sent. Same seed, same result.

References
----------
Clopper, C. J. and Pearson, E. S., "The use of confidence or fiducial limits illustrated in the
case of the binomial", Biometrika 26(4), 404-413, 1934 (the exact binomial interval).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.stats
import xarray as xr

from aculink.errors import AculinkError, check_range
from aculink.modem.constellations import check_modulation, constellation
from aculink.modem.frames import SYNC_SYMBOLS, frame_layout
from aculink.modem.frontend import shape, synchronise
from aculink.modem.media import make_medium
from aculink.modem.predict import DEFAULT_ROLLOFF, estimate_span, predict_link
from aculink.modem.receivers import (check_algorithm, check_receiver, design_for, feedback_delays, pll_gains,
                                     plan_receiver, run_frame)
from aculink.modem.pulses import raised_cosine

__all__ = ["TAIL_CHECK_SER", "clopper_pearson", "LinkResult", "doppler_bound", "design_noise_acf",
           "simulate_link"]

#: A frame whose decisions on the known tail marker are wrong more often than this has lost
#: lock (a cycle slip or a decision-directed capture that the error cannot show): it counts as
#: failed (common practice, no source: a known postamble as a check of the frame).
TAIL_CHECK_SER = 0.5
#: Outputs kept for the constellation picture.
_KEEP_POINTS = 4000
#: Default PLL damping factor 1/sqrt(2) (common practice for a second-order loop, no source).
_CRITICAL_DAMPING = 1.0 / math.sqrt(2.0)


def clopper_pearson(errors: int, trials: int, confidence: float = 0.95) -> tuple[float, float]:
    """Exact two-sided binomial confidence interval (Clopper and Pearson 1934)."""
    a = 1.0 - confidence
    lo = 0.0 if errors == 0 else float(scipy.stats.beta.ppf(a / 2, errors, trials - errors + 1))
    hi = 1.0 if errors >= trials else float(scipy.stats.beta.ppf(1 - a / 2, errors + 1, trials - errors))
    return lo, hi


@dataclass(frozen=True, eq=False)
class LinkResult:
    """Outcome of :func:`simulate_link` (SNRs in dB, rates in bit/s).

    ``snr_in_db``: band SNR (Es/N0 for a tap list); ``snr_out_db``: measured unbiased output
    SNR of the payload decisions of the frames that were received (NaN when none was),
    ``|alpha|^2 Es / E|z - alpha d|^2`` with ``alpha`` the regression of the outputs on the sent
    symbols; ``snr_predicted_db`` and ``ber_predicted`` from :func:`predict_link` with the same
    spans.

    Status: a frame *fails* when the front end lost it (the training is not where the
    preamble peak says, on any of the candidate peaks), when the receiver diverged beyond
    recovery, or when it lost lock: its decisions on the known tail marker (the receiver runs
    on through it, decision directed) are wrong more often than ``TAIL_CHECK_SER``. Every payload bit of a failed frame is counted as a bit error (the frame
    delivers nothing). The link is ``closed`` when no frame failed and the measured BER is at
    most ``target_ber``; otherwise ``failure`` says why in words and ``net_bit_rate_bps`` is
    0 (``frame_bit_rate_bps`` keeps what the frame would carry).
    """

    ber: float
    ber_low: float
    ber_high: float
    bit_errors: int
    bits: int
    symbol_errors: int
    symbols: int
    frames: int
    snr_in_db: float
    es_n0_db: float
    snr_out_db: float
    snr_predicted_db: float
    ber_predicted: float
    training_fraction: float
    net_bit_rate_bps: float
    symbol_rate_baud: float
    modulation: str
    receiver: str
    algorithm: str
    rolloff: float
    n_ff: int
    n_fb: int
    n_training: int
    n_payload: int
    doppler_estimate: float
    restarts: int
    learning_curve: xr.DataArray = field(repr=False)
    constellation: np.ndarray = field(repr=False)
    ff_taps: np.ndarray = field(repr=False)
    fb_taps: np.ndarray = field(repr=False)
    fb_delays: np.ndarray = field(repr=False)
    closed: bool = True
    failure: str = ""
    target_ber: float = 1e-4
    frame_bit_rate_bps: float = 0.0
    frames_lost: int = 0
    frames_diverged: int = 0
    recoveries: int = 0
    resyncs: int = 0
    doppler_bound: float = 0.0
    doppler_note: str = ""

    def to_dict(self) -> dict:
        """Scalar fields, for JSON."""
        keys = ("closed", "failure", "ber", "ber_low", "ber_high", "target_ber", "bit_errors", "bits",
                "symbol_errors", "symbols", "frames", "frames_lost", "frames_diverged", "recoveries", "resyncs",
                "snr_in_db", "es_n0_db", "snr_out_db", "snr_predicted_db", "ber_predicted", "training_fraction",
                "net_bit_rate_bps", "frame_bit_rate_bps", "symbol_rate_baud", "modulation", "receiver", "algorithm",
                "rolloff", "n_ff", "n_fb", "n_training", "n_payload", "doppler_estimate", "doppler_bound",
                "doppler_note", "restarts")
        return {k: getattr(self, k) for k in keys}


def _default_target_ber() -> float:
    """The site file's default ``[modem] target_ber``."""
    from dataclasses import fields

    from aculink.site.model import Modem

    return float(next(f.default for f in fields(Modem) if f.name == "target_ber"))


#: Motion every site has on top of its platforms' (mooring swing, currents, drift): 0.1 m/s
#: at 1500 m/s (common practice, no source).
_DOPPLER_BOUND_FLOOR = 0.1 / 1500.0
#: Standard deviations of the surface Doppler spread counted in the bound.
_SURFACE_SIGMAS = 3.0


def doppler_bound(medium) -> float:
    """Largest time scale |a| the channel can physically produce, for the front end's search.

    A site channel: the largest platform Doppler factor of its paths plus
    ``_SURFACE_SIGMAS`` rms surface Doppler spreads (as a time scale, spread / fc) plus a floor
    for unmodelled drift. A tap list: the default bound (a fast vehicle), or 1.5 times its
    Doppler option when that is larger.
    """
    from aculink.modem.frontend import DEFAULT_MAX_DOPPLER

    ch = getattr(medium, "channel", None)
    if ch is None:
        return max(DEFAULT_MAX_DOPPLER, 1.5 * abs(float(getattr(medium, "doppler", 0.0))))
    platform = float(np.max(np.abs(ch.doppler), initial=0.0)) if ch.doppler is not None else 0.0
    spread = np.asarray(ch.surface_doppler_spread_hz if ch.surface_doppler_spread_hz is not None else [0.0], float)
    surface = _SURFACE_SIGMAS * float(np.max(spread, initial=0.0)) / float(ch.carrier_hz)
    return platform + surface + _DOPPLER_BOUND_FLOOR


#: Diagonal loading of the noise autocorrelation in the designs made from a channel estimate,
#: relative to its zero lag: the T/2 matched-filter noise (and the signal) occupy only
#: (1 + rolloff)/2 of the T/2 band, so the design matrix is singular up to rounding without it;
#: -40 dB changes the design's MSE by far less than the estimate's own error (common practice,
#: no source).
_DESIGN_LOADING = 1e-4


def design_noise_acf(noise_var: float, n_lags: int, rolloff: float) -> np.ndarray:
    """Noise autocorrelation at T/2 lags for a design from the estimate: ``sigma^2 rc(m/2)``
    (white noise through the matched RRC filters gives the raised-cosine pulse; Proakis 2001,
    section 9.2), loaded by ``_DESIGN_LOADING``."""
    acf = noise_var * raised_cosine(np.arange(n_lags) / 2, rolloff)
    acf[0] *= 1.0 + _DESIGN_LOADING
    return acf


def _failure_text(lost: int, diverged: int, frames: int, ber: float, target: float) -> str:
    why = []
    if lost:
        why.append(f"lost sync in {lost} of {frames} frames")
    if diverged:
        why.append(f"receiver diverged or lost lock in {diverged} of {frames} frames")
    if ber > target:
        why.append(f"measured BER {ber:.2g} above the target {target:.2g}")
    return "; ".join(why)


def _count_arg(name, value, low):
    if isinstance(value, bool) or int(value) != value or int(value) < low:
        raise AculinkError(f"{name} = {value!r}: expected a whole number >= {low}")
    return int(value)


def simulate_link(channel, *, symbol_rate_baud, modulation, receiver, budget=None, snr_db=None,
                  rolloff=None, n_symbols=20000, max_errors=200, seed=0, algorithm="rls",
                  samples_per_symbol=4, n_training=None, n_payload=None, n_ff=None, n_fb=None,
                  sparse=False, n_sparse=None, forgetting=None, step_size=None, pll_bandwidth=None,
                  pll_damping=_CRITICAL_DAMPING, doppler=0.0, carrier_hz=None, time_varying=True,
                  track_doppler=True, target_ber=None, max_doppler=None) -> LinkResult:
    """Simulate a single-carrier PSK/QAM link and count bit errors.

    Parameters
    ----------
    channel : Channel or array of complex
        A site channel, or symbol-spaced taps (a discrete ISI channel used as given).
    symbol_rate_baud : float
        Rs.
    modulation : str
        ``bpsk qpsk 8psk 16qam 64qam`` (Gray mapped, unit average energy).
    receiver : str
        ``none linear dfe mmse-dfe``.
    budget : LinkBudget, optional
        Source level and coloured noise (Channel only).
    snr_db : float, optional
        Band SNR replacing the budget's (white noise) for a Channel; Es/sigma^2 for taps.
    rolloff : float, optional
        RRC roll-off (default 0.25).
    n_symbols : int
        Largest number of payload symbols to send.
    max_errors : int
        Stop after this many bit errors.
    seed : int
        Seeds bits, training, noise and channel variation.
    algorithm : {"rls", "nlms"}
        Adaptation of ``linear`` and ``dfe``.
    samples_per_symbol : int
        Transmit/channel oversampling (even, >= 2); raised for a Channel until the sample
        rate covers its band.
    n_training, n_payload : int, optional
        Frame overrides (training >= the adapted taps and the 64-symbol preamble).
    n_ff, n_fb : int, optional
        Feedforward (T/2) and feedback taps; default from the channel's multipath spread.
    sparse, n_sparse : bool, int
        Feedback taps only on the ``n_sparse`` delays where past symbols leak most energy.
    forgetting, step_size : float, optional
        RLS forgetting factor, NLMS step in (0, 2).
    pll_bandwidth, pll_damping : float
        Loop noise bandwidth B_n T and damping of the second-order PLL. Default: 0.002, widened
        to 0.005 in frames where the front end measures a time scale |a| > 1e-4 (a moving
        platform leaves a residual carrier offset to track). Narrow because the RLS taps also
        turn with the carrier phase: with B_n T = 0.01 the loop and the taps chased each other
        on the Proakis channel b, and 0.005 still lost some frames there (our own simulation).
    doppler, carrier_hz : float
        Common Doppler time scale ``a`` and carrier, tap lists only (a Channel has its own).
    time_varying : bool
        Let a Channel vary in time (surface motion, path Doppler).
    track_doppler : bool
        Estimate and undo the time scale in the front end.
    target_ber : float, optional
        BER the link must meet to count as closed (default: the site file's default, 1e-4).
    max_doppler : float, optional
        Largest time scale |a| the front end searches (default :func:`doppler_bound` of the
        channel: platform Doppler plus the surface; for a tap list a fast vehicle).

    Returns
    -------
    LinkResult

    Raises
    ------
    AculinkError
        Rs (1 + rolloff) above the band, unknown modulation/receiver/algorithm (closest name
        suggested), tap counts below 1, training shorter than the taps, bad counts.
    """
    mod = check_modulation(modulation)
    receiver = check_receiver(receiver)
    algorithm = check_algorithm(algorithm)
    rs = check_range("symbol_rate_baud", symbol_rate_baud, 0.0, None, low_open=True, unit="Bd")
    beta = DEFAULT_ROLLOFF if rolloff is None else check_range("rolloff", rolloff, 0.0, 1.0, low_open=True)
    n_symbols = _count_arg("n_symbols", n_symbols, 1)
    max_errors = _count_arg("max_errors", max_errors, 1)
    sps = _count_arg("samples_per_symbol", samples_per_symbol, 2)
    if sps % 2:
        raise AculinkError(f"samples_per_symbol = {sps}: must be even (the equalizers work at T/2)")
    medium = make_medium(channel, budget, snr_db, doppler=doppler, carrier_hz=carrier_hz, time_varying=time_varying)
    medium.check_rate(rs, beta)
    band = getattr(medium, "bandwidth_hz", None)
    if band is not None and rs * sps < band:
        # the channel is applied at the simulation rate, which must cover its band
        sps = 2 * int(math.ceil(band / (2 * rs)))
    q_known = medium.response(rs, beta, 2)
    plan = plan_receiver(q_known, receiver, algorithm=algorithm, n_ff=n_ff, n_fb=n_fb, sparse=sparse,
                         n_sparse=n_sparse, forgetting=forgetting, step=step_size, symbol_rate_baud=rs)
    layout = frame_layout(plan.n_adapted, plan.spread_symbols, algorithm=algorithm, receiver=receiver,
                          n_training=n_training, n_payload=n_payload)
    pred = predict_link(channel, budget, rs, mod, receiver, rolloff=beta, snr_db=snr_db, algorithm=algorithm,
                        n_ff=n_ff, n_fb=n_fb, sparse=sparse, n_sparse=n_sparse, n_training=n_training,
                        n_payload=n_payload, forgetting=forgetting, step_size=step_size,
                        time_varying=time_varying, known_channel=False if receiver == "mmse-dfe" else None)
    target = _default_target_ber() if target_ber is None else check_range("target_ber", target_ber, 0.0, 0.5,
                                                                            low_open=True, high_open=True)
    a_bound = doppler_bound(medium) if max_doppler is None else check_range("max_doppler", max_doppler, 0.0, 0.01)
    pll_still = pll_gains(0.002 if pll_bandwidth is None else pll_bandwidth, pll_damping)
    pll_moving = pll_gains(0.005 if pll_bandwidth is None else pll_bandwidth, pll_damping)
    const = constellation(mod)
    pts = const.points
    k = const.bits_per_symbol
    n_pre, n_post = estimate_span(q_known, plan) if receiver != "none" else (0, 0)
    # the least-squares estimate needs far more rows (2 per training symbol) than taps: at most
    # one tap per two training symbols, shortened on both sides in proportion
    if n_pre + n_post + 1 > layout.n_train // 2:
        keep = (layout.n_train // 2 - 1) / (n_pre + n_post)
        n_pre, n_post = int(n_pre * keep), int(n_post * keep)
    spread_samples = int(math.ceil(medium.spread_s(rs) * rs * sps))
    carrier = getattr(medium, "carrier_hz", None) or 1.0

    n_frame = layout.n_train + layout.n_payload
    bit_err = bits = sym_err = syms = frames = restarts = recoveries = resyncs = 0
    lost = diverged = 0
    s_zd = 0j
    s_dd = s_zz = 0.0
    curve = np.zeros(n_frame)
    n_curves = 0
    kept = []
    last = None
    dopp = []
    notes = []
    root = np.random.SeedSequence(int(seed))
    while syms < n_symbols and bit_err < max_errors:
        fs_seq = root.spawn(1)[0]
        s_bits, s_ch, s_lead = (int(s.generate_state(1)[0]) for s in fs_seq.spawn(3))
        rng = np.random.default_rng(s_bits)
        labels = rng.integers(0, const.order, layout.n_sent)
        symbols = pts[labels]
        tail = symbols[n_frame:]
        lead = int(np.random.default_rng(s_lead).integers(4 * sps, 12 * sps))
        x = np.concatenate([np.zeros(lead, complex), shape(symbols, beta, sps),
                            np.zeros(spread_samples + 4 * sps, complex)])
        y = medium.propagate(x, sps, rs, s_ch)
        sync = synchronise(y, rolloff=beta, sps=sps, sync_head=symbols[:SYNC_SYMBOLS], sync_tail=tail,
                           training=symbols[:layout.n_train], n_frame_symbols=n_frame, n_pre=n_pre,
                           n_post=n_post, sample_rate_hz=rs * sps, carrier_hz=carrier,
                           track_doppler=track_doppler, max_doppler=a_bound, spread_samples=spread_samples)
        dopp.append(sync.doppler)
        notes.append(sync.doppler_note)
        resyncs += sync.resyncs
        frames += 1
        pay = slice(layout.n_train, n_frame)
        sent = labels[pay]
        bits += sent.size * k
        syms += sent.size
        if not sync.detected:  # a lost frame delivers nothing: all its bits are errors
            lost += 1
            bit_err += sent.size * k
            sym_err += sent.size
            continue
        design = None
        fbd = np.arange(1, plan.n_fb + 1)
        if receiver != "none":
            acf = design_noise_acf(sync.noise_var, plan.n_ff, beta)
            design = design_for(plan, sync.q, sync.q_peak, acf)
            if plan.sparse:
                fbd = feedback_delays(sync.q, plan.n_ff, design.start, plan.n_fb, plan.n_sparse)
                design = design_for(plan, sync.q, sync.q_peak, acf, fb_delays=fbd)
            start0 = sync.start - sync.q_peak + design.start
        else:
            start0 = sync.start
        # the receiver runs on through the tail marker, decision directed, as a check of its lock
        out = run_frame(plan, sync.stream, start0, layout.n_sent, labels[:layout.n_train], pts,
                        design=design, fb_delays=fbd,
                        pll=pll_moving if abs(sync.doppler) > 1e-4 else pll_still)
        restarts += out.restarts
        recoveries += out.recoveries
        curve += out.err2[:n_frame]
        n_curves += 1
        last = out
        tail_ser = float(np.mean(out.decisions[n_frame:] != labels[n_frame:]))
        if out.diverged or tail_ser > TAIL_CHECK_SER:  # given up, or lost: the frame delivers nothing
            diverged += 1
            bit_err += sent.size * k
            sym_err += sent.size
            continue
        dec = out.decisions[pay]
        bit_err += int(np.count_nonzero(const.bits_of(dec) != const.bits_of(sent)))
        sym_err += int(np.count_nonzero(dec != sent))
        z = out.z[pay]
        d = pts[sent]
        s_zd += np.vdot(d, z)
        s_dd += float(np.vdot(d, d).real)
        s_zz += float(np.vdot(z, z).real)
        kept.append(z[-_KEEP_POINTS:])
    if s_dd > 0:
        alpha = s_zd / s_dd
        resid = s_zz - 2 * (np.conj(alpha) * s_zd).real + abs(alpha) ** 2 * s_dd
        snr_out_db = 10 * math.log10(max(abs(alpha) ** 2 * s_dd / max(resid, 1e-300), 1e-300))
    else:
        snr_out_db = float("nan")
    lo, hi = clopper_pearson(bit_err, bits)
    curve = xr.DataArray(curve / max(n_curves, 1), dims="symbol",
                         coords={"symbol": ("symbol", np.arange(n_frame), {"long_name": "symbol index in the frame", "units": "1"})},
                         name="squared_error",
                         attrs={"units": "1", "long_name": "squared error |d - z|^2 (training, then decision directed), mean over frames",
                                "n_training": layout.n_train})
    pts_kept = np.concatenate(kept)[-_KEEP_POINTS:] if kept else np.zeros(0, complex)
    ber = bit_err / bits
    failure = _failure_text(lost, diverged, frames, ber, target)
    frame_rate = rs * k * layout.payload_fraction
    n_fb_used = int(last.fb_delays.size) if last is not None else (plan.n_fb if receiver in ("dfe", "mmse-dfe") else 0)
    empty = np.zeros(0, complex)
    applied = [n for n in notes if n]
    return LinkResult(
        ber=ber, ber_low=lo, ber_high=hi, bit_errors=bit_err, bits=bits, symbol_errors=sym_err,
        symbols=syms, frames=frames, snr_in_db=float(medium.snr_in_db), es_n0_db=pred.es_n0_db,
        snr_out_db=snr_out_db, snr_predicted_db=pred.snr_out_db, ber_predicted=pred.ber_predicted,
        training_fraction=layout.training_fraction, net_bit_rate_bps=0.0 if failure else frame_rate,
        symbol_rate_baud=rs, modulation=mod, receiver=receiver, algorithm=algorithm if receiver in ("linear", "dfe") else "none",
        rolloff=beta, n_ff=plan.n_ff, n_fb=n_fb_used, n_training=layout.n_train,
        n_payload=layout.n_payload, doppler_estimate=float(np.median(dopp)), restarts=restarts,
        learning_curve=curve, constellation=pts_kept, ff_taps=last.ff if last is not None else empty,
        fb_taps=last.fb if last is not None else empty,
        fb_delays=last.fb_delays if last is not None else np.zeros(0, np.int64),
        closed=not failure, failure=failure, target_ber=target, frame_bit_rate_bps=frame_rate, frames_lost=lost,
        frames_diverged=diverged, recoveries=recoveries, resyncs=resyncs, doppler_bound=a_bound,
        doppler_note=max(set(applied), key=applied.count) if applied else "")
