"""The site stage: sea, seabed, surface, noise, equipment and the ocean physics they need.

The physics below is numpy-vectorised with SI inputs; each result's unit is in its name
(absorption in dB/km, noise in dB re 1 uPa^2/Hz, reflection coefficients complex in the
exp(+j omega t) convention).
"""

from aculink.site.absorption import (
    absorption_ainslie_mccolm,
    absorption_francois_garrison,
    absorption_thorp,
    ainslie_mccolm_validity_warnings,
    francois_garrison_validity_warnings,
)
from aculink.site.model import Modem, Noise, Receiver, Seabed, Site, Source, Surface, Water
from aculink.site.noise import (
    NoiseComponents,
    noise_band_level_db,
    noise_components_db,
    noise_psd_db,
)
from aculink.site.profile import SoundSpeedProfile
from aculink.site.seabed import (
    SEDIMENTS,
    Sediment,
    bottom_loss_db,
    critical_grazing_angle_rad,
    intromission_grazing_angle_rad,
    rayleigh_reflection,
    sediment_properties,
)
from aculink.site.soundspeed import (
    depth_from_pressure,
    mackenzie_validity_warnings,
    pressure_from_depth,
    sound_speed_mackenzie,
    sound_speed_teos10,
    sound_speed_unesco,
    teos10_validity_warnings,
    unesco_validity_warnings,
)
from aculink.site.surface import (
    pierson_moskowitz_spectrum,
    rms_wave_height_pierson_moskowitz,
    significant_wave_height_pierson_moskowitz,
    surface_coherent_reflection,
    surface_vertical_velocity_rms,
)

__all__ = ["absorption_ainslie_mccolm", "absorption_francois_garrison", "absorption_thorp",
           "ainslie_mccolm_validity_warnings", "francois_garrison_validity_warnings", "Modem", "Noise",
           "Receiver", "Seabed", "Site", "Source", "Surface", "Water", "NoiseComponents",
           "noise_band_level_db", "noise_components_db", "noise_psd_db", "SoundSpeedProfile", "SEDIMENTS",
           "Sediment", "bottom_loss_db", "critical_grazing_angle_rad", "intromission_grazing_angle_rad",
           "rayleigh_reflection", "sediment_properties", "depth_from_pressure",
           "mackenzie_validity_warnings", "pressure_from_depth", "sound_speed_mackenzie",
           "sound_speed_teos10", "sound_speed_unesco", "teos10_validity_warnings",
           "unesco_validity_warnings", "pierson_moskowitz_spectrum", "rms_wave_height_pierson_moskowitz",
           "significant_wave_height_pierson_moskowitz", "surface_coherent_reflection",
           "surface_vertical_velocity_rms"]
