"""The time axis: calendars, the length of a time step, and gaps.

Works on numpy datetime64 and cftime time coordinates alike.  Lengths of steps come from
the file's own calendar: a month in a ``noleap`` calendar has 28 days in February, every
month of a ``360_day`` calendar has 30.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
import xarray as xr
from numpy.typing import ArrayLike, NDArray

from ..errors import CalendarError, TimeAxisError

SUPPORTED_CALENDARS = {
    "standard",
    "gregorian",
    "proleptic_gregorian",
    "noleap",
    "365_day",
    "all_leap",
    "366_day",
    "360_day",
    "julian",
}
# Regular steps the loader accepts.  Sub-hourly steps are summed to hourly totals on open
# (so every function downstream sees at most hourly data); n-hourly steps that divide a day
# are kept as they are ("3hour", "6hour", ...); "month" has no fixed length.
SUBHOURLY_MINUTES = (1, 2, 3, 4, 5, 6, 10, 12, 15, 20, 30)
MULTIHOUR_HOURS = (2, 3, 4, 6, 8, 12)
STEP_SECONDS = {
    "hour": 3600.0,
    "day": 86400.0,
    **{f"{n}min": 60.0 * n for n in SUBHOURLY_MINUTES},
    **{f"{n}hour": 3600.0 * n for n in MULTIHOUR_HOURS},
}
#: steps a canonical precipitation DataArray may have (after open_precip)
CANONICAL_STEPS = ("hour", *(f"{n}hour" for n in MULTIHOUR_HOURS), "day", "month")
_FREQ = {
    "hour": "h",
    "day": "D",
    "month": "MS",
    **{f"{n}min": f"{n}min" for n in SUBHOURLY_MINUTES},
    **{f"{n}hour": f"{n}h" for n in MULTIHOUR_HOURS},
}


def steps_per_day(step: str) -> float:
    """How many steps of ``step`` make one day (not defined for "month").

    Parameters
    ----------
    step : str
        A key of :data:`STEP_SECONDS` ("hour", "day", "3hour", "15min", ...).

    Returns
    -------
    float
        Steps per day.

    Examples
    --------
    >>> steps_per_day("3hour"), steps_per_day("day")
    (8.0, 1.0)
    """
    return 86400.0 / STEP_SECONDS[step]


def is_subhourly(step: str) -> bool:
    """Whether ``step`` is shorter than an hour (such steps are summed to hours on open).

    Parameters
    ----------
    step : str
        A step name ("15min", "hour", "day", ...).

    Returns
    -------
    bool

    Examples
    --------
    >>> is_subhourly("10min"), is_subhourly("hour")
    (True, False)
    """
    return step.endswith("min")


def check_calendar(calendar: object, *, source: object = None, variable: str = "time") -> str:
    """The CF calendar name in lower case, or a :class:`~climwidgets.errors.CalendarError`.

    Parameters
    ----------
    calendar : str or None
        The time variable's ``calendar`` attribute; None means "standard" (CF default).
    source, variable : optional
        Named in the error message.

    Returns
    -------
    str
        One of :data:`SUPPORTED_CALENDARS`.

    Raises
    ------
    CalendarError
        When the attribute is not text or names a calendar that is not supported.

    References
    ----------
    CF Conventions 1.11, section 4.4.1 "Calendar".

    Examples
    --------
    >>> check_calendar("NoLeap"), check_calendar(None)
    ('noleap', 'standard')
    """
    if calendar is not None and not isinstance(calendar, str):
        raise CalendarError(
            f"has a calendar attribute that is not text ({calendar!r})",
            source=source,
            variable=variable,
            expected="a CF calendar name such as 'standard' or 'noleap'",
            fix="set the time variable's calendar attribute to a calendar name",
        )
    cal = (calendar or "standard").strip().lower()
    if cal not in SUPPORTED_CALENDARS:
        raise CalendarError(
            f"uses the calendar '{calendar}', which is not supported",
            source=source,
            variable=variable,
            expected="one of " + ", ".join(sorted(SUPPORTED_CALENDARS)),
            fix="convert the time axis to a CF calendar (for example with cftime) before opening",
        )
    return cal


def calendar_of(time: xr.DataArray) -> str:
    """The CF calendar name of a decoded time coordinate.

    Parameters
    ----------
    time : xarray.DataArray
        Decoded times: numpy datetime64 ("standard") or cftime objects.

    Returns
    -------
    str

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> calendar_of(xr.DataArray(pd.date_range("2001-01-01", periods=3), dims="time"))
    'standard'
    """
    if np.issubdtype(time.dtype, np.datetime64):
        return "standard"
    return time.dt.calendar


def _offsets_seconds(index: pd.Index) -> NDArray[np.float64]:
    """Seconds between consecutive time stamps, for datetime64 or cftime indexes."""
    deltas = index[1:] - index[:-1]
    return np.asarray(pd.TimedeltaIndex(deltas).total_seconds(), dtype=float)


def _name_step(typical: float) -> str | None:
    """The step name for a typical step length in seconds, or None when none fits."""
    for step, seconds in STEP_SECONDS.items():
        if abs(typical - seconds) < min(60.0, 0.02 * seconds):
            return step
    if abs(typical - 86400.0) < 3600:
        return "day"
    if 27 * 86400 <= typical <= 31.5 * 86400:
        return "month"
    return None


def _say_length(seconds: float, step: str | None) -> str:
    named = {"hour": "one hour", "day": "one day", "month": "one month"}
    if step in named:
        return named[step]
    if seconds >= 2 * 86400:
        return f"about {seconds / 86400:.3g} days"
    return f"about {seconds / 3600:.4g} hours"


def _check_finite(lengths: ArrayLike, what: str, source: object) -> None:
    if not np.all(np.isfinite(lengths)):
        bad = int(np.flatnonzero(~np.isfinite(lengths))[0])
        raise TimeAxisError(
            f"has a missing (NaN) value in its {what} near position {bad + 1}",
            source=source,
            variable="time",
            expected="a time stamp for every step",
            fix="fill in or drop the step with the missing time (ds.dropna('time') on the "
            "time coordinate) before opening",
        )


def infer_step(time: xr.DataArray, bounds: xr.DataArray | None = None, *, source: object = None) -> str:
    """The step name (a key of STEP_SECONDS, or "month"), from time bounds when present, else
    from the spacing of the stamps.

    Where both are there they must agree: monthly stamps with one-day bounds (or bounds
    spanning several steps) are refused rather than read as daily data with every day but
    one missing in each month.

    Parameters
    ----------
    time : xarray.DataArray
        Decoded time stamps.
    bounds : xarray.DataArray, optional
        CF time bounds, shape (time, 2).
    source : optional
        Named in error messages.

    Returns
    -------
    str
        The step name.

    Raises
    ------
    TimeAxisError
        For a single step without bounds, bounds that disagree with the spacing, missing
        stamps, or a step that is not regular.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> infer_step(xr.DataArray(pd.date_range("2001-01-01", periods=4, freq="6h"), dims="time"))
    '6hour'
    """
    index = time.to_index()
    spacing = _offsets_seconds(index) if len(index) >= 2 else None
    if spacing is not None:
        _check_finite(spacing, "time stamps", source)
    if bounds is not None and bounds.size >= 2:
        b = bounds.values
        lengths = np.asarray(
            pd.TimedeltaIndex(
                pd.Index(b[:, 1]) - pd.Index(b[:, 0])
                if not np.issubdtype(b.dtype, np.datetime64)
                else b[:, 1] - b[:, 0]
            ).total_seconds()
        )
        _check_finite(lengths, "time bounds", source)
    elif spacing is not None:
        lengths = spacing
    else:
        raise TimeAxisError(
            "has a single time step and no time bounds, so the length of the step is unknown",
            source=source,
            variable="time",
            expected="at least two time steps or a 'bounds' variable on time",
            fix="add CF time bounds (time_bnds) to the file, or open more than one time step",
        )
    typical = float(np.median(lengths))
    step = _name_step(typical)
    if lengths is not spacing and spacing is not None:
        apart = float(np.median(spacing))
        by_stamps = _name_step(apart)
        named_differ = step is not None and by_stamps is not None and step != by_stamps
        if named_differ or ((step is None or by_stamps is None) and not 2 / 3 <= apart / max(typical, 1e-9) <= 1.5):
            raise TimeAxisError(
                f"has time bounds {_say_length(typical, step)} long, but its time stamps are "
                f"{_say_length(apart, by_stamps)} apart",
                source=source,
                variable="time",
                expected="time bounds that span the step between stamps (one day for daily data, one month "
                "for monthly data)",
                fix="correct the time bounds, or drop them in a copy (xr.open_dataset(path).drop_vars('time_bnds') "
                "and delete time's 'bounds' attribute) and open that",
            )
    if step is not None:
        return step
    minutes = ", ".join(str(n) for n in SUBHOURLY_MINUTES)
    hours = ", ".join(str(n) for n in MULTIHOUR_HOURS)
    raise TimeAxisError(
        f"has a time step of about {typical / 3600:.4g} hours",
        source=source,
        variable="time",
        expected=f"a regular step of {minutes} minutes, 1, {hours} hours, one day or one month "
        "(steps that divide a day or are a calendar month)",
        fix="resample to daily or monthly totals before opening (for example with xarray's resample)",
    )


def step_seconds(time: xr.DataArray, step: str) -> xr.DataArray:
    """Length of each time step in seconds in the time axis's own calendar.

    Parameters
    ----------
    time : xarray.DataArray
        Decoded time stamps.
    step : str
        The step name (:func:`infer_step`).

    Returns
    -------
    xarray.DataArray
        Seconds per step, on ``time``.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> t = xr.DataArray(pd.date_range("2001-01-01", periods=2, freq="MS"), dims="time")
    >>> step_seconds(t, "month").values / 86400
    array([31., 28.])
    """
    if step == "month":
        return (time.dt.days_in_month * 86400.0).astype(float)
    return xr.full_like(time, STEP_SECONDS[step], dtype=float)


def check_monotonic(time_values: ArrayLike, *, source: object = None) -> None:
    """Raise for duplicated or decreasing times; tell where the first one is.

    Parameters
    ----------
    time_values : array_like
        Raw numbers (undecoded) or decoded times.
    source : optional
        Named in the error message.

    Returns
    -------
    None

    Raises
    ------
    TimeAxisError
        At the first duplicated or backward step.

    Examples
    --------
    >>> check_monotonic([0.0, 1.0, 2.0])
    >>> try:
    ...     check_monotonic([0.0, 1.0, 1.0])
    ... except TimeAxisError as err:
    ...     print(err.problem)
    has 1 duplicated time stamp(s); the first at position 2
    """
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
            source=source,
            variable="time",
            expected="strictly increasing times",
            fix=(
                "drop the duplicates (for example ds.drop_duplicates('time')) or remove overlapping files from the list"
            ),
        )
    back = np.flatnonzero(d < 0)
    if back.size:
        raise TimeAxisError(
            f"has times that go backwards ({back.size} place(s); the first at position {int(back[0]) + 1})",
            source=source,
            variable="time",
            expected="strictly increasing times",
            fix="sort by time (ds.sortby('time')) or list the files in time order",
        )


def month_starts(time: xr.DataArray) -> xr.DataArray:
    """The first instant of each time stamp's month, in the same calendar.

    Parameters
    ----------
    time : xarray.DataArray
        Decoded time stamps.

    Returns
    -------
    xarray.DataArray
        Month starts, same dims and attributes.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> t = xr.DataArray(pd.to_datetime(["2001-01-31", "2001-02-15"]), dims="time")
    >>> [str(v)[:10] for v in month_starts(t).values]
    ['2001-01-01', '2001-02-01']
    """
    cal = calendar_of(time)
    years, months = time.dt.year.values, time.dt.month.values
    if cal == "standard" and np.issubdtype(time.dtype, np.datetime64):
        values = pd.to_datetime({"year": years, "month": months, "day": 1}).values
    else:
        import cftime

        values = np.array([cftime.datetime(int(y), int(m), 1, calendar=cal) for y, m in zip(years, months)])
    return xr.DataArray(values, dims=time.dims, attrs=time.attrs)


def full_axis(time: xr.DataArray, step: str) -> pd.Index:
    """Every time stamp the axis should have between its first and last entries.

    Parameters
    ----------
    time : xarray.DataArray
        Decoded time stamps.
    step : str
        The step name.

    Returns
    -------
    pandas.Index
        The complete axis in the time axis's calendar (gaps show as stamps missing from
        ``time``).

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> t = xr.DataArray(pd.to_datetime(["2001-01-01", "2001-01-04"]), dims="time")
    >>> len(full_axis(t, "day"))
    4
    """
    cal = calendar_of(time)
    start, end = time.values[0], time.values[-1]
    use_cftime = not np.issubdtype(time.dtype, np.datetime64)
    return xr.date_range(start=start, end=end, freq=_FREQ[step], calendar=cal, use_cftime=use_cftime)


def start_labels(time: xr.DataArray, bounds: xr.DataArray | None) -> tuple[NDArray[Any], str | None]:
    """Stamps taken as the start of each step, and a note when they were moved.

    Sums are attributed to the step that holds the stamp, taken as its start.  Files that
    stamp the end of each interval (common for accumulations, and for monthly means stamped
    at the first instant of the next month) say so in their CF time bounds: where every
    stamp equals its upper bound, the lower bounds become the stamps, so no hour, day or
    month is counted in the next one.  Without bounds the two cannot be told apart.

    Parameters
    ----------
    time : xarray.DataArray
        Decoded time stamps.
    bounds : xarray.DataArray or None
        CF time bounds, shape (time, 2).

    Returns
    -------
    tuple
        ``(stamps, note)``: the stamps to use and a sentence saying they were moved, or None.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> t = xr.DataArray(pd.to_datetime(["2001-01-02", "2001-01-03"]), dims="time")
    >>> edges = np.array(["2001-01-01", "2001-01-02", "2001-01-03"], dtype="datetime64[ns]")
    >>> b = xr.DataArray(np.stack([edges[:-1], edges[1:]], axis=1), dims=("time", "nv"))
    >>> stamps, note = start_labels(t, b)
    >>> str(stamps[0])[:10], note is not None
    ('2001-01-01', True)
    """
    if bounds is None or bounds.shape != (time.size, 2):
        return time.values, None
    lower, upper = bounds.values[:, 0], bounds.values[:, 1]
    stamps = time.values
    if np.all(stamps == upper) and not np.all(stamps == lower):
        return lower, "time stamps marked the end of each step (time bounds); relabelled to the start"
    return stamps, None


def sum_to_hours(da: xr.DataArray, step: str, *, source: object = None) -> xr.DataArray:
    """Depths per sub-hourly step summed to hourly totals (lazy).

    The axis is first completed to whole hours with missing steps, so an hour with any
    missing step (including the partial first and last hours) is missing, never short.

    Parameters
    ----------
    da : xarray.DataArray
        Depths per sub-hourly step on ``time``.
    step : str
        The sub-hourly step name ("10min", "15min", ...).
    source : optional
        Named in the error message.

    Returns
    -------
    xarray.DataArray
        Hourly totals (lazy on dask input).

    Raises
    ------
    TimeAxisError
        When stamps are not whole multiples of the step after the hour.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> t = pd.date_range("2001-01-01", periods=8, freq="30min")
    >>> sum_to_hours(xr.DataArray(np.ones(8), coords={"time": t}, dims="time"), "30min").values
    array([2., 2., 2., 2.])
    """
    import datetime

    k = int(round(3600.0 / STEP_SECONDS[step]))
    cal = calendar_of(da["time"])
    use_cftime = not np.issubdtype(da["time"].dtype, np.datetime64)
    index = da["time"].to_index()
    start = index[0].replace(minute=0, second=0, microsecond=0)
    end = index[-1].replace(minute=0, second=0, microsecond=0) + datetime.timedelta(seconds=3600 - STEP_SECONDS[step])
    full = xr.date_range(start=start, end=end, freq=_FREQ[step], calendar=cal, use_cftime=use_cftime)
    if not index.isin(full).all():
        raise TimeAxisError(
            f"has {step} stamps that are not whole multiples of the step after the hour",
            source=source,
            variable="time",
            expected=f"stamps at regular {step} steps from the hour",
            fix="resample to hourly totals before opening",
        )
    blocks = da.reindex(time=full).coarsen(time=k, boundary="trim").construct(time=("hour", "within"))
    out = blocks.sum("within", skipna=False).rename(hour="time")
    hours = xr.date_range(start=start, periods=out.sizes["time"], freq="h", calendar=cal, use_cftime=use_cftime)
    out = out.drop_vars([c for c in out.coords if "time" in out[c].dims])
    return out.assign_coords(time=("time", np.asarray(hours), da["time"].attrs)).transpose(*da.dims)
