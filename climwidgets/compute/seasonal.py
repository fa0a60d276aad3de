"""Seasonal totals and the seasonal share of the annual total.

A season is measured against the 12-month year that contains it (docs/architecture.md): the year
beginning in ``year_start`` when the whole season fits inside it, otherwise the year
beginning with the season's first month (so November-March is measured against
November-October).  Years are labelled by the calendar year in which that 12-month year
ends.  The year actually used is recorded in ``attrs["season_year_start"]``.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

import numpy as np
import xarray as xr

from ..errors import ParameterError
from ..provenance import with_history
from ._time import (
    MONTH_NAMES,
    check_months,
    check_year_start,
    is_dask,
    monthly_with_coverage,
    precip_mm,
    safe_divide,
    season_year_start,
    select_years,
    source_name,
    year_blocks,
)

__all__ = ["seasonal_totals", "seasonal_fraction", "season_label"]


def season_label(months: Iterable[int]) -> str:
    """Plain label such as 'Jul-Aug' or 'Nov-Mar'.

    Parameters
    ----------
    months
        The season's consecutive month numbers (1-12), in order.

    Returns
    -------
    str
        The first and last month's short names joined by "-", one name for a single
        month, "whole year" for 12 months.

    Examples
    --------
    >>> from climwidgets.compute.seasonal import season_label
    >>> season_label((11, 12, 1, 2, 3)), season_label([7]), season_label(range(1, 13))
    ('Nov-Mar', 'Jul', 'whole year')
    """
    months = tuple(months)
    if len(months) == 12:
        return "whole year"
    return MONTH_NAMES[months[0] - 1] + ("" if len(months) == 1 else "-" + MONTH_NAMES[months[-1] - 1])


def _season_blocks(
    pr: xr.DataArray, months: Any, year_start: int, func: str
) -> tuple[xr.DataArray, tuple[int, ...], int, int]:
    pr, step = precip_mm(pr, func)
    months = check_months(months, func)
    year_start = check_year_start(year_start, func)
    start = season_year_start(months, year_start)
    monthly, covered = monthly_with_coverage(pr, step)
    blocks = year_blocks(monthly, covered, start, source_name(pr))
    return blocks, months, year_start, start


def _season_attrs(months: tuple[int, ...], year_start: int, start: int) -> dict[str, Any]:
    return {
        "season_months": list(months),
        "season": season_label(months),
        "year_start": year_start,
        "season_year_start": start,
        "season_year": f"{MONTH_NAMES[start - 1]}-{MONTH_NAMES[(start + 10) % 12]} year, "
        "labelled by the calendar year in which it ends",
    }


def seasonal_totals(pr: xr.DataArray, months: Iterable[int] | int, year_start: int = 1) -> xr.DataArray:
    """Seasonal precipitation totals (mm) on a ``year`` dimension.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm.
    months
        Consecutive month numbers, may wrap over the year end, e.g. (7, 8) or (11, 12, 1, 2, 3).
    year_start
        First month of the year the season belongs to, when the season fits inside it.

    Returns
    -------
    DataArray with dim ``year``, labelled by the calendar year in which the season's
    12-month year ends (so Dec-Feb 2000/01 is 2001).  A season with any missing month is
    NaN (rule for sums); months outside the season do not matter here.

    Raises
    ------
    climwidgets.errors.ParameterError
        Months that are not consecutive month numbers, or a bad ``year_start``.
    climwidgets.errors.InputError
        ``pr`` without usable units or step.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> pr = xr.DataArray(np.ones(time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})  # 1 mm every day
    >>> winter = cw.seasonal_totals(pr, (12, 1, 2))  # Dec 2001 + Jan and Feb 2002
    >>> winter["year"].values, winter.values
    (array([2002]), array([90.]))
    """
    blocks, months, year_start, start = _season_blocks(pr, months, year_start, "seasonal_totals")
    out = blocks.sel(month=list(months)).sum("month", skipna=False)
    out.name = pr.name
    out.attrs = {
        "standard_name": "lwe_thickness_of_precipitation_amount",
        "units": "mm",
        "long_name": f"seasonal precipitation total ({season_label(months)})",
        "cell_methods": "time: sum",
        **_season_attrs(months, year_start, start),
    }
    return with_history(out, "seasonal_totals", pr.attrs, months=months, year_start=year_start)


def seasonal_fraction(
    pr: xr.DataArray,
    months: Iterable[int] | int = (7, 8),
    how: str = "ratio_of_sums",
    years: Sequence[int] | None = None,
    year_start: int = 1,
    per_year: bool = False,
) -> xr.DataArray:
    """Seasonal share of the annual precipitation (fraction, units "1").

    Parameters
    ----------
    pr
        Precipitation depth per step in mm.
    months
        The season: consecutive month numbers, may wrap, e.g. (11, 12, 1, 2, 3).
    how
        "ratio_of_sums": sum of seasonal totals / sum of annual totals over the years.
        "mean_of_ratios": mean of the per-year shares; years with a zero annual total have
        no share and are left out (counted in ``attrs["years_with_zero_annual_total"]`` for
        in-memory input and per cell in the coordinate ``n_zero_annual_years``).
    years
        (first, last) year labels to use; default all complete years.
    year_start
        First month of the reference year when the season fits inside it (see module doc).
    per_year
        True returns the share of each year on a ``year`` dimension.

    Returns
    -------
    xarray.DataArray
        ``seasonal_share`` (units "1") per cell, or per year and cell with ``per_year``.
        Only years with all 12 months present are used (per cell).  Cells with no
        precipitation at all give NaN (no division warning).  The number of years used
        per cell is in the coordinate ``n_years``.  Lazy on dask input.

    Raises
    ------
    climwidgets.errors.ParameterError
        An unknown ``how``, months that are not consecutive month numbers, a bad
        ``year_start`` or ``years`` outside the record.
    climwidgets.errors.InputError
        ``pr`` without usable units or step.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> pr = xr.DataArray(np.ones(time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})  # 1 mm every day
    >>> share = cw.seasonal_fraction(pr, months=(7, 8))  # 62 of 365 days
    >>> round(float(share), 4), share.attrs["units"]
    (0.1699, '1')
    """
    func = "seasonal_fraction"
    if how not in ("ratio_of_sums", "mean_of_ratios"):
        raise ParameterError(
            f"how={how!r} is not known",
            source=func,
            variable="how",
            expected="'ratio_of_sums' or 'mean_of_ratios'",
            fix="pass how='ratio_of_sums' (default) or how='mean_of_ratios'",
        )
    blocks, months, year_start, start = _season_blocks(pr, months, year_start, func)
    if years is not None:
        blocks = select_years(blocks, years, func, "years", source_name(pr))
    annual = blocks.sum("month", skipna=False)
    seasonal = blocks.sel(month=list(months)).sum("month", skipna=False)
    valid = annual.notnull()  # a year with any missing month is dropped
    seasonal = seasonal.where(valid)
    attrs = {
        "units": "1",
        "long_name": f"seasonal share of annual precipitation ({season_label(months)})",
        **_season_attrs(months, year_start, start),
        "years": [int(blocks.year.values[0]), int(blocks.year.values[-1])],
        "missing_rule": "years with any missing month are left out",
    }
    if per_year:
        out = safe_divide(seasonal, annual)
        attrs["how"] = "per year"
    elif how == "ratio_of_sums":
        s = seasonal.sum("year", skipna=True)
        a = annual.where(valid).sum("year", skipna=True)
        out = safe_divide(s, a)
        out = out.assign_coords(n_years=valid.sum("year"))
        attrs["how"] = how
    else:
        share = safe_divide(seasonal, annual)
        n = share.notnull().sum("year")
        out = safe_divide(share.sum("year", skipna=True), n.astype(float))
        zero = (valid & (annual == 0)).sum("year")
        out = out.assign_coords(n_years=n, n_zero_annual_years=zero)
        attrs["how"] = how
        attrs["years_with_zero_annual_total"] = (
            "not counted for lazy input; see coordinate n_zero_annual_years"
            if is_dask(zero)
            else int(np.asarray(zero).sum())
        )
    out.name = "seasonal_share"
    out.attrs = attrs
    return with_history(
        out, func, pr.attrs, months=months, how=how, years=years, year_start=year_start, per_year=per_year
    )
