"""Stored values to depths: packing attributes, fill codes, negative and missing values.

Used by the loader on every chunk as it is read (or once at open for small inputs).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike, NDArray

from ..errors import DataValueError

__all__ = [
    "NEGATIVE_TOLERANCE_MM",
    "PLAUSIBLE_FACTOR",
    "check_depth_bound",
    "check_packing",
    "check_values",
    "convert_block",
    "default_max_depth",
    "mask_likely_fill",
    "needs_fill_heuristics",
]

NEGATIVE_TOLERANCE_MM = 0.01  # tiny negatives from packing or interpolation are set to 0
_LIKELY_FILL = (-9999.0, -999.0, -99999.0)
# The envelope of the world's greatest observed point rainfalls, P = 422 mm x D^0.475 with the
# duration D in hours (Jennings 1950; 16.6 inches x D^0.475; from memory): about 60 mm in a
# minute, 420 mm in an hour, 1.9 m in a day and 9.6 m in a month, above every record
# (31 mm, 305 mm, 1825 mm, 9300 mm). Grid-cell means stay below point records; twice the
# envelope leaves room for model grid-point storms while fill codes (1e20, 9.97e36, 32767)
# and rates read with the wrong units (mm/s for mm/day gives 86 400 times too much) fail.
RECORD_ENVELOPE_MM, RECORD_ENVELOPE_EXPONENT = 422.0, 0.475
PLAUSIBLE_FACTOR = 2.0


def check_packing(da: xr.DataArray, source: object, name: object) -> None:
    """scale_factor, add_offset, _FillValue and missing_value must be numbers to be applied.

    Parameters
    ----------
    da : xarray.DataArray
        The variable as opened (attributes and encoding are read).
    source, name : object
        Named in the error message.

    Returns
    -------
    None

    Raises
    ------
    DataValueError
        For a packing attribute that is text, or a scale or offset that is not finite.

    References
    ----------
    CF Conventions 1.11, section 8.1 "Packed data".

    Examples
    --------
    >>> import xarray as xr
    >>> check_packing(xr.DataArray([1], attrs={"scale_factor": 0.1}), "pr.nc", "pr")
    """
    for key in ("scale_factor", "add_offset", "_FillValue", "missing_value"):
        for where in (da.encoding, da.attrs):
            value = where.get(key)
            if value is None:
                continue
            arr = np.asarray(value)
            if arr.dtype.kind not in "biuf" or (key in ("scale_factor", "add_offset") and arr.size != 1):
                raise DataValueError(
                    f"has {key}={value!r}, which is not a number",
                    source=source,
                    variable=name,
                    expected=f"a numeric {key} attribute",
                    fix=f"correct or delete the {key} attribute (for example with ncatted or "
                    "netCDF4) in a copy of the file",
                )
            if key in ("scale_factor", "add_offset") and not np.all(np.isfinite(arr)):
                raise DataValueError(
                    f"has {key}={value!r}",
                    source=source,
                    variable=name,
                    expected=f"a finite {key}",
                    fix=f"correct the {key} attribute in a copy of the file",
                )


def needs_fill_heuristics(encoding: Mapping[Any, Any], attrs: Mapping[Any, Any]) -> bool:
    """Files without a _FillValue sometimes store 1e20 or -9999 for missing values.

    Parameters
    ----------
    encoding, attrs : mapping
        The variable's encoding and attributes.

    Returns
    -------
    bool
        True when neither declares a fill value (the heuristics then apply).

    Examples
    --------
    >>> needs_fill_heuristics({}, {}), needs_fill_heuristics({"_FillValue": -9999.0}, {})
    (True, False)
    """
    return not ("_FillValue" in encoding or "missing_value" in encoding or "_FillValue" in attrs)


def mask_likely_fill(block: ArrayLike) -> NDArray[np.floating[Any]]:
    """A float copy of ``block`` with the fill codes of files without _FillValue set to NaN.

    Used on the files of a glob that need the heuristics when other files declare their
    fill (each file's own fill handling, never the first file's for all).

    Parameters
    ----------
    block : array_like

    Returns
    -------
    numpy.ndarray
        Floating point, native byte order.

    Examples
    --------
    >>> mask_likely_fill([1.0, -9999.0, 1e20])
    array([ 1., nan, nan])
    """
    b = np.asarray(block)
    x = b.astype(np.float64) if b.dtype.kind != "f" else b.astype(b.dtype.newbyteorder("="), copy=True)
    if x.size:
        x[(np.abs(x) >= 1e15) | np.isin(x, _LIKELY_FILL)] = np.nan
    return x


def default_max_depth(step_seconds: float) -> float:
    """The largest plausible depth in mm for one step of ``step_seconds`` (see PLAUSIBLE_FACTOR).

    Parameters
    ----------
    step_seconds : float
        Length of the step in seconds (31 days for monthly data).

    Returns
    -------
    float
        Twice the envelope of world-record point rainfalls for that duration, in mm.

    References
    ----------
    Jennings, A. H. (1950). World's greatest observed point rainfalls. Monthly Weather
    Review, 78(1), 4-5 (cited from memory; the envelope coefficient and exponent too).

    Examples
    --------
    >>> round(default_max_depth(86400.0))
    3819
    """
    hours = float(step_seconds) / 3600.0
    return float(PLAUSIBLE_FACTOR * RECORD_ENVELOPE_MM * hours**RECORD_ENVELOPE_EXPONENT)


def _label(value: object) -> str:
    text = str(value)
    return text[:19].replace("T", " ") if len(text) >= 19 and text[4] == "-" else text


def check_depth_bound(
    x: ArrayLike,
    max_depth: float,
    source: object = None,
    name: object = None,
    labels: Sequence[ArrayLike] | None = None,
    dims: Sequence[str] | None = None,
    offset: Sequence[int] | None = None,
    files: Sequence[tuple[Any, str]] | None = None,
) -> None:
    """Raise a DataValueError when a depth of ``x`` (mm per step; NaN missing) exceeds ``max_depth``.

    ``labels`` (one 1-D array per axis of ``x``: the coordinate values of the block) or
    ``offset`` (the block's first index on each axis) say where the first offending value is;
    ``files`` (``(first time stamp, path)`` of each file of a glob, in time order) names the
    file it came from.

    Parameters
    ----------
    x : array_like
        Depths in mm per step.
    max_depth : float
        The bound (:func:`default_max_depth`).
    source, name : optional
        Named in the message.
    labels, dims, offset, files : optional
        Where the block lies (see above).

    Returns
    -------
    None

    Raises
    ------
    DataValueError
        At the first depth above the bound, saying where.

    Examples
    --------
    >>> check_depth_bound([1.0, 2.0], 100.0)
    >>> try:
    ...     check_depth_bound([1.0, 1e20], 100.0, dims=["time"])
    ... except DataValueError as err:
    ...     print(err.problem.split(";")[1].strip())
    first at time index 1)
    """
    over = np.asarray(x) > max_depth
    if not over.any():
        return
    first = np.unravel_index(int(np.argmax(over)), over.shape)
    dims = dims or [f"axis {i}" for i in range(over.ndim)]
    if labels is not None:
        where = ", ".join(f"{d}={_label(np.asarray(lab).reshape(-1)[i])}" for d, lab, i in zip(dims, labels, first))
        if files and "time" in dims:
            stamp = np.asarray(labels[dims.index("time")]).reshape(-1)[first[dims.index("time")]]
            source = next((path for t0, path in reversed(files) if t0 <= stamp), source)
    else:
        where = ", ".join(f"{d} index {int(i) + int(o)}" for d, i, o in zip(dims, first, offset or [0] * over.ndim))
    count, top = int(over.sum()), float(np.nanmax(x))
    raise DataValueError(
        f"has {count} depth(s) above the plausible {max_depth:.6g} mm per step in a chunk "
        f"(largest {top:.4g} mm; first at {where})",
        source=source,
        variable=name,
        expected="depths below twice the world-record rainfall for the step length",
        fix="check the units (a rate in mm/s read as mm/day?) and the _FillValue/missing_value "
        "(a fill code that is not declared is read as a depth); pass max_depth_mm= to "
        "cw.open_precip to set another bound, or None to turn the check off",
    )


def convert_block(
    block: ArrayLike,
    factor: float | NDArray[Any],
    *labels: ArrayLike,
    mask_fill: bool,
    guard: bool,
    source: object = None,
    name: object = None,
    max_depth: float | None = None,
    dims: Sequence[str] | None = None,
    files: Sequence[tuple[Any, str]] | None = None,
) -> NDArray[np.float64]:
    """Stored values -> mm per step (float64 for accurate sums), with few passes over a chunk.

    Two NaN-ignoring reductions (min, max) tell whether a chunk holds fill codes or
    negatives at all, so the usual chunk costs those two reductions and one multiply.
    ``guard`` raises on negatives beyond the tolerance and zeroes the tiny ones; it runs as
    each chunk is read, so large inputs are checked without a separate pass. ``max_depth``
    (mm per step) refuses implausible depths; it costs nothing unless the chunk's stored
    maximum times the factor is above the bound. ``labels`` are the block's coordinate
    values along each axis, to say where. The input block is never modified (dask may
    share it).

    Parameters
    ----------
    block : array_like
        Stored values of one chunk.
    factor : float or numpy.ndarray
        Stored units to mm per step (broadcast against the block).
    *labels : array_like
        Coordinate values of the block along each axis.
    mask_fill, guard : bool
        Apply the fill heuristics; refuse negatives.
    source, name, max_depth, dims, files : optional
        As for :func:`check_depth_bound`.

    Returns
    -------
    numpy.ndarray
        float64 depths in mm per step.

    Raises
    ------
    DataValueError
        For negatives beyond the tolerance (``guard``) or depths above ``max_depth``.

    Examples
    --------
    >>> convert_block([0.5, -1e-9, 2.0], 2.0, mask_fill=False, guard=True)
    array([1., 0., 4.])
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
            raise DataValueError(
                f"has negative precipitation (lowest {lo:.4g} mm) in a chunk read from disk",
                source=source,
                variable=name,
                expected="precipitation depths >= 0",
                fix="open with validate=True to find where, and check scale_factor/add_offset and units",
            )
        x[x < 0] = 0.0
    if max_depth is not None and hi * float(np.max(factor)) > max_depth:
        check_depth_bound(x, max_depth, source, name, labels=labels or None, dims=dims, files=files)
    return x


