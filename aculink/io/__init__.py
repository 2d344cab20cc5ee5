"""File formats at the edge: atomic writes and the writers built on them."""

from aculink.io.atomic import atomic_path, write_text_atomic
from aculink.io.netcdf import write_netcdf
from aculink.io.tables import csv_text, format_table, write_csv

__all__ = ["atomic_path", "write_text_atomic", "write_netcdf", "format_table", "csv_text", "write_csv"]
