"""Numba loops of the receivers: adaptive DFE (RLS, NLMS), fixed-filter DFE, all with a PLL.

Every kernel processes one frame of received samples at ``stride`` samples per symbol
(``stride = 2`` for a T/2 fractionally spaced equalizer). For symbol ``n`` the feedforward
window is ``y[start0 + n stride + r]``, r = 0..Nf-1; the feedback taps multiply the past
decisions ``d[n - fb_delays[i]]``. The equalizer output is

    z_n = a^H (u_n exp(-j theta_n)) - b^H d_past = w^H v_n,   v_n = [u_n exp(-j theta_n); -d_past]

(the phase-coherent structure of Stojanovic, Catipovic and Proakis 1994). Symbols before
``n_train`` are training (decisions are the known symbols); afterwards decisions are the
nearest constellation point. From symbol ``pll_start`` on (adaptive receivers hold the loop
until their taps have converged during the training, else the loop chases the phase of
half-trained taps), the phase estimate follows a second-order loop,
``theta <- theta + K1 Phi + K2 sum Phi``. The detector is the decision-directed one with its
gain normalised by the mean target power, ``Phi = Im(p t^*) / <|t|^2>``, with ``p`` the
feedforward output, ``t = d - b^H(-d_past)`` its target and ``<|t|^2>`` a running mean
(``PLL_POWER_ALPHA``): each symbol is weighted by its magnitude, as in the maximum-likelihood
phase detector (Mengali and D'Andrea, *Synchronization Techniques for Digital Receivers*,
1997, ch. 5, from memory), so the inner points of 16- and 64-QAM, whose angle is the noisiest,
do not dominate the loop, while the loop gain stays 1 whatever the constellation and the
feedback energy (so ``pll_gains`` sets the bandwidth).

Divergence monitor (every kernel, after the training): an exponentially weighted mean of the
a-priori squared error (``MONITOR_ALPHA``) and, every ``MONITOR_EVERY`` symbols, the tap
energy are compared with their values at the end of the training. A frame is *diverging* when
the output is not finite, when the error is ``DIVERGE_RATIO`` above its training level *and*
above the level of random decisions (``d_min^2 / 6``, a uniform error over a square decision
cell of side ``d_min``), when the tap energy has grown by ``TAP_GROWTH``, or when the running
feedforward output power has collapsed by ``FF_COLLAPSE`` (the receiver replays its own
decisions through the feedback filter with a vanishing error: a decision-directed capture). The kernel then
restores the last healthy snapshot (taps, RLS matrix, loop state; taken every
``SNAPSHOT_EVERY`` symbols while the error is within ``HEALTHY_RATIO`` of its training level)
and carries on; after ``MAX_RECOVERIES`` restores in one frame it gives up and records the
symbol (the frame is then reported as diverged). ``info`` receives ``[numerical restarts,
recoveries, symbol given up at or -1]``.

RLS: real and imaginary parts are kept in separate arrays. The inverse-correlation matrix is
updated in the Hermitian rank-one form ``P <- (P - pi pi^H / gamma) / lambda`` with
``pi = P v``, fused with the matrix-vector product ``P v`` of the next symbol (one pass over P
per symbol), and every ``RESYMMETRISE_EVERY`` symbols projected back onto the Hermitian
matrices (in the plain recursion with forgetting factor < 1 the rounding asymmetry grows like
lambda^-n) and bounded: if its trace exceeds the initial ``n / delta``, P is scaled back to
it. Directions the input does not excite (a T/2 window sees no energy outside the band;
feedback of a constant decision) otherwise grow like lambda^-n, and so does the gain; the
bound acts as a leakage that keeps the gain finite (Haykin, *Adaptive Filter Theory*, 4th ed.,
2002, ch. 9 and 13, regularisation and numerical behaviour of exponentially weighted RLS).
"""

from __future__ import annotations

import numpy as np
from numba import njit

_FLAGS = {"nsz", "arcp", "contract", "reassoc"}

