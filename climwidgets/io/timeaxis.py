"""The time axis: calendars, the length of a time step, and gaps.

Works on numpy datetime64 and cftime time coordinates alike.  Lengths of steps come from
the file's own calendar: a month in a ``noleap`` calendar has 28 days in February, every
month of a ``360_day`` calendar has 30.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr

from ..errors import CalendarError, TimeAxisError

SUPPORTED_CALENDARS = {
    "standard", "gregorian", "proleptic_gregorian", "noleap", "365_day",
    "all_leap", "366_day", "360_day", "julian",
}
STEP_SECONDS = {"hour": 3600.0, "day": 86400.0}
_FREQ = {"hour": "h", "day": "D", "month": "MS"}


def check_calendar(calendar, *, source=None, variable="time") -> str:
    if calendar is not None and not isinstance(calendar, str):
        raise CalendarError(f"has a calendar attribute that is not text ({calendar!r})", source=source,
                            variable=variable, expected="a CF calendar name such as 'standard' or 'noleap'",
                            fix="set the time variable's calendar attribute to a calendar name")
    cal = (calendar or "standard").strip().lower()
    if cal not in SUPPORTED_CALENDARS:
        raise CalendarError(
            f"uses the calendar '{calendar}', which is not supported", source=source, variable=variable,
            expected="one of " + ", ".join(sorted(SUPPORTED_CALENDARS)),
            fix="convert the time axis to a CF calendar (for example with cftime) before opening")
    return cal


def calendar_of(time: xr.DataArray) -> str:
    """The CF calendar name of a decoded time coordinate."""
    if np.issubdtype(time.dtype, np.datetime64):
        return "standard"
    return time.dt.calendar


def _offsets_seconds(index) -> np.ndarray:
    """Seconds between consecutive time stamps, for datetime64 or cftime indexes."""
    deltas = index[1:] - index[:-1]
    return np.asarray(pd.TimedeltaIndex(deltas).total_seconds(), dtype=float)


def infer_step(time: xr.DataArray, bounds: xr.DataArray | None = None, *, source=None) -> str:
    """"hour", "day" or "month", from time bounds when present, else from the spacing."""
    index = time.to_index()
    if bounds is not None and bounds.size >= 2:
        b = bounds.values
        lengths = np.asarray(pd.TimedeltaIndex(
            pd.Index(b[:, 1]) - pd.Index(b[:, 0]) if not np.issubdtype(b.dtype, np.datetime64)
            else b[:, 1] - b[:, 0]).total_seconds())
    elif len(index) >= 2:
        lengths = _offsets_seconds(index)
    else:
        raise TimeAxisError(
            "has a single time step and no time bounds, so the length of the step is unknown",
            source=source, variable="time", expected="at least two time steps or a 'bounds' variable on time",
            fix="add CF time bounds (time_bnds) to the file, or open more than one time step")
    typical = float(np.median(lengths))
    if abs(typical - 3600.0) < 60:
        return "hour"
    if abs(typical - 86400.0) < 3600:
        return "day"
    if 27 * 86400 <= typical <= 31.5 * 86400:
        return "month"
    raise TimeAxisError(
        f"has a time step of about {typical / 3600:.4g} hours", source=source, variable="time",
        expected="hourly, daily or monthly data",
        fix="resample to hourly, daily or monthly totals before opening (for example with xarray's resample)")


def step_seconds(time: xr.DataArray, step: str) -> xr.DataArray:
    """Length of each time step in seconds in the time axis's own calendar."""
    if step == "month":
        return (time.dt.days_in_month * 86400.0).astype(float)
    return xr.full_like(time, STEP_SECONDS[step], dtype=float)


def check_monotonic(time_values, *, source=None):
    """Raise for duplicated or decreasing times; tell where the first one is."""
    values = np.asarray(time_values)
    if values.size < 2:
        return
    try:
        d = np.diff(values.astype(float)) if np.issubdtype(values.dtype, np.number) else None
    except (TypeError, ValueError):
        d = None
    if d is None:
        d = _offsets_seconds(pd.Index(values))
    dup = np.flatnonzero(d == 0)
    if dup.size:
        raise TimeAxisError(
            f"has {dup.size} duplicated time stamp(s); the first at position {int(dup[0]) + 1}",
            source=source, variable="time", expected="strictly increasing times",
            fix="drop the duplicates (for example ds.drop_duplicates('time')) or remove overlapping files from the list")
    back = np.flatnonzero(d < 0)
    if back.size:
        raise TimeAxisError(
            f"has times that go backwards ({back.size} place(s); the first at position {int(back[0]) + 1})",
            source=source, variable="time", expected="strictly increasing times",
            fix="sort by time (ds.sortby('time')) or list the files in time order")


def month_starts(time: xr.DataArray) -> xr.DataArray:
    """The first instant of each time stamp's month, in the same calendar."""
    cal = calendar_of(time)
    years, months = time.dt.year.values, time.dt.month.values
    if cal == "standard" and np.issubdtype(time.dtype, np.datetime64):
        values = pd.to_datetime({"year": years, "month": months, "day": 1}).values
    else:
        import cftime

        values = np.array([cftime.datetime(int(y), int(m), 1, calendar=cal) for y, m in zip(years, months)])
    return xr.DataArray(values, dims=time.dims, attrs=time.attrs)


def full_axis(time: xr.DataArray, step: str):
    """Every time stamp the axis should have between its first and last entries."""
    cal = calendar_of(time)
    start, end = time.values[0], time.values[-1]
    use_cftime = not np.issubdtype(time.dtype, np.datetime64)
    return xr.date_range(start=start, end=end, freq=_FREQ[step], calendar=cal, use_cftime=use_cftime)
