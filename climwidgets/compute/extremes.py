"""Annual maxima of n-day (or n-hour) running totals, with the date of each maximum.

Rules (stated again in the result's attrs):

* Running totals: a window of n consecutive steps; a window with any missing step is
  skipped (it is not a short sum).  A window belongs to the year that contains its last
  step.
* Years: calendar years (``year_start=1``) or 12-month years beginning in ``year_start``
  (10 = October-September water year), labelled by the calendar year in which they end.
* Completeness (common practice): a year counts only if at least ``min_valid_fraction`` of
  its steps (by the calendar of the data: 365, 366 or 360 days) are present.  Years that
  the time axis itself covers too little (the partial first and last years of a record)
  are dropped; inside the record, a cell whose year has too many missing steps gets NaN.
  Missing steps can hide the true maximum, so the fraction should stay high.
* ``fixed_to_sliding``: maxima of fixed intervals (observation days) underestimate maxima
  of a sliding window of the same length.  Hershfield (1961, U.S. Weather Bureau Technical
  Paper 40) gives 1.13 for the 1-day / 24-hour case.  Off by default; recorded in attrs.
"""

from __future__ import annotations

import datetime as _dt
import numbers
from typing import Any

import numpy as np
import xarray as xr

from ..errors import DataValueError, ParameterError, TimeAxisError
from ..io.timeaxis import STEP_SECONDS
from ..provenance import with_history
from ._time import check_year_start, is_dask, precip_mm, source_name

__all__ = ["annual_maxima", "annual_maxima_window", "DAY_DURATIONS", "HOUR_DURATIONS", "DEFAULT_MIN_VALID_FRACTION"]

DAY_DURATIONS = (1, 2, 3, 5, 7, 10)
HOUR_DURATIONS = (1, 3, 6, 12, 24)
DEFAULT_MIN_VALID_FRACTION = 0.9
_STEP = {name: _dt.timedelta(seconds=seconds) for name, seconds in STEP_SECONDS.items()}


def _check_positive_int(value: Any, name: str, allowed: tuple[int, ...], extra: str = "") -> int:
    fix = f"choose one of {allowed}{extra}"
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise ParameterError(
            f"{name}={value!r} is not a whole number", variable=name, expected=f"one of {allowed}", fix=fix
        )
    if value <= 0:
        raise ParameterError(
            f"{name}={value} is not positive", variable=name, expected=f"a positive duration, one of {allowed}", fix=fix
        )
    if value not in allowed:
        raise ParameterError(
            f"{name}={value} is not a supported duration", variable=name, expected=f"one of {allowed}", fix=fix
        )
    return int(value)


