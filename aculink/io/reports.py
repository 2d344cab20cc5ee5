"""The text and JSON reports of each stage, in one place (the command line and the demo call them).

A command-line module only parses options, calls the library and prints what a function here
returns; ``aculink demo`` writes the same reports into its folder. Every number goes through
:mod:`aculink.io.formats`, so each report shows the digits its result supports, and every key
follows one vocabulary (see :data:`RENAMED_KEYS` for the keys renamed to it):

* ``snr_band_db``: the sonar-equation SNR in the modem band (received power / noise power);
* ``snr_out_measured_db`` / ``snr_out_predicted_db``: the receiver output SNR measured by a
  Monte Carlo run / predicted by the analytic model;
* ``receiver_range_m``, ``receiver_depth_m``, ``source_depth_m``: the position of a single
  receiver and of the source (a table's or a grid's axis stays ``range_m`` / ``depth_m``);
* ``surface_bounces``, ``bottom_bounces``: reflections at the sea surface and at the seabed
  (text columns ``surface`` and ``bottom``).
"""

from __future__ import annotations

import math

from aculink.cautions import CAUTION, CAUTION_LINE
from aculink.io.formats import ber_text, db_text, depth_text, hz_text, km_text, range_text, seconds_text, sig

#: JSON/CSV keys renamed to the one vocabulary: command -> {old key: new key}. The README's
#: *Renamed keys* note lists the same pairs (a test compares them).
RENAMED_KEYS = {
    "arrivals": {"range_m": "receiver_range_m", "depth_m": "receiver_depth_m"},
    "channel": {"range_m": "receiver_range_m"},
    "link": {"range_m": "receiver_range_m", "snr_in_db": "snr_band_db", "snr_out_db": "snr_out_measured_db",
             "snr_predicted_db": "snr_out_predicted_db"},
    "plan": {"snr_out_db": "snr_out_predicted_db"},
    "sweep": {"snr_out_db": "snr_out_predicted_db", "candidate_snr_out_db": "candidate_snr_out_predicted_db"},
}


def written_lines(paths) -> list:
    """One ``wrote PATH`` line per file a command wrote (the same words in every command)."""
    return [f"wrote {p}" for p in paths if p]


def geometry_text(source_depth_m=None, range_m=None, receiver_depth_m=None) -> str:
    """``"source 20 m deep, receiver at 4 km, 50 m deep"`` (any part may be left out)."""
    parts = []
    if source_depth_m is not None:
        parts.append(f"source {depth_text(source_depth_m)} m deep")
    if range_m is not None and receiver_depth_m is not None:
        parts.append(f"receiver at {range_text(range_m)}, {depth_text(receiver_depth_m)} m deep")
    elif range_m is not None:
        parts.append(f"range {range_text(range_m)}")
    elif receiver_depth_m is not None:
        parts.append(f"receiver {depth_text(receiver_depth_m)} m deep")
    return ", ".join(parts)


def _aligned(rows) -> list:
    width = max(len(k) for k, _ in rows)
    return [f"{k:<{width}}  {v}" for k, v in rows]


# --- rays -------------------------------------------------------------------------------------

def rays_summary(site, fan) -> dict:
    """The JSON object of ``aculink rays``: one entry per ray and the termination counts."""
    import numpy as np

    from aculink.propagation.rays import TERMINATION_MEANINGS

    meanings = TERMINATION_MEANINGS.split()
    term = fan.termination.values
    return {
        "site": site.name, "source_depth_m": fan.attrs["source_depth_m"], "max_range_m": fan.attrs["max_range_m"],
        "rays": [{"launch_angle_deg": float(a), "surface_bounces": int(s), "bottom_bounces": int(b),
                  "caustics": int(c), "termination": meanings[int(t)], "end_range_m": float(e)}
                 for a, s, b, c, t, e in zip(fan.launch_angle_deg.values, fan.surface_bounces.values,
                                             fan.bottom_bounces.values, fan.caustics.values, term,
                                             fan.end_range_m.values)],
        "termination_counts": {meanings[k]: int(np.sum(term == k)) for k in range(len(meanings))},
    }


