"""The range-versus-rate table: at each range, the highest workable rate and how it is reached.

One ray fan serves every range of a table (a single ``find_arrivals`` call over all ranges at
the receiver depth). ``verify=True`` re-runs each chosen configuration through the Monte Carlo
link simulator and sets the measured BER, with its 95 % interval, beside the prediction.
"""

from __future__ import annotations

import math

import numpy as np

from aculink.errors import AculinkError, check_range
from aculink.planning import search
from aculink.planning.dataset import to_dataset
from aculink.site.model import LIMITS
from aculink.planning.sweep import candidate_grid, check_geometry

__all__ = ["ROW_KEYS", "VERIFY_KEYS", "VERDICTS", "UNCONFIRMED", "VERIFY_CONFIDENCE", "VERIFY_TOLERANCE_DB",
           "VERIFY_FIRST_BATCHES", "VERIFY_FIRST_LOOK", "VERIFY_CAP_LOOKS", "VERIFY_CAP_BITS", "plan_rates",
           "verify_bit_budget", "verify_plan", "with_verification", "receiver_seed", "run_batches",
           "dispersion", "pooled_interval", "verify_verdict", "plan_rows", "envelope_km_kbps",
           "SHELF_BREAK_M", "check_not_empty"]

#: JSON/CSV keys of a table row, in order (dataset variable or coordinate of the same meaning).
ROW_KEYS = ("range_m", "net_bit_rate_bps", "modulation", "symbol_rate_baud", "receiver",
            "snr_band_db", "snr_out_predicted_db", "ber_predicted", "margin_db", "spread_90_s", "tl_db")
VERIFY_KEYS = ("verify_verdict", "ber_measured", "ber_measured_low", "ber_measured_high", "bits_measured",
               "ber_dispersion", "snr_out_measured_db", "snr_out_repredicted_db", "verify_note")

#: The words of a verification verdict (see :func:`verify_verdict`).
VERDICTS = ("agrees", "optimistic", "fails", "undecided", "error")
#: Verdicts that mean the row's rate was not confirmed by its Monte Carlo check.
UNCONFIRMED = ("optimistic", "fails", "undecided", "error")
#: Confidence of the Clopper-Pearson intervals a verdict reads.
VERIFY_CONFIDENCE = 0.95
#: How far the measured output SNR may fall short of the prediction, dB, before a row whose
#: target is met is called optimistic (read as BER through the modulation's AWGN curve).
VERIFY_TOLERANCE_DB = 1.5
#: Independent Monte Carlo batches at the first look; their spread measures error clustering.
VERIFY_FIRST_BATCHES = 4
#: The first look simulates this multiple of the bits an error-free run needs to show the
#: target is met (``ln(2 / (1 - confidence)) / target``, the zero-error Clopper-Pearson bound).
VERIFY_FIRST_LOOK = 1.2
#: Default cap on the bits simulated per row: this multiple of the zero-error bits ...
VERIFY_CAP_LOOKS = 10.0
#: ... and never more than this many bits, whatever the target.
VERIFY_CAP_BITS = 2_000_000


