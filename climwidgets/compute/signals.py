"""Climate-change signals of a model ensemble, per member, with the ensemble's spread and agreement.

Each function compares a historical and a future run of the same members, cell by cell:

* :func:`seasonal_share_signal` — future minus historical seasonal share (units "1");
* :func:`annual_normal_signal` — future / historical annual normal (ratio, units "1");
* :func:`design_depth_signal` — future / historical T-year depth of n-day annual maxima
  (ratio, units "1"), from :func:`cw.return_levels`.

Every result is a Dataset with ``historical``, ``future`` and ``change`` per member, and
the ensemble summary of ``change`` (:func:`cw.ensemble_summary`) as ``change_mean``,
``change_median``, ``change_min``, ``change_max``, ``change_range``,
``change_lower_quartile``, ``change_upper_quartile``, ``change_iqr``, ``change_std``,
``change_n_members`` and ``change_agreement`` (share of members agreeing with the sign
of the ensemble-median change).  Single runs (no member dimension) give the per-run
variables only.  Each period is the run's complete calendar years unless given.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

import xarray as xr

from ..provenance import with_history
from .ensemble import ensemble_summary
from .scenario import SCENARIO_CAUTIONS, _years, check_model_runs, period_or_default

__all__ = ["annual_normal_signal", "design_depth_signal", "seasonal_share_signal"]


def _periods(
    model_hist: xr.DataArray, model_future: xr.DataArray, historical: Any, future: Any, func: str
) -> tuple[tuple[int, int], tuple[int, int]]:
    return (
        period_or_default(model_hist, historical, "model_hist", func),
        period_or_default(model_future, future, "model_future", func),
    )


def _signal(
    hist_value: xr.DataArray,
    fut_value: xr.DataArray,
    change: xr.DataArray,
    kind: str,
    member: str | None,
    func: str,
    attrs: dict[str, Any],
    cautions: Sequence[str],
    source_attrs: dict[str, Any],
    **params: Any,
) -> xr.Dataset:
    ds = xr.Dataset({"historical": hist_value, "future": fut_value, "change": change})
    if member is not None:
        summary = ensemble_summary(change, dim=member, change=kind)
        for name, var in summary.data_vars.items():
            ds[f"change_{name}"] = var
    else:
        attrs = dict(attrs, ensemble="single run: no member dimension, so no ensemble spread or agreement")
    ds.attrs = dict(attrs, change_kind=kind, member_dim=member or "none", cautions=cautions)
    return with_history(ds, func, source_attrs, **params)


def _strip(da: xr.DataArray) -> xr.DataArray:
    return da.drop_vars([c for c in da.coords if c not in da.dims])


def seasonal_share_signal(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    months: Iterable[int] = (7, 8),
    historical: Any = None,
    future: Any = None,
    dim: str | None = None,
    year_start: int = 1,
) -> xr.Dataset:
    """Change in the seasonal share of the annual total: future minus historical, per member.

    Parameters
    ----------
    model_hist, model_future
        Historical and future runs, mm per step, with the same members and calendar.
    months
        The season, e.g. (7, 8) or (11, 12, 1, 2, 3).
    historical, future
        (first, last) calendar years of each period; default all complete years.
    dim
        Member dimension name when it is not one of the usual names.
    year_start
        First month of the 12-month year (see :func:`cw.seasonal_fraction`).

    Returns
    -------
    xarray.Dataset
        ``historical``, ``future`` (shares, ratio of sums over the period) and ``change``
        (difference, units "1") per member, plus the ensemble summary of ``change``.

    Raises
    ------
    climwidgets.errors.MismatchError
        Runs with different members, or only one with a member dimension.
    climwidgets.errors.CalendarError
        Runs on different calendars.
    climwidgets.errors.InsufficientDataError
        A period not covered by complete years.
    climwidgets.errors.InputError
        A run not in the precipitation convention, or another bad parameter.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> def monthly(first, summer, other):  # two years, Jul-Aug apart from the other months
    ...     time = pd.date_range(f"{first}-01-01", periods=24, freq="MS")
    ...     return xr.DataArray(np.where(time.month.isin([7, 8]), summer, other), dims="time",
    ...                         coords={"time": time}, attrs={"units": "mm", "step": "month"})
    >>> hist = xr.concat([monthly(2001, 10.0, 10.0)] * 2, dim="member")
    >>> future = xr.concat([monthly(2051, 12.0, 12.0), monthly(2051, 20.0, 10.0)], dim="member")
    >>> signal = cw.seasonal_share_signal(hist, future, months=(7, 8))
    >>> signal["change"].values.round(3), float(signal["change_agreement"])  # 2/12 -> 40/140
    (array([0.   , 0.119]), 0.5)
    """
    from .seasonal import seasonal_fraction

    func = "seasonal_share_signal"
    member = check_model_runs(model_hist, model_future, dim, func)
    ph, pf = _periods(model_hist, model_future, historical, future, func)
    sh = _strip(seasonal_fraction(_years(model_hist, *ph), months, year_start=year_start))
    sf = _strip(seasonal_fraction(_years(model_future, *pf), months, year_start=year_start))
    change = (sf - sh).assign_attrs(
        units="1", long_name=f"change in {sh.attrs.get('long_name', 'seasonal share')} (future − historical)"
    )
    attrs = {
        "signal": "seasonal share, future minus historical",
        "season_months": list(months),
        "historical_period": list(ph),
        "future_period": list(pf),
    }
    return _signal(
        sh,
        sf,
        change,
        "difference",
        member,
        func,
        attrs,
        SCENARIO_CAUTIONS,
        model_hist.attrs,
        months=tuple(months),
        historical=ph,
        future=pf,
    )


def annual_normal_signal(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    historical: Any = None,
    future: Any = None,
    dim: str | None = None,
    min_fraction: float = 0.8,
) -> xr.Dataset:
    """Ratio of annual normals, future / historical, per member.

    The annual normal is the sum of the 12 monthly normals (:func:`cw.annual_normal`, WMO
    completeness rule) over each run's period.

    Parameters
    ----------
    model_hist, model_future
        Historical and future runs, mm per step, with the same members and calendar.
    historical, future
        (first, last) calendar years of each period; default all complete years.
    dim
        Member dimension name when it is not one of the usual names.
    min_fraction
        Completeness rule of the normals (see :func:`cw.normals`).

    Returns
    -------
    xarray.Dataset
        ``historical``, ``future`` (mm) and ``change`` (ratio future / historical, units
        "1", NaN where the historical normal is 0) per member, plus the ensemble summary
        of ``change`` (agreement on the sign of ratio − 1).

    Raises
    ------
    climwidgets.errors.MismatchError
        Runs with different members, or only one with a member dimension.
    climwidgets.errors.CalendarError
        Runs on different calendars.
    climwidgets.errors.InsufficientDataError
        A period not covered by complete years.
    climwidgets.errors.InputError
        A run not in the precipitation convention, or another bad parameter.

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> def monthly(first, summer, other):  # two years, Jul-Aug apart from the other months
    ...     time = pd.date_range(f"{first}-01-01", periods=24, freq="MS")
    ...     return xr.DataArray(np.where(time.month.isin([7, 8]), summer, other), dims="time",
    ...                         coords={"time": time}, attrs={"units": "mm", "step": "month"})
    >>> hist = xr.concat([monthly(2001, 10.0, 10.0)] * 2, dim="member")
    >>> future = xr.concat([monthly(2051, 12.0, 12.0), monthly(2051, 20.0, 10.0)], dim="member")
    >>> signal = cw.annual_normal_signal(hist, future)  # 120 mm a year -> 144 and 140 mm
    >>> signal["change"].values.round(3), round(float(signal["change_median"]), 3)
    (array([1.2  , 1.167]), 1.183)
    """
    from .normals import annual_normal

    func = "annual_normal_signal"
    member = check_model_runs(model_hist, model_future, dim, func)
    ph, pf = _periods(model_hist, model_future, historical, future, func)
    nh = _strip(annual_normal(model_hist, baseline=ph, min_fraction=min_fraction))
    nf = _strip(annual_normal(model_future, baseline=pf, min_fraction=min_fraction))
    change = (nf / nh.where(nh > 0)).assign_attrs(units="1", long_name="ratio of annual normals (future / historical)")
    attrs = {
        "signal": "annual normal, future / historical",
        "historical_period": list(ph),
        "future_period": list(pf),
        "min_fraction": float(min_fraction),
    }
    return _signal(
        nh,
        nf,
        change,
        "ratio",
        member,
        func,
        attrs,
        SCENARIO_CAUTIONS,
        model_hist.attrs,
        historical=ph,
        future=pf,
        min_fraction=min_fraction,
    )


def design_depth_signal(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    periods: Any = (2, 10, 25, 50, 100),
    duration_days: int = 1,
    historical: Any = None,
    future: Any = None,
    dim: str | None = None,
    n_boot: int = 200,
    ci: float = 0.9,
    seed: int = 0,
) -> xr.Dataset:
    """Ratio of design depths (T-year n-day depths), future / historical, per member.

    Annual maxima of ``duration_days`` running totals (:func:`cw.annual_maxima`, daily or
    hourly runs) of each period are fitted by L-moments and their return levels taken
    (:func:`cw.return_levels`); the change is the ratio of the estimates.

    Parameters
    ----------
    model_hist, model_future
        Historical and future runs, daily or hourly, mm per step, with the same members
        and calendar.
    periods
        Return periods in years, each greater than 1.
    duration_days
        Length of the running totals in days (see :func:`cw.annual_maxima`).
    historical, future
        (first, last) calendar years of each period; default all complete years.
    dim
        Member dimension name when it is not one of the usual names.
    n_boot, ci, seed
        Bootstrap settings of each fit (see :func:`cw.return_levels`).

    Returns
    -------
    xarray.Dataset
        ``historical``, ``future`` (return-level estimates, mm, over ``period``) and
        ``change`` (ratio, units "1") per member, plus the ensemble summary of ``change``.
        ``historical_lower``/``historical_upper`` and ``future_lower``/``future_upper`` are
        the bootstrap intervals of each fit.  ``attrs["cautions"]`` adds the design-depth
        cautions to the scenario cautions.

    Raises
    ------
    climwidgets.errors.MismatchError
        Runs with different members, or only one with a member dimension.
    climwidgets.errors.CalendarError
        Runs on different calendars.
    climwidgets.errors.InsufficientDataError
        A period not covered by complete years, or fewer years than a fit needs.
    climwidgets.errors.TimeAxisError
        Monthly runs (annual maxima need daily or hourly steps).
    climwidgets.errors.InputError
        A run not in the precipitation convention, or another bad parameter.

    References
    ----------
    Hosking, J. R. M. and Wallis, J. R. (1997). Regional Frequency Analysis: An Approach
    Based on L-Moments. Cambridge University Press. https://doi.org/10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> rng = np.random.default_rng(0)
    >>> def daily(first, scale):  # 20 years of invented daily rain
    ...     time = pd.date_range(f"{first}-01-01", f"{first + 19}-12-31", freq="D")
    ...     return xr.DataArray(rng.gamma(0.5, scale, time.size), dims="time",
    ...                         coords={"time": time}, attrs={"units": "mm", "step": "day"})
    >>> hist = xr.concat([daily(1981, 8.0), daily(1981, 8.0)], dim="member")
    >>> future = xr.concat([daily(2051, 8.8), daily(2051, 9.6)], dim="member")
    >>> signal = cw.design_depth_signal(hist, future, periods=(10,), n_boot=50)
    >>> signal["historical"].values.round(1), signal["change"].values.round(2)  # 10-year, 1-day
    (array([[56.1, 53.4]]), array([[1.16, 1.1 ]]))
    """
    from .extremes import annual_maxima
    from .gev import return_levels
    from .warming import DESIGN_DEPTH_CAUTIONS

    func = "design_depth_signal"
    member = check_model_runs(model_hist, model_future, dim, func)
    ph, pf = _periods(model_hist, model_future, historical, future, func)
    fits = []
    for run, (first, last) in ((model_hist, ph), (model_future, pf)):
        am = annual_maxima(_years(run, first, last), duration_days=duration_days)
        fits.append(return_levels(am, periods=periods, ci=ci, n_boot=n_boot, seed=seed))
    rh, rf = fits
    eh, ef = _strip(rh["estimate"]), _strip(rf["estimate"])
    change = (ef / eh.where(eh > 0)).assign_attrs(
        units="1", long_name=f"ratio of {duration_days}-day design depths (future / historical)"
    )
    attrs = {
        "signal": f"{duration_days}-day design depth (return level), future / historical",
        "historical_period": list(ph),
        "future_period": list(pf),
        "ci": float(ci),
        "n_boot": int(n_boot),
    }
    ds = _signal(
        eh,
        ef,
        change,
        "ratio",
        member,
        func,
        attrs,
        SCENARIO_CAUTIONS + tuple(DESIGN_DEPTH_CAUTIONS),
        model_hist.attrs,
        periods=tuple(periods),
        duration_days=duration_days,
        historical=ph,
        future=pf,
    )
    for prefix, fit in (("historical", rh), ("future", rf)):
        for bound in ("lower", "upper"):
            ds[f"{prefix}_{bound}"] = _strip(fit[bound])
    return ds