def format_rays(summary) -> str:
    """The text report of ``aculink rays``."""
    rays = summary["rays"]
    angles = [r["launch_angle_deg"] for r in rays]
    lines = [f"{summary['site']}: {len(rays)} rays from {depth_text(summary['source_depth_m'])} m, "
             f"{min(angles):g} to {max(angles):g} deg, out to {range_text(summary['max_range_m'])}"]
    lines += [f"  {n:5d} {name.replace('_', ' ')}" for name, n in summary["termination_counts"].items() if n]
    surf = [r["surface_bounces"] for r in rays]
    bot = [r["bottom_bounces"] for r in rays]
    lines.append(f"  bounces per ray: surface {min(surf)}-{max(surf)}, bottom {min(bot)}-{max(bot)}")
    return "\n".join(lines)


# --- arrivals ---------------------------------------------------------------------------------

#: Columns of ``arrivals --csv``, in order.
ARRIVALS_CSV_KEYS = ("delay_s", "relative_delay_s", "level_db", "amplitude", "phase_rad", "launch_angle_deg",
                     "arrival_angle_deg", "surface_bounces", "bottom_bounces", "caustics", "path_length_m",
                     "absorption_db")


def arrivals_table(variables, coords, attrs) -> dict:
    """The JSON-ready summary of a one-receiver result of ``solve_arrivals``."""
    import numpy as np

    v = {name: value[1] for name, value in variables.items()}
    n = int(v["n_arrivals"][0, 0])
    delay = v["delay_s"][0, 0, :n]
    amp = v["amplitude"][0, 0, :n, 0]
    first = float(delay[0]) if n else float("nan")
    rows = []
    for i in range(n):
        mag = float(np.abs(amp[i]))
        rows.append({
            "delay_s": float(delay[i]), "relative_delay_s": float(delay[i] - first), "amplitude": mag,
            "phase_rad": float(np.angle(amp[i])),
            "level_db": float(20.0 * np.log10(mag)) if mag > 0 else None,
            "launch_angle_deg": float(v["launch_angle_deg"][0, 0, i]),
            "arrival_angle_deg": float(v["arrival_angle_deg"][0, 0, i]),
            "surface_bounces": int(v["surface_bounces"][0, 0, i]), "bottom_bounces": int(v["bottom_bounces"][0, 0, i]),
            "caustics": int(v["caustics"][0, 0, i]), "path_length_m": float(v["path_length_m"][0, 0, i]),
            "absorption_db": float(v["absorption_db"][0, 0, i, 0]),
        })
    return {"site": attrs["site"], "source_depth_m": float(attrs["source_depth_m"]),
            "receiver_range_m": float(coords["range"][1][0]), "receiver_depth_m": float(coords["depth"][1][0]),
            "frequency_hz": float(coords["frequency"][1][0]), "dynamic_range_db": float(attrs["dynamic_range_db"]),
            "arrivals": rows, "n_dropped": int(v["n_dropped"][0, 0]), "reason": attrs.get("reason")}


def format_arrivals(summary) -> str:
    """An aligned text table of :func:`arrivals_table`'s result, ending with the caution."""
    s = summary
    lines = [f"{s['site']}: {geometry_text(s['source_depth_m'], s['receiver_range_m'], s['receiver_depth_m'])}; "
             f"levels at {hz_text(s['frequency_hz'])}, dB re 1 m (= -TL)"]
    rows = s["arrivals"]
    if not rows:
        lines.append(f"No arrivals: {s['reason']}")
    else:
        lines.append(f"First arrival {rows[0]['delay_s'] * 1000:.3f} ms after transmission; "
                     f"{len(rows)} arrivals within {s['dynamic_range_db']:g} dB, {s['n_dropped']} weaker dropped")
        head = (f"{'#':>3} {'delay ms':>9} {'level dB':>9} {'phase deg':>9} {'launch deg':>10} {'arrive deg':>10} "
                f"{'surface':>7} {'bottom':>6} {'caustics':>8} {'path m':>9} {'absorb dB':>9}")
        lines += [head, "-" * len(head)]
        for i, r in enumerate(rows):
            level = "-" if r["level_db"] is None else f"{r['level_db']:.2f}"
            lines.append(f"{i:3d} {r['relative_delay_s'] * 1000:9.3f} {level:>9} "
                         f"{math.degrees(r['phase_rad']):9.1f} {r['launch_angle_deg']:10.3f} "
                         f"{r['arrival_angle_deg']:10.3f} {r['surface_bounces']:7d} {r['bottom_bounces']:6d} "
                         f"{r['caustics']:8d} {r['path_length_m']:9.1f} {r['absorption_db']:9.2f}")
    lines.append(CAUTION_LINE)
    return "\n".join(lines)


