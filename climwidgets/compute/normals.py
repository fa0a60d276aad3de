"""Climate normals of precipitation: monthly, annual and seasonal normal totals.

Rules, after WMO-No. 1203 (2017) *Guidelines on the Calculation of Climate Normals* (read
through secondary sources that cite it):

* a monthly total is missing if any day (step) of the month is missing (rule for sums);
* a monthly normal is computed only if at least 80 % of the baseline years are present
  (24 of 30), otherwise it is missing;
* the annual normal is the sum of the 12 monthly normals (missing if any is missing).

The rule is applied month by month and cell by cell over the baseline years, the partial
first and last years of a record included (their months that the record covers count);
a baseline is refused only when fewer baseline years than the rule needs lie in the data.

The completeness fraction is a parameter (``min_fraction``) so that a stricter or looser
local rule can be used; the rule applied is recorded in attrs.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from typing import Any, cast

import numpy as np
import xarray as xr

from ..errors import ParameterError
from ..provenance import with_history
from ._time import (
    check_months,
    check_year_range,
    is_dask,
    monthly_with_coverage,
    precip_mm,
    source_name,
    year_blocks,
)
from .seasonal import season_label

__all__ = ["normals", "annual_normal", "seasonal_normal", "baseline_stats"]


def _check_fraction(min_fraction: Any, func: str) -> float:
    if isinstance(min_fraction, bool) or not isinstance(min_fraction, (int, float)) or not 0 < min_fraction <= 1:
        raise ParameterError(
            f"min_fraction={min_fraction!r} is not a fraction in (0, 1]",
            source=func,
            variable="min_fraction",
            expected="a number in (0, 1]; 0.8 is the WMO 80 % rule",
            fix="pass min_fraction=0.8",
        )
    return float(min_fraction)


def baseline_values(
    values: xr.DataArray, baseline: Sequence[int], min_fraction: float, func: str, src: str, dim: str = "year"
) -> tuple[xr.DataArray, int, int]:
    """The values of the baseline years along ``dim``, every baseline year present (NaN
    where the record has none), and ``(required, nyears)`` of the completeness rule.

    The baseline is judged by the WMO-No. 1203 (2017) rule, period by period and cell by
    cell: a normal needs ``required`` = ceil(min_fraction * nyears) years with a value (24
    of 30 at 80 %), so a record that starts in March 1991 still has 29 Januaries for a
    1991-2020 normal.  Only a baseline the record cannot satisfy anywhere is refused.
    """
    min_fraction = _check_fraction(min_fraction, func)
    first, last = check_year_range(baseline, func, "baseline")
    nyears = last - first + 1
    # 1e-9 guards against 0.8 * 30 = 24.000000000000004 asking for 25 years.
    required = max(1, math.ceil(min_fraction * nyears - 1e-9))
    have = np.asarray(values[dim].values)
    inside = int(((have >= first) & (have <= last)).sum())
    if inside < required:
        span = f"{have.min()}-{have.max()}" if have.size else "none"
        raise ParameterError(
            f"baseline=({first}, {last}) lies outside the data or overlaps it too little: {inside} of its "
            f"{nyears} years are in the data (years {span}), a normal needs at least {required} "
            f"(WMO-No. 1203: {min_fraction:.0%} of the years)",
            source=src,
            variable="baseline",
            expected=f"at least {required} baseline years inside the data",
            fix="choose a baseline that the record covers, supply a longer record, or lower min_fraction",
        )
    base = values.sel({dim: (values[dim] >= first) & (values[dim] <= last)})
    base = base.reindex({dim: np.arange(first, last + 1)})  # absent years are missing (lazy)
    return base, required, nyears


def baseline_stats(
    values: xr.DataArray, baseline: Sequence[int], min_fraction: float, func: str, src: str, dim: str = "year"
) -> tuple[xr.DataArray, xr.DataArray, xr.DataArray, int, int]:
    """Mean and sample standard deviation (ddof=1) over the baseline years along ``dim``.

    Parameters
    ----------
    values
        Values with a ``dim`` dimension of year labels (e.g. annual or seasonal totals).
    baseline
        (first, last) years of the baseline.
    min_fraction
        Share of baseline years that must have a value, in (0, 1].
    func, src
        The calling function's name and the data's name, for error messages.
    dim
        The year dimension.

    Returns
    -------
    tuple
        ``(mean, sd, n, required, nyears)``: mean and sd (DataArrays, NaN where fewer than
        ``required`` = ceil(min_fraction * nyears) baseline years are present, see
        :func:`baseline_values`), the count ``n`` of years with a value, and the two ints
        of the rule.

    Raises
    ------
    climwidgets.errors.ParameterError
        A bad ``min_fraction`` or ``baseline``, or fewer baseline years in the data than
        the rule needs.

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva.

    Examples
    --------
    >>> import xarray as xr
    >>> from climwidgets.compute.normals import baseline_stats
    >>> totals = xr.DataArray([100.0, 120.0, 110.0, 130.0], dims="year",
    ...                       coords={"year": [2001, 2002, 2003, 2004]})
    >>> mean, sd, n, required, nyears = baseline_stats(totals, (2001, 2004), 0.8, "example", "totals")
    >>> float(mean), round(float(sd), 3), int(n), required, nyears  # sd = sqrt(500 / 3)
    (115.0, 12.91, 4, 4, 4)
    """
    base, required, nyears = baseline_values(values, baseline, min_fraction, func, src, dim)
    n = base.count(dim)
    ok = n >= required
    mean = base.sum(dim, skipna=True) / n.where(ok)
    var = ((base - mean) ** 2).sum(dim, skipna=True) / (n - 1).where(ok & (n > 1))
    return mean, cast(xr.DataArray, np.sqrt(var)), n, required, nyears  # numpy stubs: ufunc of a DataArray


def _completeness_attrs(n: xr.DataArray, required: int, per_cell_dims: list[str]) -> dict[str, Any]:
    """Counts of cells that fail the completeness rule (only for in-memory results)."""
    if is_dask(n):
        note = "not counted for lazy input; see coordinate n_years"
        return {"cells_failing_completeness": note, "cells_without_data": note}
    has_data = (n > 0).any(per_cell_dims)
    failing = (n < required).any(per_cell_dims) & has_data
    return {
        "cells_failing_completeness": int(np.asarray(failing).sum()),
        "cells_without_data": int(np.asarray(~has_data).sum()),
    }


def normals(pr: xr.DataArray, baseline: Sequence[int] = (1991, 2020), min_fraction: float = 0.8) -> xr.DataArray:
    """Monthly normal precipitation totals (mm) on a ``month`` dimension 1..12.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm (hourly, daily or monthly).
    baseline
        (first, last) calendar years of the normal period.  It need not lie wholly inside
        the record: each month is judged by the completeness rule on its own, so a record
        that starts in March 1991 has 29 Januaries for a 1991-2020 normal.
    min_fraction
        Share of baseline years that must have a complete monthly total (0.8 = 24 of 30).

    Returns
    -------
    xarray.DataArray
        (month, ...) mean monthly totals over the baseline.  NaN where the completeness
        rule fails.  Coordinate ``n_years`` holds the valid years per month and cell;
        ``attrs["cells_failing_completeness"]`` counts cells with at least one monthly
        normal withheld for incompleteness (for in-memory input).

    Raises
    ------
    climwidgets.errors.ParameterError
        When fewer of the baseline's years than the completeness rule needs lie in the
        data, or for bad parameters.
    climwidgets.errors.InputError
        When ``pr`` has no usable units or step.

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", periods=60, freq="MS")  # five years of months
    >>> pr = xr.DataArray(10.0 * time.month + (time.year - 2001), dims="time",
    ...                   coords={"time": time}, attrs={"units": "mm", "step": "month"})
    >>> normal = cw.normals(pr, baseline=(2001, 2005))
    >>> normal.values  # each month's mean of its five totals
    array([ 12.,  22.,  32.,  42.,  52.,  62.,  72.,  82.,  92., 102., 112., 122.])
    >>> normal["n_years"].values
    array([5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5])
    """
    func = "normals"
    pr, step = precip_mm(pr, func)
    src = source_name(pr)
    monthly, covered = monthly_with_coverage(pr, step)
    blocks = year_blocks(monthly, covered, 1, src, keep_partial=True)
    mean, _, n, required, nyears = baseline_stats(blocks, baseline, min_fraction, func, src)
    out = mean.assign_coords(n_years=n)
    out.name = pr.name
    out.attrs = {
        "standard_name": "lwe_thickness_of_precipitation_amount",
        "units": "mm",
        "long_name": "monthly normal precipitation total",
        "cell_methods": "time: sum within months time: mean over years",
        "baseline": list(check_year_range(baseline, func, "baseline")),
        "min_fraction": float(min_fraction),
        "years_required": required,
        "completeness_rule": f"a monthly normal needs >= {required} of {nyears} "
        "baseline years with a complete monthly total (a month "
        "with any missing day is missing); WMO-No. 1203 (2017)",
        **_completeness_attrs(n, required, ["month"]),
    }
    return with_history(out, func, pr.attrs, baseline=baseline, min_fraction=min_fraction)


def annual_normal(pr: xr.DataArray, baseline: Sequence[int] = (1991, 2020), min_fraction: float = 0.8) -> xr.DataArray:
    """Annual normal total (mm): the sum of the 12 monthly normals, NaN if any is NaN.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm (hourly, daily or monthly).
    baseline
        (first, last) calendar years of the normal period (see :func:`normals`).
    min_fraction
        Share of baseline years that must have a complete monthly total.

    Returns
    -------
    xarray.DataArray
        The annual normal per cell (no time dimension), units "mm".

    Raises
    ------
    climwidgets.errors.ParameterError
        When fewer of the baseline's years than the completeness rule needs lie in the
        data, or for bad parameters.
    climwidgets.errors.InputError
        When ``pr`` has no usable units or step.

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", periods=60, freq="MS")  # five years of months
    >>> pr = xr.DataArray(10.0 * time.month + (time.year - 2001), dims="time",
    ...                   coords={"time": time}, attrs={"units": "mm", "step": "month"})
    >>> float(cw.annual_normal(pr, baseline=(2001, 2005)))  # 10 + 20 + ... + 120, plus 12 x 2
    804.0
    """
    mon = normals(pr, baseline, min_fraction)
    out = mon.sum("month", skipna=False).drop_vars("n_years", errors="ignore")
    out.name = pr.name
    out.attrs = {
        **{k: v for k, v in mon.attrs.items() if k != "history"},
        "long_name": "annual normal precipitation total",
        "method": "sum of the 12 monthly normals (WMO-No. 1203)",
    }
    return with_history(out, "annual_normal", pr.attrs, baseline=baseline, min_fraction=min_fraction)


def seasonal_normal(
    pr: xr.DataArray, months: Iterable[int] | int, baseline: Sequence[int] = (1991, 2020), min_fraction: float = 0.8
) -> xr.DataArray:
    """Seasonal normal total (mm): the sum of the season's monthly normals, NaN if any is NaN.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm (hourly, daily or monthly).
    months
        The season's consecutive month numbers, e.g. (12, 1, 2).
    baseline
        (first, last) calendar years of the normal period (see :func:`normals`).
    min_fraction
        Share of baseline years that must have a complete monthly total.

    Returns
    -------
    xarray.DataArray
        The seasonal normal per cell, units "mm", ``attrs["season_months"]``.

    Raises
    ------
    climwidgets.errors.ParameterError
        When fewer of the baseline's years than the completeness rule needs lie in the
        data, for bad months or other bad parameters.
    climwidgets.errors.InputError
        When ``pr`` has no usable units or step.

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", periods=60, freq="MS")  # five years of months
    >>> pr = xr.DataArray(10.0 * time.month + (time.year - 2001), dims="time",
    ...                   coords={"time": time}, attrs={"units": "mm", "step": "month"})
    >>> float(cw.seasonal_normal(pr, (12, 1, 2), baseline=(2001, 2005)))  # 122 + 12 + 22
    156.0
    """
    months = check_months(months, "seasonal_normal")
    mon = normals(pr, baseline, min_fraction)
    out = mon.sel(month=list(months)).sum("month", skipna=False).drop_vars("n_years", errors="ignore")
    out.name = pr.name
    out.attrs = {
        **{k: v for k, v in mon.attrs.items() if k != "history"},
        "long_name": f"seasonal normal precipitation total ({season_label(months)})",
        "season_months": list(months),
        "method": "sum of the season's monthly normals",
    }
    return with_history(out, "seasonal_normal", pr.attrs, months=months, baseline=baseline, min_fraction=min_fraction)