#: Symbols between projections of the RLS matrix P back onto the Hermitian matrices.
RESYMMETRISE_EVERY = 16
#: Weight of the newest symbol in the running mean of the PLL target power.
PLL_POWER_ALPHA = 1.0 / 32.0
#: Weight of the newest symbol in the divergence monitor's running mean squared error.
MONITOR_ALPHA = 1.0 / 32.0
#: Symbols between tap-energy checks (and between snapshots: ``SNAPSHOT_EVERY``).
MONITOR_EVERY = 16
SNAPSHOT_EVERY = 64
#: Error rise over the training level (10 dB) that, with random-looking decisions, is divergence.
DIVERGE_RATIO = 10.0
#: Error within this of the training level (about 5 dB) counts as healthy (snapshots are taken).
HEALTHY_RATIO = 3.0
#: Tap energy growth over the end of the training that counts as divergence (30 dB).
TAP_GROWTH = 1e3
#: Feedforward output power falling this far below its training level (10 dB) is divergence:
#: the receiver has stopped listening to the signal and replays its own decisions through the
#: feedback filter (a self-sustaining decision-directed solution with a vanishing error). A
#: working DFE's feedforward output is ``d + sum_j b_j d_(n-j)``, of power ``Es (1 + sum |b_j|^2)``
#: at least Es whatever the channel does, so a 10 dB fall is never a fade.
FF_COLLAPSE = 0.1
#: Restores per frame before the kernel gives up on the frame.
MAX_RECOVERIES = 3
#: Floor of the training-level error (Es units), so an error-free training still has a scale.
MSE_FLOOR = 1e-6

# common practice, no source: the thresholds above were chosen so that the monitor never
# fires on the project's static and slowly varying test channels (tests/modem) and does
# fire within a few hundred symbols on a feedback filter that runs away.


@njit(cache=True, error_model="numpy", inline="always")
def _decide(zr, zi, pts_r, pts_i):
    best = 0
    bd = np.inf
    for m in range(pts_r.size):
        dr = zr - pts_r[m]
        di = zi - pts_i[m]
        d2 = dr * dr + di * di
        if d2 < bd:
            bd = d2
            best = m
    return best


@njit(cache=True, error_model="numpy")
def random_decision_mse(pts_r, pts_i):
    """``d_min^2 / 6``: the mean squared error of a uniform error over a square cell of side
    ``d_min`` (the error level of decisions that carry no information)."""
    dmin2 = np.inf
    for a in range(pts_r.size):
        for b in range(a + 1, pts_r.size):
            dr = pts_r[a] - pts_r[b]
            di = pts_i[a] - pts_i[b]
            d2 = dr * dr + di * di
            if d2 < dmin2:
                dmin2 = d2
    return dmin2 / 6.0


@njit(cache=True, error_model="numpy", inline="always")
def _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i, out_zr, out_zi, out_dec,
                       out_err2, out_theta, dec_r, dec_i):
    """Symbol t's decision (the training symbol while training), error and outputs, shared by
    every equalizer loop; returns (decision re, im, error re, im)."""
    if t < n_train:
        lab = train[t]
    else:
        lab = _decide(zr, zi, pts_r, pts_i)
    dr = pts_r[lab]
    di = pts_i[lab]
    er = dr - zr
    ei = di - zi
    out_zr[t] = zr
    out_zi[t] = zi
    out_dec[t] = lab
    out_err2[t] = er * er + ei * ei
    out_theta[t] = theta
    dec_r[t] = dr
    dec_i[t] = di
    return dr, di, er, ei


@njit(cache=True, error_model="numpy", inline="always")
def _build_regressor(vr, vi, yr, yi, s, n_ff, c, sn, dec_r, dec_i, n, fb_delays):
    """Fill ``v`` for symbol ``n``: the derotated window and the negated past decisions."""
    for r in range(n_ff):
        a = yr[s + r]
        b = yi[s + r]
        vr[r] = a * c + b * sn
        vi[r] = b * c - a * sn
    for i in range(fb_delays.size):
        k = n - fb_delays[i]
        if k >= 0:
            vr[n_ff + i] = -dec_r[k]
            vi[n_ff + i] = -dec_i[k]
        else:
            vr[n_ff + i] = 0.0
            vi[n_ff + i] = 0.0


@njit(cache=True, error_model="numpy", inline="always")
def _split_output(wr, wi, vr, vi, n_ff, n):
    """``w^H v`` split into its feedforward (taps 0..n_ff-1) and feedback parts, and ``|v|^2``
    (NLMS uses it; inlined, the other loops drop it)."""
    ffr = 0.0
    ffi = 0.0
    nrm = 0.0
    for j in range(n_ff):
        ffr += wr[j] * vr[j] + wi[j] * vi[j]
        ffi += wr[j] * vi[j] - wi[j] * vr[j]
        nrm += vr[j] * vr[j] + vi[j] * vi[j]
    fbr = 0.0
    fbi = 0.0
    for j in range(n_ff, n):
        fbr += wr[j] * vr[j] + wi[j] * vi[j]
        fbi += wr[j] * vi[j] - wi[j] * vr[j]
        nrm += vr[j] * vr[j] + vi[j] * vi[j]
    return ffr, ffi, fbr, fbi, nrm


