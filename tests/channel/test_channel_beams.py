"""Beam patterns in the channel and the budget: each path weighted at its own angles."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy import special

from aculink.channel import Channel, link_budget
from aculink.channel.stats import channel_statistics
from aculink.site.model import Surface
from aculink.site.transducer import BeamPattern

from .conftest import image_arrivals


@pytest.fixture
def iso_site(shelf_site):
    """The shelf site with a flat calm sea, so the channel holds only the image paths."""
    return shelf_site.replace(surface=Surface(0.0, 0.0)).with_geometry(range_m=1000.0, depth_m=60.0)


def _with_beams(site, source=None, receiver=None):
    return site.replace(source=dataclasses.replace(site.source, beam=source),
                        receiver=dataclasses.replace(site.receiver, beam=receiver))


def test_omnidirectional_reproduces_the_unweighted_channel_exactly(iso_site):
    """A 0 dB table pattern changes nothing (no beam: nothing is multiplied)."""
    arr = image_arrivals(n_images=3, freq_hz=(9000.0, 12000.0, 15000.0))
    omni = BeamPattern("table", 0.0, angle_deg=(0.0, 180.0), level_db=(0.0, 0.0))
    plain = Channel.from_arrivals(arr, iso_site)
    flat = Channel.from_arrivals(arr, _with_beams(iso_site, omni, omni))
    np.testing.assert_array_equal(plain.gain, flat.gain)
    assert link_budget(iso_site, plain).snr_band_db == link_budget(_with_beams(iso_site, omni, omni),
                                                                   flat).snr_band_db


def test_piston_source_weights_each_image_path_at_its_launch_angle(iso_site):
    """Path gain = image amplitude x 2 J1(x) / x, x = k a sin|theta - tilt| ([Kinsler2000] ch. 7),
    with theta each image path's launch angle (image method, [Jensen2011]) at every frequency."""
    freq = np.array([9000.0, 15000.0])
    arr = image_arrivals(n_images=2, freq_hz=tuple(freq))
    tilt, d = 8.0, 0.12
    site = _with_beams(iso_site, BeamPattern("piston", tilt, d, floor_db=-200.0))
    ch = Channel.from_arrivals(arr, site)
    base = Channel.from_arrivals(arr, iso_site)
    c = float(site.water.profile.speed(np.array([site.source.depth_m]))[0])
    launch = base.launch_angle_deg
    psi = np.deg2rad(np.abs(launch - tilt))[:, None]
    x = 2 * np.pi * freq[None, :] / c * (d / 2) * np.sin(psi)
    expected = np.where(psi > np.pi / 2, 0.0, 2 * special.j1(x) / x)
    assert base.n_paths == ch.n_paths >= 6
    np.testing.assert_allclose(ch.gain, base.gain * expected, rtol=1e-12, atol=1e-300)


def test_a_pattern_that_nulls_steep_paths_shortens_the_delay_spread(iso_site):
    """Steep (late) image paths leave the source outside a 6-degree beam: the RMS delay spread
    falls and the first path is untouched (constructed physical case)."""
    arr = image_arrivals(n_images=4, freq_hz=(12000.0,))
    narrow = BeamPattern("table", 0.0, angle_deg=(0.0, 6.0, 10.0, 180.0), level_db=(0.0, 0.0, -40.0, -40.0))
    wide = channel_statistics(Channel.from_arrivals(arr, iso_site))
    thin_ch = Channel.from_arrivals(arr, _with_beams(iso_site, narrow))
    thin = channel_statistics(thin_ch)
    assert thin["rms_delay_spread_s"] < 0.5 * wide["rms_delay_spread_s"]
    plain = Channel.from_arrivals(arr, iso_site)
    assert thin_ch.gain[0, 0] == plain.gain[0, 0]


def test_receiver_pattern_sets_the_budget_directivity_index(iso_site):
    """With a receiver piston the budget's DI is the piston's at the carrier in isotropic noise,
    10 log10((ka)^2 / (1 - J1(2ka) / (ka))) ([Kinsler2000] ch. 7; [Urick1983] for DI in the
    sonar equation), and the band SNR rises by it when every path arrives on the axis."""
    fc = iso_site.modem.carrier_hz
    c = float(iso_site.water.profile.speed(np.array([iso_site.receiver.depth_m]))[0])
    d = 0.15
    ka = math.pi * fc / c * d
    site = _with_beams(iso_site, receiver=BeamPattern("piston", 0.0, d, floor_db=-200.0))
    arr = image_arrivals(n_images=0, zs=60.0, zr=60.0, freq_hz=(fc,))  # direct path horizontal
    ch = Channel.from_arrivals(arr, site)
    b = link_budget(site, ch)
    assert b.directivity_index_db == pytest.approx(10 * math.log10(ka ** 2 / (1 - special.j1(2 * ka) / ka)),
                                                   abs=0.01)
