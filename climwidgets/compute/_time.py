"""Shared time-axis helpers for the climatology core (not public).

Everything here works on the *coordinates* (small numpy arrays) to decide which months and
years are complete; the data themselves stay lazy.  Works for numpy datetime64 and cftime
axes alike because it only uses ``.dt.year``, ``.dt.month``, ``.dt.days_in_month`` and
xarray's calendar-aware ``resample``.
"""

from __future__ import annotations

from typing import Any, cast

import numpy as np
import xarray as xr

from ..errors import (
    InsufficientDataError,
    ParameterError,
    TimeAxisError,
    UnitsError,
)
from ..io.grid import canonical_names
from ..io.timeaxis import CANONICAL_STEPS, infer_step, is_subhourly, steps_per_day
from ..io.units import parse_units, step_factor

#: The suite's one table of month names (full, and the three-letter forms derived from it).
MONTH_FULL_NAMES = (
    "January",
    "February",
    "March",
    "April",
    "May",
    "June",
    "July",
    "August",
    "September",
    "October",
    "November",
    "December",
)
MONTH_NAMES = tuple(name[:3] for name in MONTH_FULL_NAMES)
_KEEP_ATTRS_FIX = (
    "keep the attributes through arithmetic: `with xr.set_options(keep_attrs=True): "
    "scaled = pr * 1.05`, or `scaled = (pr * 1.05).assign_attrs(pr.attrs)`; data built by "
    "hand need attrs['units'] (for example 'mm' per step, 'mm/day' or 'kg m-2 s-1')"
)


def source_name(obj: object) -> str:
    name = getattr(obj, "name", None)
    return f"DataArray {name!r}" if name is not None else "input DataArray"


def check_precip(pr: Any, func: str) -> str:
    """Validate the precipitation convention (docs/architecture.md, conventions); return the step."""
    if not isinstance(pr, xr.DataArray):
        raise ParameterError(
            f"{func} needs an xarray.DataArray, got {type(pr).__name__}",
            source=func,
            expected="DataArray of precipitation depth per time step (mm)",
            fix="open the data with climwidgets.open_precip or build an xr.DataArray",
        )
    src = source_name(pr)
    if "time" not in pr.dims:
        raise TimeAxisError(
            f"no 'time' dimension (dims are {tuple(pr.dims)})",
            source=src,
            variable=pr.name,
            expected="dims (time, lat, lon) or (time, y, x)",
            fix="rename the time dimension to 'time'",
        )
    units = pr.attrs.get("units")
    if units != "mm":
        raise UnitsError(
            f"units are {units!r}",
            source=src,
            variable=pr.name,
            expected="attrs['units'] == 'mm' (depth per time step)",
            fix="convert with climwidgets.open_precip(pr), which takes DataArrays too",
        )
    step = pr.attrs.get("step")
    if step not in CANONICAL_STEPS:
        raise TimeAxisError(
            f"attrs['step'] is {step!r}",
            source=src,
            variable=pr.name,
            expected=f"attrs['step'] in {CANONICAL_STEPS}",
            fix="set attrs['step'] to the length of one time step, or pass the data through "
            "climwidgets.open_precip(pr), which finds it (and sums sub-hourly steps to hours)",
        )
    tindex = pr.indexes.get("time")
    if tindex is None or len(tindex) == 0:
        raise TimeAxisError(
            "the time axis is empty or has no coordinate",
            source=src,
            variable=pr.name,
            expected="a time coordinate with at least one step",
            fix="attach time coordinates",
        )
    if not tindex.is_monotonic_increasing or not tindex.is_unique:
        raise TimeAxisError(
            "time coordinates are unsorted or duplicated",
            source=src,
            variable=pr.name,
            expected="strictly increasing time",
            fix="use pr.sortby('time') and drop duplicated steps",
        )
    return cast(str, step)  # one of CANONICAL_STEPS