@njit(cache=True, error_model="numpy", inline="always")
def _pll_step(theta, integ, power, ffr, ffi, tr, ti, k1, k2, active):
    """One step of the second-order loop (module docstring); returns (theta, integ, power)."""
    tt = tr * tr + ti * ti
    power += PLL_POWER_ALPHA * (tt - power)
    if active and power > 1e-12:
        phi = (ffi * tr - ffr * ti) / power
        integ += phi
        theta += k1 * phi + k2 * integ
    return theta, integ, power


@njit(cache=True, error_model="numpy", inline="always")
def _tap_energy(wr, wi):
    acc = 0.0
    for j in range(wr.size):
        acc += wr[j] * wr[j] + wi[j] * wi[j]
    return acc


@njit(cache=True, error_model="numpy", inline="always")
def _monitor(t, n_train, e2, p2, state, rand_mse, wr, wi):
    """Divergence monitor (module docstring). ``e2`` is the a-priori squared error, ``p2`` the
    squared feedforward output; ``state`` (float64, 6) holds the running error, the running
    feedforward power, the divergence level of the error, the training-end error, feedforward
    power and tap energy. Returns 0 = nothing to do, 1 = healthy snapshot point, 2 = diverging."""
    mse = state[0] + MONITOR_ALPHA * (e2 - state[0])
    ffp = state[1] + MONITOR_ALPHA * (p2 - state[1])
    state[0] = mse
    state[1] = ffp
    if t < n_train - 1:
        return 0
    k = t - n_train + 1
    if k == 0:
        ref = max(mse, MSE_FLOOR)
        state[2] = max(DIVERGE_RATIO * ref, rand_mse)
        state[3] = ref
        state[4] = ffp
        state[5] = _tap_energy(wr, wi)
        return 1
    # not (x <= limit) also catches a non-finite output
    if not mse <= state[2] or not ffp >= FF_COLLAPSE * state[4]:
        return 2
    if k % MONITOR_EVERY != 0:
        return 0
    w2 = _tap_energy(wr, wi)
    if not w2 <= TAP_GROWTH * state[5]:
        return 2
    if (k % SNAPSHOT_EVERY == 0 and mse <= HEALTHY_RATIO * state[3] and w2 <= np.sqrt(TAP_GROWTH) * state[5]
            and ffp >= np.sqrt(FF_COLLAPSE) * state[4]):
        return 1
    return 0


@njit(cache=True, error_model="numpy", inline="always")
def _save_loop(snap, theta, integ, t):
    """Keep the loop state of a healthy symbol (phase, integrator, when) for a later restore."""
    snap[0] = theta
    snap[1] = integ
    snap[2] = t


@njit(cache=True, error_model="numpy", inline="always")
def _restore_loop(snap, mon, k2, t):
    """The loop state saved by :func:`_save_loop`, its phase carried forward at the saved
    frequency to symbol ``t``; the divergence monitor restarts from its healthy averages."""
    mon[0] = mon[3]
    mon[1] = mon[4]
    return snap[0] + k2 * snap[1] * (t - snap[2]), snap[1]


@njit(cache=True, error_model="numpy", inline="always")
def _copy(src, dst):
    for j in range(src.size):
        dst[j] = src[j]


@njit(cache=True, error_model="numpy", inline="always")
def _watch(t, n_train, e2, p2, mon, rand_mse, wr, wi, snap_wr, snap_wi, snap, theta, integ, k2, recoveries,
           gave_up):
    """The divergence monitor's step shared by every loop: on a healthy symbol keep the taps and
    the loop state, on a diverging one restore them (or give up after ``MAX_RECOVERIES``).
    Returns ``(theta, integ, recoveries, gave_up, event)`` with event 0 = nothing, 1 = snapshot
    taken (the RLS loop then keeps its matrix too), 2 = restored."""
    if gave_up >= 0:
        return theta, integ, recoveries, gave_up, 0
    code = _monitor(t, n_train, e2, p2, mon, rand_mse, wr, wi)
    if code == 1:
        _copy(wr, snap_wr)
        _copy(wi, snap_wi)
        _save_loop(snap, theta, integ, t)
        return theta, integ, recoveries, gave_up, 1
    if code == 2:
        if recoveries >= MAX_RECOVERIES:
            return theta, integ, recoveries, t, 0
        _copy(snap_wr, wr)
        _copy(snap_wi, wi)
        theta, integ = _restore_loop(snap, mon, k2, t)
        return theta, integ, recoveries + 1, gave_up, 2
    return theta, integ, recoveries, gave_up, 0


