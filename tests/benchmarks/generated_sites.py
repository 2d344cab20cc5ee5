"""Generated shelf and slope sites for the planner's agreement benchmark (scenarios of our own).

Every site is a pure function of ``(seed, index)``: :func:`generate_site` returns the site
description as the dict :func:`aculink.site.loader.site_from_dict` takes, plus the three
receiver ranges to plan at. Nothing here is a survey of a real place; the parameter spans are
plausible for coastal links (common practice, no source):

* water 20-200 m, flat or gently sloping along the track;
* four profile families: isovelocity; summer (warm mixed layer over a seasonal thermocline,
  downward refracting); winter (well mixed, a slight upward gradient from pressure alone,
  about 0.017 s^-1, Mackenzie 1981, J. Acoust. Soc. Am. 70, 807-812, pressure term); deep-ish
  (a sound-speed minimum in the lower column, a weak duct);
* every sediment class of ``aculink/data/sediments.csv`` (handbook rows, aliases left out),
  dealt out in a seeded shuffle so that any 30 consecutive sites hold all 30;
* wind 0-12 m/s at 10 m, shipping 0.2-0.8, source level 170-190 dB re 1 uPa at 1 m;
* carriers 9-30 kHz with a band of 25-50 % of the carrier;
* source and receiver anywhere in the column (2 m below the surface to 2 m above the seabed);
  one site in three has a slowly drifting source (up to 1.5 m/s);
* three ranges per site, log-uniform over 0.5-10 km.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

PROFILE_KINDS = ("isovelocity", "summer", "winter", "deep-ish")
RANGE_SPAN_M = (500.0, 10000.0)
DEPTH_SPAN_M = (20.0, 200.0)
WIND_SPAN_MPS = (0.0, 12.0)
CARRIER_SPAN_HZ = (9000.0, 30000.0)
#: Band as a share of the carrier (a transducer's usable band; common practice, no source).
BAND_SHARE_SPAN = (0.25, 0.5)
RANGES_PER_SITE = 3
#: Range of the seabed description's far end, m: beyond every range asked for.
TRACK_END_M = 10500.0


def sediment_classes() -> list:
    """The handbook rows of the bundled sediment table (aliases left out), in file order."""
    path = Path(__file__).resolve().parents[2] / "aculink" / "data" / "sediments.csv"
    lines = [line for line in path.read_text().splitlines() if line and not line.startswith("#")]
    return [row["name"] for row in csv.DictReader(lines) if not row["alias_of"]]


def _profile(kind, rng, depth_max_m):
    """Depth and sound-speed nodes of one profile family down to ``depth_max_m``, m and m/s."""
    c0 = float(rng.uniform(1480.0, 1520.0))
    if kind == "isovelocity":
        return [0.0, depth_max_m], [c0, c0]
    if kind == "winter":
        g = 0.0165  # pressure gradient of a mixed column, s^-1
        return [0.0, depth_max_m], [c0, c0 + g * depth_max_m]
    if kind == "summer":
        top = float(rng.uniform(0.05, 0.3)) * depth_max_m
        thick = float(rng.uniform(0.15, 0.35)) * depth_max_m
        drop = float(rng.uniform(12.0, 40.0))
        z = [0.0, top, top + thick, depth_max_m]
        c = [c0, c0 - 0.05 * drop, c0 - drop, c0 - drop - 0.5]
        return z, c
    # deep-ish: a minimum at 55-80 % of the column, warmer water above, pressure below
    axis = float(rng.uniform(0.55, 0.8)) * depth_max_m
    above = float(rng.uniform(5.0, 20.0))
    z = [0.0, 0.5 * axis, axis, depth_max_m]
    c = [c0 + above, c0 + 0.4 * above, c0, c0 + 0.02 * (depth_max_m - axis)]
    return z, c


def generate_site(seed: int, index: int) -> tuple:
    """One generated site: ``(data, ranges_m, features)``.

    Parameters
    ----------
    seed : int
        Seed of the whole set.
    index : int
        Site number in the set (0, 1, ...).

    Returns
    -------
    data : dict
        Site description for :func:`aculink.site.loader.site_from_dict`.
    ranges_m : list of float
        Three receiver ranges, increasing, m.
    features : dict
        The drawn parameters a diagnosis groups by (profile, sediment, wind, depths...).
    """
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), int(index)]))
    classes = sediment_classes()
    deck = np.random.default_rng(np.random.SeedSequence([int(seed), 999_983])).permutation(len(classes))
    sediment = classes[int(deck[index % len(classes)])]
    kind = PROFILE_KINDS[index % len(PROFILE_KINDS)]
    h0 = float(rng.uniform(*DEPTH_SPAN_M))
    slope = float(rng.choice([0.0, 0.0, rng.uniform(-0.004, 0.004)]))
    h1 = float(np.clip(h0 + slope * TRACK_END_M, DEPTH_SPAN_M[0], DEPTH_SPAN_M[1]))
    h_min, h_max = min(h0, h1), max(h0, h1)
    z, c = _profile(kind, rng, h_max + 1.0)
    wind = float(rng.uniform(*WIND_SPAN_MPS))
    fc = float(np.round(rng.uniform(*CARRIER_SPAN_HZ), -2))
    band = float(np.round(fc * rng.uniform(*BAND_SHARE_SPAN), -2))
    src = float(rng.uniform(2.0, h_min - 2.0))
    rcv = float(rng.uniform(2.0, h_min - 2.0))
    drift = float(rng.uniform(-1.5, 1.5)) if rng.random() < 1.0 / 3.0 else 0.0
    ranges = np.sort(np.exp(rng.uniform(np.log(RANGE_SPAN_M[0]), np.log(RANGE_SPAN_M[1]), RANGES_PER_SITE)))
    ranges = [float(np.round(r, -1)) for r in ranges]
    data = {
        "name": f"generated {seed}-{index} ({kind}, {sediment})",
        "description": "generated for the agreement benchmark (a scenario of our own)",
        "water": {"depth_m": [float(v) for v in z], "sound_speed_mps": [float(v) for v in c]},
        "seabed": {"range_m": [0.0, TRACK_END_M], "depth_m": [h0, h1], "sediment": sediment},
        "surface": {"wind_speed_mps": wind},
        "noise": {"shipping": float(rng.uniform(0.2, 0.8))},
        "source": {"depth_m": src, "level_db": float(rng.uniform(170.0, 190.0)), "speed_mps": drift},
        "receiver": {"depth_m": rcv, "range_m": ranges[-1]},
        "modem": {"carrier_hz": fc, "bandwidth_hz": band, "rolloff": 0.25, "target_ber": 1e-4,
                  "margin_db": 3.0},
    }
    features = {"profile": kind, "sediment": sediment, "water_depth_m": round(h0, 1),
                "slope": slope, "wind_mps": round(wind, 1), "carrier_hz": fc, "bandwidth_hz": band,
                "source_depth_m": round(src, 1), "receiver_depth_m": round(rcv, 1),
                "source_speed_mps": round(drift, 2)}
    return data, ranges, features


def generated_sites(seed: int, n: int) -> list:
    """``n`` sites of :func:`generate_site`, indices 0 .. n-1."""
    return [generate_site(seed, i) for i in range(int(n))]
