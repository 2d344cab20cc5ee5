"""Physical constants and fixed reference values, each with its source.

One place for every number the physics shares; modules import from here rather than
repeating literals.
"""

__all__ = ["GRAVITY_MPS2", "REFERENCE_PRESSURE_PA", "SEAWATER_DENSITY_KGM3", "NOMINAL_SOUND_SPEED_MPS",
           "DB_PER_WAVELENGTH_PER_LOSS_PARAMETER", "WIND_19P5_OVER_10", "PIERSON_MOSKOWITZ_ALPHA",
           "PIERSON_MOSKOWITZ_BETA", "SOURCE_LEVEL_DB_PER_WATT", "RATE_RANGE_ENVELOPE_SHALLOW_KM_KBPS",
           "RATE_RANGE_ENVELOPE_DEEP_KM_KBPS"]

#: Standard acceleration of gravity, m/s^2 (CGPM 1901, the conventional value).
GRAVITY_MPS2 = 9.80665

#: Reference pressure for underwater sound levels, Pa (ISO 18405:2017, 1 uPa).
REFERENCE_PRESSURE_PA = 1e-6

#: Nominal density of sea water at the surface, kg/m^3 (common practice, no source;
#: TEOS-10 gives 1020-1030 kg/m^3 for open-ocean surface water).
SEAWATER_DENSITY_KGM3 = 1025.0

#: Nominal sound speed used only where a formula needs a reference speed, m/s
#: (common practice, no source).
NOMINAL_SOUND_SPEED_MPS = 1500.0

#: Loss-parameter conversion: delta = alpha_lambda / (40 pi log10 e) = alpha_lambda / 54.575,
#: alpha_lambda in dB per wavelength (Jensen, Kuperman, Porter and Schmidt, Computational
#: Ocean Acoustics, 2nd ed. 2011, ch. 1, attenuation in dB/lambda).
DB_PER_WAVELENGTH_PER_LOSS_PARAMETER = 40.0 * 3.141592653589793 * 0.4342944819032518

#: Ratio of wind speed at 19.5 m to wind speed at 10 m for a neutral logarithmic profile with
#: roughness length 1.5e-4 m (computed from the log law; the same law gives
#: 1.058-1.062 for z0 = 1e-4 to 2e-4 m). Site files give wind at 10 m.
WIND_19P5_OVER_10 = 1.06

#: Pierson-Moskowitz constants alpha and beta (Pierson and Moskowitz 1964, J. Geophys. Res.
#: 69(24), 5181-5190).
PIERSON_MOSKOWITZ_ALPHA = 8.1e-3
PIERSON_MOSKOWITZ_BETA = 0.74

#: Intensity of a plane wave of 1 uPa rms in sea water, expressed as source power: a source
#: level of SL dB re 1 uPa at 1 m radiates 10^((SL - 170.8 - DI)/10) W (Urick, Principles of
#: Underwater Sound, 3rd ed. 1983, ch. 4; from memory, 170.8 dB for rho c = 1.5e6 rayl).
SOURCE_LEVEL_DB_PER_WATT = 170.8

#: Rate x range envelope of fielded coherent acoustic modems, km * kbit/s (Kilfoyle and
#: Baggeroer 2000, IEEE J. Oceanic Eng. 25(1), 4-27: about 40 in shallow water, 100 deep).
RATE_RANGE_ENVELOPE_SHALLOW_KM_KBPS = 40.0
RATE_RANGE_ENVELOPE_DEEP_KM_KBPS = 100.0