@njit(cache=True, error_model="numpy", inline="always")
def _matvec(pr, pim, vr, vi, outr, outi):
    """``out = P v`` for complex P and v held as real and imaginary parts."""
    n = vr.size
    for i in range(n):
        accr = 0.0
        acci = 0.0
        for j in range(n):
            accr += pr[i, j] * vr[j] - pim[i, j] * vi[j]
            acci += pr[i, j] * vi[j] + pim[i, j] * vr[j]
        outr[i] = accr
        outi[i] = acci


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def rls_dfe(yr, yi, start0, stride, n_sym, n_ff, fb_delays, train, n_train, pts_r, pts_i,
            lam, delta, k1, k2, pll_start, theta0, out_zr, out_zi, out_dec, out_err2, out_theta, wr, wi, info):
    """Exponentially weighted RLS DFE with a second-order PLL and the divergence monitor (see
    the module docstring).

    ``wr, wi`` hold the initial taps (normally zero) and receive the final ones; ``info``
    (int64, 3) receives ``[restarts, recoveries, given up at]``. Returns the number of times
    the recursion had to be restarted (0 in normal operation).
    """
    n = n_ff + fb_delays.size
    pr = np.zeros((n, n))
    pim = np.zeros((n, n))
    for i in range(n):
        pr[i, i] = 1.0 / delta
    p_cap = n / delta
    vr = np.zeros(n)
    vi = np.zeros(n)
    qr = np.zeros(n)  # pi = P v for the current symbol
    qi = np.zeros(n)
    nqr = np.zeros(n)
    nqi = np.zeros(n)
    dec_r = np.zeros(n_sym)
    dec_i = np.zeros(n_sym)
    snap_wr = wr.copy()
    snap_wi = wi.copy()
    snap_pr = pr.copy()
    snap_pi = pim.copy()
    snap = np.zeros(3)  # theta, integ, symbol
    il = 1.0 / lam
    theta = theta0
    integ = 0.0
    power = 1.0
    mon = np.zeros(6)
    mon[0] = 1.0
    mon[1] = 1.0
    rand_mse = random_decision_mse(pts_r, pts_i)
    restarts = 0
    recoveries = 0
    gave_up = -1
    _build_regressor(vr, vi, yr, yi, start0, n_ff, np.cos(theta), np.sin(theta), dec_r, dec_i, 0, fb_delays)
    for i in range(n):
        qr[i] = pr[i, i] * vr[i]
        qi[i] = pr[i, i] * vi[i]
    for t in range(n_sym):
        ffr, ffi, fbr, fbi, _ = _split_output(wr, wi, vr, vi, n_ff, n)
        zr = ffr + fbr
        zi = ffi + fbi
        dr, di, er, ei = _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i,
                                            out_zr, out_zi, out_dec, out_err2, out_theta, dec_r, dec_i)
        # gain: gamma = lambda + v^H P v (real for Hermitian P)
        g = lam
        for j in range(n):
            g += vr[j] * qr[j] + vi[j] * qi[j]
        if not (g > 0.0) or not np.isfinite(g):
            restarts += 1
            for i in range(n):
                for j in range(n):
                    pr[i, j] = 0.0
                    pim[i, j] = 0.0
                pr[i, i] = 1.0 / delta
            g = lam
            for j in range(n):
                qr[j] = vr[j] / delta
                qi[j] = vi[j] / delta
                g += vr[j] * qr[j] + vi[j] * qi[j]
        ig = 1.0 / g
        # w <- w + k e*, k = P v / gamma
        for j in range(n):
            kr = qr[j] * ig
            ki = qi[j] * ig
            wr[j] += kr * er + ki * ei
            wi[j] += ki * er - kr * ei
        theta, integ, power = _pll_step(theta, integ, power, ffr, ffi, dr - fbr, di - fbi, k1, k2, t >= pll_start)
        theta, integ, recoveries, gave_up, event = _watch(t, n_train, er * er + ei * ei, ffr * ffr + ffi * ffi,
                                                          mon, rand_mse, wr, wi, snap_wr, snap_wi, snap, theta,
                                                          integ, k2, recoveries, gave_up)
        snap_p = event == 1  # P is copied once this symbol's update of it is done
        if event == 2:
            pr[:, :] = snap_pr
            pim[:, :] = snap_pi
        if t + 1 == n_sym:
            break
        _build_regressor(vr, vi, yr, yi, start0 + (t + 1) * stride, n_ff, np.cos(theta), np.sin(theta),
                         dec_r, dec_i, t + 1, fb_delays)
        if event == 2:
            _matvec(pr, pim, vr, vi, qr, qi)
            continue
        # fused: P <- (P - pi pi^H / gamma) / lambda, and P v_next, in one pass over P
        for i in range(n):
            ar = qr[i] * ig
            ai = qi[i] * ig
            accr = 0.0
            acci = 0.0
            for j in range(n):
                xr = (pr[i, j] - (ar * qr[j] + ai * qi[j])) * il
                xi = (pim[i, j] - (ai * qr[j] - ar * qi[j])) * il
                pr[i, j] = xr
                pim[i, j] = xi
                accr += xr * vr[j] - xi * vi[j]
                acci += xr * vi[j] + xi * vr[j]
            nqr[i] = accr
            nqi[i] = acci
        if (t + 1) % RESYMMETRISE_EVERY == 0:
            # the rounding's anti-Hermitian part grows like lambda^-n: project it out
            trace = 0.0
            for i in range(n):
                pim[i, i] = 0.0
                trace += pr[i, i]
                for j in range(i + 1, n):
                    a = 0.5 * (pr[i, j] + pr[j, i])
                    b = 0.5 * (pim[i, j] - pim[j, i])
                    pr[i, j] = a
                    pr[j, i] = a
                    pim[i, j] = b
                    pim[j, i] = -b
            if trace > p_cap:  # unexcited directions growing: leak back to the initial size
                s = p_cap / trace
                for i in range(n):
                    for j in range(n):
                        pr[i, j] *= s
                        pim[i, j] *= s
            _matvec(pr, pim, vr, vi, nqr, nqi)
        _copy(nqr, qr)
        _copy(nqi, qi)
        if snap_p:
            snap_pr[:, :] = pr
            snap_pi[:, :] = pim
            snap_p = False
    info[0] = restarts
    info[1] = recoveries
    info[2] = gave_up
    return restarts


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def nlms_dfe(yr, yi, start0, stride, n_sym, n_ff, fb_delays, train, n_train, pts_r, pts_i,
             mu, eps, k1, k2, pll_start, theta0, out_zr, out_zi, out_dec, out_err2, out_theta, wr, wi, info):
    """Normalized LMS DFE with a second-order PLL: ``w <- w + mu v e* / (eps + |v|^2)``, and the
    divergence monitor (module docstring; the snapshot holds the taps and the loop state)."""
    n = n_ff + fb_delays.size
    vr = np.zeros(n)
    vi = np.zeros(n)
    dec_r = np.zeros(n_sym)
    dec_i = np.zeros(n_sym)
    snap_wr = wr.copy()
    snap_wi = wi.copy()
    snap = np.zeros(3)
    theta = theta0
    integ = 0.0
    power = 1.0
    mon = np.zeros(6)
    mon[0] = 1.0
    mon[1] = 1.0
    rand_mse = random_decision_mse(pts_r, pts_i)
    recoveries = 0
    gave_up = -1
    for t in range(n_sym):
        _build_regressor(vr, vi, yr, yi, start0 + t * stride, n_ff, np.cos(theta), np.sin(theta),
                         dec_r, dec_i, t, fb_delays)
        ffr, ffi, fbr, fbi, nrm = _split_output(wr, wi, vr, vi, n_ff, n)
        nrm += eps
        zr = ffr + fbr
        zi = ffi + fbi
        dr, di, er, ei = _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i,
                                            out_zr, out_zi, out_dec, out_err2, out_theta, dec_r, dec_i)
        s = mu / nrm
        for j in range(n):
            wr[j] += s * (vr[j] * er + vi[j] * ei)
            wi[j] += s * (vi[j] * er - vr[j] * ei)
        theta, integ, power = _pll_step(theta, integ, power, ffr, ffi, dr - fbr, di - fbi, k1, k2, t >= pll_start)
        theta, integ, recoveries, gave_up, _ = _watch(t, n_train, er * er + ei * ei, ffr * ffr + ffi * ffi, mon,
                                                      rand_mse, wr, wi, snap_wr, snap_wi, snap, theta, integ, k2,
                                                      recoveries, gave_up)
    info[0] = 0
    info[1] = recoveries
    info[2] = gave_up
    return 0


