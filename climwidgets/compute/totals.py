"""Monthly and annual precipitation totals.

Sums follow the strict rule WMO-No. 1203 (2017) gives for sum-type monthly values: a month
with any missing step is missing, never a silently short sum.  A month the time axis does
not fully cover (the partial first or last month of a record) is missing too.
"""

from __future__ import annotations

import xarray as xr

from ..provenance import with_history
from ._time import check_year_start, monthly_with_coverage, precip_mm, source_name, year_blocks

__all__ = ["monthly_totals", "annual_totals"]

_PRECIP_ATTRS = {"standard_name": "lwe_thickness_of_precipitation_amount", "units": "mm"}


def _monthly_attrs(da: xr.DataArray, pr: xr.DataArray) -> xr.DataArray:
    da.name = pr.name
    da.attrs = {
        **_PRECIP_ATTRS,
        "long_name": "monthly precipitation total",
        "step": "month",
        "cell_methods": "time: sum",
        "missing_rule": "a month with any missing step, or not fully covered by the "
        "time axis, is missing (WMO-No. 1203 rule for sums)",
    }
    return da


def monthly_totals(pr: xr.DataArray) -> xr.DataArray:
    """Monthly precipitation totals (mm), labelled by month start.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm (``attrs["step"]`` "hour", "day" or "month"),
        numpy- or dask-backed, any calendar.

    Returns
    -------
    DataArray with ``time`` at month starts.  From hourly or daily data a month with any
    missing step, or one the time axis does not fully cover (edge months), is NaN.  Monthly
    input passes through, relabelled to month starts.  Lazy on dask input.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> pr = xr.DataArray(np.ones(time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})  # 1 mm every day
    >>> cw.monthly_totals(pr).values[:3]  # January, February, March 2001
    array([31., 28., 31.])
    """
    pr, step = precip_mm(pr, "monthly_totals")
    monthly, _ = monthly_with_coverage(pr, step)
    _monthly_attrs(monthly, pr)
    return with_history(monthly, "monthly_totals", pr.attrs, step=step)


def _blocks(pr: xr.DataArray, func: str, year_start: int) -> xr.DataArray:
    """Monthly totals reshaped into (year, month) 12-month years starting in year_start."""
    pr, step = precip_mm(pr, func)
    monthly, covered = monthly_with_coverage(pr, step)
    return year_blocks(monthly, covered, year_start, source_name(pr))


def annual_totals(pr: xr.DataArray, year_start: int = 1) -> xr.DataArray:
    """Annual precipitation totals (mm) on a ``year`` dimension.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm.
    year_start
        First month of the 12-month year.  1 = calendar year; 10 = the October-September
        water year, labelled by the calendar year in which it ends (common practice).

    Returns
    -------
    DataArray with dim ``year`` (label = calendar year of the year's last month).  A year
    with any missing month is NaN.  Leading and trailing years that the time axis does not
    fully cover are **dropped**; years inside the record with gaps stay, as NaN.
    ``attrs["year_start"]`` records the first month.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> pr = xr.DataArray(np.ones(time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})  # 1 mm every day
    >>> cw.annual_totals(pr).values
    array([365., 365.])
    >>> water = cw.annual_totals(pr, year_start=10)  # only Oct 2001-Sep 2002 is complete
    >>> water["year"].values, water.values
    (array([2002]), array([365.]))
    """
    year_start = check_year_start(year_start, "annual_totals")
    blocks = _blocks(pr, "annual_totals", year_start)
    out: xr.DataArray = blocks.sum("month", skipna=False)
    out.name = pr.name
    kind = "calendar year" if year_start == 1 else "12-month (water) year"
    out.attrs = {
        **_PRECIP_ATTRS,
        "long_name": f"annual precipitation total ({kind})",
        "cell_methods": "year: sum",
        "year_start": year_start,
        "year_label": "calendar year in which the 12-month year ends",
        "missing_rule": "a year with any missing month is missing; edge years not "
        "fully covered by the time axis are dropped",
    }
    return with_history(out, "annual_totals", pr.attrs, year_start=year_start)
