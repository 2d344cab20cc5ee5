"""The analytic link estimate the planner searches with: ``predict_link``.

For a channel, its noise, a symbol rate, a modulation and a receiver, the estimate is the
output SNR and BER the named receiver achieves with the spans it would really use, with the
losses that receiver has:

* ``none``: SINR of the strongest arrival against the residual ISI plus noise, with the loss of
  its gain estimated from the N training symbols, ``(noise + ISI) (1 + 1/N)``;
* ``linear`` / ``dfe``: the finite-length MMSE linear equalizer / MMSE-DFE (Al-Dhahir and
  Cioffi 1995) with the receiver's T/2 feedforward and symbol-spaced feedback spans and its
  best window placement, then the adaptation loss: the excess MSE of RLS
  ``M (1 - lambda) / (1 + lambda)`` or of NLMS ``mu / (2 - mu)`` multiplies the MMSE by
  ``1 + misadjustment`` (this is their estimation loss: they learn their taps from the data);
* ``mmse-dfe`` with ``known_channel=False`` (what :func:`aculink.modem.simulate_link` runs): the
  same design on the channel estimated by least squares on the training, which divides the
  output SNR by ``1 + L / (2 N)``, N training symbols and L the estimated T/2 samples that the
  fed-back columns cover (at most ``Nf + 2 Nb``): each estimated sample has an error variance of
  about the noise over N, and the feedback subtracts the estimate, so those errors stay as ISI
  (Kay, *Fundamentals of Statistical Signal Processing: Estimation Theory*, 1993, ch. 4, for the
  least-squares error, from memory; the count of leaking samples is ours);
* ``mmse-dfe`` with ``known_channel=True`` (the default, the planner's bound): the finite-length
  MMSE-DFE on the perfectly known (and perfectly tracked) channel with its spans and decision
  delay optimised (:func:`known_channel_bound`), assuming correct past decisions and no loss; by
  construction never below the ``linear`` or ``dfe`` estimate on the same channel.

For the practical receivers, then:

* tracking loss: on a time-varying channel the design uses the mean-power channel, and the part
  of each path's fluctuation that the receiver cannot follow over its tracking lag
  (:func:`tracking_lag_s`) is added to the noise
  (:meth:`aculink.modem.media.ChannelMedium.variation_noise`);
* implementation loss :data:`IMPLEMENTATION_LOSS_DB` (PLL jitter, timing, the noise estimate);
* error propagation in the feedback (``dfe``, ``mmse-dfe``): the BER at the output SNR is
  multiplied by the mean errors per error event of :func:`aculink.modem.analytic.error_propagation`.

The BER is the closed form of the modulation at the output SNR (residual ISI taken as Gaussian)
times that factor. The infinite-length bounds (matched filter, MMSE-LE, MMSE-DFE: Salz 1973,
Cioffi et al. 1995) over the folded SNR and the water-filling capacity come with every estimate.

Estimates are cached on the channel object (:func:`aculink.modem.media.cached_medium`): a
planner asking about many candidates on one channel computes the shared parts once, and the
cache goes with the channel.

References
----------
See :mod:`aculink.modem.analytic`.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, replace

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.modem.analytic import equalizer_bounds, error_propagation, single_tap_sinr
from aculink.modem.ber import bit_error_rate
from aculink.modem.constellations import MODULATIONS, check_modulation
from aculink.modem.frames import frame_layout
from aculink.modem.media import cached_medium
from aculink.modem.receivers import (MAX_FB_SYMBOLS, MAX_FF_SYMBOLS, check_receiver, design_for,
                                     feedback_delays, plan_receiver)

__all__ = ["DEFAULT_ROLLOFF", "IMPLEMENTATION_LOSS_DB", "Prediction", "tracking_lag_s", "estimate_span",
           "estimated_samples", "known_channel_bound", "predict_link"]

#: Roll-off used when neither the caller nor the site gives one (the site default).
DEFAULT_ROLLOFF = 0.25
#: Noise autocorrelation lags computed once per symbol rate (the longest default feedforward).
_ACF_LAGS = 64
#: Implementation loss of a practical receiver, dB: what the models above leave out (PLL phase
#: jitter, timing and Doppler residuals, the noise-variance estimate). A few tenths of a dB is
#: the usual allowance (common practice, no source); with it the predictions on the Proakis
#: channels and our sparse tap lists sit 0.1-0.4 dB below the simulated output SNR.
IMPLEMENTATION_LOSS_DB = 0.2
#: The simulator's least-squares channel estimate (for ``mmse-dfe``) spans the response from
#: this many T/2 samples before its strongest sample to as many after its end, but at most the
#: 20 dB extent plus this many symbols of pulse tail each side (as in simulate_link).
_ESTIMATE_MARGIN = 4
_ESTIMATE_TAIL_SYMBOLS = 10
#: The known-channel bound's response extent: samples within this of the strongest count.
_BOUND_THRESHOLD_DB = 40.0


def _db(x):
    return 10 * math.log10(x) if x > 0 else -math.inf


@dataclass(frozen=True)
class Prediction:
    """Analytic link estimate (SNRs in dB, rates in bit/s).

    ``snr_band_db`` is the band SNR (or Es/N0 for a tap list); ``es_n0_db`` the received
    symbol SNR; ``snr_out_db`` the receiver's predicted unbiased output SNR, every loss included;
    ``snr_finite_db`` the finite-length design before the losses; ``misadjustment`` the adaptive
    excess-MSE ratio; ``estimation_loss_db`` the loss of the training estimate (the fixed-tap
    receivers; the misadjustment is the adaptive receivers'); ``implementation_loss_db``;
    ``error_propagation`` the factor the BER at ``snr_out_db`` is multiplied by (1 without
    feedback); ``mfb_db``, ``mmse_le_db``, ``mmse_dfe_db`` the infinite-length bounds;
    ``capacity_bps`` the water-filling capacity; ``known_channel`` whether this is the
    known-channel bound (``mmse-dfe`` only).
    """

    snr_band_db: float
    es_n0_db: float
    snr_out_db: float
    ber_predicted: float
    net_bit_rate_bps: float
    training_fraction: float
    symbol_rate_baud: float
    modulation: str
    receiver: str
    algorithm: str
    rolloff: float
    snr_finite_db: float
    misadjustment: float
    mfb_db: float
    mmse_le_db: float
    mmse_dfe_db: float
    zf_dfe_db: float
    capacity_bps: float
    n_ff: int
    n_fb: int
    n_training: int
    n_payload: int
    spread_symbols: int
    estimation_loss_db: float = 0.0
    implementation_loss_db: float = 0.0
    error_propagation: float = 1.0
    known_channel: bool = False

    def to_dict(self) -> dict:
        return asdict(self)


def _grid_size(span_symbols: int) -> int:
    n = max(1024, 8 * int(span_symbols))
    return 1 << int(math.ceil(math.log2(n)))


def tracking_lag_s(plan, layout, rs) -> float:
    """The equivalent age of the channel knowledge a receiver decides with, s.

    Adaptive RLS: its memory ``M = 1 / (1 - lambda)`` symbols. An exponentially weighted estimate
    ``sum_k (1 - lambda) lambda^k h(t - kT)`` of a gain with correlation ``rho(tau) ~ 1 - 2 pi^2
    nu^2 tau^2`` misses ``E|h - h_est|^2 ~ 4 pi^2 nu^2 T^2 M^2`` of its power (the window's
    ``2 sum w_k k^2 - sum sum w_k w_l (k - l)^2 = 2 M^2`` to first order; our derivation), which is
    the error of a gain ``M T`` old, not ``M T / 2`` (the mean age alone undercounts it 4 times).
    NLMS: the same with ``M = n / mu``. Fixed-tap receivers (``none``, ``mmse-dfe``, set up on the
    preamble): the training plus half the payload (common practice, no source).
    """
    if plan.receiver in ("none", "mmse-dfe"):
        return (layout.n_train + 0.5 * layout.n_payload) / rs
    if plan.algorithm == "rls":
        return 1.0 / (1.0 - plan.forgetting) / rs
    return plan.n_adapted / plan.step / rs


def estimate_span(q_half, plan) -> tuple[int, int]:
    """T/2 samples before and after the response's peak that the least-squares channel estimate covers.

    From ``_ESTIMATE_MARGIN`` samples before the response's start to as many after its end, limited
    to the 20 dB extent (``plan.pre_symbols``, ``plan.post_symbols``) plus
    ``_ESTIMATE_TAIL_SYMBOLS`` of pulse tail each side. The simulator's front end estimates over
    this span (shortened further when the training is too short for it).
    """
    m = int(np.argmax(np.abs(q_half)))
    tail = 2 * _ESTIMATE_TAIL_SYMBOLS + _ESTIMATE_MARGIN
    n_pre = min(m + _ESTIMATE_MARGIN, 2 * plan.pre_symbols + tail)
    n_post = min(np.size(q_half) - 1 - m + _ESTIMATE_MARGIN, 2 * plan.post_symbols + tail)
    return int(n_pre), int(n_post)


def estimated_samples(q_half, plan) -> int:
    """T/2 samples of the least-squares channel estimate the ``mmse-dfe`` receiver designs from
    (:func:`estimate_span`)."""
    n_pre, n_post = estimate_span(q_half, plan)
    return n_pre + n_post + 1


def _design(medium, plan, q_half, rs, beta, extra):
    """The finite MMSE design with ``plan``'s spans; ``extra`` white power (Es units) added to the noise."""
    n_lags = max(plan.n_ff, _ACF_LAGS)
    acf = medium.memo(("acf", rs, beta, n_lags), lambda: medium.noise_acf(rs, beta, n_lags, 2))[:plan.n_ff]
    acf = acf + extra * medium.pulse_acf(beta, plan.n_ff, 2)
    ref = float(np.real(acf[0]))
    q_n = q_half * math.sqrt(medium.es_over_ref(rs) / ref)
    m = int(np.argmax(np.abs(q_n)))
    fb = None
    if plan.sparse:
        d0 = design_for(plan, q_n, m, acf / ref)
        fb = feedback_delays(q_n, plan.n_ff, d0.start, plan.n_fb, plan.n_sparse)
    return design_for(plan, q_n, m, acf / ref, fb_delays=fb)


def _bound_plans(q_half, base, practical):
    """Span candidates for the known-channel bound: every practical receiver's spans, and
    feedforward lengths that cover the response to :data:`_BOUND_THRESHOLD_DB`, each with a
    feedback over the whole postcursor span (extra feedback never hurts a known-channel design)."""
    p = np.abs(np.asarray(q_half)) ** 2
    m = int(np.argmax(p))
    sig = np.flatnonzero(p >= p[m] * 10 ** (-_BOUND_THRESHOLD_DB / 10))
    pre = math.ceil((m - int(sig[0])) / 2)
    post_all = math.ceil((p.size - 1 - m) / 2)
    plans = []
    for rx in practical:
        n_fb = rx.n_fb if rx.receiver != "linear" else 0
        plans.append(replace(base, n_ff=rx.n_ff, n_fb=max(n_fb, min(MAX_FB_SYMBOLS, post_all + rx.n_ff // 2)),
                             sparse=False))
    for k in (pre + 3, 2 * pre + 3, 2 * pre + 8):
        k = int(np.clip(k, 2, MAX_FF_SYMBOLS))
        plans.append(replace(base, n_ff=2 * k, n_fb=min(MAX_FB_SYMBOLS, post_all + k), sparse=False))
    seen, out = set(), []
    for pl in plans:
        if (pl.n_ff, pl.n_fb) not in seen:
            seen.add((pl.n_ff, pl.n_fb))
            out.append(pl)
    return out


def known_channel_bound(medium, rs, beta, opts):
    """The best finite MMSE-DFE on the known channel: (plan, design) maximising the unbiased SNR
    over span candidates (:func:`_bound_plans`) and, for each, the decision delay (window start).

    No tracking noise (the channel is known at every instant), no estimation or implementation
    loss, correct past decisions: an upper bound for the practical receivers' estimates, which
    use one of the candidate spans with more noise and losses.
    """
    q_half = medium.memo(("response", rs, beta, 2), lambda: medium.response(rs, beta, 2))
    fixed = opts["n_ff"] is not None or opts["n_fb"] is not None
    base = plan_receiver(q_half, "mmse-dfe", n_ff=opts["n_ff"], n_fb=opts["n_fb"], symbol_rate_baud=rs)
    if fixed:
        return base, _design(medium, base, q_half, rs, beta, 0.0)
    practical = [plan_receiver(q_half, rx, symbol_rate_baud=rs) for rx in ("linear", "dfe")]
    best = None
    for plan in _bound_plans(q_half, base, practical):
        d = _design(medium, plan, q_half, rs, beta, 0.0)
        if best is None or d.snr > best[1].snr:
            best = (plan, d)
    return best


def _receiver_estimate(medium, rs, beta, receiver, opts, n_training, n_payload, known, impl_db):
    """Everything of the estimate that does not depend on the modulation (cached per channel)."""
    q_half = medium.memo(("response", rs, beta, 2), lambda: medium.response(rs, beta, 2))
    if known:
        plan, design = known_channel_bound(medium, rs, beta, opts)
        layout = frame_layout(plan.n_adapted, plan.spread_symbols, algorithm=plan.algorithm,
                              receiver=receiver, n_training=n_training, n_payload=n_payload)
        return dict(plan=plan, layout=layout, finite=design.snr, snr_out=max(design.snr, 1e-12), mis=0.0,
                    est_db=0.0, impl_db=0.0, fb_gains=None)
    plan = plan_receiver(q_half, receiver, algorithm=opts["algorithm"], n_ff=opts["n_ff"], n_fb=opts["n_fb"],
                         sparse=opts["sparse"], n_sparse=opts["n_sparse"], forgetting=opts["forgetting"],
                         step=opts["step_size"], symbol_rate_baud=rs)
    layout = frame_layout(plan.n_adapted, plan.spread_symbols, algorithm=plan.algorithm,
                          receiver=receiver, n_training=n_training, n_payload=n_payload)
    es = medium.es_over_ref(rs)
    # channel change the receiver cannot follow, as white noise at the matched-filter output
    extra = es * medium.variation_noise(tracking_lag_s(plan, layout, rs))
    design = None
    if plan.receiver == "none":
        q4 = medium.memo(("response", rs, beta, 4), lambda: medium.response(rs, beta, 4))
        m = int(np.argmax(np.abs(q4)))
        nv = float(np.real(medium.noise_acf(rs, beta, 1, 4)[0])) + extra
        finite = single_tap_sinr(q4[m % 4::4], es, nv)
        est = 1.0 + 1.0 / layout.n_train  # the gain estimated from the training (noise + ISI over N)
    else:
        design = _design(medium, plan, q_half, rs, beta, extra)
        finite = design.snr
        est = 1.0
        if plan.receiver == "mmse-dfe":
            # the fed-back columns' estimate errors stay as ISI: the estimated samples they cover
            covered = min(estimated_samples(q_half, plan), plan.n_ff + 2 * plan.n_fb)
            est = 1.0 + covered / (2.0 * layout.n_train)
    mis = plan.misadjustment
    # adaptation noise: MSE -> MSE (1 + mis), unbiased SNR = 1/MSE' - 1 (Es = 1); the estimate's
    # leakage and the implementation loss add to the noise of the unbiased output: SNR / loss
    mse = 1.0 / (1.0 + finite) * (1.0 + mis)
    snr_out = max((1.0 / mse - 1.0) / (est * 10 ** (impl_db / 10)), 1e-12)
    # the feedback taps over the cursor, in the unbiased output's units (error propagation)
    gains = np.conj(design.fb) / design.bias if design is not None and design.fb.size else None
    return dict(plan=plan, layout=layout, finite=finite, snr_out=snr_out, mis=mis, est_db=_db(est),
                impl_db=float(impl_db), fb_gains=gains)


def predict_link(channel, budget=None, symbol_rate_baud=None, modulation="qpsk", receiver="dfe", *,
                 rolloff=None, snr_db=None, algorithm="rls", n_ff=None, n_fb=None, sparse=False,
                 n_sparse=None, n_training=None, n_payload=None, forgetting=None, step_size=None,
                 time_varying=True, known_channel=None, implementation_loss_db=None) -> Prediction:
    """Analytic estimate of what ``receiver`` achieves over ``channel`` at ``symbol_rate_baud``.

    Parameters
    ----------
    channel : Channel or array of complex
        A site channel (with ``budget`` or ``snr_db`` = band SNR) or symbol-spaced taps (with
        ``snr_db`` = Es/sigma^2).
    budget : LinkBudget, optional
        Source level and coloured noise PSD for a Channel.
    symbol_rate_baud : float
        Rs; with a Channel, ``Rs (1 + rolloff)`` must fit in the band.
    modulation : str
        ``bpsk qpsk 8psk 16qam 64qam``.
    receiver : str
        ``none linear dfe mmse-dfe``.
    rolloff : float, optional
        RRC roll-off (default 0.25).
    snr_db : float, optional
        Replaces the budget's band SNR (white noise), or Es/N0 for a tap list.
    algorithm : {"rls", "nlms"}
        Adaptation algorithm of ``linear`` and ``dfe`` (sets the adaptation loss and training).
    n_ff, n_fb, sparse, n_sparse, n_training, n_payload, forgetting, step_size
        Overrides of the receiver's spans and the frame (see :func:`simulate_link`).
    time_varying : bool
        Charge the channel's time variation the receiver cannot follow (a Channel).
    known_channel : bool, optional
        ``mmse-dfe`` only: True (the default) gives the known-channel bound (optimised spans
        unless ``n_ff``/``n_fb`` are given, no losses); False the receiver simulate_link runs
        (designed on the channel estimated from the training, the plan's spans, every loss).
    implementation_loss_db : float, optional
        Implementation loss of the practical receivers, dB in [0, 10] (default
        :data:`IMPLEMENTATION_LOSS_DB`).

    Returns
    -------
    Prediction

    Raises
    ------
    AculinkError
        For an unknown modulation or receiver, a symbol rate above the band, tap counts below
        1, a training shorter than the taps, or ``known_channel=True`` with another receiver.

    References
    ----------
    Al-Dhahir and Cioffi (1995); Salz (1973); Cioffi et al. (1995); Proakis (2001) for the BER;
    Duttweiler, Mazo and Messerschmitt (1974) for the error-propagation cap.
    """
    mod = check_modulation(modulation)
    receiver = check_receiver(receiver)
    rs = check_range("symbol_rate_baud", symbol_rate_baud, 0.0, None, low_open=True, unit="Bd")
    beta = DEFAULT_ROLLOFF if rolloff is None else check_range("rolloff", rolloff, 0.0, 1.0, low_open=True)
    impl_db = IMPLEMENTATION_LOSS_DB if implementation_loss_db is None else check_range(
        "implementation_loss_db", implementation_loss_db, 0.0, 10.0, unit="dB")
    if known_channel and receiver != "mmse-dfe":
        raise AculinkError(f"known_channel = True: only for receiver 'mmse-dfe' (the known-channel bound), "
                           f"not {receiver!r}")
    known = receiver == "mmse-dfe" and (known_channel is None or bool(known_channel))
    opts = dict(algorithm=algorithm, n_ff=n_ff, n_fb=n_fb, sparse=sparse, n_sparse=n_sparse,
                forgetting=forgetting, step_size=step_size)
    medium = cached_medium(channel, budget, snr_db, time_varying=time_varying)
    medium.check_rate(rs, beta)
    key = ("estimate", rs, beta, receiver, n_training, n_payload, known, impl_db, tuple(sorted(opts.items())))
    core = medium.memo(key, lambda: _receiver_estimate(medium, rs, beta, receiver, opts, n_training,
                                                       n_payload, known, impl_db))
    prop = 1.0
    if core["fb_gains"] is not None:
        prop = medium.memo(key + ("propagation", mod),
                           lambda: error_propagation(core["fb_gains"], core["snr_out"], mod)[0])
    plan, layout = core["plan"], core["layout"]
    n_grid = _grid_size(plan.spread_symbols)
    b = medium.memo(("bounds", rs, beta, n_grid), lambda: equalizer_bounds(medium.folded_snr(rs, beta, n_grid)))
    k = MODULATIONS[mod]
    ber = min(0.5, float(bit_error_rate(mod, core["snr_out"])) * prop)
    return Prediction(
        snr_band_db=float(medium.snr_in_db),
        es_n0_db=float(medium.memo(("es_n0", rs, beta), lambda: medium.es_n0_db(rs, beta))),
        snr_out_db=_db(core["snr_out"]), ber_predicted=ber,
        net_bit_rate_bps=rs * k * layout.payload_fraction, training_fraction=layout.training_fraction,
        symbol_rate_baud=rs, modulation=mod, receiver=receiver, algorithm=plan.algorithm, rolloff=beta,
        snr_finite_db=_db(core["finite"]), misadjustment=core["mis"], mfb_db=_db(b.mfb),
        mmse_le_db=_db(b.mmse_le), mmse_dfe_db=_db(b.mmse_dfe), zf_dfe_db=_db(b.zf_dfe),
        capacity_bps=float(medium.memo(("capacity", rs, beta), lambda: medium.capacity_bps(rs, beta))),
        n_ff=plan.n_ff, n_fb=(plan.n_sparse if plan.sparse else plan.n_fb),
        n_training=layout.n_train, n_payload=layout.n_payload, spread_symbols=plan.spread_symbols,
        estimation_loss_db=float(core["est_db"]), implementation_loss_db=float(core["impl_db"]),
        error_propagation=float(prop), known_channel=bool(known))
