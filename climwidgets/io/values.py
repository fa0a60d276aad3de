"""Stored values to depths: packing attributes, fill codes, negative and missing values.

Used by the loader on every chunk as it is read (or once at open for small inputs).
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from ..errors import DataValueError

__all__ = ["NEGATIVE_TOLERANCE_MM", "check_packing", "check_values", "convert_block", "mask_likely_fill",
           "needs_fill_heuristics"]

NEGATIVE_TOLERANCE_MM = 0.01  # tiny negatives from packing or interpolation are set to 0
_LIKELY_FILL = (-9999.0, -999.0, -99999.0)


def check_packing(da: xr.DataArray, source, name) -> None:
    """scale_factor, add_offset, _FillValue and missing_value must be numbers to be applied."""
    for key in ("scale_factor", "add_offset", "_FillValue", "missing_value"):
        for where in (da.encoding, da.attrs):
            value = where.get(key)
            if value is None:
                continue
            arr = np.asarray(value)
            if arr.dtype.kind not in "biuf" or (key in ("scale_factor", "add_offset") and arr.size != 1):
                raise DataValueError(f"has {key}={value!r}, which is not a number", source=source, variable=name,
                                     expected=f"a numeric {key} attribute",
                                     fix=f"correct or delete the {key} attribute (for example with ncatted or "
                                         "netCDF4) in a copy of the file")
            if key in ("scale_factor", "add_offset") and not np.all(np.isfinite(arr)):
                raise DataValueError(f"has {key}={value!r}", source=source, variable=name,
                                     expected=f"a finite {key}", fix=f"correct the {key} attribute in a copy of the file")


def needs_fill_heuristics(encoding: dict, attrs: dict) -> bool:
    """Files without a _FillValue sometimes store 1e20 or -9999 for missing values."""
    return not ("_FillValue" in encoding or "missing_value" in encoding or "_FillValue" in attrs)


def mask_likely_fill(block):
    """A float copy of ``block`` with the fill codes of files without _FillValue set to NaN.

    Used on the files of a glob that need the heuristics when other files declare their
    fill (each file's own fill handling, never the first file's for all).
    """
    b = np.asarray(block)
    x = b.astype(np.float64) if b.dtype.kind != "f" else b.astype(b.dtype.newbyteorder("="), copy=True)
    if x.size:
        x[(np.abs(x) >= 1e15) | np.isin(x, _LIKELY_FILL)] = np.nan
    return x


def convert_block(block, factor, mask_fill: bool, guard: bool, source=None, name=None):
    """Stored values -> mm per step (float64 for accurate sums), with few passes over a chunk.

    Two NaN-ignoring reductions (min, max) tell whether a chunk holds fill codes or
    negatives at all, so the usual chunk costs those two reductions and one multiply.
    ``guard`` raises on negatives beyond the tolerance and zeroes the tiny ones; it runs as
    each chunk is read, so large inputs are checked without a separate pass. The input
    block is never modified (dask may share it).
    """
    b = np.asarray(block)
    if b.size == 0:
        return b.astype(np.float64)
    flat = b.reshape(-1)
    lo, hi = float(np.fmin.reduce(flat)), float(np.fmax.reduce(flat))
    x = b.astype(np.float64)  # a new array: the input block is left as it is
    if not (np.isscalar(factor) and factor == 1.0):
        x *= factor  # (np.multiply with dtype= would take numpy's slow buffered casting path)
    if mask_fill and (hi >= 1e15 or lo <= min(_LIKELY_FILL, key=abs) or lo <= -1e15):
        bad = (np.abs(b) >= 1e15) | np.isin(b, _LIKELY_FILL)
        x[bad] = np.nan
        lo = float(np.fmin.reduce(x.reshape(-1))) if (~bad).any() else 0.0
    elif lo < 0:
        lo = float(np.fmin.reduce(x.reshape(-1)))  # in mm, after the factor
    if guard and lo < 0:
        if lo < -NEGATIVE_TOLERANCE_MM:
            raise DataValueError(f"has negative precipitation (lowest {lo:.4g} mm) in a chunk read from disk",
                                 source=source, variable=name, expected="precipitation depths >= 0",
                                 fix="open with validate=True to find where, and check scale_factor/add_offset and units")
        x[x < 0] = 0.0
    return x


def check_values(da: xr.DataArray, source, name):
    """Negative depths and all-missing data, checked in one pass."""
    import dask

    lowest, valid = dask.compute(da.min(skipna=True), da.count())
    if int(valid) == 0:
        raise DataValueError("contains no valid values (all missing)", source=source, variable=name,
                             expected="some non-missing precipitation", fix="check _FillValue/missing_value and the period chosen")
    if float(lowest) < -NEGATIVE_TOLERANCE_MM:
        neg = da < -NEGATIVE_TOLERANCE_MM
        count = int(neg.sum())
        where = neg.argmax(dim=...)
        loc = ", ".join(f"{k}={da[k].values[int(v)]}" for k, v in where.items())
        raise DataValueError(f"has {count} negative value(s) below -{NEGATIVE_TOLERANCE_MM} mm (lowest {float(lowest):.4g} mm; "
                             f"first at {loc})", source=source, variable=name,
                             expected="precipitation depths >= 0", fix="check the scale_factor/add_offset and units; "
                             "clip small negatives with .clip(min=0) if they are interpolation noise")
