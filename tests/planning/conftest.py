"""Shared fixtures of the planning tests."""

from __future__ import annotations

import numpy as np
import pytest

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


@pytest.fixture
def flat_site():
    return make_site()
