"""Single-carrier PSK/QAM modem: transmitter, front end, receivers, analytic estimates.

Public API: :func:`simulate_link` (Monte Carlo, :class:`LinkResult`), :func:`predict_link`
(analytic estimate, :class:`Prediction`), :data:`MODULATIONS`, :data:`RECEIVERS`, and the
analytic helpers (closed-form error rates, equalizer bounds, finite-length MMSE-DFE design,
water-filling).
"""

from aculink.modem.analytic import (DfeDesign, EqualizerBounds, equalizer_bounds, folded_snr_from_taps,
                                    mmse_dfe_design, nlms_misadjustment, rls_misadjustment, single_tap_sinr,
                                    water_filling)
from aculink.modem.ber import bit_error_rate, es_n0_for_ber, q_function, symbol_error_rate
from aculink.modem.constellations import MODULATIONS, Constellation, constellation
from aculink.modem.predict import Prediction, predict_link
from aculink.modem.receivers import ALGORITHMS, RECEIVERS, pll_gains
from aculink.modem.simulate import LinkResult, clopper_pearson, simulate_link

__all__ = [
    "simulate_link", "predict_link", "LinkResult", "Prediction", "MODULATIONS", "RECEIVERS", "ALGORITHMS",
    "Constellation", "constellation", "bit_error_rate", "symbol_error_rate", "q_function", "es_n0_for_ber",
    "equalizer_bounds", "EqualizerBounds", "folded_snr_from_taps", "mmse_dfe_design", "DfeDesign",
    "water_filling", "single_tap_sinr", "rls_misadjustment", "nlms_misadjustment", "pll_gains",
    "clopper_pearson",
]
