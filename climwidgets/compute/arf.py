"""Areal reduction factor (ARF): from a point depth to the mean depth over an area.

Method: the fixed-area (geographically fixed) curves of the U.S. Weather Bureau Technical
Paper 29 (1957-1960, *Rainfall intensity-frequency regime*), in the closed form fitted to
them by Leclerc & Schaake (1972)::

    ARF = 1 - exp(-1.1 t^0.25) + exp(-1.1 t^0.25 - 0.01 A)

with t the duration in hours and A the area in square miles.  The factor is 1 at zero
area, falls with area and rises with duration.  The curves behind it span 30 minutes to
24 hours and areas up to 400 square miles (1036 km²); outside that range the formula is an
extrapolation, so the factor is returned with ``attrs["extrapolated"]`` and a warning.

Fixed-area factors relate the T-year depth over the area to the T-year point depth; they
are not storm-centred factors, and they do not depend on the return period in this form.
Grid cells are themselves area averages: treating them as points is common practice only
for grids much finer than the basin.
"""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np
import xarray as xr

from ..errors import ParameterError

__all__ = ["ARF_RANGE", "ARF_SOURCE", "SQUARE_MILE_KM2", "areal_reduction_factor"]

#: One square mile in km² with the international mile of 1609.344 m (exact).
SQUARE_MILE_KM2 = 1.609344**2
#: Durations (hours) and areas (km²) covered by the published curves.
ARF_RANGE = {"duration_hours": (0.5, 24.0), "area_km2": (0.0, 400 * SQUARE_MILE_KM2)}
ARF_SOURCE = (
    "U.S. Weather Bureau (1957-1960) Technical Paper 29, fixed-area depth-area curves, "
    "in the form fitted by Leclerc & Schaake (1972, MIT Ralph M. Parsons Laboratory Report 142): "
    "ARF = 1 - exp(-1.1 t^0.25) + exp(-1.1 t^0.25 - 0.01 A), t hours, A square miles"
)


class ARFExtrapolationWarning(UserWarning):
    """Duration or area outside the range of the published curves."""


def _check(values: Any, name: str, allow_zero: bool) -> np.ndarray:
    arr = np.asarray(values.values if isinstance(values, xr.DataArray) else values, dtype=float)
    bad = ~np.isfinite(arr) | ((arr < 0) if allow_zero else (arr <= 0))
    if np.any(bad):
        lim = "0 or more" if allow_zero else "greater than 0"
        raise ParameterError(
            f"{name} contains values that are not finite numbers {lim}",
            variable=name,
            expected=f"finite {name} {lim}",
            fix=f"pass {name} as positive numbers",
        )
    return arr


def areal_reduction_factor(duration_hours: Any, area_km2: Any) -> xr.DataArray:
    """Fixed-area ARF of TP-29 (Leclerc & Schaake 1972 form) for durations and areas.

    Parameters
    ----------
    duration_hours
        Duration(s) in hours (scalar, array or DataArray; broadcast against the area).
    area_km2
        Area(s) in km² (converted to square miles with :data:`SQUARE_MILE_KM2`).

    Returns
    -------
    xarray.DataArray
        The factor (units "1"), broadcast over the inputs' dims (DataArrays keep theirs;
        plain arrays get ``duration`` / ``area`` dims when 1-D).  ``attrs["extrapolated"]``
        is True when any value lies outside :data:`ARF_RANGE`, and a
        :class:`ARFExtrapolationWarning` is issued.

    Raises
    ------
    climwidgets.errors.ParameterError
        Durations not positive, areas negative, or values not finite.

    References
    ----------
    U.S. Weather Bureau (1957-1960) Rainfall intensity-frequency regime. Technical Paper 29,
    parts 1-5, U.S. Department of Commerce, Washington DC.
    Leclerc, G. & Schaake, J. C. (1972) Derivation of hydrologic frequency curves. Report 142,
    Ralph M. Parsons Laboratory for Water Resources and Hydrodynamics, MIT, Cambridge MA.

    Examples
    --------
    >>> import climwidgets as cw
    >>> cw.areal_reduction_factor(24.0, [0.0, 100.0, 1000.0]).values.round(3)  # 24 h, km²
    array([1.   , 0.972, 0.914])
    >>> cw.areal_reduction_factor([1.0, 24.0], 500.0).values.round(3)  # rises with duration
    array([0.715, 0.925])
    """
    t = _check(duration_hours, "duration_hours", allow_zero=False)
    a = _check(area_km2, "area_km2", allow_zero=True)
    t_da = (
        duration_hours
        if isinstance(duration_hours, xr.DataArray)
        else xr.DataArray(t, dims=("duration",) if t.ndim == 1 else tuple(f"duration_{i}" for i in range(t.ndim)))
    )
    a_da = (
        area_km2
        if isinstance(area_km2, xr.DataArray)
        else xr.DataArray(a, dims=("area",) if a.ndim == 1 else tuple(f"area_{i}" for i in range(a.ndim)))
    )
    miles2 = a_da / SQUARE_MILE_KM2
    decay = 1.1 * t_da.astype(float) ** 0.25
    arf: xr.DataArray = 1.0 - np.exp(-decay) + np.exp(-decay - 0.01 * miles2)  # type: ignore[assignment]
    (t_lo, t_hi), (_, a_hi) = ARF_RANGE["duration_hours"], ARF_RANGE["area_km2"]
    extrapolated = bool(np.any((t < t_lo) | (t > t_hi)) or np.any(a > a_hi))
    if extrapolated:
        warnings.warn(
            "areal reduction factor outside the published curves (30 min to 24 h, up to "
            "400 square miles = 1036 km²): the values are an extrapolation of the formula",
            ARFExtrapolationWarning,
            stacklevel=2,
        )
    arf = arf.rename("areal_reduction_factor")
    arf.attrs = {
        "units": "1",
        "long_name": "areal reduction factor (fixed area)",
        "method": ARF_SOURCE,
        "extrapolated": int(extrapolated),
        "valid_range": "durations 0.5-24 h, areas up to 400 square miles (1036 km²)",
    }
    return arf
