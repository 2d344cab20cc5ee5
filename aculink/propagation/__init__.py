"""Propagation: numba ray tracer, eigenrays and transmission-loss grids.

Public functions: :func:`trace_rays` (ray fans for plotting and inspection), :func:`find_arrivals`
(eigenrays per receiver: delays, complex amplitudes, angles, bounces) and
:func:`transmission_loss` (coherent and incoherent TL on a range x depth grid).
"""

from __future__ import annotations

import importlib

_LAZY = {
    "trace_rays": "aculink.propagation.rays",
    "find_arrivals": "aculink.propagation.eigenrays",
    "transmission_loss": "aculink.propagation.loss",
}


def __getattr__(name):
    if name in _LAZY:
        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'aculink.propagation' has no attribute {name!r}")


__all__ = list(_LAZY)
