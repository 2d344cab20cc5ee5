"""The labelled form of planning results: names, units and long names of every variable.

Both the range-versus-rate table (:mod:`aculink.planning.table`) and the grid sweep
(:mod:`aculink.planning.sweep`) label their arrays here, so the two share one vocabulary.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from aculink import __version__

from aculink.cautions import CAUTION

__all__ = ["CANDIDATE_DIMS", "VARIABLES", "coordinates", "to_dataset"]

#: Candidate axes, in the order the evaluator fills them.
CANDIDATE_DIMS = ("receiver", "symbol_rate", "modulation")

#: name in the summarised block -> (dataset name, long_name, units, extra attrs, kind)
#: kind: "point" (position dims), "receiver" (+ receiver), "candidate" (+ candidate dims)
VARIABLES = {
    "best_rate_bps": ("net_bit_rate_bps", "highest workable net bit rate (training overhead "
                      "removed; 0 when no candidate is workable)", "bit s-1", {}, "point"),
    "best_modulation": ("best_modulation", "modulation of the workable configuration", None, {}, "point"),
    "best_receiver": ("best_receiver", "receiver of the workable configuration", None, {}, "point"),
    "best_symbol_rate_baud": ("best_symbol_rate_baud", "symbol rate of the workable configuration "
                              "(baud)", "s-1", {}, "point"),
    "snr_band_db": ("snr_band_db", "in-band signal-to-noise ratio from the sonar equation", "dB",
                    {"reference": "received signal power over noise power in the modem band"}, "point"),
    "best_snr_out_db": ("snr_out_predicted_db", "predicted receiver output SNR of the workable configuration",
                        "dB", {"reference": "symbol energy over residual noise-plus-ISI power"}, "point"),
    "best_ber_predicted": ("ber_predicted", "predicted bit error rate of the workable configuration",
                           "1", {}, "point"),
    "best_margin_db": ("margin_db", "SNR margin available above what the target BER needs",
                       "dB", {"reference": "output SNR over the output SNR at the target BER"}, "point"),
    "spread_90_s": ("spread_90_s", "multipath delay spread holding 90 % of the received energy",
                    "s", {}, "point"),
    "tl_db": ("tl_db", "transmission loss used in the link budget (dB re 1 m)", "dB",
              {"reference": "re 1 m"}, "point"),
    "error": ("error", "why this grid point has no result (empty when it has one)", None, {}, "point"),
    "rate_by_receiver_bps": ("net_bit_rate_by_receiver_bps", "highest workable net bit rate "
                             "with each receiver", "bit s-1", {}, "receiver"),
    "snr_out_db": ("candidate_snr_out_predicted_db", "predicted receiver output SNR of each candidate", "dB",
                   {"reference": "symbol energy over residual noise-plus-ISI power"}, "candidate"),
    "ber_predicted": ("candidate_ber_predicted", "predicted bit error rate of each candidate", "1",
                      {}, "candidate"),
    "net_bit_rate_bps": ("candidate_net_bit_rate_bps", "net bit rate of each candidate (training "
                         "overhead removed)", "bit s-1", {}, "candidate"),
    "margin_db": ("candidate_margin_db", "SNR margin of each candidate above what the target BER "
                  "needs", "dB", {}, "candidate"),
}


def coordinates(lead: dict, grid) -> dict:
    """Labelled coordinates: the position axes given in ``lead`` plus the candidate axes."""
    attrs = {
        "source_depth": {"units": "m", "long_name": "source depth below the mean sea surface",
                         "positive": "down"},
        "wind": {"units": "m s-1", "long_name": "wind speed at 10 m above the sea surface"},
        "range": {"units": "m", "long_name": "horizontal range from the source"},
        "depth": {"units": "m", "long_name": "receiver depth below the mean sea surface",
                  "positive": "down"},
    }
    coords = {name: (name, np.asarray(values, dtype=float), attrs[name]) for name, values in lead.items()}
    coords["receiver"] = ("receiver", np.array(grid.receivers, dtype=object), {"long_name": "receiver structure"})
    coords["symbol_rate"] = ("symbol_rate", np.asarray(grid.symbol_rates_baud, dtype=float),
                             {"units": "s-1", "long_name": "candidate symbol rate (baud)"})
    coords["modulation"] = ("modulation", np.array(grid.modulations, dtype=object), {"long_name": "modulation"})
    return coords


def to_dataset(summary: dict, lead: dict, grid, *, attrs: dict | None = None) -> xr.Dataset:
    """Label a summarised block (see :func:`aculink.planning.search.summarise_block`).

    Parameters
    ----------
    summary : dict of ndarray
        Arrays whose leading axes follow ``lead``.
    lead : dict
        Position axes in order, name -> coordinate values (SI).
    grid : CandidateGrid
    attrs : dict, optional
        Global attributes to add to the standard ones.
    """
    dims = tuple(lead)
    data = {}
    for key, (name, long_name, units, extra, kind) in VARIABLES.items():
        d = dims + {"point": (), "receiver": ("receiver",), "candidate": CANDIDATE_DIMS}[kind]
        a = {"long_name": long_name, **extra}
        if units is not None:
            a["units"] = units
        values = summary[key]
        if values.dtype == object:
            values = values.astype(str).astype(object)
        data[name] = (d, values, a)
    data["snr_required_db"] = ("modulation", np.asarray(summary["snr_required_db"], dtype=float),
                               {"units": "dB", "long_name": "output SNR each modulation needs to "
                                "reach the target BER in white Gaussian noise"})
    base = {"title": "aculink workable-rate results", "aculink_version": __version__,
            "caution": CAUTION, "Conventions": "CF-1.10"}
    base.update(attrs or {})
    return xr.Dataset(data, coords=coordinates(lead, grid), attrs=base)