def check_values(da: xr.DataArray, source: object, name: object) -> None:
    """Negative depths and all-missing data, checked in one pass.

    Parameters
    ----------
    da : xarray.DataArray
        Depths in mm per step (lazy or in memory).
    source, name : object
        Named in the message.

    Returns
    -------
    None

    Raises
    ------
    DataValueError
        When every value is missing, or for negatives below the tolerance (saying where).

    Examples
    --------
    >>> import xarray as xr
    >>> check_values(xr.DataArray([0.0, 1.5], dims="time", coords={"time": [0, 1]}), "pr.nc", "pr")
    """
    from dask.base import compute as dask_compute

    lowest, valid = dask_compute(da.min(skipna=True), da.count())  # type: ignore[no-untyped-call]
    if int(valid) == 0:
        raise DataValueError(
            "contains no valid values (all missing)",
            source=source,
            variable=name,
            expected="some non-missing precipitation",
            fix="check _FillValue/missing_value and the period chosen",
        )
    if float(lowest) < -NEGATIVE_TOLERANCE_MM:
        neg = da < -NEGATIVE_TOLERANCE_MM
        count = int(neg.sum())
        where = neg.argmax(dim=...)
        loc = ", ".join(f"{k}={da[k].values[int(v)]}" for k, v in where.items())
        raise DataValueError(
            f"has {count} negative value(s) below -{NEGATIVE_TOLERANCE_MM} mm (lowest {float(lowest):.4g} mm; "
            f"first at {loc})",
            source=source,
            variable=name,
            expected="precipitation depths >= 0",
            fix="check the scale_factor/add_offset and units; "
            "clip small negatives with .clip(min=0) if they are interpolation noise",
        )
