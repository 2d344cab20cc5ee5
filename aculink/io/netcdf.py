"""NetCDF output (netCDF4 engine), written atomically."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from aculink.io.atomic import atomic_path

__all__ = ["netcdf_encoding", "write_netcdf"]


def netcdf_encoding(ds) -> dict:
    """Per-variable encoding: compressed floats, variable-length strings, no fill on coords."""
    enc = {}
    for name, var in ds.variables.items():
        if var.dtype.kind == "f":
            enc[name] = {"zlib": True, "complevel": 4, "_FillValue": np.nan if name not in ds.coords else None}
        elif var.dtype.kind in "OU":
            enc[name] = {"dtype": str}
    return enc


def write_netcdf(ds, path, *, overwrite: bool = False) -> Path:
    """Write an xarray Dataset to ``path`` as NetCDF-4, atomically.

    Parameters
    ----------
    ds : xarray.Dataset
    path : str or Path
    overwrite : bool
        Replace an existing file only when True.

    Raises
    ------
    AculinkError
        When the file exists and ``overwrite`` is False, or the folder is missing or not
        writable (nothing is written then).
    """
    with atomic_path(path, overwrite=overwrite) as tmp:
        ds.to_netcdf(tmp, engine="netcdf4", format="NETCDF4", encoding=netcdf_encoding(ds))
    return Path(path)
