"""The caution every high-level output carries, in one place."""

__all__ = ["CAUTION", "CAUTION_LINE"]

#: One line for tables, summaries and reports a reader acts on.
CAUTION = ("Planning estimate only, not a substitute for sea trials. Sound in water can harm marine "
           "mammals, fish and divers; many waters need a permit for acoustic emission. Follow local "
           "regulations and licensed practice before transmitting.")

#: The same, as a line of its own in a text report.
CAUTION_LINE = f"Caution: {CAUTION}"