def precip_mm(pr: Any, func: str) -> tuple[xr.DataArray, str]:
    """``(pr in mm per step, step)``: the input converted when its units are another depth or rate.

    The unit contract of the compute functions: any depth or rate units ``open_precip``
    accepts (mm, cm, in, m, kg m-2, their rates per second, hour, day; per month for
    monthly data) are converted lazily, with the step from ``attrs["step"]`` or, when it is
    absent, from the spacing of the time stamps.  CF names (``valid_time``, ``latitude``,
    ``longitude``) are renamed to time/lat/lon.  Input without units is refused with an
    error that says how to keep attributes through arithmetic: a bare array is never taken
    to be mm, since nothing proves it is.
    """
    if not isinstance(pr, xr.DataArray):
        check_precip(pr, func)  # raises the type error
    pr = canonical_names(pr)
    src = source_name(pr)
    units = pr.attrs.get("units")
    if units is None or str(units).strip() == "":
        lost = "has no attributes at all" if not pr.attrs else "has no 'units' attribute"
        raise UnitsError(
            f"{lost}, so its depth per time step is unknown (xarray arithmetic such as pr * 1.05 drops attributes)",
            source=src,
            variable=pr.name,
            expected="attrs['units'] (a precipitation depth or rate) and attrs['step']",
            fix=_KEEP_ATTRS_FIX,
        )
    info = parse_units(units, source=src, variable=pr.name)
    step = pr.attrs.get("step")
    if step is None and "time" in pr.dims and pr.sizes["time"] >= 2:
        step = infer_step(pr["time"], source=src)
    if step is not None and is_subhourly(str(step)):
        raise TimeAxisError(
            f"has {step} steps",
            source=src,
            variable=pr.name,
            expected="hourly or longer steps in the compute functions",
            fix="pass the data through climwidgets.open_precip(pr), which sums sub-hourly steps to hourly totals",
        )
    if units != "mm" and step in CANONICAL_STEPS and "time" in pr.dims:
        factor, how = step_factor(info, pr["time"], step, source=src, variable=pr.name)
        attrs = {**pr.attrs, "units": "mm", "step": step, "original_units": str(units), "conversion": how}
        pr = (pr * factor).assign_attrs(attrs).rename(pr.name)
    elif step is not None and pr.attrs.get("step") != step:
        pr = pr.assign_attrs(step=step)
    return pr, check_precip(pr, func)


def check_months(months: Any, func: str, name: str = "months") -> tuple[int, ...]:
    """A season: month numbers 1..12, no repeats, consecutive (wrapping over the year end)."""
    fix = "pass month numbers such as (7, 8) or (11, 12, 1, 2, 3)"
    if isinstance(months, (int, np.integer)) and not isinstance(months, bool):
        months = (months,)
    try:
        items = tuple(months)
    except TypeError:
        raise ParameterError(
            f"{name}={months!r} is not a sequence of month numbers",
            source=func,
            variable=name,
            expected="month numbers 1..12",
            fix=fix,
        ) from None
    if not items:
        raise ParameterError(
            f"{name} is empty", source=func, variable=name, expected="at least one month number 1..12", fix=fix
        )
    for m in items:
        if isinstance(m, bool) or not isinstance(m, (int, np.integer)):
            raise ParameterError(
                f"{name} contains {m!r}, not a month number",
                source=func,
                variable=name,
                expected="integers 1..12 (not names)",
                fix=fix,
            )
        if not 1 <= int(m) <= 12:
            raise ParameterError(
                f"{name} contains {m}, outside 1..12", source=func, variable=name, expected="integers 1..12", fix=fix
            )
    items = tuple(int(m) for m in items)
    if len(set(items)) != len(items):
        raise ParameterError(
            f"{name}={items} repeats a month", source=func, variable=name, expected="each month at most once", fix=fix
        )
    for a, b in zip(items, items[1:]):
        if b != a % 12 + 1:
            raise ParameterError(
                f"{name}={items} is not a run of consecutive months",
                source=func,
                variable=name,
                expected="consecutive months in calendar order, e.g. (11, 12, 1, 2, 3)",
                fix=fix,
            )
    return items


def check_year_start(year_start: Any, func: str) -> int:
    if isinstance(year_start, bool) or not isinstance(year_start, (int, np.integer)) or not 1 <= int(year_start) <= 12:
        raise ParameterError(
            f"year_start={year_start!r} is not a month number",
            source=func,
            variable="year_start",
            expected="an integer 1..12 (10 = Oct-Sep water year)",
            fix="pass year_start=1 for calendar years or 10 for water years",
        )
    return int(year_start)


def check_year_range(rng: Any, func: str, name: str) -> tuple[int, int]:
    fix = f"pass {name}=(first_year, last_year), e.g. (1991, 2020)"
    try:
        first, last = rng
        ok = all(isinstance(v, (int, np.integer)) and not isinstance(v, bool) for v in (first, last))
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise ParameterError(
            f"{name}={rng!r} is not a pair of years",
            source=func,
            variable=name,
            expected="(first_year, last_year) as integers",
            fix=fix,
        )
    if first > last:
        raise ParameterError(
            f"{name}={rng!r} ends before it starts",
            source=func,
            variable=name,
            expected="first_year <= last_year",
            fix=fix,
        )
    return int(first), int(last)


def season_year_start(months: tuple[int, ...], year_start: int) -> int:
    """The first month of the 12-month year a season is measured against (docs/architecture.md).

    The year beginning in ``year_start`` when the whole season fits inside it, otherwise the
    year beginning with the season's first month.
    """
    offsets = [(m - year_start) % 12 for m in months]
    fits = all(b == a + 1 for a, b in zip(offsets, offsets[1:]))
    return year_start if fits else months[0]


