"""Pictures, one module per picture, all drawn in the style set by :mod:`aculink.plots.style`."""
