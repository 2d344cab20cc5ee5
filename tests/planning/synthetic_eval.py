"""A small deterministic evaluator for testing the planning machinery without the real stages.

Invented numbers (demo physics, not a model of any sea): spherical spreading plus a linear
absorption term for the band SNR, a delay spread that grows with depth, and receivers whose
output SNR loses a share of the ISI (none: all of it, linear: a tenth, dfe: a hundredth).
The error rates are the exact AWGN ones for BPSK and Gray QPSK, Q(sqrt(2 Es/N0)) and
Q(sqrt(Es/N0)) (Proakis and Salehi 2008, Digital Communications, 5th ed., sec. 4.3).
"""

from __future__ import annotations

import os
import time

import numpy as np
from scipy.special import erfc, erfcinv

from aculink.site.model import Modem, Noise, Receiver, Seabed, Site, Source, Surface, Water
from aculink.site.profile import SoundSpeedProfile

def make_site(depth_m=100.0, *, speed_mps=1500.0, bandwidth_hz=4000.0, carrier_hz=12000.0,
              source_depth_m=20.0, level_db=170.0, name="test flat shelf"):
    """A flat-bottomed isovelocity site built in Python (a scenario of our own)."""
    return Site(
        name=name,
        water=Water(profile=SoundSpeedProfile(np.array([0.0, depth_m]), np.array([speed_mps, speed_mps]))),
        seabed=Seabed(range_m=np.array([0.0]), depth_m=np.array([depth_m]), sound_speed_mps=1650.0,
                      density_kgm3=1900.0, attenuation_db_per_wavelength=0.8, sediment="sand"),
        surface=Surface(0.0, 0.0), noise=Noise(0.5, 0.0, 0.0),
        source=Source(depth_m=source_depth_m, level_db=level_db),
        receiver=Receiver(depth_m=30.0, range_m=2000.0),
        modem=Modem(carrier_hz=carrier_hz, bandwidth_hz=bandwidth_hz, rolloff=0.25,
                    target_ber=1e-4, margin_db=3.0),
    )


MODULATIONS = ("bpsk", "qpsk")
BITS = {"bpsk": 1, "qpsk": 2}
RECEIVERS = ("none", "linear", "dfe")
ISI_SHARE = {"none": 1.0, "linear": 0.1, "dfe": 0.01}
TRAINING = {"none": 0.02, "linear": 0.1, "dfe": 0.15}
#: A receiver depth at which the evaluator fails, to test failure recording.
BAD_DEPTH_M = 13.0


def ber(modulation, es_n0):
    scale = 2.0 if modulation == "bpsk" else 1.0
    return 0.5 * erfc(np.sqrt(scale * es_n0) / np.sqrt(2.0))


def required_db(modulation, target):
    q = np.sqrt(2.0) * erfcinv(2.0 * target)
    return 10 * np.log10(q * q / (2.0 if modulation == "bpsk" else 1.0))


def evaluate(site, ranges_m, depths_m, grid, target_ber, margin_db=3.0):
    """Evaluator with the planner's interface (see aculink.planning.search.evaluate_block)."""
    delay = float(os.environ.get("ACULINK_TEST_CHUNK_DELAY_S", "0"))
    if delay:
        time.sleep(delay)
    ranges = np.asarray(ranges_m, float)
    depths = np.asarray(depths_m, float)
    if np.any(depths == BAD_DEPTH_M):
        raise ValueError(f"synthetic failure at depth {BAD_DEPTH_M} m")
    R, Z = len(ranges), len(depths)
    src = float(site.source.depth_m)
    snr_band = 150.0 - 20 * np.log10(ranges)[:, None] - 0.002 * ranges[:, None] - 0.01 * src + 0 * depths[None, :]
    spread = 1e-3 * (1 + depths[None, :] / 10.0) * (1 + ranges[:, None] / 1e4)
    K, S, M = grid.shape
    snr_out = np.empty((R, Z, K, S, M))
    rate = np.empty_like(snr_out)
    bers = np.empty_like(snr_out)
    for a, rx in enumerate(grid.receivers):
        for b, rs in enumerate(grid.symbol_rates_baud):
            isi = ISI_SHARE[rx] * rs * spread
            lin = 1.0 / (10 ** (-snr_band / 10) + isi / (1 + isi) + 1e-6)
            for c, mod in enumerate(grid.modulations):
                snr_out[:, :, a, b, c] = 10 * np.log10(lin)
                bers[:, :, a, b, c] = ber(mod, lin)
                rate[:, :, a, b, c] = rs * BITS[mod] * (1 - TRAINING[rx])
    return {"snr_band_db": snr_band, "tl_db": 20 * np.log10(ranges)[:, None] + 0 * depths[None, :],
            "spread_90_s": spread, "snr_out_db": snr_out, "ber_predicted": bers,
            "net_bit_rate_bps": rate, "error": np.full((R, Z), "", dtype=object),
            "snr_required_db": np.array([required_db(m, target_ber) for m in grid.modulations])}


#: Set by a test: the evaluator raises KeyboardInterrupt once when a block holds this range.
INTERRUPT_AT_RANGE_M = None


def evaluate_interruptible(site, ranges_m, depths_m, grid, target_ber, margin_db=3.0):
    """Like :func:`evaluate`, but simulates Ctrl-C once at ``INTERRUPT_AT_RANGE_M``."""
    global INTERRUPT_AT_RANGE_M
    if INTERRUPT_AT_RANGE_M is not None and INTERRUPT_AT_RANGE_M in list(ranges_m):
        INTERRUPT_AT_RANGE_M = None
        raise KeyboardInterrupt
    return evaluate(site, ranges_m, depths_m, grid, target_ber, margin_db)