# --- loss -------------------------------------------------------------------------------------

def loss_summary(site, tl) -> dict:
    """The JSON summary of ``aculink loss`` (without the grid), read at the receiver's grid point."""
    import numpy as np

    rx = tl.sel(range=site.receiver.range_m, depth=site.receiver.depth_m, method="nearest")
    return {"site": site.name, "source_depth_m": tl.attrs["source_depth_m"], "frequency_hz": tl.attrs["frequency_hz"],
            "n_ranges": int(tl.sizes["range"]), "n_depths": int(tl.sizes["depth"]),
            "n_beams": int(tl.attrs["n_beams"]),
            "receiver_range_m": float(rx.range), "receiver_depth_m": float(rx.depth),
            "tl_coherent_db_at_receiver": float(rx.tl_coherent_db),
            "tl_incoherent_db_at_receiver": float(rx.tl_incoherent_db),
            "tl_incoherent_db_min": float(np.nanmin(tl.tl_incoherent_db)),
            "tl_incoherent_db_max": float(np.nanmax(tl.tl_incoherent_db))}


def format_loss(summary) -> str:
    """The text report of ``aculink loss``."""
    s = summary
    return "\n".join([
        f"{s['site']}: TL at {hz_text(s['frequency_hz'])}, source {depth_text(s['source_depth_m'])} m deep, "
        f"{s['n_ranges']} x {s['n_depths']} grid points, {s['n_beams']} beams (dB re 1 m)",
        f"  at the receiver grid point ({range_text(s['receiver_range_m'])}, {depth_text(s['receiver_depth_m'])} m): "
        f"coherent {s['tl_coherent_db_at_receiver']:.1f} dB, incoherent {s['tl_incoherent_db_at_receiver']:.1f} dB"])


# --- channel ----------------------------------------------------------------------------------

def channel_report(site, channel, budget) -> dict:
    """The JSON object of ``aculink channel``: statistics, budget terms, units."""
    stats = channel.statistics()
    terms = budget.to_dict()
    out = {
        "site": site.name,
        "source_depth_m": float(site.source.depth_m),
        "receiver_range_m": channel.geometry.get("range_m", float(site.receiver.range_m)),
        "receiver_depth_m": channel.geometry.get("receiver_depth_m", float(site.receiver.depth_m)),
        "carrier_hz": channel.carrier_hz,
        "bandwidth_hz": channel.bandwidth_hz,
        "paths": channel.n_paths,
    }
    for key in ("significant_paths", "significant_db", "first_delay_s", "rms_delay_spread_s", "spread_90_s",
                "spread_99_s", "coherence_bandwidth_hz", "doppler_shift_hz", "doppler_spread_hz", "coherence_time_s",
                "tl_coherent_db", "tl_incoherent_db"):
        out[key] = stats[key]
    for key in ("source_level_db", "source_spectrum_level_db", "tl_db", "noise_band_db", "noise_spectrum_level_db",
                "directivity_index_db", "snr_band_db", "no_path"):
        out[key] = terms[key]
    out["units"] = dict(terms["units"], tl_incoherent_db="dB re 1 m (band-averaged)",
                        rms_delay_spread_s="s", spread_90_s="s (shortest window with 90% of the energy)",
                        spread_99_s="s (shortest window with 99% of the energy)",
                        coherence_bandwidth_hz="Hz (|R(df)| = 0.5; null when it never falls that far)",
                        doppler_spread_hz="Hz (rms)", coherence_time_s="s (|R(dt)| = 0.5; null when never)")
    out["caution"] = CAUTION_LINE
    if budget.reason:
        out["reason"] = budget.reason
    return out


