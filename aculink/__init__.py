"""aculink: which data rate an underwater acoustic link will sustain at a real site.

The pipeline, one stage a subpackage: :mod:`aculink.site` (the sea and the equipment),
:mod:`aculink.propagation` (numba ray tracer, eigenrays, transmission loss),
:mod:`aculink.channel` (baseband ISI channel, Doppler, link budget), :mod:`aculink.modem`
(PSK/QAM, receivers, analytic bounds, Monte Carlo) and :mod:`aculink.planning` (workable
rates, tables, sweeps). Public names are imported lazily so that start-up stays quick.

Results are planning estimates. Sound in water can harm marine mammals, fish and divers;
follow local regulations, permits and licensed practice before transmitting.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_LAZY = {
    "load_site": "aculink.site.loader",
    "Site": "aculink.site.model",
    "AculinkError": "aculink.errors",
    "trace_rays": "aculink.propagation",
    "find_arrivals": "aculink.propagation",
    "transmission_loss": "aculink.propagation",
    "Channel": "aculink.channel",
    "link_budget": "aculink.channel",
    "simulate_link": "aculink.modem",
    "predict_link": "aculink.modem",
    "plan_rates": "aculink.planning",
    "run_sweep": "aculink.planning",
}


def __getattr__(name):
    if name in _LAZY:
        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'aculink' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_LAZY))


__all__ = ["__version__", *_LAZY]