@njit(cache=True, error_model="numpy", fastmath=_FLAGS)
def fixed_dfe(yr, yi, start0, stride, n_sym, n_ff, fb_delays, train, n_train, pts_r, pts_i,
              scale, k1, k2, pll_start, theta0, out_zr, out_zi, out_dec, out_err2, out_theta, wr, wi, info):
    """A DFE with fixed taps ``w`` (e.g. a designed MMSE-DFE) and a second-order PLL.

    The output is multiplied by ``scale`` (1/bias for unbiased decisions). With one
    feedforward tap and no feedback it is the plain symbol-by-symbol receiver. The divergence
    monitor watches for a lost loop (the taps cannot diverge) and restores the loop state.
    """
    n = n_ff + fb_delays.size
    vr = np.zeros(n)
    vi = np.zeros(n)
    dec_r = np.zeros(n_sym)
    dec_i = np.zeros(n_sym)
    snap_wr = wr.copy()  # the taps are fixed: the shared monitor step copies them back unchanged
    snap_wi = wi.copy()
    snap = np.zeros(3)
    theta = theta0
    integ = 0.0
    power = 1.0
    mon = np.zeros(6)
    mon[0] = 1.0
    mon[1] = 1.0
    rand_mse = random_decision_mse(pts_r, pts_i)
    recoveries = 0
    gave_up = -1
    for t in range(n_sym):
        _build_regressor(vr, vi, yr, yi, start0 + t * stride, n_ff, np.cos(theta), np.sin(theta),
                         dec_r, dec_i, t, fb_delays)
        ffr, ffi, fbr, fbi, _ = _split_output(wr, wi, vr, vi, n_ff, n)
        ffr *= scale
        ffi *= scale
        fbr *= scale
        fbi *= scale
        zr = ffr + fbr
        zi = ffi + fbi
        dr, di, er, ei = _decide_and_record(t, zr, zi, theta, n_train, train, pts_r, pts_i,
                                            out_zr, out_zi, out_dec, out_err2, out_theta, dec_r, dec_i)
        theta, integ, power = _pll_step(theta, integ, power, ffr, ffi, dr - fbr, di - fbi, k1, k2, t >= pll_start)
        theta, integ, recoveries, gave_up, _ = _watch(t, n_train, er * er + ei * ei, ffr * ffr + ffi * ffi, mon,
                                                      rand_mse, wr, wi, snap_wr, snap_wi, snap, theta, integ, k2,
                                                      recoveries, gave_up)
    info[0] = 0
    info[1] = recoveries
    info[2] = gave_up
    return 0


