"""Planning: the highest workable rate per range (tables) and over grids (resumable sweeps).

:func:`plan_rates` builds the range-versus-rate table for one receiver depth; :func:`run_sweep`
sweeps range x depth (x source depth x wind), in chunks that share a ray fan, serially or on
Dask, with a checkpoint per chunk, and writes a NetCDF dataset.
"""

from aculink.planning.search import CandidateGrid, candidate_symbol_rates, select_workable
from aculink.planning.sweep import run_sweep
from aculink.planning.table import plan_rates, plan_rows

__all__ = ["plan_rates", "plan_rows", "run_sweep", "CandidateGrid", "candidate_symbol_rates",
           "select_workable"]