def month_coverage(pr: xr.DataArray, step: str) -> xr.DataArray:
    """Boolean per month start: the time axis has every step of that month."""
    ones = xr.DataArray(np.ones(pr.sizes["time"]), coords={"time": pr["time"].values}, dims="time")
    count = ones.resample(time="MS").sum()
    if step == "month":
        expected = xr.ones_like(count)
    else:
        expected = count["time"].dt.days_in_month * steps_per_day(step)
    return count == expected


def monthly_with_coverage(pr: xr.DataArray, step: str) -> tuple[xr.DataArray, np.ndarray]:
    """Monthly sums (NaN where any step is missing or the month is not covered) and coverage."""
    covered = month_coverage(pr, step)
    # skipna=False: a sum with a missing step is missing (WMO-No. 1203 rule for sums).
    monthly = pr.resample(time="MS").sum(skipna=False, keep_attrs=False)
    monthly = monthly.where(covered.variable)
    return monthly, covered.values


def data_period(monthly: xr.DataArray) -> str:
    t = monthly["time"]
    return f"{t.dt.strftime('%Y-%m').values[0]} to {t.dt.strftime('%Y-%m').values[-1]}"


def year_blocks(
    monthly: xr.DataArray,
    covered: np.ndarray,
    start_month: int,
    src: str = "input DataArray",
    keep_partial: bool = False,
) -> xr.DataArray:
    """Reshape monthly totals into 12-month years: dims (year, month, ...).

    Years start in ``start_month`` and are labelled by the calendar year of their last month.
    Leading and trailing years that the time axis does not fully cover are dropped, unless
    ``keep_partial`` (used for normals, which are judged month by month): then the edge
    years are kept with NaN in the months the record does not reach.  Inside the span, a
    year with a missing month keeps NaN in that month.  The ``month`` coordinate holds
    calendar month numbers in the order of the 12-month year.
    """
    months = monthly["time"].dt.month.values
    years = monthly["time"].dt.year.values
    n = months.size
    if keep_partial and n:
        before = int((months[0] - start_month) % 12)
        after = int((-(n + before)) % 12)
        seg = monthly.drop_vars("time")  # months the axis does not cover are NaN already
        if before or after:
            seg = seg.pad(time=(before, after))  # NaN-filled, lazy
        blocks = seg.coarsen(time=12).construct(time=("year", "month"))
        start_year = years[0] - (1 if months[0] < start_month else 0)
        first_label = start_year + (0 if start_month == 1 else 1)
        labels = first_label + np.arange(blocks.sizes["year"])
        order = (start_month - 1 + np.arange(12)) % 12 + 1
        return blocks.assign_coords(year=("year", labels.astype(int)), month=("month", order.astype(int)))
    starts = np.flatnonzero(months == start_month)
    starts = starts[starts + 12 <= n]
    full = [i for i in starts if covered[i : i + 12].all()]
    if not full:
        raise InsufficientDataError(
            f"no complete 12-month year starting in {MONTH_NAMES[start_month - 1]} (data cover {data_period(monthly)})",
            source=src,
            expected="at least one fully covered 12-month year",
            fix="use a longer record or another year_start",
        )
    first, last = full[0], full[-1]
    seg = monthly.isel(time=slice(first, last + 12))
    blocks = seg.coarsen(time=12).construct(time=("year", "month")).drop_vars("time")
    labels = years[first + 11 : last + 12 : 12]
    return blocks.assign_coords(
        year=("year", labels.astype(int)), month=("month", months[first : first + 12].astype(int))
    )


def select_years(obj: xr.DataArray, rng: Any, func: str, name: str, src: str, dim: str = "year") -> xr.DataArray:
    """Select labelled years; the range must lie within the data's years."""
    first, last = check_year_range(rng, func, name)
    have = obj[dim].values
    if first < have.min() or last > have.max():
        raise ParameterError(
            f"{name}=({first}, {last}) lies outside the data, whose complete years are {have.min()}-{have.max()}",
            source=src,
            variable=name,
            expected=f"years within {have.min()}-{have.max()}",
            fix=f"choose {name} inside {have.min()}-{have.max()} or supply a longer record",
        )
    return obj.sel({dim: (obj[dim] >= first) & (obj[dim] <= last)})


def is_dask(obj: object) -> bool:
    return getattr(obj, "chunks", None) is not None


def safe_divide(num: xr.DataArray, den: xr.DataArray) -> xr.DataArray:
    """num / den with NaN where den is zero or missing, without RuntimeWarnings."""
    return num / den.where(den != 0)


def season_months(first: int, last: int) -> tuple[int, ...]:
    """Consecutive months from ``first`` to ``last`` inclusive, wrapping over December (11, 3 -> 11..3)."""
    n = (int(last) - int(first)) % 12 + 1
    return tuple((int(first) - 1 + k) % 12 + 1 for k in range(n))
