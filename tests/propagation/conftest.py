"""Fixtures of the propagation tests: sites built directly from the dataclasses (scenarios of our own)."""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

# The suite runs with --import-mode=importlib: make this folder's reference modules
# (image_method, normal_modes) importable by name, as tests/planning does for its helper.
sys.path.insert(0, str(Path(__file__).parent))

from aculink.site.model import Modem, Noise, Receiver, Seabed, Site, Source, Surface, Water
from aculink.site.profile import SoundSpeedProfile


def build_site(depth_m=None, speed_mps=None, *, seabed_range_m=(0.0,), seabed_depth_m=(100.0,),
               bed_speed_mps=1650.0, bed_density_kgm3=1900.0, bed_attenuation=0.8, source_depth_m=30.0,
               receiver_depth_m=70.0, receiver_range_m=1000.0, rms_height_m=0.0, carrier_hz=12000.0,
               name="test site", temperature_c=None, salinity_psu=None):
    """A site with the given profile (isovelocity 1500 m/s by default) and seabed polyline."""
    bottom = float(np.max(seabed_depth_m))
    if depth_m is None:
        depth_m = [0.0, bottom]
        speed_mps = [1500.0, 1500.0]
    profile = SoundSpeedProfile(np.asarray(depth_m, float), np.asarray(speed_mps, float),
                                temperature_c=temperature_c, salinity_psu=salinity_psu)
    return Site(
        name=name,
        water=Water(profile=profile),
        seabed=Seabed(np.asarray(seabed_range_m, float), np.asarray(seabed_depth_m, float),
                      sound_speed_mps=bed_speed_mps, density_kgm3=bed_density_kgm3,
                      attenuation_db_per_wavelength=bed_attenuation),
        surface=Surface(wind_speed_mps=0.0, rms_height_m=rms_height_m),
        noise=Noise(),
        source=Source(depth_m=source_depth_m),
        receiver=Receiver(depth_m=receiver_depth_m, range_m=receiver_range_m),
        modem=Modem(carrier_hz=carrier_hz),
    )


def munk_profile(max_depth_m=5000.0, step_m=10.0):
    """Munk (1974) canonical profile tabulated on ``step_m`` nodes ([Munk1974])."""
    z = np.arange(0.0, max_depth_m + step_m / 2, step_m)
    eta = 2.0 * (z - 1300.0) / 1300.0
    return z, 1500.0 * (1.0 + 0.00737 * (eta - 1.0 + np.exp(-eta)))



@pytest.fixture(scope="session")
def make_site():
    """The site builder :func:`build_site`."""
    return build_site


@pytest.fixture(scope="session")
def munk():
    """The tabulated Munk profile builder :func:`munk_profile`."""
    return munk_profile
