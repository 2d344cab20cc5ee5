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
from aculink.planning.sweep import candidate_grid, check_geometry

#: JSON/CSV keys of a table row, in order (dataset variable or coordinate of the same meaning).
ROW_KEYS = ("range_m", "net_bit_rate_bps", "modulation", "symbol_rate_baud", "receiver",
            "snr_band_db", "snr_out_db", "ber_predicted", "margin_db", "spread_90_s", "tl_db")
VERIFY_KEYS = ("ber_measured", "ber_measured_low", "ber_measured_high", "bits_measured",
               "snr_out_measured_db", "verify_note")

#: Monte Carlo length of a verification run: enough symbols to see BER near 1e-3 .. 1e-4.
VERIFY_SYMBOLS = 20000
VERIFY_MAX_ERRORS = 200


def plan_rates(site, ranges_m, *, depth_m=None, receivers="all", target_ber=None, margin_db=None,
               verify=False, modulations=None, symbol_rates_baud=None, evaluate=None, seed=0,
               verify_symbols=VERIFY_SYMBOLS):
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
        Re-run each chosen configuration by Monte Carlo (seeded) and flag disagreement.
    modulations, symbol_rates_baud : list, optional
        Candidate lists (default: all modulations; the band-filling ladder).
    evaluate : callable, optional
        The evaluator (default :func:`aculink.planning.search.evaluate_block`).
    seed : int
        Seed of the first verification run (range k uses ``seed + k``).
    verify_symbols : int
        Symbols per verification run.

    Returns
    -------
    xarray.Dataset
        Dim ``range`` (plus the candidate axes ``receiver``, ``symbol_rate``, ``modulation``);
        the best configuration per range (``net_bit_rate_bps`` is 0 where nothing is
        workable), the best rate per receiver, and every candidate's prediction. With
        ``verify``: ``ber_measured``, ``ber_measured_low``, ``ber_measured_high``,
        ``verify_note``.

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
    md = check_range("margin_db", site.modem.margin_db if margin_db is None else margin_db, 0.0, 60.0,
                     unit="dB")
    evaluate = search.evaluate_block if evaluate is None else evaluate
    block = search.evaluate_safely(evaluate, site, ranges, depths, grid, tb, md)
    summary = search.summarise_block(block, grid, target_ber=tb, margin_db=md)
    attrs = {"site_name": site.name, "site_text": getattr(site, "text", "") or "",
             "target_ber": tb, "margin_db": md, "receiver_depth_m": z,
             "source_depth_m": float(site.source.depth_m)}
    ds = to_dataset(summary, {"range": ranges, "depth": depths}, grid, attrs=attrs).isel(depth=0)
    if verify:
        ds = verify_plan(site, ds, seed=seed, n_symbols=verify_symbols)
    return ds


def verify_plan(site, ds, *, seed=0, n_symbols=VERIFY_SYMBOLS):
    """Monte Carlo check of each range's chosen configuration (see :func:`plan_rates`).

    A row is flagged when the predicted BER lies outside the 95 % Clopper-Pearson interval of
    the measured BER, or the measured BER is above the target.
    """
    from aculink.channel import Channel, link_budget
    from aculink.modem import simulate_link
    from aculink.propagation import find_arrivals

    n = ds.sizes["range"]
    measured = {k: np.full(n, np.nan) for k in ("ber_measured", "ber_measured_low", "ber_measured_high")}
    bits = np.zeros(n, dtype=np.int64)
    snr_measured = np.full(n, np.nan)
    notes = np.full(n, "", dtype=object)
    chosen = np.nonzero(np.nan_to_num(ds["net_bit_rate_bps"].values) > 0)[0]
    z = float(ds.attrs["receiver_depth_m"])
    target = float(ds.attrs["target_ber"])
    if chosen.size:
        ranges = ds["range"].values[chosen]
        arrivals = find_arrivals(site, ranges, [z], freq_hz=search.band_frequencies(site))
        for k, i in enumerate(chosen):
            r = float(ds["range"].values[i])
            channel = Channel.from_arrivals(arrivals.isel(range=[k]), site, range_m=r, depth_m=z)
            budget = link_budget(site.with_geometry(range_m=r, depth_m=z), channel)
            res = simulate_link(channel, symbol_rate_baud=float(ds["best_symbol_rate_baud"].values[i]),
                                modulation=str(ds["best_modulation"].values[i]),
                                receiver=str(ds["best_receiver"].values[i]), budget=budget,
                                rolloff=site.modem.rolloff,
                                n_symbols=int(n_symbols), max_errors=VERIFY_MAX_ERRORS,
                                seed=int(seed) + int(i))
            measured["ber_measured"][i] = float(res.ber)
            measured["ber_measured_low"][i] = float(res.ber_low)
            measured["ber_measured_high"][i] = float(res.ber_high)
            bits[i] = int(res.bits)
            snr_measured[i] = float(res.snr_out_db)
            notes[i] = verify_note(float(ds["ber_predicted"].values[i]), res.ber, res.ber_low,
                                   res.ber_high, target)
    out = ds.copy()
    attrs = {"ber_measured": "bit error rate measured by Monte Carlo at the chosen configuration",
             "ber_measured_low": "lower end of the 95 % Clopper-Pearson interval of the measured BER",
             "ber_measured_high": "upper end of the 95 % Clopper-Pearson interval of the measured BER"}
    for key, values in measured.items():
        out[key] = ("range", values, {"units": "1", "long_name": attrs[key]})
    out["bits_measured"] = ("range", bits, {"units": "1", "long_name": "bits simulated"})
    out["snr_out_measured_db"] = ("range", snr_measured, {"units": "dB", "long_name": "receiver output "
                                  "SNR measured by Monte Carlo at the chosen configuration"})
    out["verify_note"] = ("range", notes, {"long_name": "disagreement between prediction and "
                                           "Monte Carlo (empty when they agree)"})
    out.attrs["verify_seed"] = int(seed)
    return out


def verify_note(ber_predicted, ber, ber_low, ber_high, target_ber) -> str:
    """Empty when the Monte Carlo run agrees with the prediction, else what disagrees."""
    notes = []
    if not (ber_low <= ber_predicted <= ber_high):
        notes.append(f"predicted BER {ber_predicted:.2g} outside the Monte Carlo 95 % interval "
                     f"[{ber_low:.2g}, {ber_high:.2g}]")
    if ber > target_ber:
        notes.append(f"measured BER {ber:.2g} above the target {target_ber:.2g}")
    return "; ".join(notes)


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
        for key, name in (("symbol_rate_baud", "best_symbol_rate_baud"), ("snr_out_db", "snr_out_db"),
                          ("ber_predicted", "ber_predicted"), ("margin_db", "margin_db")):
            row[key] = _number(get(name, i)) if workable else None
        for key in ("snr_band_db", "spread_90_s", "tl_db"):
            row[key] = _number(get(key, i))
        row["error"] = str(get("error", i)) or None
        if "ber_measured" in ds:
            for key in VERIFY_KEYS:
                v = get(key, i)
                row[key] = (str(v) or None) if key == "verify_note" else _number(v)
            if not workable:
                row.update({k: None for k in VERIFY_KEYS})
        rows.append(row)
    return rows


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