def plan_rates(site, ranges_m, *, depth_m=None, receivers="all", target_ber=None, margin_db=None,
               verify=False, modulations=None, symbol_rates_baud=None, evaluate=None, seed=0,
               verify_max_bits=None):
    """Highest workable net bit rate at each range, with the configuration that reaches it.

    Parameters
    ----------
    site : Site
    ranges_m : array_like
        Receiver ranges, m, strictly increasing.
    depth_m : float, optional
        Receiver depth, m (default: the site's receiver depth); above the seabed everywhere.
    receivers : str or list
        Receiver names, or "all".
    target_ber, margin_db : float, optional
        Default: the site's ``[modem]`` values.
    verify : bool
        Re-run each chosen configuration by Monte Carlo (seeded) and give a verdict (see
        :func:`verify_plan`).
    modulations, symbol_rates_baud : list, optional
        Candidate lists (default: all modulations; the band-filling ladder).
    evaluate : callable, optional
        The evaluator (default :func:`aculink.planning.search.evaluate_block`).
    seed : int
        Seed of the verification runs; each receiver's runs are seeded from it and the
        receiver's position, so a row's check does not depend on the other ranges asked for.
    verify_max_bits : int, optional
        Most bits simulated per row (default :func:`verify_bit_budget`).

    Returns
    -------
    xarray.Dataset
        Dim ``range`` (plus the candidate axes ``receiver``, ``symbol_rate``, ``modulation``);
        the best configuration per range (``net_bit_rate_bps`` is 0 where nothing is
        workable), the best rate per receiver, and every candidate's prediction. With
        ``verify``: the variables of :data:`VERIFY_KEYS`.

    References
    ----------
    Kilfoyle and Baggeroer (2000), IEEE J. Oceanic Eng. 25(1), 4-27: the rate x range
    envelope of fielded systems the results may be compared with.
    """
    z = float(site.receiver.depth_m) if depth_m is None else check_range("depth_m", depth_m, 0.0, None,
                                                                         low_open=True, unit="m")
    ranges, depths = check_geometry(site, ranges_m, [z], every_range=True)
    grid = candidate_grid(site, receivers=receivers, modulations=modulations,
                          symbol_rates_baud=symbol_rates_baud)
    tb = check_range("target_ber", site.modem.target_ber if target_ber is None else target_ber,
                     0.0, 0.5, low_open=True, high_open=True)
    md = check_range("margin_db", site.modem.margin_db if margin_db is None else margin_db,
                     *LIMITS["modem"]["margin_db"][:2],
                     unit="dB")
    if verify and verify_max_bits is not None:
        _max_bits(verify_max_bits)
    evaluate = search.evaluate_block if evaluate is None else evaluate
    block = search.evaluate_safely(evaluate, site, ranges, depths, grid, tb, md)
    summary = search.summarise_block(block, grid, target_ber=tb, margin_db=md)
    attrs = {"site_name": site.name, "site_text": getattr(site, "text", "") or "",
             "target_ber": tb, "margin_db": md, "receiver_depth_m": z,
             "source_depth_m": float(site.source.depth_m)}
    ds = to_dataset(summary, {"range": ranges, "depth": depths}, grid, attrs=attrs).isel(depth=0)
    if verify:
        ds = verify_plan(site, ds, seed=seed, max_bits=verify_max_bits)
    return ds


def verify_bit_budget(target_ber, confidence=VERIFY_CONFIDENCE) -> tuple:
    """Bits of the first look and the default cap of a verification run at ``target_ber``.

    An error-free run of ``n`` bits has the Clopper-Pearson upper bound ``1 - (a/2)^(1/n)``,
    about ``ln(2/a) / n`` (``a = 1 - confidence``), so it shows the target is met once
    ``n >= ln(2/a) / target``: 36,889 bits at 1e-4 and 95 %.

    Returns
    -------
    (int, int)
        Bits of the first look (:data:`VERIFY_FIRST_LOOK` times that) and the default cap
        (:data:`VERIFY_CAP_LOOKS` times it, at most :data:`VERIFY_CAP_BITS`).

    References
    ----------
    Clopper, C. J. and Pearson, E. S. (1934), Biometrika 26(4), 404-413 (the interval).
    """
    a = 1.0 - confidence
    need = math.log(2.0 / a) / target_ber
    return int(math.ceil(VERIFY_FIRST_LOOK * need)), int(min(VERIFY_CAP_BITS, math.ceil(VERIFY_CAP_LOOKS * need)))