@njit(cache=True, error_model="numpy")
def gram_update(base, c, out):
    """``out = base - c c^H`` for complex ``c`` (n, k): the MMSE-DFE matrix without the
    fed-back columns. Single-threaded on purpose: the matrices are small (n <= 128) and a
    threaded BLAS on a shared two-core host spends more time synchronising than computing."""
    n, k = c.shape
    for i in range(n):
        for j in range(n):
            acc = base[i, j]
            for m in range(k):
                acc -= c[i, m] * np.conj(c[j, m])
            out[i, j] = acc


@njit(cache=True, error_model="numpy")
def cholesky_solve(a, b, x):
    """Solve ``a x = b`` for Hermitian positive definite ``a`` by Cholesky (``a`` is
    overwritten with L). Returns False when ``a`` is not positive definite."""
    n = a.shape[0]
    for j in range(n):
        d = a[j, j].real
        for k in range(j):
            d -= a[j, k].real * a[j, k].real + a[j, k].imag * a[j, k].imag
        if not d > 0.0:
            return False
        d = np.sqrt(d)
        a[j, j] = d
        for i in range(j + 1, n):
            acc = a[i, j]
            for k in range(j):
                acc -= a[i, k] * np.conj(a[j, k])
            a[i, j] = acc / d
    for i in range(n):  # L y = b
        acc = b[i]
        for k in range(i):
            acc -= a[i, k] * x[k]
        x[i] = acc / a[i, i].real
    for i in range(n - 1, -1, -1):  # L^H x = y
        acc = x[i]
        for k in range(i + 1, n):
            acc -= np.conj(a[k, i]) * x[k]
        x[i] = acc / a[i, i].real
    return True