def _or(text_of, value, inf_text):
    """``text_of(value)``, or ``inf_text`` when the value is infinite (a correlation that never falls)."""
    if isinstance(value, float) and math.isinf(value):
        return inf_text
    return text_of(value)


def format_channel(rep: dict) -> str:
    """Aligned text version of :func:`channel_report`."""
    rows = [
        ("Site", rep["site"]),
        ("Geometry", geometry_text(rep["source_depth_m"], rep["receiver_range_m"], rep["receiver_depth_m"])),
        ("Band", f"{hz_text(rep['carrier_hz'])} carrier, {hz_text(rep['bandwidth_hz'])} wide"),
        ("Paths", f"{rep['paths']} ({rep['significant_paths']} within {rep['significant_db']:g} dB of the strongest)"),
    ]
    if rep["no_path"]:
        rows.append(("Result", rep.get("reason", "no path")))
    else:
        first = rep["first_delay_s"]
        rows += [
            ("First arrival", "n/a" if first is None or not math.isfinite(first) else f"{first:.4f} s"),
            ("RMS delay spread", seconds_text(rep["rms_delay_spread_s"])),
            ("90% energy spread", seconds_text(rep["spread_90_s"])),
            ("99% energy spread", seconds_text(rep["spread_99_s"])),
            ("Coherence bandwidth", _or(hz_text, rep["coherence_bandwidth_hz"],
                                        "|R(df)| stays above 0.5 (one arrival dominates)")),
            ("Doppler shift / spread", f"{_hz2(rep['doppler_shift_hz'])} / {_hz2(rep['doppler_spread_hz'])} rms"),
            ("Coherence time", _or(seconds_text, rep["coherence_time_s"],
                                   "|R(dt)| stays above 0.5 (no decorrelation)")),
            ("TL coherent", db_text(rep["tl_coherent_db"], "dB re 1 m")),
            ("TL incoherent", db_text(rep["tl_incoherent_db"], "dB re 1 m")),
        ]
    rows += [
        ("Source level", db_text(rep["source_level_db"], "dB re 1 uPa at 1 m")),
        ("Source spectrum level", db_text(rep["source_spectrum_level_db"], "dB re 1 uPa^2/Hz at 1 m")),
        ("Noise in band", db_text(rep["noise_band_db"], "dB re 1 uPa^2")),
        ("Noise spectrum level", db_text(rep["noise_spectrum_level_db"], "dB re 1 uPa^2/Hz (band mean)")),
        ("Directivity index", db_text(rep["directivity_index_db"])),
        ("Band SNR", "minus infinity (no path)" if rep["no_path"] else db_text(rep["snr_band_db"])),
    ]
    return "\n".join(_aligned(rows) + ["", rep["caution"]])


def _hz2(value) -> str:
    """A Doppler shift or spread, Hz to 0.01 Hz (what a frame-long estimate resolves)."""
    if value is None or not math.isfinite(value):
        return "n/a"
    return f"{value:.2f} Hz"


# --- link -------------------------------------------------------------------------------------

def link_report(site, channel, result) -> dict:
    """The JSON object of ``aculink link``: the result's numbers plus site, geometry and units."""
    out = {"site": site.name if site else None, "channel": channel.name}
    geo = getattr(channel, "geometry", {}) or {}
    for old, new in (("range_m", "receiver_range_m"), ("receiver_depth_m", "receiver_depth_m"),
                     ("source_depth_m", "source_depth_m")):
        if old in geo:
            out[new] = geo[old]
    renamed = RENAMED_KEYS["link"]
    out.update({renamed.get(k, k): v for k, v in result.to_dict().items()})
    out["units"] = {"snr_band_db": "dB (band SNR: received power / noise power in the band)",
                    "es_n0_db": "dB (received Es/N0)", "snr_out_measured_db": "dB (measured, unbiased)",
                    "snr_out_predicted_db": "dB (finite-length MMSE estimate of this receiver)",
                    "net_bit_rate_bps": "bit/s (0 when the link did not close; see failure)",
                    "frame_bit_rate_bps": "bit/s (what the frame would carry if the link closed)",
                    "symbol_rate_baud": "Bd",
                    "doppler_bound": "1 (largest time scale searched: platform and surface motion)",
                    "training_fraction": "1 (training, tail marker and guard over the frame)"}
    out["caution"] = CAUTION_LINE
    return out


