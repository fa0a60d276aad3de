"""Warming what-if for design depths: scale by a Clausius-Clapeyron-type rate per kelvin.

This is a planning approximation, not a projection: it assumes extreme depths grow with
the water-holding capacity of saturated air and nothing else changes (storm dynamics,
duration, season, the shape of the distribution).
"""

from __future__ import annotations

import numbers
from typing import Any, TypeVar

import numpy as np
import xarray as xr

from ..errors import ParameterError
from ..provenance import with_history
from .thermo import clausius_clapeyron_rate

__all__ = ["warming_scaling", "DESIGN_DEPTH_CAUTIONS", "CC_RATE_20C"]

DESIGN_DEPTH_CAUTIONS = (
    "Planning-level estimates only, not design values.",
    "Gridded values smooth point extremes: an areal (grid-cell) depth is not a point (gauge) depth "
    "and is usually lower.",
    "Assumes the climate of the record is stationary; a trend or shift in the record biases the estimates.",
    "Return-level intervals cover sampling error of the fit only, not the choice of distribution or data errors.",
    "Defer to the jurisdiction's adopted design-rainfall estimates, local codes and licensed engineering practice.",
)

# d ln(e_s)/dT at 20 degC from the Magnus form of Alduchov & Eskridge (1996): about 0.0619 per K.
CC_RATE_20C = float(clausius_clapeyron_rate(20.0))

_CONVENTIONS = ("compound", "exponential")
_XR = TypeVar("_XR", xr.DataArray, xr.Dataset)


def _check_number(value: Any, name: str, lo: float, hi: float, expected: str, fix: str) -> None:
    if isinstance(value, xr.DataArray):
        return
    if (
        not isinstance(value, numbers.Real)
        or isinstance(value, bool)
        or not np.isfinite(value)  # type: ignore[call-overload]  # numpy stubs take no numbers.Real
        or not (lo <= value <= hi)  # type: ignore[operator]
    ):
        raise ParameterError(f"{name}={value!r} is not allowed", variable=name, expected=expected, fix=fix)


def warming_scaling(field: _XR, delta_t: Any, rate: float = 0.07, convention: str = "compound") -> _XR:
    """Scale precipitation depths for a warming of ``delta_t`` kelvin.

    factor = (1 + rate) ** delta_t      (``convention="compound"``, default)
    factor = exp(rate * delta_t)        (``convention="exponential"``)

    For delta_t = 2 K at 7 %/K the compound factor is 1.1449 and the exponential 1.150274.

    Why 7 %/K: saturation vapour pressure rises by d ln(e_s)/dT = b c / (T + c)^2 per kelvin
    (Clausius-Clapeyron, Magnus form of Alduchov & Eskridge 1996), about 6.2 %/K at 20 degC
    (:data:`CC_RATE_20C`, from :func:`climwidgets.compute.thermo.clausius_clapeyron_rate`)
    and 6.4-6.7 %/K at 10-15 degC; the round figure quoted for extreme precipitation is
    about 7 % per degC.  Compounding treats the rate as a per-kelvin percentage, as that
    figure is usually stated.  Short-duration extremes can scale faster or slower; pass
    another ``rate`` to explore that.

    Parameters
    ----------
    field
        DataArray of depths (for example return levels), or a Dataset whose variables in
        depth units (``units`` "mm") are scaled (others, e.g. ``shape``, are kept).
    delta_t
        Warming in kelvin (negative for cooling), a number or a DataArray (e.g. per scenario).
    rate
        Fractional increase per kelvin, 0 to 0.25.
    convention
        "compound" ((1 + rate) ** delta_t) or "exponential" (exp(rate * delta_t)).

    Returns
    -------
    xarray.DataArray or xarray.Dataset
        The scaled depths (the same kind of object as ``field``), with the warming, rate,
        convention and :data:`DESIGN_DEPTH_CAUTIONS` in attrs and a history line.

    Raises
    ------
    climwidgets.errors.ParameterError
        An unknown convention, a rate outside 0-0.25, a warming outside -20..20 K, or a
        field that is not a DataArray or Dataset.

    References
    ----------
    Alduchov, O. A. and Eskridge, R. E. (1996). Improved Magnus form approximation of
    saturation vapor pressure. Journal of Applied Meteorology, 35(4), 601-609.
    https://doi.org/10.1175/1520-0450(1996)035<0601:IMFAOS>2.0.CO;2

    Examples
    --------
    >>> import xarray as xr
    >>> import climwidgets as cw
    >>> depth = xr.DataArray([100.0, 50.0], dims="cell", attrs={"units": "mm"})
    >>> cw.warming_scaling(depth, 2.0).values  # (1 + 0.07) ** 2 = 1.1449
    array([114.49 ,  57.245])
    >>> cw.warming_scaling(depth, 2.0, convention="exponential").values.round(3)
    array([115.027,  57.514])
    """
    if convention not in _CONVENTIONS:
        raise ParameterError(
            f"unknown convention {convention!r}",
            variable="convention",
            expected="'compound' ((1 + rate)**delta_t) or 'exponential' (exp(rate*delta_t))",
            fix="use convention='compound'",
        )
    _check_number(
        rate,
        "rate",
        0.0,
        0.25,
        "a fraction per kelvin between 0 and 0.25 (0.07 means 7 %/K)",
        "pass rate=0.07; a percentage like 7 must be given as 0.07",
    )
    _check_number(
        delta_t,
        "delta_t",
        -20.0,
        20.0,
        "a warming in kelvin between -20 and 20",
        "pass the temperature change in kelvin, e.g. delta_t=2.0",
    )
    if not isinstance(field, (xr.DataArray, xr.Dataset)):
        raise ParameterError(
            f"field is a {type(field).__name__}",
            variable="field",
            expected="an xarray DataArray or Dataset of depths in mm",
            fix="wrap the values in an xarray.DataArray with attrs units='mm'",
        )
    factor = (1.0 + rate) ** delta_t if convention == "compound" else np.exp(rate * delta_t)

    def scale(da: xr.DataArray) -> xr.DataArray:
        out: xr.DataArray = da * factor
        out.attrs = dict(da.attrs)
        return out

    if isinstance(field, xr.Dataset):
        out = field.copy()
        for name, da in field.data_vars.items():
            if da.attrs.get("units") == "mm":
                out[name] = scale(da)
        out.attrs = dict(field.attrs)
    else:
        out = scale(field)
    out.attrs.update(
        warming_delta_t=delta_t if not isinstance(delta_t, xr.DataArray) else "see delta_t coordinate",
        warming_rate=rate,
        warming_convention=convention,
        warming_note="planning approximation: depths scaled with the saturation vapour pressure of air "
        f"(Clausius-Clapeyron; d ln e_s/dT = {CC_RATE_20C:.4f} per K at 20 degC)",
        cautions=DESIGN_DEPTH_CAUTIONS,
    )
    dt = "DataArray" if isinstance(delta_t, xr.DataArray) else delta_t
    return with_history(out, "warming_scaling", field.attrs, delta_t=dt, rate=rate, convention=convention)
