"""Anomalies against a baseline normal, and tercile categories (below / near / above normal).

The normal of a month, season or year is the mean of its totals over the baseline years,
withheld (NaN) unless at least ``min_fraction`` of the baseline years are complete — the
80 % rule of WMO-No. 1203 (2017) for monthly normals, applied here to every period.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Iterable, Sequence
from typing import Any

import numpy as np
import xarray as xr

from ..errors import ParameterError
from ..provenance import with_history
from ._time import (
    check_months,
    check_year_range,
    check_year_start,
    is_dask,
    monthly_with_coverage,
    precip_mm,
    safe_divide,
    source_name,
    year_blocks,
)
from .normals import baseline_stats, baseline_values
from .seasonal import season_label, seasonal_totals
from .totals import annual_totals

__all__ = ["anomaly", "tercile_category"]

_KINDS = {"absolute": "mm", "percent": "%", "standardized": "1"}
_PERIODS = ("month", "season", "year", "water_year")


def _period_values(
    pr: xr.DataArray,
    period: str,
    months: Any,
    year_start: int,
    func: str,
) -> tuple[xr.DataArray, xr.DataArray, Callable[[xr.DataArray], xr.DataArray], str, int]:
    """Return (x, values, to_x, label).

    ``x`` is the series to express as anomalies, ``values`` the same totals with a ``year``
    dimension for the baseline statistics, and ``to_x`` maps a statistic computed over
    ``year`` back onto ``x``.
    """
    if period not in _PERIODS:
        raise ParameterError(
            f"period={period!r} is not known",
            source=func,
            variable="period",
            expected="'month', 'season', 'year' or 'water_year'",
            fix="pass one of the listed periods",
        )
    year_start = check_year_start(year_start, func)
    pr, step = precip_mm(pr, func)
    if period == "season":
        if months is None:
            raise ParameterError(
                "period='season' needs months",
                source=func,
                variable="months",
                expected="consecutive month numbers, e.g. (11, 12, 1, 2, 3)",
                fix="pass months=(7, 8) or another season",
            )
        months = check_months(months, func)
        x = seasonal_totals(pr, months, year_start)
        return x, x, lambda s: s, f"season {season_label(months)}", year_start
    if period in ("year", "water_year"):
        # water_year uses year_start=10 (Oct-Sep) unless another start month is given
        if period == "water_year" and year_start == 1:
            year_start = 10
        x = annual_totals(pr, year_start)
        return x, x, lambda s: s, period.replace("_", " "), year_start
    monthly, covered = monthly_with_coverage(pr, step)
    blocks = year_blocks(monthly, covered, 1, source_name(pr), keep_partial=True)
    month_of = monthly["time"].dt.month

    def to_x(stat: xr.DataArray) -> xr.DataArray:
        return stat.sel(month=month_of).drop_vars("month")

    return monthly, blocks, to_x, "month", year_start


def _check_kind(kind: str, func: str) -> None:
    if kind not in _KINDS:
        raise ParameterError(
            f"kind={kind!r} is not known",
            source=func,
            variable="kind",
            expected="'absolute', 'percent' or 'standardized'",
            fix="pass kind='percent' (percent of normal) or another listed kind",
        )


def anomaly(
    pr: xr.DataArray,
    baseline: Sequence[int] = (1991, 2020),
    kind: str = "percent",
    period: str = "month",
    months: Iterable[int] | int | None = None,
    year_start: int = 1,
    min_fraction: float = 0.8,
) -> xr.DataArray:
    """Precipitation anomaly of each month, season or year against the baseline normal.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm.
    baseline
        (first, last) years of the normal period (year labels for seasons and years).
    kind
        "absolute": total - normal (mm); "percent": percent of normal, 100 * total / normal
        ("%", NaN where the normal is 0); "standardized": (total - mean) / sd of the
        baseline totals, sd with ddof=1 (units "1", NaN where sd is 0).
    period
        "month" (each month against its calendar month), "season" (needs ``months``),
        "year" (12-month years starting in ``year_start``), "water_year" (Oct-Sep unless
        ``year_start`` names another month).
    months
        The season for period="season".
    year_start
        First month of the year (see annual_totals / seasonal_totals).
    min_fraction
        Share of baseline years needed for a normal (0.8, WMO-No. 1203).

    Returns
    -------
    xarray.DataArray
        The anomaly on the time axis of the period's totals (``time`` at month starts for
        period="month", ``year`` for seasons and years), with ``units`` "mm", "%" or "1"
        by ``kind``, the baseline and the years required in ``attrs``.  NaN where the
        total is missing or the normal is withheld.  Lazy on dask input.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``kind`` or ``period`` is not one of the listed values, ``months`` is missing
        for period="season", or ``baseline``, ``months`` or ``year_start`` are malformed.
    climwidgets.errors.InputError
        When ``pr`` has no usable units or step (see ``compute._time.precip_mm``).

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva (the 80 % completeness rule).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", periods=48, freq="MS")
    >>> pr = xr.DataArray(np.where(time.year == 2004, 15.0, 10.0), dims="time",
    ...                   coords={"time": time}, attrs={"units": "mm", "step": "month"})
    >>> pon = cw.anomaly(pr, baseline=(2001, 2004), kind="percent", period="year")
    >>> pon["year"].values, pon.values.round(1)  # normal = 135 mm a year
    (array([2001, 2002, 2003, 2004]), array([ 88.9,  88.9,  88.9, 133.3]))
    >>> diff = cw.anomaly(pr, baseline=(2001, 2004), kind="absolute")  # each month
    >>> diff.values[[0, -1]]  # January 2001 and December 2004 against a 11.25 mm normal
    array([-1.25,  3.75])
    """
    func = "anomaly"
    _check_kind(kind, func)
    x, values, to_x, label, ys = _period_values(pr, period, months, year_start, func)
    mean, sd, n, required, nyears = baseline_stats(values, baseline, min_fraction, func, source_name(pr))
    ref = to_x(mean)
    out: xr.DataArray
    if kind == "absolute":
        out = x - ref
    elif kind == "percent":
        out = 100.0 * safe_divide(x, ref)
    else:
        out = safe_divide(x - ref, to_x(sd))
    out.name = pr.name
    names = {
        "absolute": "difference from normal",
        "percent": "percent of normal",
        "standardized": "standardized anomaly",
    }
    out.attrs = {
        "units": _KINDS[kind],
        "long_name": f"{names[kind]} ({label})",
        "kind": kind,
        "period": period,
        "baseline": list(check_year_range(baseline, func, "baseline")),
        "min_fraction": float(min_fraction),
        "years_required": required,
        "year_start": ys,
    }
    if kind == "standardized":
        out.attrs["sd_ddof"] = 1
    if period == "season":
        out.attrs["season_months"] = x.attrs["season_months"]
        out.attrs["season_year_start"] = x.attrs["season_year_start"]
    return with_history(
        out,
        func,
        pr.attrs,
        baseline=baseline,
        kind=kind,
        period=period,
        months=months,
        year_start=year_start,
        min_fraction=min_fraction,
    )


def _terciles_kernel(a: np.ndarray) -> np.ndarray:
    """Baseline terciles along the last axis, numpy 'linear' method, NaNs skipped."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-missing cells give NaN quietly
        q = np.nanquantile(a, [1.0 / 3.0, 2.0 / 3.0], axis=-1, method="linear")
    return np.moveaxis(q, 0, -1)