def sent_text(rep: dict) -> str:
    """How many symbols went out and why that differs from --symbols (whole frames, early stop)."""
    frames, payload = rep["frames"], rep["n_payload"]
    total = frames * (rep["n_training"] + payload)
    text = f"{frames} frame{'s' if frames != 1 else ''} = {total} symbols ({frames * payload} payload)"
    asked = rep.get("symbols_requested")
    if asked is not None and frames * payload > asked:
        text += f"; --symbols {asked} is rounded up to whole frames of {payload} payload symbols"
    elif asked is not None and frames * payload < asked:
        text += f"; stopped before --symbols {asked} once --max-errors bit errors were counted"
    return text


def format_link(rep: dict) -> str:
    """Aligned text version of :func:`link_report`."""
    rows = [("Site", rep["site"] or "(channel file)"), ("Channel", rep["channel"])]
    if rep.get("receiver_range_m") is not None:
        rows.append(("Geometry", geometry_text(None, rep["receiver_range_m"], rep.get("receiver_depth_m"))))
    rows += [
        ("Signal", f"{rep['modulation']} at {sig(rep['symbol_rate_baud'], 4)} Bd, RRC roll-off {rep['rolloff']:g}"),
        ("Receiver", f"{rep['receiver']}" + (f" ({rep['algorithm']})" if rep["algorithm"] != "none" else "")
         + f", {rep['n_ff']} feedforward (T/2) and {rep['n_fb']} feedback taps"),
        ("Frame", f"{rep['n_training']} training + {rep['n_payload']} payload symbols; overhead "
                  f"{100 * rep['training_fraction']:.1f} %"),
        ("Sent", sent_text(rep)),
        ("Band SNR", db_text(rep["snr_band_db"])),
        ("Es/N0 received", db_text(rep["es_n0_db"])),
        ("Output SNR measured", db_text(rep["snr_out_measured_db"])),
        ("Output SNR predicted", db_text(rep["snr_out_predicted_db"])),
        ("BER", f"{ber_text(rep['ber'], measured=True)}  (95% interval {ber_text(rep['ber_low'], measured=True)} "
                f"to {ber_text(rep['ber_high'], measured=True)}; {rep['bit_errors']} errors in {rep['bits']} bits, "
                f"{rep['frames']} frames)"),
        ("BER predicted", ber_text(rep["ber_predicted"])),
    ]
    if rep["closed"]:
        rows.append(("Link", f"closed: measured BER at or below the target {ber_text(rep['target_ber'])}"))
        rows.append(("Net bit rate", f"{rep['net_bit_rate_bps']:.0f} bit/s"))
    else:
        rows.append(("Link", f"DID NOT CLOSE: {rep['failure']}"))
        rows.append(("Net bit rate", "none (the link did not close)"))
    if rep["frames_lost"] or rep["frames_diverged"] or rep["recoveries"]:
        rows.append(("Frames", f"{rep['frames_lost']} lost, {rep['frames_diverged']} diverged or out of lock, "
                               f"{rep['recoveries']} divergences recovered"))
    dopp = f"{rep['doppler_estimate']:.2e} (time scale; searched within +-{rep['doppler_bound']:.1e})"
    if rep.get("doppler_note"):
        dopp += f"; not applied: {rep['doppler_note']}"
    rows.append(("Doppler estimate", dopp))
    return "\n".join(_aligned(rows) + ["", rep["caution"]])


# --- plan -------------------------------------------------------------------------------------

def plan_heading(site, ds) -> str:
    """The line above the range-versus-rate table."""
    return (f"{site.name}: workable rate against range, "
            f"{geometry_text(ds.attrs['source_depth_m'], None, ds.attrs['receiver_depth_m'])}, "
            f"target BER {ber_text(ds.attrs['target_ber'])} with {ds.attrs['margin_db']:g} dB margin")


