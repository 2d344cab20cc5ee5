"""File formats at the edge: atomic writes and the writers built on them."""

from aculink.io.atomic import atomic_path, write_text_atomic

__all__ = ["atomic_path", "write_text_atomic"]
