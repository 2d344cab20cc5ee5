"""The analytic link estimate the planner searches with: ``predict_link``.

For a channel, its noise, a symbol rate, a modulation and a receiver, the estimate is the
output SNR the named receiver achieves with the spans it would really use:

* ``none``: SINR of the strongest arrival against the residual ISI plus noise;
* ``linear`` / ``dfe``: the finite-length MMSE linear equalizer / MMSE-DFE (Al-Dhahir and
  Cioffi 1995) with the receiver's T/2 feedforward and symbol-spaced feedback spans and its
  best window placement, then the adaptation loss: the excess MSE of RLS
  ``M (1 - lambda) / (1 + lambda)`` or of NLMS ``mu / (2 - mu)`` multiplies the MMSE by
  ``1 + misadjustment``. Error propagation in the feedback is not modelled (the feedback
  is assumed to see correct decisions, as in the design equations);
* ``mmse-dfe``: the finite-length design on the known channel.

On a time-varying channel the design uses the mean-power channel, and the part of each path's
fluctuation that the receiver cannot follow over its tracking lag (:func:`tracking_lag_s`) is
added to the noise (:meth:`aculink.modem.media.ChannelMedium.variation_noise`).

The BER is the closed form of the modulation at that SNR (residual ISI taken as Gaussian).
The infinite-length bounds (matched filter, MMSE-LE, MMSE-DFE: Salz 1973, Cioffi et al. 1995)
over the folded SNR and the water-filling capacity come with every estimate.

References
----------
See :mod:`aculink.modem.analytic`.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import asdict, dataclass

import numpy as np

from aculink.errors import check_range
from aculink.modem.analytic import equalizer_bounds, single_tap_sinr
from aculink.modem.ber import bit_error_rate
from aculink.modem.constellations import MODULATIONS, check_modulation
from aculink.modem.frames import frame_layout
from aculink.modem.media import _rc_pulse, make_medium
from aculink.modem.receivers import check_receiver, design_for, plan_receiver

#: Roll-off used when neither the caller nor the site gives one (the site default).
DEFAULT_ROLLOFF = 0.25

_CACHE: OrderedDict = OrderedDict()
#: Noise autocorrelation lags computed once per symbol rate (the longest default feedforward).
_ACF_LAGS = 64
_CACHE_SIZE = 4096


def _db(x):
    return 10 * math.log10(x) if x > 0 else -math.inf


@dataclass(frozen=True)
class Prediction:
    """Analytic link estimate (SNRs in dB, rates in bit/s).

    ``snr_band_db`` is the band SNR (or Es/N0 for a tap list); ``es_n0_db`` the received
    symbol SNR; ``snr_out_db`` the receiver's predicted unbiased output SNR; ``snr_finite_db``
    the finite-length design before adaptation loss; ``mfb_db``, ``mmse_le_db``,
    ``mmse_dfe_db`` the infinite-length bounds; ``capacity_bps`` the water-filling capacity.
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

    def to_dict(self) -> dict:
        return asdict(self)


def _grid_size(span_symbols: int) -> int:
    n = max(1024, 8 * int(span_symbols))
    return 1 << int(math.ceil(math.log2(n)))


def tracking_lag_s(plan, layout, rs) -> float:
    """How old, on average, the channel knowledge a receiver decides with is, s.

    Adaptive RLS: half its memory ``1 / (1 - lambda)`` symbols; NLMS: half of ``M / mu``
    symbols; fixed-tap receivers (``none``, ``mmse-dfe``, set up on the preamble): the
    training plus half the payload (common practice, no source).
    """
    if plan.receiver in ("none", "mmse-dfe"):
        return (layout.n_train + 0.5 * layout.n_payload) / rs
    if plan.algorithm == "rls":
        return 0.5 / (1.0 - plan.forgetting) / rs
    return 0.5 * plan.n_adapted / plan.step / rs


_MEDIA: OrderedDict = OrderedDict()


def _medium(channel, budget, snr_db, time_varying):
    """The channel's medium, cached by identity (the planner asks the same channel many times)."""
    key = (id(channel), id(budget), snr_db, bool(time_varying))
    hit = _MEDIA.get(key)
    if hit is not None and hit[0] is channel and hit[1] is budget:
        return hit[2]
    medium = make_medium(channel, budget, snr_db, time_varying=time_varying)
    _MEDIA[key] = (channel, budget, medium)
    while len(_MEDIA) > 64:
        _MEDIA.popitem(last=False)
    return medium


def clear_caches() -> None:
    """Forget the cached estimates and media (a long sweep calls this between chunks).

    The caches only pay off while one channel is asked about many candidates; across channels
    they would hold every channel a process has seen, up to their caps.
    """
    _CACHE.clear()
    _MEDIA.clear()