def plan_columns(verify: bool) -> list:
    """Columns of the printed table: (row key, two-line heading, format)."""
    cols = [("range_km", "range\nkm", ""), ("rate_kbps", "net rate\nkbit/s", ".3g"),
            ("modulation", "\nmodulation", ""), ("symbol_rate_baud", "symbol rate\nbaud", ".0f"),
            ("receiver", "\nreceiver", ""), ("snr_band_db", "band SNR\ndB", ".1f"),
            ("snr_out_predicted_db", "output SNR\npredicted dB", ".1f"), ("ber_text", "predicted\nBER", ""),
            ("margin_db", "margin\ndB", ".1f"), ("spread_ms", "90% spread\nms", ".3g"),
            ("tl_db", "TL\ndB re 1 m", ".1f")]
    if verify:
        cols += [("ber_measured_text", "measured\nBER", ""), ("verify_verdict", "\ncheck", "")]
    return cols


#: The mark a table puts after a rate its Monte Carlo check did not confirm, by verdict.
RATE_MARKS = {"fails": " !", "optimistic": " ?", "undecided": " ?", "error": " ?"}


def plan_display_row(row: dict) -> dict:
    """A table row in display units (km, kbit/s, ms) and display precision."""
    out = dict(row)
    out["range_km"] = km_text(row["range_m"])
    rate = row["net_bit_rate_bps"]
    out["rate_kbps"] = None if rate is None else rate / 1000.0
    out["spread_ms"] = None if row["spread_90_s"] is None else row["spread_90_s"] * 1000.0
    out["ber_text"] = None if row.get("ber_predicted") is None else ber_text(row["ber_predicted"])
    if row.get("ber_measured") is not None:
        out["ber_measured_text"] = ber_text(row["ber_measured"], measured=True)
    mark = RATE_MARKS.get(row.get("verify_verdict") or "", "")
    if mark and rate:
        # a rate the Monte Carlo check did not confirm never prints without its mark
        out["rate_kbps"] = format(rate / 1000.0, ".3g") + mark
    if rate == 0:
        out["modulation"] = "none workable"
    for key in ("snr_band_db", "tl_db"):
        if out.get(key) is not None and not math.isfinite(out[key]):
            out[key] = None
    return out


def verify_summary(rows) -> list:
    """Lines under a verified table: the count of each verdict, then every unconfirmed row."""
    checked = [r for r in rows if r.get("verify_verdict")]
    counts = {}
    for r in checked:
        counts[r["verify_verdict"]] = counts.get(r["verify_verdict"], 0) + 1
    told = ", ".join(f"{word} {n}" for word, n in counts.items()) or "nothing to check"
    lines = [f"Monte Carlo check of {len(checked)} chosen configurations: {told}."]
    for r in checked:
        if r["verify_note"]:
            lines.append(f"  {range_text(r['range_m'])}{RATE_MARKS.get(r['verify_verdict'], '')}: "
                         f"{r['verify_verdict']}: {r['verify_note']}")
    if any(r["verify_verdict"] == "fails" for r in checked):
        lines.append("  ! the simulated link misses the target BER at this rate: do not plan on it")
    if any(RATE_MARKS.get(r["verify_verdict"]) == " ?" for r in checked):
        lines.append("  ? the rate is not confirmed by the simulation (see the note)")
    return lines


def format_plan(site, ds, rows, *, verify: bool = False) -> str:
    """The whole text report of ``aculink plan``: heading, table, row errors, verdicts, caution."""
    from aculink.io.tables import format_table

    lines = [plan_heading(site, ds), format_table(plan_columns(verify), [plan_display_row(r) for r in rows])]
    lines += [f"  {range_text(r['range_m'])}: {r['error']}" for r in rows if r.get("error")]
    if verify:
        lines += verify_summary(rows)
    lines.append(CAUTION_LINE)
    return "\n".join(lines)


def format_availability(ds, rows) -> str:
    """The availability report (``plan --availability``, the demo): heading, table, reading line."""
    from aculink.io.tables import format_table
    from aculink.planning import availability as av

    return "\n".join([av.availability_heading(ds),
                      format_table(av.availability_columns(ds), [av.availability_display(r) for r in rows]),
                      av.availability_reading(ds, rows)])


def availability_csv_keys(rows) -> tuple:
    """CSV columns of the availability rows: the fixed keys, then every ``rate_at_*`` they carry."""
    from aculink.planning.availability import AVAILABILITY_KEYS

    return AVAILABILITY_KEYS + tuple(k for k in rows[0] if k.startswith("rate_at_"))


