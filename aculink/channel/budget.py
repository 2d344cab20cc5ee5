"""The link budget: the passive sonar equation across the modem band.

    SNR(f) = SL - 10 log10 B - TL(f) - NL(f) + DI      (spectral levels, dB)

* SL: source level, dB re 1 uPa at 1 m, spread evenly over the band B, so the source spectral
  level is SL - 10 log10(B / 1 Hz), dB re 1 uPa^2/Hz at 1 m.
* TL(f): incoherent transmission loss of the channel, -10 log10 sum_p |gain_p(f)|^2, dB re 1 m
  (the path phases of a moving sea are not stable enough to count on their coherent sum). The
  sum includes the rough surface's scattered sub-paths (:mod:`aculink.channel.scatter`): the
  energy the Eckart factor takes out of a surface path's coherent reflection arrives as a
  diffuse cluster and counts as received power (coherent + scattered = incident, Kirchhoff
  approximation), so TL does not jump where roughness removes a path's coherent part.
* NL(f): ambient noise, the Wenz-curve fits of :func:`aculink.site.noise.noise_psd_db` for the
  site's shipping and wind, plus the site's ``extra_db``, dB re 1 uPa^2/Hz.
* DI: the receiver's directivity index, dB: the site's number, or that of the receiver's beam
  pattern in isotropic noise (:func:`receiver_directivity_index_db`).

With beam patterns (:mod:`aculink.site.transducer`) each path's gain already carries the source's
response at its launch angle and the receiver's at its arrival angle, so TL(f) here is the loss
between the axis of the source and the axis of the receiver, paths weighted by the patterns.

Band SNR is signal power over noise power in the band, so the band terms add up exactly:
``snr_band_db = source_level_db - tl_db - noise_band_db + directivity_index_db`` with
``tl_db = -10 log10(mean over the band of 10^(-TL(f)/10))`` and ``noise_band_db`` the noise
power in the band (dB re 1 uPa^2). ``Eb/N0 = SNR_band B / R_b``.

References
----------
R. J. Urick, Principles of Underwater Sound, 3rd ed. (1983), ch. 2: the sonar equations
(memory). R. F. W. Coates, Underwater Acoustic Systems (1989); M. Stojanovic, ACM SIGMOBILE Mob.
Comput. Commun. Rev. 11(4), 34-43 (2007): SNR(l, f) = S(f) / (A(l, f) N(f) df).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from aculink.channel.stats import mean_square_transfer
from aculink.errors import check_range
from aculink.site.noise import noise_band_level_db, noise_psd_db as _wenz_psd_db

__all__ = ["LinkBudget", "receiver_directivity_index_db", "link_budget"]

_N_GRID = 513


@dataclass(frozen=True, eq=False)
class LinkBudget:
    """Sonar-equation terms for one channel (see the module docstring)."""

    site_name: str
    carrier_hz: float
    bandwidth_hz: float
    source_level_db: float
    directivity_index_db: float
    shipping: float
    wind_speed_mps: float
    extra_db: float
    tl_db: float
    tl_coherent_db: float
    noise_band_db: float
    snr_band_db: float
    paths: int
    reason: str = ""
    channel: object = field(default=None, repr=False)

    @property
    def no_path(self) -> bool:
        return self.paths == 0 or not np.isfinite(self.tl_db)

    @property
    def source_spectrum_level_db(self) -> float:
        """SL - 10 log10 B, dB re 1 uPa^2/Hz at 1 m."""
        return self.source_level_db - 10.0 * np.log10(self.bandwidth_hz)

    def noise_psd_db(self, freq_hz):
        """NL(f), dB re 1 uPa^2/Hz, at passband ``freq_hz``."""
        return _wenz_psd_db(np.asarray(freq_hz, dtype=float), self.shipping, self.wind_speed_mps) + self.extra_db

    def tl_freq_db(self, freq_hz):
        """Incoherent TL(f), dB re 1 m (inf without paths)."""
        f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
        if self.channel is None or self.channel.is_empty:
            return np.full(f.shape, np.inf)
        with np.errstate(divide="ignore"):
            return -10.0 * np.log10(np.sum(np.abs(self.channel.gain_at(f)) ** 2, axis=0))

    def snr_db(self, freq_hz):
        """SNR(f) = SL - 10 log10 B - TL(f) - NL(f) + DI, dB (ratio of spectral densities)."""
        return (self.source_spectrum_level_db - self.tl_freq_db(freq_hz)
                - self.noise_psd_db(np.atleast_1d(freq_hz)) + self.directivity_index_db)

    def snr_density(self, freq_hz):
        """Linear SNR(f): received-signal PSD over noise PSD (source power spread over B)."""
        return 10.0 ** (self.snr_db(freq_hz) / 10.0)

    def ebn0_db(self, bit_rate_bps):
        """Eb/N0 = band SNR * B / R_b, dB."""
        rb = check_range("bit_rate_bps", bit_rate_bps, 0.0, None, low_open=True, unit="bit/s")
        return self.snr_band_db + 10.0 * np.log10(self.bandwidth_hz / rb)

    def to_dict(self) -> dict:
        """Every term in dB, the references in ``units``."""
        d = {
            "site": self.site_name,
            "carrier_hz": self.carrier_hz,
            "bandwidth_hz": self.bandwidth_hz,
            "source_level_db": self.source_level_db,
            "source_spectrum_level_db": float(self.source_spectrum_level_db),
            "tl_db": self.tl_db,
            "tl_coherent_db": self.tl_coherent_db,
            "noise_band_db": self.noise_band_db,
            "noise_spectrum_level_db": float(self.noise_band_db - 10.0 * np.log10(self.bandwidth_hz)),
            "directivity_index_db": self.directivity_index_db,
            "snr_band_db": self.snr_band_db,
            "paths": self.paths,
            "no_path": self.no_path,
            "units": {
                "source_level_db": "dB re 1 uPa at 1 m",
                "source_spectrum_level_db": "dB re 1 uPa^2/Hz at 1 m",
                "tl_db": "dB re 1 m (incoherent, band-averaged)",
                "tl_coherent_db": "dB re 1 m (coherent sum of the steady paths plus the scattered power, band-averaged)",
                "noise_band_db": "dB re 1 uPa^2 (in the band)",
                "noise_spectrum_level_db": "dB re 1 uPa^2/Hz (band mean)",
                "directivity_index_db": "dB",
                "snr_band_db": "dB (signal power / noise power in the band)",
                "carrier_hz": "Hz",
                "bandwidth_hz": "Hz",
            },
        }
        if self.reason:
            d["reason"] = self.reason
        return d


def receiver_directivity_index_db(site, carrier_hz: float) -> float:
    """The receiver's directivity index, dB: the site's number, or its beam pattern's in isotropic
    noise at the carrier (:func:`aculink.site.transducer.directivity_index_db`, [Urick1983])."""
    beam = site.receiver.beam
    if beam is None:
        return float(site.receiver.directivity_index_db)
    from aculink.site.transducer import directivity_index_db

    c = float(site.water.profile.speed(np.array([site.receiver.depth_m]))[0])
    return directivity_index_db(beam, carrier_hz, c)


def link_budget(site, channel) -> LinkBudget:
    """The sonar-equation budget of ``channel`` at ``site`` (band and noise from the site).

    Parameters
    ----------
    site : Site
        Source level, receiver directivity index, noise (shipping, wind, extra_db).
    channel : Channel
        Its band is used; its incoherent path sum gives TL(f).

    Returns
    -------
    LinkBudget
        With ``snr_band_db = -inf`` and ``no_path`` True for a channel without paths.

    References
    ----------
    See the module docstring.
    """
    fc, b = channel.carrier_hz, channel.bandwidth_hz
    shipping, wind, extra = site.noise.shipping, site.noise.wind_speed_mps, site.noise.extra_db
    noise_band = float(noise_band_level_db(fc - b / 2, fc + b / 2, shipping, wind)) + extra
    sl = float(site.source.level_db)
    di = receiver_directivity_index_db(site, fc)
    reason = ""
    if channel.is_empty:
        tl = tl_coh = np.inf
        reason = "no path" + (f": {channel.reason}" if channel.reason else "")
    else:
        f = channel.band_grid(_N_GRID)
        inc = np.mean(np.sum(np.abs(channel.gain_at(f)) ** 2, axis=0))
        coh = np.mean(mean_square_transfer(channel, f))
        with np.errstate(divide="ignore"):
            tl = float(-10.0 * np.log10(inc))
            tl_coh = float(-10.0 * np.log10(coh))
        if not np.isfinite(tl):
            reason = "no path: every path gain is zero"
    snr = sl - tl - noise_band + di if np.isfinite(tl) else -np.inf
    return LinkBudget(site_name=site.name, carrier_hz=fc, bandwidth_hz=b, source_level_db=sl,
                      directivity_index_db=di, shipping=shipping, wind_speed_mps=wind, extra_db=extra,
                      tl_db=tl, tl_coherent_db=tl_coh, noise_band_db=noise_band, snr_band_db=snr,
                      paths=channel.n_paths, reason=reason, channel=channel)