def _window(step: str, duration_days: Any, duration_hours: Any, src: str) -> tuple[int, str]:
    """Number of steps per window and a label such as '3 day'."""
    if step == "month":
        raise TimeAxisError(
            "monthly totals cannot give n-day maxima",
            source=src,
            expected="daily or hourly depths (attrs['step'] 'day' or 'hour')",
            fix="use daily or hourly data for annual maxima",
        )
    if duration_hours is not None:
        if duration_days not in (None, 1):
            raise ParameterError(
                "both duration_days and duration_hours were given",
                variable="duration_hours",
                expected="one duration",
                fix="pass duration_hours alone, or duration_days alone",
            )
        hours = _check_positive_int(duration_hours, "duration_hours", HOUR_DURATIONS)
        step_hours = STEP_SECONDS.get(step, 86400.0) / 3600.0
        if step == "day" or hours % step_hours:
            raise ParameterError(
                f"duration_hours={hours} needs hourly input (or a step that divides it); the data step is {step!r}",
                source=src,
                variable="duration_hours",
                expected="attrs['step'] 'hour', or an n-hour step that divides the duration",
                fix="use duration_days with daily data",
            )
        return int(hours // step_hours), f"{hours} hour"
    days = _check_positive_int(duration_days, "duration_days", DAY_DURATIONS)
    return int(round(days * 86400.0 / STEP_SECONDS[step])), f"{days} day"


def _check_regular(times: np.ndarray, step: str, src: str) -> None:
    """Running totals over positions need one step between neighbours, no gaps."""
    if len(times) < 2:
        return
    diffs = np.diff(np.asarray(times))
    expected: Any = _STEP[step]
    if isinstance(times[0], np.datetime64):
        expected = np.timedelta64(expected)
    if not np.all(diffs == expected):
        raise TimeAxisError(
            f"the time axis has gaps or steps other than one {step}",
            source=src,
            expected=f"consecutive {step}s (missing values as NaN, not missing steps)",
            fix="reindex onto a complete time axis, e.g. pr.resample(time=...).asfreq()",
        )


def _year_start_date(template: Any, year: int, month: int) -> Any:
    """First instant of (year, month) in the calendar of ``template`` (a time value)."""
    if isinstance(template, np.datetime64):
        return np.datetime64(f"{year:04d}-{month:02d}-01", "ns")
    return type(template)(year, month, 1, calendar=template.calendar, has_year_zero=template.has_year_zero)


def _nominal_steps(template: Any, labels: np.ndarray, year_start: int, step: str) -> np.ndarray:
    """Steps a complete year has in the data's calendar, per label year."""
    out = []
    for y in labels:  # a handful of years, on coordinates only
        first = int(y) - 1 if year_start > 1 else int(y)
        span = _year_start_date(template, first + 1, year_start) - _year_start_date(template, first, year_start)
        if isinstance(span, np.timedelta64):
            span = span.astype("timedelta64[s]").item()
        out.append(span / _STEP[step])
    return np.asarray(out)


def annual_maxima(
    pr: xr.DataArray,
    duration_days: int | None = 1,
    duration_hours: int | None = None,
    year_start: int = 1,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
    fixed_to_sliding: float | None = None,
    return_dates: bool = False,
) -> Any:  # DataArray, or Dataset with return_dates
    """Annual maximum of n-day (or n-hour) running totals, per cell.

    Parameters
    ----------
    pr
        Precipitation depth per step (mm), daily or hourly, dims ``time`` plus any spatial
        dims; numpy- or dask-backed; numpy datetime64 or cftime time axis without gaps.
    duration_days
        Window length in days: 1, 2, 3, 5, 7 or 10.
    duration_hours
        Window length in hours for hourly input: 1, 3, 6, 12 or 24 (instead of days).
    year_start
        First month of the year; 10 gives October-September water years labelled by the
        year in which they end.
    min_valid_fraction
        A year counts only if at least this fraction of its steps is present (default 0.9,
        common practice); see the module notes.
    fixed_to_sliding
        Optional factor (1 to 1.5) applied to the maxima to estimate sliding-window maxima
        from fixed intervals, e.g. 1.13 (Hershfield 1961) for daily data.  Default: none.
    return_dates
        False: return the maxima as a DataArray.  True: return a Dataset with
        ``annual_max`` and the first (``start``) and last (``end``) time step of the window
        that gave each maximum (NaN/NaT where the maximum is missing; the earliest window
        when several tie).

    Returns
    -------
    xarray.DataArray or xarray.Dataset
        Dims ``year`` plus the spatial dims; units "mm".

    Raises
    ------
    climwidgets.errors.ParameterError
        A duration not in the lists, or a bad ``year_start``, ``min_valid_fraction`` or
        ``fixed_to_sliding``.
    climwidgets.errors.TimeAxisError
        Monthly input, gaps in the time axis, or no year complete enough.
    climwidgets.errors.DataValueError
        Negative depths (numpy-backed input; dask input is not scanned).

    References
    ----------
    Hershfield, D. M. (1961). Rainfall frequency atlas of the United States for durations
    from 30 minutes to 24 hours and return periods from 1 to 100 years. Technical Paper
    40, U.S. Weather Bureau, Washington DC (the fixed-to-sliding factor 1.13).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> depth = np.ones(time.size)
    >>> depth[[40, 41, 400]] = 30.0, 20.0, 45.0  # 10-11 February 2001, 5 February 2002
    >>> pr = xr.DataArray(depth, dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})
    >>> cw.annual_maxima(pr).values, cw.annual_maxima(pr, duration_days=2).values
    (array([30., 45.]), array([50., 46.]))
    >>> cw.annual_maxima(pr, return_dates=True)["end"].values.astype("datetime64[D]")
    array(['2001-02-10', '2002-02-05'], dtype='datetime64[D]')
    """
    pr, step = precip_mm(pr, "annual_maxima")
    src = source_name(pr)
    n, label = _window(step, duration_days, duration_hours, src)
    return annual_maxima_window(pr, n, label, year_start, min_valid_fraction, fixed_to_sliding, return_dates)


def annual_maxima_window(
    pr: xr.DataArray,
    n: int,
    label: str,
    year_start: int = 1,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
    fixed_to_sliding: float | None = None,
    return_dates: bool = False,
) -> Any:  # DataArray, or Dataset with return_dates
    """:func:`annual_maxima` for a window of ``n`` steps named ``label`` (e.g. "4 day").

    For callers that need durations outside the widget's short lists (the depth-duration-
    frequency tables); ``pr`` is checked again, ``n`` and ``label`` are trusted.

    Parameters
    ----------
    pr
        Precipitation depth per step (mm), daily or hourly, as in :func:`annual_maxima`.
    n
        Window length in steps (a positive whole number, not checked).
    label
        The duration in words, for the attrs (e.g. "4 day").
    year_start, min_valid_fraction, fixed_to_sliding, return_dates
        As in :func:`annual_maxima`.

    Returns
    -------
    xarray.DataArray or xarray.Dataset
        As :func:`annual_maxima`.

    Raises
    ------
    climwidgets.errors.ParameterError
        A bad ``year_start``, ``min_valid_fraction`` or ``fixed_to_sliding``.
    climwidgets.errors.TimeAxisError
        Gaps in the time axis, or no year complete enough.
    climwidgets.errors.DataValueError
        Negative depths (numpy-backed input).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> from climwidgets.compute.extremes import annual_maxima_window
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> depth = np.ones(time.size)
    >>> depth[[40, 41, 400]] = 30.0, 20.0, 45.0  # 10-11 February 2001, 5 February 2002
    >>> pr = xr.DataArray(depth, dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})
    >>> annual_maxima_window(pr, 4, "4 day").values  # 4-day maxima
    array([52., 48.])
    """
    pr, step = precip_mm(pr, "annual_maxima")
    src = source_name(pr)
    year_start = check_year_start(year_start, "annual_maxima")
    if (
        isinstance(min_valid_fraction, bool)
        or not isinstance(min_valid_fraction, numbers.Real)
        or not 0 < min_valid_fraction <= 1
    ):
        raise ParameterError(
            f"min_valid_fraction={min_valid_fraction!r} is not a fraction",
            variable="min_valid_fraction",
            expected="a number in (0, 1]",
            fix=f"use min_valid_fraction={DEFAULT_MIN_VALID_FRACTION}",
        )
    if fixed_to_sliding is not None and (
        isinstance(fixed_to_sliding, bool)
        or not isinstance(fixed_to_sliding, numbers.Real)
        or not 1 <= fixed_to_sliding <= 1.5
    ):
        raise ParameterError(
            f"fixed_to_sliding={fixed_to_sliding!r} is not allowed",
            variable="fixed_to_sliding",
            expected="None, or a factor between 1 and 1.5 (Hershfield 1961 gives 1.13 for 1 day)",
            fix="pass fixed_to_sliding=1.13 for daily data, or leave it None",
        )
    if not is_dask(pr) and bool((pr < 0).any()):
        raise DataValueError(
            "negative precipitation depths",
            source=src,
            variable=pr.name,
            expected="depths >= 0 mm (missing values as NaN)",
            fix="set negative fill values to NaN before calling",
        )

    times = pr["time"].values
    _check_regular(times, step, src)
    years = pr["time"].dt.year.values
    months = pr["time"].dt.month.values
    labels = years + (months >= year_start) if year_start > 1 else years
    labels = labels.astype(int)
    uniq, first_pos, axis_count = np.unique(labels, return_index=True, return_counts=True)
    nominal = _nominal_steps(times[0], uniq, year_start, step)
    need = min_valid_fraction * nominal
    keep = axis_count >= need  # years the axis covers well enough (drops partial end years)
    if not keep.any():
        raise TimeAxisError(
            f"no year has {min_valid_fraction:.0%} of its steps on the time axis",
            source=src,
            expected="at least one (nearly) complete year",
            fix="use a longer record or lower min_valid_fraction",
        )

    label_da = xr.DataArray(labels, dims="time", coords={"time": pr["time"]}, name="year")
    # a window with any missing step is NaN (min_periods = full window)
    totals = pr.rolling(time=n, min_periods=n).sum() if n > 1 else pr
    amax = totals.groupby(label_da).max("time", skipna=True)
    valid = pr.notnull().groupby(label_da).sum("time")
    need_da = xr.DataArray(need, dims="year", coords={"year": uniq})
    amax = amax.where(valid >= need_da).sel(year=uniq[keep])
    if fixed_to_sliding is not None:
        amax = amax * float(fixed_to_sliding)
    amax = amax.transpose("year", ...).rename("annual_max")
    if is_dask(pr):  # dask's rolling splits the spatial chunks; restore the input's layout
        amax = amax.chunk({d: pr.chunksizes[d] for d in amax.dims if d in pr.chunksizes and d != "time"})
    amax = amax.drop_vars([c for c in amax.coords if "time" in amax[c].dims])
    year_label = (
        "calendar year"
        if year_start == 1
        else f"12-month year starting in month {year_start}, labelled by the year it ends"
    )
    amax.attrs = {
        "units": "mm",
        "long_name": f"annual maximum {label} precipitation",
        "duration": label,
        "duration_steps": n,
        "step": step,
        "year_start": year_start,
        "year_label": year_label,
        "min_valid_fraction": float(min_valid_fraction),
        "completeness_rule": (
            f"a year counts if at least {min_valid_fraction:.0%} of its steps are present; "
            "windows with any missing step are skipped; a window belongs to the year of its last step"
        ),
        "fixed_to_sliding": "none" if fixed_to_sliding is None else float(fixed_to_sliding),
    }
    if fixed_to_sliding is not None:
        amax.attrs["fixed_to_sliding_source"] = "Hershfield (1961), U.S. Weather Bureau Technical Paper 40"
    params = dict(
        duration=label, year_start=year_start, min_valid_fraction=min_valid_fraction, fixed_to_sliding=fixed_to_sliding
    )
    if not return_dates:
        return with_history(amax, "annual_maxima", pr.attrs, **params)

    # Dates: per kept year, the position of the maximum within that year's windows.
    trimmed = totals.isel(time=slice(n - 1, None))
    starts = times[: len(times) - n + 1]
    lab_t = labels[n - 1 :]
    end_list, start_list = [], []
    for y in uniq[keep]:  # loop over years, not cells
        sel = np.flatnonzero(lab_t == y)
        block = trimmed.isel(time=slice(sel[0], sel[-1] + 1))
        end_list.append(block.idxmax("time", skipna=True))
        start_list.append(block.assign_coords(time=starts[sel[0] : sel[-1] + 1]).idxmax("time", skipna=True))
    ok = amax.notnull()
    year_coord = {"year": uniq[keep]}
    end = xr.concat(end_list, dim="year").assign_coords(year_coord).transpose("year", ...).where(ok)
    start = xr.concat(start_list, dim="year").assign_coords(year_coord).transpose("year", ...).where(ok)
    end.attrs = {"long_name": "last time step of the window with the annual maximum"}
    start.attrs = {"long_name": "first time step of the window with the annual maximum"}
    ds = xr.Dataset(
        {
            "annual_max": amax,
            "start": start.drop_vars("time", errors="ignore"),
            "end": end.drop_vars("time", errors="ignore"),
        }
    )
    ds.attrs = {k: v for k, v in amax.attrs.items() if k not in ("units", "long_name")}
    with_history(amax, "annual_maxima", pr.attrs, **params)
    return with_history(ds, "annual_maxima", pr.attrs, return_dates=True, **params)
