"""Depths in millimetres or inches for design-depth tables (one home for the conversion).

The inch is exactly 25.4 mm (international yard and pound agreement, 1959).  Everything
in the suite computes in mm; tables, widgets and exports convert at the end with
:func:`convert_depth`, which touches only variables whose ``units`` attr is "mm".
"""

from __future__ import annotations

from typing import TypeVar

import xarray as xr

from ..errors import ParameterError

__all__ = ["DEPTH_UNITS", "MM_PER_INCH", "check_depth_units", "convert_depth"]

#: Millimetres in one inch (exact by definition).
MM_PER_INCH = 25.4
DEPTH_UNITS = {"mm": 1.0, "in": MM_PER_INCH}
_XR = TypeVar("_XR", xr.DataArray, xr.Dataset)


def check_depth_units(units: str) -> str:
    """Check that ``units`` names a depth unit offered for design-depth tables.

    Parameters
    ----------
    units
        "mm" or "in".

    Returns
    -------
    str
        ``units``, unchanged.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``units`` is neither "mm" nor "in".

    Examples
    --------
    >>> from climwidgets.compute.depth_units import check_depth_units
    >>> check_depth_units("in")
    'in'
    """
    if units not in DEPTH_UNITS:
        raise ParameterError(
            f"units={units!r} is not a depth unit offered here",
            variable="units",
            expected="'mm' or 'in'",
            fix="pass units='mm' (default) or units='in'",
        )
    return units


def convert_depth(obj: _XR, units: str = "mm") -> _XR:
    """Return ``obj`` (DataArray or Dataset) with its mm depths in ``units`` ("mm" or "in").

    Variables without ``units == "mm"`` (counts, fractions, shapes) are left alone; lazy
    data stay lazy; the input is not modified.  Converted variables get ``units`` set and
    ``attrs["mm_per_inch"] = 25.4``.

    Parameters
    ----------
    obj
        A DataArray or Dataset whose depth variables carry ``units == "mm"``.
    units
        "mm" (returns ``obj`` itself) or "in".

    Returns
    -------
    xarray.DataArray or xarray.Dataset
        The same kind of object as ``obj``; a Dataset gets ``attrs["depth_units"]``.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``units`` is not "mm" or "in", or ``obj`` is not a DataArray or Dataset.

    References
    ----------
    The inch of the international yard and pound agreement (1959): exactly 25.4 mm.

    Examples
    --------
    >>> import xarray as xr
    >>> import climwidgets as cw
    >>> depth = xr.DataArray([25.4, 50.8], dims="duration", attrs={"units": "mm"})
    >>> inches = cw.convert_depth(depth, "in")
    >>> inches.values, inches.attrs["units"]
    (array([1., 2.]), 'in')
    """
    check_depth_units(units)
    if units == "mm":
        return obj
    factor = DEPTH_UNITS[units]

    def one(da: xr.DataArray) -> xr.DataArray:
        if da.attrs.get("units") != "mm":
            return da
        out = da / factor
        out.attrs = {**da.attrs, "units": units, "mm_per_inch": MM_PER_INCH}
        return out

    if isinstance(obj, xr.DataArray):
        return one(obj)
    if isinstance(obj, xr.Dataset):
        out = obj.copy()
        for name in obj.data_vars:
            out[name] = one(obj[name])
        out.attrs = {**obj.attrs, "depth_units": units}
        return out
    raise ParameterError(
        f"cannot convert a {type(obj).__name__}",
        variable="obj",
        expected="an xarray DataArray or Dataset",
        fix="pass the result of a design-depth function",
    )
