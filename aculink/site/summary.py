"""The practitioner's summary of a site: what to check before trusting any prediction.

:func:`summarize_site` gathers the facts as a plain dict whose keys carry their units (so it
prints as JSON unchanged); :func:`format_summary` renders the same dict as text. The profile
features (surface duct, sound-channel axis, critical depth) are found by
:func:`profile_features` on the smooth profile the ray tracer uses.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from aculink.cautions import CAUTION_LINE as CAUTION

__all__ = ["profile_features", "summarize_site", "format_summary", "CAUTION", "GRAZING_ANGLES_DEG"]

#: Grazing angles at which the bottom loss is listed, degrees.
GRAZING_ANGLES_DEG = (5.0, 10.0, 20.0, 30.0, 45.0, 60.0, 90.0)
#: Grazing angles at which the surface (Eckart) coherent loss is listed, degrees.
SURFACE_ANGLES_DEG = (5.0, 10.0, 20.0)
#: A speed feature smaller than this is treated as noise in the profile, m/s (a CTD's sound
#: speed is good to about 0.1 m/s; common practice, no source).
FEATURE_TOLERANCE_MPS = 0.2
#: Total speed spread below which a profile is called near isovelocity, m/s (common
#: practice, no source).
ISOVELOCITY_SPREAD_MPS = 1.0


def _grid(bottom_m: float) -> np.ndarray:
    n = int(min(max(2001, math.ceil(bottom_m / 0.5) + 1), 40001))
    return np.linspace(0.0, bottom_m, n)


def _refine_min(func, z, i):
    """Depth of the minimum of ``func`` near grid node ``i`` (between its neighbours)."""
    lo, hi = z[max(i - 1, 0)], z[min(i + 1, z.size - 1)]
    res = minimize_scalar(lambda x: float(func(x)), bounds=(lo, hi), method="bounded",
                          options={"xatol": 1e-4})
    return float(res.x) if res.fun <= float(func(z[i])) else float(z[i])


def profile_features(profile, bottom_m: float) -> dict:
    """Surface duct, sound-channel axis and critical depth of a profile down to ``bottom_m``.

    Definitions (the usual oceanographic ones):

    * surface duct (mixed-layer / sonic layer depth): the depth of the first speed maximum
      below the surface, when the speed rises from the surface to it and falls below it;
    * sound-channel axis: the depth of the speed minimum below the surface duct (or below
      the surface), when the speed rises again between it and the seabed;
    * critical depth: the depth below the axis where the speed again equals the highest speed
      above the axis (the surface speed when there is no duct); the depth excess is the
      water depth below it.

    Features smaller than :data:`FEATURE_TOLERANCE_MPS` are ignored.

    Parameters
    ----------
    profile : SoundSpeedProfile
    bottom_m : float
        Deepest water depth considered, m.

    Returns
    -------
    dict
        ``regime`` (text), ``surface_duct_depth_m``, ``channel_axis_depth_m``,
        ``channel_axis_speed_mps``, ``critical_depth_m``, ``depth_excess_m`` (None where the
        feature is absent), ``speed_min_mps``, ``speed_max_mps``, ``surface_speed_mps``,
        ``bottom_speed_mps``.

    References
    ----------
    R. J. Urick, Principles of Underwater Sound, 3rd ed. (1983), ch. 5 (mixed layer, deep
    sound channel, critical depth and depth excess; chapter from memory); W. H. Munk, J. Acoust. Soc. Am. 55,
    220-226 (1974) for the canonical axis at 1300 m.
    """
    z = _grid(bottom_m)
    c = profile.speed(z)
    speed = profile.speed
    tol = FEATURE_TOLERANCE_MPS
    out = {"speed_min_mps": float(c.min()), "speed_max_mps": float(c.max()),
           "surface_speed_mps": float(c[0]), "bottom_speed_mps": float(c[-1]),
           "surface_duct_depth_m": None, "channel_axis_depth_m": None, "channel_axis_speed_mps": None,
           "critical_depth_m": None, "depth_excess_m": None}

    # surface duct: the running maximum from the surface, kept while the speed has not dropped
    # by more than the tolerance below it
    top = 0
    running = np.maximum.accumulate(c)
    drop = np.nonzero(running - c > tol)[0]
    if drop.size:
        first_drop = int(drop[0])
        peak = int(np.argmax(c[:first_drop + 1]))
        if c[peak] - c[0] > tol and peak > 0:
            out["surface_duct_depth_m"] = _refine_min(lambda x: -speed(x), z, peak)
            top = peak

    # channel axis: the minimum below the duct, with the speed rising again beneath it
    below = c[top:]
    j = top + int(np.argmin(below))
    if c[top] - c[j] > tol and c[j:].max() - c[j] > tol and j < z.size - 1:
        axis = _refine_min(speed, z, j)
        out["channel_axis_depth_m"] = axis
        out["channel_axis_speed_mps"] = float(speed(axis))
        reference = float(c[:j + 1].max())
        deeper = np.nonzero(c[j:] >= reference)[0]
        if deeper.size:
            k = j + int(deeper[0])
            crit = brentq(lambda x: float(speed(x)) - reference, z[k - 1], z[k], xtol=1e-6)
            out["critical_depth_m"] = float(crit)
            out["depth_excess_m"] = float(bottom_m - crit)

    spread = out["speed_max_mps"] - out["speed_min_mps"]
    if spread < ISOVELOCITY_SPREAD_MPS:
        regime = "near isovelocity"
    elif out["channel_axis_depth_m"] is not None:
        regime = "sound channel"
        if out["surface_duct_depth_m"] is not None:
            regime += " under a surface duct"
    elif out["surface_duct_depth_m"] is not None:
        regime = "surface duct over a downward-refracting layer"
    elif out["bottom_speed_mps"] < out["surface_speed_mps"]:
        regime = "downward refracting"
    else:
        regime = "upward refracting"
    out["regime"] = regime
    return out


def _speed_warnings(site) -> list[str]:
    from aculink.site import soundspeed as ss

    p = site.water.profile
    if p.temperature_c is None or p.source not in ("mackenzie", "unesco", "teos10"):
        return []
    t, s, z = p.temperature_c, p.salinity_psu, p.depth_m
    if p.source == "mackenzie":
        return ss.mackenzie_validity_warnings(t, s, z)
    if p.source == "unesco":
        return ss.unesco_validity_warnings(t, s, ss.pressure_from_depth(z, site.water.latitude_deg))
    return ss.teos10_validity_warnings(t, s, depth_m=z, latitude_deg=site.water.latitude_deg,
                                       longitude_deg=site.water.longitude_deg)


def geometry_warnings(site) -> list[str]:
    """Lines about a geometry that is legal but probably not what was meant.

    A receiver closer to the source than the water is deep is almost always a range typed in
    kilometres (the site file takes metres).
    """
    out = []
    rx, bed = site.receiver, site.seabed
    water = float(bed.depth_at(0.0))
    if rx.range_m < water:
        out.append(f"[receiver] range_m = {rx.range_m:g} m is shorter than the water is deep at the source "
                   f"({water:g} m): ranges are in metres (did you mean {rx.range_m * 1000:g} m?)")
    return out


def _round(x, nd=2):
    return None if x is None else round(float(x), nd)


def summarize_site(site) -> dict:
    """The facts a practitioner checks about a site, as a dict (keys carry units).

    Groups: ``site``, ``water`` (speed range, regime, duct, axis, critical depth),
    ``seabed`` (sediment, critical grazing angle, bottom loss at :data:`GRAZING_ANGLES_DEG`),
    ``surface`` (wind, rms wave height, coherent loss at the carrier), ``absorption``
    (Francois-Garrison at the carrier, column average, and over the receiver range), ``noise``
    (spectral level at the carrier and band level), ``geometry``, ``modem``, ``warnings`` and
    ``caution``.

    Parameters
    ----------
    site : Site

    Returns
    -------
    dict

    References
    ----------
    Bottom loss: Rayleigh reflection (:func:`aculink.site.seabed.bottom_loss_db`); surface
    loss: Eckart (1953) (:func:`aculink.site.surface.surface_coherent_reflection`);
    absorption: Francois and Garrison (1982); noise: the Wenz-curve fits of Coates (1989).
    """
    from aculink.site.absorption import absorption_francois_garrison, francois_garrison_validity_warnings
    from aculink.site.noise import noise_band_level_db, noise_psd_db
    from aculink.site.seabed import bottom_loss_db, critical_grazing_angle_rad, intromission_grazing_angle_rad
    from aculink.site.surface import surface_coherent_reflection

    water, bed, modem = site.water, site.seabed, site.modem
    profile = water.profile
    bottom = bed.max_depth_m
    feats = profile_features(profile, bottom)
    warnings: list[str] = []

    # seabed, against the water just above its deepest point
    c_bed_water = float(profile.speed(bottom))
    angles = np.radians(GRAZING_ANGLES_DEG)
    loss = bottom_loss_db(angles, c_bed_water, water.density_kgm3, bed.sound_speed_mps,
                          bed.density_kgm3, bed.attenuation_db_per_wavelength)
    crit = float(critical_grazing_angle_rad(c_bed_water, bed.sound_speed_mps))
    intro = float(intromission_grazing_angle_rad(c_bed_water, water.density_kgm3, bed.sound_speed_mps,
                                                 bed.density_kgm3))
    seabed = {
        "sediment": bed.sediment or "explicit",
        "sound_speed_mps": _round(bed.sound_speed_mps, 1),
        "density_kgm3": _round(bed.density_kgm3, 1),
        "attenuation_db_per_wavelength": _round(bed.attenuation_db_per_wavelength, 3),
        "water_speed_at_seabed_mps": _round(c_bed_water, 2),
        "depth_min_m": _round(bed.depth_m.min(), 1),
        "depth_max_m": _round(bottom, 1),
        "sloping": not bed.is_flat,
        "critical_grazing_angle_deg": None if math.isnan(crit) else _round(math.degrees(crit), 2),
        "intromission_grazing_angle_deg": None if math.isnan(intro) else _round(math.degrees(intro), 2),
        "bottom_loss_grazing_deg": list(GRAZING_ANGLES_DEG),
        "bottom_loss_db": [_round(v, 2) for v in loss],
    }
    # the handbook behind the presets covers 10-100 kHz (APL-UW TR 9407 title; from memory)
    if bed.sediment is not None and modem.carrier_hz < 10e3:
        warnings.append(f"sediment presets were compiled for 10 kHz to 100 kHz (APL-UW TR 9407); at "
                        f"{modem.carrier_hz / 1e3:g} kHz treat the seabed values as indicative")

    # surface
    c0 = float(profile.speed(0.0))
    r_surf = surface_coherent_reflection(np.radians(SURFACE_ANGLES_DEG), modem.carrier_hz,
                                         site.surface.rms_height_m, c0)
    surface = {
        "wind_speed_mps": _round(site.surface.wind_speed_mps, 2),
        "rms_wave_height_m": _round(site.surface.rms_height_m, 3),
        "coherent_loss_grazing_deg": list(SURFACE_ANGLES_DEG),
        "coherent_loss_db": [_round(-20.0 * math.log10(max(abs(r), 1e-300)), 2) for r in r_surf],
    }

    # absorption over the column, with the profile's own temperature and salinity
    z = np.linspace(0.0, bottom, 201)
    t, s = profile.temperature_at(z), profile.salinity_at(z)
    alpha = absorption_francois_garrison(modem.carrier_hz, t, s, z, water.ph)
    lo, hi = modem.band_hz
    alpha_edges = [float(np.mean(absorption_francois_garrison(f, t, s, z, water.ph))) for f in (lo, hi)]
    mean_alpha = float(np.mean(alpha))
    absorption = {
        "formula": "Francois-Garrison (1982)",
        "column_mean_db_per_km": _round(mean_alpha, 4),
        "column_min_db_per_km": _round(alpha.min(), 4),
        "column_max_db_per_km": _round(alpha.max(), 4),
        "band_low_db_per_km": _round(alpha_edges[0], 4),
        "band_high_db_per_km": _round(alpha_edges[1], 4),
        "loss_at_receiver_range_db": _round(mean_alpha * site.receiver.range_m / 1000.0, 2),
    }
    if profile.temperature_c is None:
        warnings.append("no temperature or salinity given: absorption assumes 10 degC and salinity 35")
    warnings += francois_garrison_validity_warnings(np.array([lo, hi]), bottom)
    warnings += _speed_warnings(site)
    warnings += geometry_warnings(site)

    # noise
    n = site.noise
    noise = {
        "shipping": n.shipping,
        "wind_speed_mps": _round(n.wind_speed_mps, 2),
        "extra_db": n.extra_db,
        "psd_at_carrier_db_re_1upa2_per_hz": _round(float(noise_psd_db(modem.carrier_hz, n.shipping,
                                                                       n.wind_speed_mps)) + n.extra_db, 2),
        "band_level_db_re_1upa2": _round(float(noise_band_level_db(lo, hi, n.shipping, n.wind_speed_mps))
                                         + n.extra_db, 2),
    }

    src, rx = site.source, site.receiver
    geometry = {
        "source_depth_m": src.depth_m,
        "source_level_db_re_1upa_at_1m": src.level_db,
        "source_directivity_index_db": src.directivity_index_db,
        "source_speed_mps": src.speed_mps,
        "receiver_depth_m": rx.depth_m,
        "receiver_range_m": rx.range_m,
        "receiver_directivity_index_db": rx.directivity_index_db,
        "receiver_speed_mps": rx.speed_mps,
        "seabed_depth_at_source_m": _round(bed.depth_at(0.0), 1),
        "seabed_depth_at_receiver_m": _round(bed.depth_at(rx.range_m), 1),
    }
    water_out = {
        "profile_source": profile.source,
        "regime": feats["regime"],
        "speed_min_mps": _round(feats["speed_min_mps"]),
        "speed_max_mps": _round(feats["speed_max_mps"]),
        "surface_speed_mps": _round(feats["surface_speed_mps"]),
        "bottom_speed_mps": _round(feats["bottom_speed_mps"]),
        "surface_duct_depth_m": _round(feats["surface_duct_depth_m"], 1),
        "channel_axis_depth_m": _round(feats["channel_axis_depth_m"], 1),
        "channel_axis_speed_mps": _round(feats["channel_axis_speed_mps"]),
        "critical_depth_m": _round(feats["critical_depth_m"], 1),
        "depth_excess_m": _round(feats["depth_excess_m"], 1),
        "ph": water.ph,
        "latitude_deg": water.latitude_deg,
        "profile_nodes": int(profile.depth_m.size),
    }
    if feats["channel_axis_depth_m"] is not None and feats["critical_depth_m"] is None:
        warnings.append("the water does not reach the critical depth: no bottom-free refracted paths "
                        "return to the surface speed")
    lo_band, hi_band = modem.band_hz
    modem_out = {
        "carrier_hz": modem.carrier_hz,
        "bandwidth_hz": modem.bandwidth_hz,
        "band_low_hz": lo_band,
        "band_high_hz": hi_band,
        "rolloff": modem.rolloff,
        "max_symbol_rate_baud": _round(modem.max_symbol_rate_baud, 1),
        "target_ber": modem.target_ber,
        "margin_db": modem.margin_db,
    }
    return {
        "site": {"name": site.name, "description": site.description, "path": site.path},
        "water": water_out,
        "seabed": seabed,
        "surface": surface,
        "absorption": absorption,
        "noise": noise,
        "geometry": geometry,
        "modem": modem_out,
        "warnings": warnings,
        "caution": CAUTION,
    }


def _loss_text(db) -> str:
    """A loss in dB for the text table; beyond 60 dB the exact figure means nothing in practice."""
    if db is None or db > 60.0:
        return ">60"
    return f"{db:.1f}"


def format_summary(summary: dict) -> str:
    """Render :func:`summarize_site`'s dict as readable text, one fact a line (numbers to the digits
    :mod:`aculink.io.formats` allows)."""
    from aculink.io.formats import ber_text, depth_text, range_text, sig

    s = summary
    w, b, f, a, n, g, m = (s[k] for k in ("water", "seabed", "surface", "absorption", "noise",
                                          "geometry", "modem"))
    lines = [f"Site: {s['site']['name']}" + (f"  ({s['site']['path']})" if s["site"]["path"] else "")]
    if s["site"]["description"]:
        lines.append(f"  {s['site']['description']}")

    def row(label, text):
        lines.append(f"  {label:<34}{text}")

    lines.append("")
    lines.append("Water column")
    row("sound speed", f"{w['speed_min_mps']:.2f} to {w['speed_max_mps']:.2f} m/s "
        f"(surface {w['surface_speed_mps']:.2f}, seabed {w['bottom_speed_mps']:.2f}; from {w['profile_source']}, "
        f"{w['profile_nodes']} nodes)")
    row("profile", w["regime"])
    duct = w["surface_duct_depth_m"]
    row("surface duct (mixed layer) depth", "none" if duct is None else f"{depth_text(duct)} m")
    axis = w["channel_axis_depth_m"]
    row("sound-channel axis", "none" if axis is None else f"{depth_text(axis)} m ({w['channel_axis_speed_mps']:.2f} m/s)")
    if axis is not None:
        crit = w["critical_depth_m"]
        row("critical depth", "not reached by the water" if crit is None
            else f"{depth_text(crit)} m (depth excess {depth_text(w['depth_excess_m'])} m)")
    row("pH, latitude", f"{w['ph']:g}, {w['latitude_deg']:g} deg")

    lines.append("")
    lines.append("Seabed")
    row("type", f"{b['sediment']}: {b['sound_speed_mps']:g} m/s, {b['density_kgm3']:g} kg/m^3, "
        f"{b['attenuation_db_per_wavelength']:g} dB/wavelength")
    row("depth", f"{depth_text(b['depth_min_m'])} to {depth_text(b['depth_max_m'])} m along the track"
        if b["sloping"] else f"{depth_text(b['depth_max_m'])} m (flat)")
    crit = b["critical_grazing_angle_deg"]
    row("critical grazing angle", "none (seabed slower than the water)" if crit is None else f"{crit:g} deg")
    if b["intromission_grazing_angle_deg"] is not None:
        row("intromission angle", f"{b['intromission_grazing_angle_deg']:g} deg")
    row("bottom loss (dB) at grazing angle", "  ".join(
        f"{ang:g}: {_loss_text(v)}" for ang, v in zip(b["bottom_loss_grazing_deg"],
                                                                         b["bottom_loss_db"])))

    lines.append("")
    lines.append("Surface")
    row("wind at 10 m, rms wave height", f"{f['wind_speed_mps']:g} m/s, {sig(f['rms_wave_height_m'], 2)} m")
    row("coherent loss at carrier (dB)", "  ".join(
        f"{ang:g} deg: {_loss_text(v)}" for ang, v in zip(f["coherent_loss_grazing_deg"], f["coherent_loss_db"])))

    lines.append("")
    lines.append(f"Absorption ({a['formula']})")
    row("at the carrier (column mean)", f"{a['column_mean_db_per_km']:.3f} dB/km (column {a['column_min_db_per_km']:.3f} "
        f"to {a['column_max_db_per_km']:.3f})")
    row("at the band edges", f"{a['band_low_db_per_km']:.3f} / {a['band_high_db_per_km']:.3f} dB/km")
    row("over the receiver range", f"{a['loss_at_receiver_range_db']:.1f} dB")

    lines.append("")
    lines.append("Ambient noise (Wenz-curve fits)")
    row("shipping, wind, extra", f"{n['shipping']:g}, {n['wind_speed_mps']:g} m/s, {n['extra_db']:+g} dB")
    row("spectral level at the carrier", f"{n['psd_at_carrier_db_re_1upa2_per_hz']:.1f} dB re 1 uPa^2/Hz")
    row("band level", f"{n['band_level_db_re_1upa2']:.1f} dB re 1 uPa^2 over "
        f"{m['band_low_hz'] / 1e3:g}-{m['band_high_hz'] / 1e3:g} kHz")

    lines.append("")
    lines.append("Equipment and geometry")
    row("source", f"{depth_text(g['source_depth_m'])} m deep, {g['source_level_db_re_1upa_at_1m']:g} dB re 1 uPa at 1 m, "
        f"DI {g['source_directivity_index_db']:g} dB, speed {g['source_speed_mps']:g} m/s")
    row("receiver", f"{range_text(g['receiver_range_m'])}, {depth_text(g['receiver_depth_m'])} m deep "
        f"(seabed {depth_text(g['seabed_depth_at_receiver_m'])} m), DI {g['receiver_directivity_index_db']:g} dB, "
        f"speed {g['receiver_speed_mps']:g} m/s")
    row("modem band", f"carrier {m['carrier_hz'] / 1e3:g} kHz, bandwidth {m['bandwidth_hz'] / 1e3:g} kHz, "
        f"rolloff {m['rolloff']:g} (up to {m['max_symbol_rate_baud']:g} baud)")
    row("targets", f"BER {ber_text(m['target_ber'])}, margin {m['margin_db']:g} dB")

    if s["warnings"]:
        lines.append("")
        lines.append("Warnings")
        lines += [f"  - {x}" for x in s["warnings"]]
    lines.append("")
    lines.append(s["caution"])
    return "\n".join(lines)