def tercile_category(
    pr: xr.DataArray,
    baseline: Sequence[int] = (1991, 2020),
    period: str = "month",
    months: Iterable[int] | int | None = None,
    year_start: int = 1,
    min_fraction: float = 0.8,
) -> xr.DataArray:
    """Tercile category of each total: -1 below normal, 0 near normal, +1 above normal.

    The tercile boundaries are the 1/3 and 2/3 quantiles of the baseline totals (per
    calendar month for period="month"), numpy's default "linear" method — the method
    WMO-No. 1203 §4.5 guidance coincides with.  A total equal to a boundary counts as near
    normal.  NaN where the total is missing or the baseline fails the completeness rule.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm.
    baseline
        (first, last) years of the baseline period.
    period
        "month", "season" (needs ``months``), "year" or "water_year", as in
        :func:`anomaly`.
    months
        The season for period="season".
    year_start
        First month of the year (see annual_totals / seasonal_totals).
    min_fraction
        Share of baseline years needed for the boundaries (0.8, WMO-No. 1203).

    Returns
    -------
    xarray.DataArray
        ``tercile_category`` with values -1, 0, +1 (CF ``flag_values`` and
        ``flag_meanings``), units "1", on the time axis of the period's totals.  Lazy on
        dask input.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``period`` is not known, ``months`` is missing for period="season", or the
        baseline, months or year start are malformed.
    climwidgets.errors.InputError
        When ``pr`` has no usable units or step.

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", periods=48, freq="MS")
    >>> pr = xr.DataArray(np.where(time.year == 2004, 15.0, 10.0), dims="time",
    ...                   coords={"time": time}, attrs={"units": "mm", "step": "month"})
    >>> cw.tercile_category(pr, baseline=(2001, 2004), period="year").values
    array([0., 0., 0., 1.])
    """
    func = "tercile_category"
    x, values, to_x, label, ys = _period_values(pr, period, months, year_start, func)
    base, required, _ = baseline_values(values, baseline, min_fraction, func, source_name(pr))
    n = base.count("year")
    if is_dask(base):
        base = base.chunk({"year": -1})
    bounds: xr.DataArray = xr.apply_ufunc(
        _terciles_kernel,
        base,
        input_core_dims=[["year"]],
        output_core_dims=[["tercile"]],
        dask="parallelized",
        output_dtypes=[float],
        dask_gufunc_kwargs={"output_sizes": {"tercile": 2}},
    )
    bounds = bounds.where(n >= required)
    lower = to_x(bounds.isel(tercile=0))
    upper = to_x(bounds.isel(tercile=1))
    cat = xr.where(x < lower, -1.0, xr.where(x > upper, 1.0, 0.0))  # type: ignore[no-untyped-call]
    out: xr.DataArray = cat.where(x.notnull() & lower.notnull() & upper.notnull())
    out.name = "tercile_category"
    out.attrs = {
        "units": "1",
        "long_name": f"tercile category ({label})",
        "flag_values": [-1, 0, 1],
        "flag_meanings": "below_normal near_normal above_normal",
        "quantile_method": "numpy 'linear' (WMO-No. 1203 §4.5 guidance)",
        "boundary_rule": "a total equal to a tercile boundary is near normal",
        "period": period,
        "baseline": list(check_year_range(baseline, func, "baseline")),
        "min_fraction": float(min_fraction),
        "years_required": required,
        "year_start": ys,
    }
    return with_history(
        out,
        func,
        pr.attrs,
        baseline=baseline,
        period=period,
        months=months,
        year_start=year_start,
        min_fraction=min_fraction,
    )