def plan_document(site, ds, rows, *, verify: bool = False) -> dict:
    """The JSON object of ``aculink plan``: settings, rows, and what the picture needs to be redrawn
    (each receiver's best rate per row and the fielded-system envelope)."""
    import numpy as np

    from aculink.planning.table import envelope_km_kbps

    env, kind = envelope_km_kbps(site)
    by_rx = ds["net_bit_rate_by_receiver_bps"]
    receivers = [str(r) for r in ds["receiver"].values]
    out_rows = []
    for i, row in enumerate(rows):
        rates = by_rx.isel(range=i).values
        out_rows.append(dict(row, net_bit_rate_by_receiver_bps={
            rx: (float(v) if np.isfinite(v) else None) for rx, v in zip(receivers, rates)}))
    doc = {"kind": "aculink plan", "site": site.name, "receiver_depth_m": ds.attrs["receiver_depth_m"],
           "source_depth_m": ds.attrs["source_depth_m"], "target_ber": ds.attrs["target_ber"],
           "margin_db": ds.attrs["margin_db"], "receivers": receivers,
           "envelope_km_kbps": env, "envelope_water": kind, "caution": CAUTION_LINE, "rows": out_rows}
    if verify:
        doc["verify"] = {"seed": ds.attrs["verify_seed"], "confidence": ds.attrs["verify_confidence"],
                         "tolerance_db": ds.attrs["verify_tolerance_db"]}
    return doc


# --- demo -------------------------------------------------------------------------------------

def demo_conclusion(site, plan_csv, ranges_m, depth_m) -> str:
    """Two sentences a planner can act on, from the table just written (``plan_csv``) and a table
    for the receiver without equalizer alone at the same ``ranges_m`` and ``depth_m``."""
    import csv

    with open(plan_csv, newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    at = min(rows, key=lambda r: abs(float(r["range_m"]) - site.receiver.range_m))
    rng = range_text(float(at["range_m"]))
    if at["net_bit_rate_bps"] and float(at["net_bit_rate_bps"]) > 0:
        first = (f"At {rng} the best receiver ({at['receiver']}) sustains "
                 f"{float(at['net_bit_rate_bps']):,.0f} bit/s with {at['modulation'].upper()} at "
                 f"{float(at['symbol_rate_baud']):,.0f} Bd and {float(at['margin_db']):.1f} dB of margin.")
    else:
        first = f"At {rng} no configuration meets the target BER with the margin."
    return first + " " + no_equalizer_reach(site, ranges_m, depth_m)


def no_equalizer_reach(site, ranges_m, depth_m) -> str:
    """Where the receiver without equalizer stops being workable, from a table for it alone."""
    import numpy as np

    from aculink.planning.table import plan_rates

    ds = plan_rates(site, ranges_m, depth_m=depth_m, receivers=["none"])
    ok = np.nan_to_num(ds["net_bit_rate_bps"].values) > 0
    r = ds["range"].values
    if not ok.any():
        return (f"The receiver without equalizer fails at every range from {range_text(r[0])}: the multipath needs an "
                "equalizer.")
    if ok.all():
        return f"The receiver without equalizer still works out to {range_text(r[-1])} here."
    last = r[np.nonzero(ok)[0][-1]]
    gaps = int(np.sum(~ok[: np.nonzero(ok)[0][-1]]))
    text = f"The receiver without equalizer fails beyond {range_text(last)}"
    if gaps:
        text += f" (and already at {gaps} of the shorter ranges, where the multipath is worse)"
    return text + "."


__all__ = ["RENAMED_KEYS", "CAUTION", "CAUTION_LINE", "written_lines", "geometry_text", "rays_summary",
           "format_rays", "ARRIVALS_CSV_KEYS", "arrivals_table", "format_arrivals", "loss_summary", "format_loss",
           "channel_report", "format_channel", "link_report", "sent_text", "format_link", "plan_heading",
           "plan_columns", "RATE_MARKS", "plan_display_row", "verify_summary", "format_plan", "plan_document",
           "demo_conclusion", "no_equalizer_reach", "format_availability", "availability_csv_keys"]
