"""Turn what the user passed (path, glob, list, URL, Zarr store) into opened datasets.

Opening never reads data values: only metadata and coordinates.  Every failure of the
underlying libraries is turned into a :class:`SourceError` that names the file.
"""

from __future__ import annotations

import glob
import os
import warnings
from pathlib import Path

import xarray as xr

from ..errors import SourceError

_GLOB_CHARS = set("*?[")
_URL_PREFIXES = ("http://", "https://", "dods://", "dap://", "dap4://")


def is_url(text: str) -> bool:
    return str(text).lower().startswith(_URL_PREFIXES)


def is_zarr(path: str | os.PathLike) -> bool:
    p = Path(path)
    return p.suffix == ".zarr" or (p.is_dir() and any((p / m).exists() for m in (".zgroup", ".zarray", "zarr.json")))


def resolve(source) -> list[str]:
    """A list of concrete sources (paths, stores or URLs) in the order given or sorted by name."""
    if isinstance(source, (list, tuple)):
        if not source:
            raise SourceError("an empty list of files was given", expected="one or more paths",
                              fix="pass a path, a glob pattern such as 'data/pr_*.nc', or a list of paths")
        out = []
        for item in source:
            out.extend(resolve(item))
        return out
    text = os.fspath(source) if isinstance(source, os.PathLike) else str(source)
    if is_url(text):
        return [text]
    expanded = os.path.expanduser(text)
    if _GLOB_CHARS & set(expanded):
        matches = sorted(glob.glob(expanded))
        if not matches:
            raise SourceError("the pattern matches no files", source=text, expected="at least one matching file",
                              fix="check the folder and the pattern (is the extension .nc or .nc4?)")
        return matches
    if not os.path.exists(expanded):
        raise SourceError("does not exist", source=text, expected="an existing NetCDF file or Zarr store",
                          fix="check the path; relative paths are taken from the notebook's working folder "
                              f"({os.getcwd()})")
    if os.path.isdir(expanded) and not is_zarr(expanded):
        raise SourceError("is a folder but not a Zarr store", source=text,
                          expected="a NetCDF file, a glob pattern, or a Zarr store",
                          fix=f"pass a pattern such as '{os.path.join(text, '*.nc')}'")
    return [expanded]


def open_raw(source: str) -> xr.Dataset:
    """Open one source lazily with times left undecoded (they are checked before decoding)."""
    try:
        if is_zarr(source):
            with warnings.catch_warnings():  # stores without consolidated metadata are fine
                warnings.simplefilter("ignore", RuntimeWarning)
                return xr.open_dataset(source, engine="zarr", decode_times=False, chunks=None)
        return xr.open_dataset(source, engine="netcdf4", decode_times=False, chunks=None, cache=False)
    except Exception as exc:  # every backend failure becomes one readable error
        if is_zarr(source):
            problem = "could not be opened as a Zarr store (is it empty or incomplete?)"
            fix = "check that the store was written completely; rewrite it with xarray's to_zarr"
        elif is_url(source):
            problem = "could not be opened as an OPeNDAP URL"
            fix = "check the address and that the server is reachable from this machine"
        else:
            size = os.path.getsize(source) if os.path.exists(source) else 0
            problem = (f"could not be read as NetCDF ({size} bytes; it may be truncated, still being "
                       "written, or not a NetCDF file)")
            fix = "check the file with 'ncdump -h', download or copy it again"
        raise SourceError(f"{problem}: {type(exc).__name__}: {exc}", source=source, fix=fix) from None