def verify_plan(site, ds, *, seed=0, max_bits=None, simulate=None):
    """Monte Carlo check of each range's chosen configuration, with a seed-stable verdict.

    Each row with a workable rate is re-run through the link simulator on a channel traced for
    that range alone (so the check does not depend on the other ranges of the table), in
    independent batches seeded from ``seed`` and the receiver's position. The run grows (4
    batches, then doubling) until :func:`verify_verdict` can decide whether the target is met,
    or ``max_bits`` is reached ("undecided"). The interval the verdict reads is widened by the
    spread between batches (:func:`pooled_interval`), because decision errors come in bursts
    and whole frames, not one bit at a time.

    Parameters
    ----------
    site : Site
    ds : xarray.Dataset
        A table from :func:`plan_rates`.
    seed : int
    max_bits : int, optional
        Cap per row (default: the second value of :func:`verify_bit_budget`).
    simulate : callable, optional
        Replaces :func:`aculink.modem.simulate_link` (tests pass a deliberately wrong one).

    Returns
    -------
    xarray.Dataset
        ``ds`` with the variables of :data:`VERIFY_KEYS` added.
    """
    from aculink.channel import Channel, link_budget
    from aculink.modem import simulate_link
    from aculink.propagation import find_arrivals

    simulate = simulate_link if simulate is None else simulate
    n = ds.sizes["range"]
    floats = ("ber_measured", "ber_measured_low", "ber_measured_high", "ber_dispersion",
              "snr_out_measured_db", "snr_out_repredicted_db")
    out_v = {k: np.full(n, np.nan) for k in floats}
    bits = np.zeros(n, dtype=np.int64)
    verdicts = np.full(n, "", dtype=object)
    notes = np.full(n, "", dtype=object)
    chosen = np.nonzero(np.nan_to_num(ds["net_bit_rate_bps"].values) > 0)[0]
    z = float(ds.attrs["receiver_depth_m"])
    target = float(ds.attrs["target_ber"])
    first_bits, cap = verify_bit_budget(target)
    cap = cap if max_bits is None else _max_bits(max_bits)
    first_bits = min(first_bits, cap)
    for i in chosen:
        r = float(ds["range"].values[i])
        config = {"symbol_rate_baud": float(ds["best_symbol_rate_baud"].values[i]),
                  "modulation": str(ds["best_modulation"].values[i]),
                  "receiver": str(ds["best_receiver"].values[i])}
        try:
            arrivals = find_arrivals(site, [r], [z], freq_hz=search.band_frequencies(site))
            channel = Channel.from_arrivals(arrivals, site, range_m=r, depth_m=z)
            budget = link_budget(site.with_geometry(range_m=r, depth_m=z), channel)
            run = run_batches(lambda s, n_sym, channel=channel, budget=budget, config=config: simulate(
                channel, budget=budget, rolloff=site.modem.rolloff, n_symbols=n_sym, max_errors=10 ** 12, seed=s,
                **config),
                              receiver_seed(seed, r, z), first_bits, cap, config["modulation"], target)
        except (AculinkError, ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
            verdicts[i], notes[i] = "error", f"Monte Carlo check failed: {search.one_line(exc)}"
            continue
        verdict, note = verify_verdict(run["bit_errors"], run["bits"], float(ds["ber_predicted"].values[i]),
                                       float(ds["snr_out_predicted_db"].values[i]), config["modulation"], target,
                                       dispersion=run["dispersion"])
        lo, hi = pooled_interval(run["bit_errors"], run["bits"], run["dispersion"])
        values = {"ber_measured": run["bit_errors"] / run["bits"], "ber_measured_low": lo,
                  "ber_measured_high": hi, "ber_dispersion": run["dispersion"],
                  "snr_out_measured_db": run["snr_out_db"], "snr_out_repredicted_db": run["snr_predicted_db"]}
        for key, v in values.items():
            out_v[key][i] = v
        bits[i], verdicts[i], notes[i] = run["bits"], verdict, note
    return with_verification(ds, out_v, bits, verdicts, notes, seed)


def _max_bits(value) -> int:
    """The verification cap, checked: a whole number of bits >= 1000."""
    if isinstance(value, bool) or int(value) != value or value < 1000:
        raise AculinkError(f"verify_max_bits = {value!r}: expected a whole number of bits >= 1000")
    return int(value)


def with_verification(ds, values, bits, verdicts, notes, seed):
    """``ds`` with the verification arrays as labelled variables."""
    out = ds.copy()
    long_names = {
        "ber_measured": ("1", "bit error rate measured by Monte Carlo at the chosen configuration"),
        "ber_measured_low": ("1", "lower end of the 95 % Clopper-Pearson interval of the measured BER, "
                             "widened by the spread between batches"),
        "ber_measured_high": ("1", "upper end of the 95 % Clopper-Pearson interval of the measured BER, "
                              "widened by the spread between batches"),
        "ber_dispersion": ("1", "variance of the batch error counts over the binomial one (1: errors "
                           "independent)"),
        "snr_out_measured_db": ("dB", "receiver output SNR measured by Monte Carlo at the chosen configuration"),
        "snr_out_repredicted_db": ("dB", "output SNR predicted on the verification channel (a ray fan for "
                                   "this range alone)"),
    }
    for key, v in values.items():
        units, name = long_names[key]
        out[key] = ("range", v, {"units": units, "long_name": name})
    out["bits_measured"] = ("range", bits, {"units": "1", "long_name": "bits simulated"})
    out["verify_verdict"] = ("range", verdicts, {"long_name": "Monte Carlo verdict: " + ", ".join(VERDICTS)
                                                 + " (empty: no workable rate to check)"})
    out["verify_note"] = ("range", notes, {"long_name": "what the Monte Carlo check found, when it is not "
                                           "a plain agreement"})
    out.attrs["verify_seed"] = int(seed)
    out.attrs["verify_confidence"] = VERIFY_CONFIDENCE
    out.attrs["verify_tolerance_db"] = VERIFY_TOLERANCE_DB
    return out


def receiver_seed(seed, range_m, depth_m) -> np.random.SeedSequence:
    """The verification seed of one receiver: from ``seed`` and its position (to the mm)."""
    return np.random.SeedSequence(int(seed), spawn_key=(int(round(range_m * 1000.0)),
                                                        int(round(depth_m * 1000.0))))


def run_batches(run, seed_seq, first_bits, max_bits, modulation, target_ber) -> dict:
    """Run independent Monte Carlo batches until the target is decided or ``max_bits`` is spent.

    Parameters
    ----------
    run : callable
        ``run(seed, n_symbols) -> LinkResult`` (one batch).
    seed_seq : numpy.random.SeedSequence
        The receiver's seed; batch ``b`` uses its ``b``-th spawned child.
    first_bits, max_bits : int
        Bits of the first look (split over :data:`VERIFY_FIRST_BATCHES` batches) and the cap.
    modulation : str
    target_ber : float

    Returns
    -------
    dict
        ``bit_errors``, ``bits``, ``batches``, ``dispersion`` (see :func:`dispersion`),
        ``snr_out_db`` (pooled: the symbol-weighted mean of the batches' noise-to-signal
        ratios), ``snr_predicted_db``.
    """
    from aculink.modem.constellations import MODULATIONS

    k = MODULATIONS[modulation]
    batch_symbols = max(1, int(math.ceil(first_bits / VERIFY_FIRST_BATCHES / k)))
    errors, counts, nsr, syms = [], [], 0.0, 0
    predicted = float("nan")
    b = 0
    want = VERIFY_FIRST_BATCHES
    while True:
        while b < want:
            child = np.random.SeedSequence(seed_seq.entropy, spawn_key=seed_seq.spawn_key + (b,))
            res = run(int(child.generate_state(1)[0]), batch_symbols)
            errors.append(int(res.bit_errors))
            counts.append(int(res.bits))
            nsr += res.symbols * 10.0 ** (-float(res.snr_out_db) / 10.0)
            syms += int(res.symbols)
            predicted = float(res.snr_predicted_db)
            b += 1
        total_e, total_n = sum(errors), sum(counts)
        phi = dispersion(errors, counts)
        lo, hi = pooled_interval(total_e, total_n, phi)
        if lo > target_ber or hi <= target_ber or total_n >= max_bits:
            break
        # double the run, but not (much) past the cap
        want = b + max(1, min(b, int(math.ceil((max_bits - total_n) / max(1, total_n / b)))))
    return {"bit_errors": total_e, "bits": total_n, "batches": b, "dispersion": phi,
            "snr_out_db": 10.0 * math.log10(syms / nsr) if nsr > 0 else float("inf"),
            "snr_predicted_db": predicted}


def dispersion(errors, bits) -> float:
    """Quasi-binomial dispersion of batch error counts: Pearson chi-square over its dof, >= 1.

    With ``K`` errors in ``N`` bits over ``B`` batches, ``phi = sum((k_b - n_b p)^2 /
    (n_b p (1 - p))) / (B - 1)`` with ``p = K / N``; 1 when the errors are independent bits,
    larger when they come in bursts or whole failed frames. Fewer than two batches or no error
    give 1.

    References
    ----------
    McCullagh, P. and Nelder, J. A. (1989), *Generalized Linear Models*, 2nd ed., Chapman and
    Hall, sec. 4.5 (over-dispersion, the moment estimator of the dispersion parameter).
    """
    k = np.asarray(errors, dtype=float)
    n = np.asarray(bits, dtype=float)
    if k.size < 2 or k.sum() == 0 or k.sum() >= n.sum():
        return 1.0
    p = k.sum() / n.sum()
    chi2 = float(np.sum((k - n * p) ** 2 / (n * p * (1.0 - p))))
    return max(1.0, chi2 / (k.size - 1))


def pooled_interval(bit_errors, bits, dispersion=1.0, confidence=VERIFY_CONFIDENCE) -> tuple:
    """Clopper-Pearson interval of ``bit_errors / bits`` on the effective count ``bits / phi``.

    Dividing both counts by the dispersion ``phi`` keeps the estimate and scales its variance by
    ``phi`` (the quasi-binomial model), so clustered errors widen the interval.

    References
    ----------
    Clopper and Pearson (1934), Biometrika 26(4), 404-413; McCullagh and Nelder (1989), sec. 4.5.
    """
    from aculink.modem.simulate import clopper_pearson

    phi = max(1.0, float(dispersion))
    return clopper_pearson(bit_errors / phi, bits / phi, confidence)


def verify_verdict(bit_errors, bits, ber_predicted, snr_out_db, modulation, target_ber, *,
                   dispersion=1.0, tolerance_db=VERIFY_TOLERANCE_DB) -> tuple:
    """The verdict on one row from its Monte Carlo counts: ``(word, note)``.

    With ``[lo, hi]`` the 95 % interval of :func:`pooled_interval`:

    * ``fails``: ``lo > target``: the measured BER is above the target, beyond doubt;
    * ``undecided``: ``lo <= target < hi``: the run could not tell (cap reached);
    * ``optimistic``: ``hi <= target`` (target met) but ``lo`` is above the BER the prediction
      gives with its output SNR lowered by ``tolerance_db``, and more errors were counted than
      an error-free run's bound allows (so a stray error does not decide it);
    * ``agrees``: ``hi <= target`` otherwise: the target is met and the prediction is within
      the tolerance, or both are below what the bits counted can resolve.

    The note says what was found in words (empty for a plain agreement).
    """
    from aculink.modem.ber import bit_error_rate

    phi = max(1.0, float(dispersion))
    lo, hi = pooled_interval(bit_errors, bits, phi)
    ber = bit_errors / bits
    seen = f"measured BER {ber:.2g} (95 % interval [{lo:.2g}, {hi:.2g}], {bits} bits)"
    if lo > target_ber:
        return "fails", f"{seen} above the target {target_ber:.2g}; predicted {ber_predicted:.2g}"
    if hi > target_ber:
        need = verify_bit_budget(target_ber)[0]
        return "undecided", (f"{seen} cannot tell whether the target {target_ber:.2g} is met (an error-free "
                             f"run needs {need} bits; a BER near the target needs many more)")
    worst = float(bit_error_rate(modulation, 10.0 ** ((snr_out_db - tolerance_db) / 10.0)))
    floor = pooled_interval(0, bits, phi)[1]
    if lo > worst and ber > floor:
        return "optimistic", (f"{seen} meets the target but is above the prediction even "
                              f"{tolerance_db:g} dB lower ({worst:.2g}; predicted {ber_predicted:.2g})")
    return "agrees", ""


def plan_rows(ds) -> list:
    """The table as a list of dicts with the keys of :data:`ROW_KEYS` (None where empty)."""
    rows = []
    get = lambda name, i: ds[name].values[i]  # noqa: E731
    for i in range(ds.sizes["range"]):
        rate = float(get("net_bit_rate_bps", i))
        row = {"range_m": float(ds["range"].values[i]),
               "net_bit_rate_bps": None if math.isnan(rate) else rate}
        workable = not math.isnan(rate) and rate > 0
        for key, name in (("modulation", "best_modulation"), ("receiver", "best_receiver")):
            row[key] = str(get(name, i)) if workable else None
        for key, name in (("symbol_rate_baud", "best_symbol_rate_baud"), ("snr_out_predicted_db", "snr_out_predicted_db"),
                          ("ber_predicted", "ber_predicted"), ("margin_db", "margin_db")):
            row[key] = _number(get(name, i)) if workable else None
        for key in ("snr_band_db", "spread_90_s", "tl_db"):
            row[key] = _number(get(key, i))
        row["error"] = str(get("error", i)) or None
        if "ber_measured" in ds:
            for key in VERIFY_KEYS:
                v = get(key, i)
                row[key] = (str(v) or None) if key in _TEXT_KEYS else _number(v)
            if not workable:
                row.update({k: None for k in VERIFY_KEYS})
        rows.append(row)
    return rows


#: Verification keys holding text rather than numbers.
_TEXT_KEYS = ("verify_verdict", "verify_note")


def _number(v):
    v = float(v)
    return v if math.isfinite(v) else None


def envelope_km_kbps(site) -> tuple:
    """The fielded-system rate x range envelope for the site's water depth, km kbit/s.

    Shallow (40 km kbit/s) when the deepest seabed is shallower than 200 m (the shelf break,
    common practice, no source), deep (100 km kbit/s) otherwise.

    References
    ----------
    Kilfoyle and Baggeroer (2000), IEEE J. Oceanic Eng. 25(1), 4-27.
    """
    from aculink.constants import RATE_RANGE_ENVELOPE_DEEP_KM_KBPS, RATE_RANGE_ENVELOPE_SHALLOW_KM_KBPS

    if site.seabed.max_depth_m < SHELF_BREAK_M:
        return RATE_RANGE_ENVELOPE_SHALLOW_KM_KBPS, "shallow water"
    return RATE_RANGE_ENVELOPE_DEEP_KM_KBPS, "deep water"


#: Depth separating shallow from deep water for the envelope, m (the usual shelf-break depth;
#: common practice, no source).
SHELF_BREAK_M = 200.0


def check_not_empty(ds) -> None:
    """Raise when no range of a table has any result (every point failed)."""
    if np.all(ds["error"].values != ""):
        raise AculinkError(f"no range has a result: {ds['error'].values[0]}")
