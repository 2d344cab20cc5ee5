"""The four receivers and how their spans follow from the channel.

* ``none``: matched filter sampled at the strongest arrival, a PLL, symbol-by-symbol
  decisions (one fixed tap, no equalization).
* ``linear``: adaptive T/2 fractionally spaced linear equalizer (RLS or NLMS) with a PLL.
* ``dfe``: adaptive T/2 feedforward filter with symbol-spaced feedback (RLS or NLMS) jointly
  with a second-order PLL, trained on the preamble and decision-directed afterwards; optional
  sparse feedback on the delays where past symbols leak into the window.
* ``mmse-dfe``: the finite-length MMSE-DFE computed from the channel estimated on the
  training preamble (or the known channel), applied with fixed taps and a PLL.

Spans (``plan_receiver``): the strongest sample ``m`` of the T/2 response and the extent of
samples within ``SPAN_THRESHOLD_DB`` of it give the precursor and postcursor lengths (in
symbols) ``n_pre`` and ``n_post``. The DFE feedforward filter covers the precursors plus
``FF_EXTRA_SYMBOLS``; the feedback covers the postcursors plus the part of the window after
the main arrival. The linear equalizer covers the whole response plus the same margin. Caps
keep the filters finite (``MAX_FF_SYMBOLS``, ``MAX_LE_SYMBOLS``, ``MAX_FB_SYMBOLS``).

References
----------
Stojanovic, M., Catipovic, J. A. and Proakis, J. G., "Phase-coherent digital communications
for underwater acoustic channels", IEEE J. Oceanic Eng. 19(1), 100-111, 1994.
Haykin, S., *Adaptive Filter Theory*, 4th ed., Prentice Hall, 2002 (RLS ch. 9, NLMS ch. 6).
Rice, M., *Digital Communications: A Discrete-Time Approach*, Pearson, 2009, appendix C
(second-order loop gains, from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from aculink.errors import AculinkError, check_range, closest
from aculink.modem import _kernels
from aculink.modem._design_fast import mmse_dfe_design_fast as mmse_dfe_design
from aculink.modem.analytic import DfeDesign

__all__ = ["RECEIVERS", "ALGORITHMS", "SPAN_THRESHOLD_DB", "FF_EXTRA_SYMBOLS", "MAX_FF_SYMBOLS",
           "MAX_LE_SYMBOLS", "MAX_FB_SYMBOLS", "SPARSE_THRESHOLD_DB", "DEFAULT_NLMS_STEP", "RLS_DELTA",
           "check_receiver", "check_algorithm", "pll_gains", "TRACK_MEMORY_S", "default_forgetting",
           "ReceiverPlan", "response_extent", "plan_receiver", "feedback_delays", "design_for",
           "FrameOutput", "run_frame"]

RECEIVERS = ("none", "linear", "dfe", "mmse-dfe")
ALGORITHMS = ("rls", "nlms")

#: Samples weaker than this, relative to the strongest, do not count towards the span
#: (common practice, no source).
SPAN_THRESHOLD_DB = 20.0
FF_EXTRA_SYMBOLS = 3
MAX_FF_SYMBOLS = 64
MAX_LE_SYMBOLS = 32
MAX_FB_SYMBOLS = 400
#: Sparse feedback keeps the delays whose leakage into the window is within this of the
#: strongest leakage (common practice, no source).
SPARSE_THRESHOLD_DB = 30.0
#: Default NLMS step (normalized, in (0, 2)).
DEFAULT_NLMS_STEP = 0.3
#: RLS initial P = I / delta, delta relative to the unit-normalized input power (Haykin ch. 9:
#: a small delta for high SNR).
RLS_DELTA = 1e-2


def check_receiver(name) -> str:
    key = str(name).strip().lower().replace("_", "-")
    if key not in RECEIVERS:
        raise AculinkError(f"receiver = {name!r}: expected one of {', '.join(RECEIVERS)}{closest(key, RECEIVERS)}")
    return key


def check_algorithm(name) -> str:
    key = str(name).strip().lower()
    if key not in ALGORITHMS:
        raise AculinkError(f"algorithm = {name!r}: expected one of {', '.join(ALGORITHMS)}{closest(key, ALGORITHMS)}")
    return key


def pll_gains(loop_bandwidth: float, damping: float = 1 / math.sqrt(2)) -> tuple[float, float]:
    """Proportional and integral gains of a second-order loop with unit detector gain.

    ``theta_n = BnT / (zeta + 1/(4 zeta))``, ``d = 1 + 2 zeta theta_n + theta_n^2``,
    ``K1 = 4 zeta theta_n / d``, ``K2 = 4 theta_n^2 / d``.

    References
    ----------
    Rice (2009), appendix C (from memory); [Rice2009] check value: zeta = 0.7071,
    BnT = 0.01 give K1 = 0.026313, K2 = 3.5085e-4.
    """
    bn = check_range("pll_bandwidth", loop_bandwidth, 0.0, 0.25)
    z = check_range("pll_damping", damping, 0.0, None, low_open=True)
    th = bn / (z + 1.0 / (4.0 * z))
    d = 1.0 + 2.0 * z * th + th * th
    return 4.0 * z * th / d, 4.0 * th * th / d


#: Longest RLS memory in seconds: surface-bounce paths decorrelate over about a second (wave
#: periods of a few seconds), so a receiver that averages much longer than this cannot follow
#: them (common practice, no source).
TRACK_MEMORY_S = 0.1


def default_forgetting(n_taps: int, symbol_rate_baud: float | None = None) -> float:
    """RLS forgetting factor: memory of about ten times the taps, so the misadjustment
    ``M (1 - lambda) / (1 + lambda)`` stays near 5 % (0.2 dB), but no longer than
    :data:`TRACK_MEMORY_S` when the symbol rate is known, and never shorter than 2.5 times the
    taps (misadjustment 25 %, 1 dB); clipped to [0.95, 0.9995] (common practice, no source)."""
    n = max(n_taps, 1)
    memory = 10.0 * n
    if symbol_rate_baud is not None:
        memory = max(2.5 * n, min(memory, TRACK_MEMORY_S * float(symbol_rate_baud)))
    return float(np.clip(1.0 - 1.0 / memory, 0.95, 0.9995))


@dataclass(frozen=True)
class ReceiverPlan:
    """Spans and adaptation settings of a receiver (T/2 feedforward, symbol-spaced feedback)."""

    receiver: str
    algorithm: str
    n_ff: int
    n_fb: int
    sparse: bool
    n_sparse: int
    forgetting: float
    step: float
    spread_symbols: int
    pre_symbols: int
    post_symbols: int

    @property
    def n_adapted(self) -> int:
        """Coefficients adapted (or, for mmse-dfe, channel samples estimated)."""
        if self.receiver == "none":
            return 1
        fb = self.n_sparse if self.sparse else self.n_fb
        return self.n_ff + fb

    @property
    def misadjustment(self) -> float:
        """Excess MSE over the Wiener solution from adaptation noise (0 for fixed filters)."""
        from aculink.modem.analytic import nlms_misadjustment, rls_misadjustment

        if self.receiver in ("none", "mmse-dfe"):
            return 0.0
        if self.algorithm == "rls":
            return rls_misadjustment(self.n_adapted, self.forgetting)
        return nlms_misadjustment(self.step)


def response_extent(q_half) -> tuple[int, int, int]:
    """(peak index, precursor and postcursor extent in T/2 samples) of a T/2 response."""
    p = np.abs(np.asarray(q_half)) ** 2
    m = int(np.argmax(p))
    sig = np.flatnonzero(p >= p[m] * 10 ** (-SPAN_THRESHOLD_DB / 10))
    return m, m - int(sig[0]), int(sig[-1]) - m


def _count(name, value, low, high):
    if value is None:
        return None
    if isinstance(value, bool) or int(value) != value:
        raise AculinkError(f"{name} = {value!r}: expected a whole number in [{low}, {high}]")
    v = int(value)
    if not low <= v <= high:
        raise AculinkError(f"{name} = {v}: allowed range is [{low}, {high}]")
    return v


def plan_receiver(q_half, receiver, *, algorithm="rls", n_ff=None, n_fb=None, sparse=False,
                  n_sparse=None, forgetting=None, step=None, symbol_rate_baud=None) -> ReceiverPlan:
    """Spans and settings for ``receiver`` on a channel with T/2 response ``q_half``.

    Raises
    ------
    AculinkError
        For tap counts below 1 (feedforward) or 0 (feedback), a forgetting factor outside
        (0, 1], or an NLMS step outside (0, 2).
    """
    receiver = check_receiver(receiver)
    algorithm = check_algorithm(algorithm)
    m, pre, post = response_extent(q_half)
    pre_s, post_s = math.ceil(pre / 2), math.ceil(post / 2)
    n_ff = _count("n_ff (feedforward taps)", n_ff, 1, 4 * MAX_LE_SYMBOLS)
    n_fb = _count("n_fb (feedback taps)", n_fb, 0, 4 * MAX_FB_SYMBOLS)
    if receiver == "none":
        ff, fb = 1, 0
    elif receiver == "linear":
        k = int(np.clip(pre_s + post_s + 2 * FF_EXTRA_SYMBOLS, 2, MAX_LE_SYMBOLS))
        ff, fb = (2 * k if n_ff is None else n_ff), 0
    else:
        k = int(np.clip(pre_s + FF_EXTRA_SYMBOLS, 2, MAX_FF_SYMBOLS))
        ff = 2 * k if n_ff is None else n_ff
        fb = int(np.clip(post_s + k - pre_s, 1, MAX_FB_SYMBOLS)) if n_fb is None else n_fb
    sparse = bool(sparse) and receiver in ("dfe", "mmse-dfe") and fb > 0
    ns = fb if n_sparse is None else _count("n_sparse (active feedback taps)", n_sparse, 1, max(fb, 1))
    n_adapt = ff + (ns if sparse else fb)
    lam = default_forgetting(n_adapt, symbol_rate_baud) if forgetting is None else check_range(
        "forgetting", forgetting, 0.0, 1.0, low_open=True)
    mu = DEFAULT_NLMS_STEP if step is None else check_range("step_size", step, 0.0, 2.0, low_open=True, high_open=True)
    return ReceiverPlan(receiver, algorithm, ff, fb, sparse, ns, lam, mu, pre_s + post_s, pre_s, post_s)


def feedback_delays(q_half, n_ff: int, start: int, n_fb: int, n_active: int) -> np.ndarray:
    """Sparse feedback: the ``n_active`` past-symbol delays (1..n_fb) that leak most energy
    into the feedforward window (within ``SPARSE_THRESHOLD_DB`` of the largest), sorted."""
    q = np.asarray(q_half)
    j = np.arange(1, n_fb + 1)
    idx = start + np.arange(n_ff)[:, None] + 2 * j[None, :]
    ok = (idx >= 0) & (idx < q.size)
    energy = np.sum(np.where(ok, np.abs(q[np.clip(idx, 0, q.size - 1)]) ** 2, 0.0), axis=0)
    keep = energy >= energy.max(initial=0.0) * 10 ** (-SPARSE_THRESHOLD_DB / 10)
    order = np.argsort(-np.where(keep, energy, -1.0), kind="stable")[:n_active]
    order = order[keep[order]]
    return np.sort(j[order]) if order.size else np.array([1])


def design_for(plan: ReceiverPlan, q_half, q_peak: int, noise_acf, *, fb_delays=None) -> DfeDesign:
    """Finite-length MMSE design with the plan's spans on a T/2 response.

    Window placements: every start whose window holds the strongest sample, searched coarse
    (every fourth) then fine (+-3 around the best) to keep the planner fast.
    """
    n_ff = plan.n_ff
    n_fb = plan.n_fb if plan.receiver in ("dfe", "mmse-dfe") else 0
    if plan.receiver == "none":
        return mmse_dfe_design(q_half, n_ff, 0, stride=2, noise_acf=noise_acf, starts=[q_peak])
    lo, hi = q_peak - n_ff + 1, q_peak

    def run(starts):
        return mmse_dfe_design(q_half, n_ff, n_fb, stride=2, noise_acf=noise_acf, starts=starts,
                               fb_delays=fb_delays)

    coarse = run(range(lo, hi + 1, 4) if hi - lo >= 8 else range(lo, hi + 1))
    if hi - lo < 8:
        return coarse
    fine = run(range(max(lo, coarse.start - 3), min(hi, coarse.start + 3) + 1))
    return fine if fine.mmse <= coarse.mmse else coarse


@dataclass(frozen=True)
class FrameOutput:
    z: np.ndarray           # equalizer outputs, every symbol processed
    decisions: np.ndarray   # labels
    err2: np.ndarray        # |d - z|^2 against training / decisions
    theta: np.ndarray
    ff: np.ndarray
    fb: np.ndarray
    fb_delays: np.ndarray
    restarts: int           # numerical restarts of the RLS recursion
    recoveries: int         # restores of the last healthy state after a divergence
    gave_up_at: int         # symbol at which the receiver gave up on the frame, -1 if it did not

    @property
    def diverged(self) -> bool:
        """The receiver diverged and could not recover within the frame."""
        return self.gave_up_at >= 0


def run_frame(plan: ReceiverPlan, stream, start0: int, n_sym: int, train_labels, points,
              *, design: DfeDesign | None, fb_delays, pll, rls_delta=RLS_DELTA) -> FrameOutput:
    """Run the receiver's kernel over one frame of the normalised T/2 stream.

    ``start0`` is the stream index of symbol 0's window start. Adaptive receivers start from
    zero taps; the fixed receivers use ``design``. Every kernel watches itself for divergence
    (:mod:`aculink.modem._kernels`: a running a-priori error and the tap energy against their
    end-of-training values; the last healthy taps, RLS matrix and loop state are restored up to
    ``MAX_RECOVERIES`` times, then the frame is given up and reported as diverged).
    """
    need = start0 + (n_sym - 1) * 2 + plan.n_ff
    if need > stream.size:
        stream = np.concatenate([stream, np.zeros(need - stream.size, dtype=complex)])
    if start0 < 0:
        stream = np.concatenate([np.zeros(-start0, dtype=complex), stream])
        start0 = 0
    yr = np.ascontiguousarray(stream.real)
    yi = np.ascontiguousarray(stream.imag)
    pr = np.ascontiguousarray(points.real)
    pi = np.ascontiguousarray(points.imag)
    fbd = np.asarray(fb_delays, dtype=np.int64)
    if plan.receiver in ("none", "linear"):
        fbd = np.zeros(0, dtype=np.int64)
    n = plan.n_ff + fbd.size
    out = [np.zeros(n_sym), np.zeros(n_sym), np.zeros(n_sym, np.int64), np.zeros(n_sym), np.zeros(n_sym)]
    info = np.zeros(3, dtype=np.int64)
    train = np.asarray(train_labels, dtype=np.int64)
    k1, k2 = pll
    if plan.receiver in ("none", "mmse-dfe"):
        w = np.concatenate([design.ff, design.fb]) if plan.receiver == "mmse-dfe" else np.ones(1, complex)
        wr, wi = w.real.copy(), w.imag.copy()
        scale = 1.0 / design.bias if plan.receiver == "mmse-dfe" else 1.0
        _kernels.fixed_dfe(yr, yi, start0, 2, n_sym, plan.n_ff, fbd, train, train.size, pr, pi,
                           scale, k1, k2, 0, 0.0, *out, wr, wi, info)
    else:
        wr, wi = np.zeros(n), np.zeros(n)
        pll_start = train.size // 2
        if plan.algorithm == "rls":
            _kernels.rls_dfe(yr, yi, start0, 2, n_sym, plan.n_ff, fbd, train, train.size, pr, pi,
                             plan.forgetting, rls_delta, k1, k2, pll_start, 0.0, *out, wr, wi, info)
        else:
            _kernels.nlms_dfe(yr, yi, start0, 2, n_sym, plan.n_ff, fbd, train, train.size, pr, pi,
                              plan.step, 1e-6, k1, k2, pll_start, 0.0, *out, wr, wi, info)
    w = wr + 1j * wi
    return FrameOutput(out[0] + 1j * out[1], out[2], out[3], out[4], w[:plan.n_ff], w[plan.n_ff:], fbd,
                       int(info[0]), int(info[1]), int(info[2]))