def _receiver_estimate(medium, rs, beta, receiver, opts, n_training, n_payload):
    memo = getattr(medium, "memo", lambda key, func: func())
    q_half = memo(("response", rs, beta, 2), lambda: medium.response(rs, beta, 2))
    plan = plan_receiver(q_half, receiver, algorithm=opts["algorithm"], n_ff=opts["n_ff"], n_fb=opts["n_fb"],
                         sparse=opts["sparse"], n_sparse=opts["n_sparse"], forgetting=opts["forgetting"],
                         step=opts["step_size"], symbol_rate_baud=rs)
    layout = frame_layout(plan.n_adapted, plan.spread_symbols, algorithm=plan.algorithm,
                          receiver=receiver, n_training=n_training, n_payload=n_payload)
    es = medium.es_over_ref(rs)
    # channel change the receiver cannot follow, as white noise at the matched-filter output
    extra = es * medium.variation_noise(tracking_lag_s(plan, layout, rs))
    if plan.receiver == "none":
        q4 = memo(("response", rs, beta, 4), lambda: medium.response(rs, beta, 4))
        m = int(np.argmax(np.abs(q4)))
        q_sym = q4[m % 4::4]
        nv = float(np.real(medium.noise_acf(rs, beta, 1, 4)[0])) + extra
        finite = single_tap_sinr(q_sym, es, nv)
    else:
        n_lags = max(plan.n_ff, _ACF_LAGS)
        acf = memo(("acf", rs, beta, n_lags), lambda: medium.noise_acf(rs, beta, n_lags, 2))[:plan.n_ff] + extra * _rc_pulse(np.arange(plan.n_ff) / 2, beta)
        ref = float(np.real(acf[0]))
        q_n = q_half * math.sqrt(es / ref)
        m = int(np.argmax(np.abs(q_n)))
        fb = None
        if plan.sparse:
            from aculink.modem.receivers import feedback_delays

            d0 = design_for(plan, q_n, m, acf / ref)
            fb = feedback_delays(q_n, plan.n_ff, d0.start, plan.n_fb, plan.n_sparse)
        design = design_for(plan, q_n, m, acf / ref, fb_delays=fb)
        finite = design.snr
    mis = plan.misadjustment
    # adaptation noise: MSE -> MSE (1 + mis); unbiased SNR = 1/MSE' - 1 (Es = 1)
    mse = 1.0 / (1.0 + finite)
    snr_out = 1.0 / (mse * (1.0 + mis)) - 1.0 if mis else finite
    return plan, layout, finite, max(snr_out, 1e-12), mis


def predict_link(channel, budget=None, symbol_rate_baud=None, modulation="qpsk", receiver="dfe", *,
                 rolloff=None, snr_db=None, algorithm="rls", n_ff=None, n_fb=None, sparse=False,
                 n_sparse=None, n_training=None, n_payload=None, forgetting=None, step_size=None,
                 time_varying=True) -> Prediction:
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

    Returns
    -------
    Prediction

    Raises
    ------
    AculinkError
        For an unknown modulation or receiver, a symbol rate above the band, tap counts below
        1, or a training shorter than the taps.

    References
    ----------
    Al-Dhahir and Cioffi (1995); Salz (1973); Cioffi et al. (1995); Proakis (2001) for the BER.
    """
    mod = check_modulation(modulation)
    receiver = check_receiver(receiver)
    rs = check_range("symbol_rate_baud", symbol_rate_baud, 0.0, None, low_open=True, unit="Bd")
    beta = DEFAULT_ROLLOFF if rolloff is None else check_range("rolloff", rolloff, 0.0, 1.0, low_open=True)
    opts = dict(algorithm=algorithm, n_ff=n_ff, n_fb=n_fb, sparse=sparse, n_sparse=n_sparse,
                forgetting=forgetting, step_size=step_size)
    key = (id(channel), id(budget), snr_db, rs, beta, receiver, n_training, n_payload, bool(time_varying),
           tuple(sorted(opts.items())))
    hit = _CACHE.get(key)
    if hit is not None and hit[0] is channel and hit[1] is budget:
        core = hit[2]
    else:
        medium = _medium(channel, budget, snr_db, time_varying)
        medium.check_rate(rs, beta)
        plan, layout, finite, snr_out, mis = _receiver_estimate(medium, rs, beta, receiver, opts, n_training,
                                                                n_payload)
        memo = getattr(medium, "memo", lambda key, func: func())
        n_grid = _grid_size(plan.spread_symbols)
        bounds = memo(("bounds", rs, beta, n_grid),
                      lambda: equalizer_bounds(medium.folded_snr(rs, beta, n_grid)))
        core = dict(snr_band_db=float(medium.snr_in_db),
                    es_n0_db=float(memo(("es_n0", rs, beta), lambda: medium.es_n0_db(rs, beta))),
                    snr_out=snr_out, finite=finite, mis=mis, plan=plan, layout=layout, bounds=bounds,
                    capacity_bps=float(memo(("capacity", rs, beta), lambda: medium.capacity_bps(rs, beta))))
        _CACHE[key] = (channel, budget, core)
        while len(_CACHE) > _CACHE_SIZE:
            _CACHE.popitem(last=False)
    plan, layout, b = core["plan"], core["layout"], core["bounds"]
    k = MODULATIONS[mod]
    return Prediction(
        snr_band_db=core["snr_band_db"], es_n0_db=core["es_n0_db"], snr_out_db=_db(core["snr_out"]),
        ber_predicted=float(bit_error_rate(mod, core["snr_out"])),
        net_bit_rate_bps=rs * k * layout.payload_fraction, training_fraction=layout.training_fraction,
        symbol_rate_baud=rs, modulation=mod, receiver=receiver, algorithm=plan.algorithm, rolloff=beta,
        snr_finite_db=_db(core["finite"]), misadjustment=core["mis"], mfb_db=_db(b.mfb),
        mmse_le_db=_db(b.mmse_le), mmse_dfe_db=_db(b.mmse_dfe), zf_dfe_db=_db(b.zf_dfe),
        capacity_bps=core["capacity_bps"], n_ff=plan.n_ff, n_fb=(plan.n_sparse if plan.sparse else plan.n_fb),
        n_training=layout.n_train, n_payload=layout.n_payload, spread_symbols=plan.spread_symbols)
