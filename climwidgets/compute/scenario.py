"""Climate-change scenarios from a model ensemble: monthly delta change and quantile delta mapping.

Two ways to turn climate-model runs (a historical run and a future run of each member)
into a precipitation series on the observed grid:

``method="monthly_ratio"`` (delta change)
    For each member, calendar month and model cell, the change factor is the future
    monthly normal divided by the historical monthly normal (:func:`cw.normals`, WMO
    completeness rule).  The factors are applied to the observed record: every observed
    step of month *m* is multiplied by that month's factor.  The result keeps the observed
    sequence of wet and dry days and the observed time axis; only the monthly amounts
    change.  When the model grid differs from the observed grid, both normals are
    remapped conservatively onto the observed grid first (:func:`cw.regrid`), so the
    factor of an observed cell is the change of the model's area-weighted normal over it.

``method="quantile_delta"`` (quantile delta mapping, Cannon et al. 2015)
    Bias-adjusts the future model run towards the observations while keeping the model's
    relative change in every quantile.  For a future value x at non-exceedance probability
    τ in its own (future, same-month) distribution,

        x̂ = F⁻¹_obs(τ) · x / F⁻¹_hist(τ)        (multiplicative, for precipitation)

    where F⁻¹ are the empirical quantile functions of the observations and the historical
    run over the calibration period, in the same month (``group="month"``) or
    meteorological season (``group="season"``).  The result is on the future run's time
    axis and calendar, on the observed grid (model runs remapped conservatively first).

Dry days in quantile delta mapping (the trace approach of Cannon et al. 2015): amounts
below ``trace`` (default 0.05 mm per step) count as dry.  Before the mapping every dry
amount, in the observations and in both runs, is replaced by a small pseudo-random amount
uniform in (0, trace/2), so that dry days have distinct ranks and a change in the model's
dry-day frequency is carried into the result through the quantiles; after the mapping,
adjusted amounts below ``trace`` are set to zero.  The pseudo-random amounts come from a
hash of each value's position and ``seed``, so results are reproducible and independent
of dask chunking.  Where the historical quantile is below 10 × trace, the relative change
x / F⁻¹_hist(τ) is capped at ``max_ratio`` (default 2) so that ratios of two tiny amounts
do not blow up (a safeguard used with the method in practice).

Empirical quantiles are the linear interpolation of the sorted sample (Hyndman & Fan 1996
type 7); τ of a future value is (rank − 1)/(n − 1) with average ranks for ties.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import xarray as xr

from ..errors import CalendarError, GridError, InputError, InsufficientDataError, MismatchError, ParameterError
from ..provenance import with_history
from ._qdm import quantile_delta_map
from ._time import check_precip, check_year_range
from .compare import _calendar, _complete_years
from .ensemble import MEMBER_DIMS, check_members

__all__ = ["SCENARIO_CAUTIONS", "check_model_runs", "delta_change", "period_or_default"]

SCENARIO_CAUTIONS = (
    (
        "Projections, not forecasts: a climate-change scenario depends on the climate models, the "
        "emission pathway (forcing scenario) and the downscaling or adjustment method chosen."
    ),
    (
        "The spread of a small ensemble understates the full range of possible futures; members "
        "that agree are not thereby right."
    ),
    (
        "Delta change keeps the observed sequence of weather and changes only monthly amounts; "
        "quantile delta mapping keeps the model's changes in each quantile and its own sequence."
    ),
    "For planning, defer to adopted local climate-change guidance, codes and licensed engineering practice.",
)

_METHODS = ("monthly_ratio", "quantile_delta")
_GROUPS = ("month", "season")
_SAME_CALENDAR = {
    "gregorian": "standard",
    "proleptic_gregorian": "standard",
    "365_day": "noleap",
    "366_day": "all_leap",
}


# ---------------------------------------------------------------- validation
def _calendar_of(da: xr.DataArray) -> str:
    cal = _calendar(da)
    return _SAME_CALENDAR.get(cal, cal)


def check_model_runs(model_hist: xr.DataArray, model_future: xr.DataArray, dim: str | None, func: str) -> str | None:
    """Validate a historical and a future run: precipitation convention, members, calendar.

    Parameters
    ----------
    model_hist, model_future
        The historical and future runs (DataArrays of depth per step, mm).
    dim
        The member dimension's name, or None to detect one of the usual names.
    func
        The calling function's name, for error messages.

    Returns
    -------
    str or None
        The member dimension (None for single runs).

    Raises
    ------
    climwidgets.errors.ParameterError
        A run that is not a DataArray.
    climwidgets.errors.InputError
        A run not in the precipitation convention (units, step), named in the message.
    climwidgets.errors.MismatchError
        Runs with different members, or only one with a member dimension.
    climwidgets.errors.CalendarError
        Runs on different calendars.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> from climwidgets.compute.scenario import check_model_runs
    >>> def monthly(first, years, mm):  # the same depth every month
    ...     time = pd.date_range(f"{first}-01-01", periods=12 * years, freq="MS")
    ...     return xr.DataArray(np.full(time.size, mm), dims="time", coords={"time": time},
    ...                         attrs={"units": "mm", "step": "month"})
    >>> hist = xr.concat([monthly(2001, 2, 8.0)] * 2, dim="member")
    >>> future = xr.concat([monthly(2051, 2, 9.6), monthly(2051, 2, 12.0)], dim="member")
    >>> check_model_runs(hist, future, None, "example")
    'member'
    """
    for label, da in (("model_hist", model_hist), ("model_future", model_future)):
        _check_series(da, label, func)
    member = check_members(model_hist, model_future, dim, func)
    ch, cf = _calendar_of(model_hist), _calendar_of(model_future)
    if ch != cf:
        raise CalendarError(
            f"the historical run uses the {ch!r} calendar and the future run {cf!r}",
            source=func,
            variable="time",
            expected="both runs of a model on the same calendar",
            fix="pair runs of the same model, or convert one with DataArray.convert_calendar",
        )
    return member


def _check_series(da: Any, label: str, func: str) -> str:
    if not isinstance(da, xr.DataArray):
        raise ParameterError(
            f"{label} is a {type(da).__name__}",
            source=func,
            variable=label,
            expected="an xarray.DataArray of precipitation depth per step (mm)",
            fix="open it with cw.open_precip or select one variable",
        )
    try:
        return check_precip(da, func)
    except InputError as err:  # say which of the inputs is wrong
        raise type(err)(
            f"{label}: {err.problem}", source=func, variable=da.name, expected=err.expected, fix=err.fix
        ) from None


def period_or_default(da: xr.DataArray, period: Any, label: str, func: str) -> tuple[int, int]:
    """(first, last) complete years of ``da`` to use: ``period`` checked, or all complete years.

    Parameters
    ----------
    da
        Precipitation depth per step with a ``time`` axis.
    period
        (first, last) years, or None for every complete calendar year of ``da``.
    label, func
        The input's and the calling function's names, for error messages.

    Returns
    -------
    tuple of int
        (first, last) years.

    Raises
    ------
    climwidgets.errors.InsufficientDataError
        No complete calendar year, or a ``period`` with years that are not complete.
    climwidgets.errors.ParameterError
        A ``period`` that is not a pair of years.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> from climwidgets.compute.scenario import period_or_default
    >>> time = pd.date_range("2001-01-01", "2003-06-30", freq="D")  # 2003 is not complete
    >>> pr = xr.DataArray(np.ones(time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})
    >>> period_or_default(pr, None, "obs", "example")
    (2001, 2002)
    """
    years = _complete_years(da)
    if not years:
        raise InsufficientDataError(
            f"{label} has no complete calendar year",
            source=func,
            variable=label,
            expected="at least one fully covered calendar year",
            fix="supply a longer record",
        )
    if period is None:
        return min(years), max(years)
    first, last = check_year_range(period, func, label)
    missing = sorted(set(range(first, last + 1)) - years)
    if missing:
        raise InsufficientDataError(
            f"the period {first}-{last} is not covered by {label} (incomplete or absent years, e.g. {missing[0]})",
            source=func,
            variable=label,
            expected=f"complete years of {label} within {min(years)}-{max(years)}",
            fix=f"choose a period inside {min(years)}-{max(years)}",
        )
    return first, last


def _check_obs(obs: Any, func: str) -> str:
    step = _check_series(obs, "obs", func)
    extra = [d for d in MEMBER_DIMS if d in obs.dims]
    if extra:
        raise ParameterError(
            f"the observations have a member dimension {extra[0]!r}",
            source=func,
            variable="obs",
            expected="one observed record (no member dimension)",
            fix=f"select one observed product, e.g. obs.isel({extra[0]}=0)",
        )
    return step


def _has_grid(da: xr.DataArray) -> bool:
    return "lat" in da.coords and "lon" in da.coords


def _check_grids(obs: xr.DataArray, model_hist: xr.DataArray, func: str) -> None:
    """Gridded observations, or series (e.g. basin means) for observations and runs alike."""
    if _has_grid(obs) != _has_grid(model_hist):
        which = "the observations have" if not _has_grid(obs) else "the model runs have"
        raise GridError(
            f"{which} no lat/lon coordinates while the other input is gridded",
            source=func,
            variable="obs" if not _has_grid(obs) else "model_hist",
            expected="all inputs gridded (lat/lon), or all series such as basin means",
            fix="open gridded data with cw.open_precip, or take cw.basin_mean of every input",
        )


def _same_grid(a: xr.DataArray, b: xr.DataArray) -> bool:
    """Same lat/lon centres (and the same bounds where both carry them); series are alike."""
    if not _has_grid(a) and not _has_grid(b):
        return True
    for name in ("lat", "lon", "lat_lower", "lat_upper", "lon_lower", "lon_upper"):
        if name in a.coords and name in b.coords:
            x, y = np.asarray(a[name].values, dtype=float), np.asarray(b[name].values, dtype=float)
            if x.shape != y.shape or not np.allclose(x, y, rtol=0, atol=1e-9):
                return False
        elif name in ("lat", "lon"):
            return False
    return True


def _on_obs_grid(field: xr.DataArray, obs: xr.DataArray) -> xr.DataArray:
    """``field`` conservatively remapped onto the observed grid (unchanged when already on it)."""
    from .regrid import regrid

    if _same_grid(field, obs):
        return field
    out: xr.DataArray = regrid(field, obs, method="conservative")
    out.attrs.pop("history", None)
    return out


def _years(da: xr.DataArray, first: int, last: int) -> xr.DataArray:
    y = da["time"].dt.year
    return da.isel(time=np.flatnonzero(((y >= first) & (y <= last)).values))


# ---------------------------------------------------------------- monthly ratio
def _monthly_factors(
    obs: xr.DataArray,
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    hist_period: tuple[int, int],
    fut_period: tuple[int, int],
    min_fraction: float,
) -> xr.DataArray:
    from .normals import normals

    nh = normals(model_hist, baseline=hist_period, min_fraction=min_fraction).drop_vars("n_years")
    nf = normals(model_future, baseline=fut_period, min_fraction=min_fraction).drop_vars("n_years")
    nh, nf = _on_obs_grid(nh, obs), _on_obs_grid(nf, obs)
    # a month that is dry in both periods does not change (factor 1); one that is dry only
    # in the historical period cannot be scaled from zero (NaN)
    factor: xr.DataArray = xr.where(  # type: ignore[no-untyped-call]
        nh > 0,
        nf / nh.where(nh > 0),
        xr.where((nh == 0) & (nf == 0), 1.0, np.nan),  # type: ignore[no-untyped-call]
    )
    factor.name = "change_factor"
    factor.attrs = {
        "units": "1",
        "long_name": "monthly change factor (future / historical monthly normal)",
        "historical_period": list(hist_period),
        "future_period": list(fut_period),
    }
    return factor


def _apply_monthly(obs: xr.DataArray, factor: xr.DataArray) -> xr.DataArray:
    month = obs["time"].dt.month
    per_step = factor.sel(month=month).drop_vars("month")
    return obs * per_step


# ---------------------------------------------------------------- public function
def delta_change(
    obs: xr.DataArray,
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    method: str = "monthly_ratio",
    *,
    historical: Any = None,
    future: Any = None,
    dim: str | None = None,
    group: str = "month",
    trace: float = 0.05,
    max_ratio: float = 2.0,
    seed: int = 0,
    min_fraction: float = 0.8,
    return_factors: bool = False,
) -> Any:  # a DataArray, or (scenario, factors)
    """A climate-change scenario on the observed grid, per member, from a model ensemble.

    Parameters
    ----------
    obs
        Observed precipitation, depth per step (mm), dims (time, lat, lon); no member
        dimension.  Series without lat/lon (e.g. basin means from :func:`cw.basin_mean`)
        are accepted when the model runs are series too.
    model_hist, model_future
        The historical and future runs (mm per step), with the same member dimension
        (``member``, ``realization``, ``ensemble`` or ``model``, or ``dim=``) or none (one
        run), the same calendar (any CF calendar, e.g. ``noleap``) and the same grid.
        The model grid may differ from the observed one (remapped conservatively).
    method
        ``"monthly_ratio"``: monthly change factors (future / historical monthly normals)
        applied to the observed record; result on the observed time axis.  Any steps
        (e.g. daily observations with monthly model runs) and calendars may be mixed.
        ``"quantile_delta"``: quantile delta mapping of the future run (Cannon et al.
        2015), multiplicative, with the trace treatment of dry days described in the
        module notes; result on the future run's time axis.  Observations and runs must
        share a time step; their calendars may differ (only the distributions of each
        month's or season's values are compared).
    historical
        (first, last) years of the historical period: the baseline of the historical
        normals (monthly ratio; default all complete years of ``model_hist``) or the
        calibration period shared by ``obs`` and ``model_hist`` (quantile delta; default
        their common complete years).
    future
        (first, last) years of the future run to use (default all its complete years).
    dim
        Name of the member dimension when it is not one of the usual names.
    group
        Quantile delta only: ``"month"`` (12 separate mappings) or ``"season"`` (DJF, MAM,
        JJA, SON).
    trace
        Quantile delta only: dry-day threshold in mm per step (default 0.05).
    max_ratio
        Quantile delta only: cap on the relative change where the historical quantile is
        below 10 × trace.
    seed
        Quantile delta only: seed of the pseudo-random amounts given to dry days.
    min_fraction
        Monthly ratio only: completeness rule of the normals (see :func:`cw.normals`).
    return_factors
        Monthly ratio only: also return the change factors (month, member, lat, lon).

    Returns
    -------
    xarray.DataArray
        The scenario series in mm per step on the observed grid, dims (member, time, lat,
        lon) (no member dimension for single runs), lazy on dask input.
        ``attrs["cautions"]`` holds :data:`SCENARIO_CAUTIONS`.  With ``return_factors``,
        ``(scenario, factors)``.

    Raises
    ------
    climwidgets.errors.ParameterError
        Unknown method or group, bad trace or max_ratio, observations with a member dimension.
    climwidgets.errors.UnitsError, climwidgets.errors.TimeAxisError
        An input not in mm per step or without a usable time axis.
    climwidgets.errors.MismatchError
        Runs with different members, or one without the member dimension; quantile delta
        with different time steps or without common calibration years.
    climwidgets.errors.CalendarError
        Historical and future runs on different calendars.
    climwidgets.errors.InsufficientDataError
        A requested period not covered by complete years.
    climwidgets.errors.GridError
        Observed and model grids that do not overlap.

    References
    ----------
    Cannon, A. J., Sobie, S. R. and Murdock, T. Q. (2015): Bias correction of GCM
    precipitation by quantile mapping: how well do methods preserve changes in quantiles
    and extremes? J. Climate 28, 6938–6959, doi:10.1175/JCLI-D-14-00754.1.

    Hyndman, R. J. and Fan, Y. (1996): Sample quantiles in statistical packages. The
    American Statistician 50, 361–365, doi:10.1080/00031305.1996.10473566.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> def monthly(first, years, mm):  # the same depth every month
    ...     time = pd.date_range(f"{first}-01-01", periods=12 * years, freq="MS")
    ...     return xr.DataArray(np.full(time.size, mm), dims="time", coords={"time": time},
    ...                         attrs={"units": "mm", "step": "month"})
    >>> hist = xr.concat([monthly(2001, 2, 8.0)] * 2, dim="member")
    >>> future = xr.concat([monthly(2051, 2, 9.6), monthly(2051, 2, 12.0)], dim="member")
    >>> obs = monthly(2001, 2, 10.0)  # two members: +20 % and +50 % in every month
    >>> scenario, factors = cw.delta_change(obs, hist, future, return_factors=True)
    >>> factors.isel(month=0).values, scenario.isel(time=0).values
    (array([1.2, 1.5]), array([12., 15.]))
    """
    func = "delta_change"
    if method not in _METHODS:
        raise ParameterError(
            f"unknown method {method!r}",
            source=func,
            variable="method",
            expected=" or ".join(repr(m) for m in _METHODS),
            fix="use method='monthly_ratio' (delta change) or 'quantile_delta'",
        )
    step_obs = _check_obs(obs, func)
    member = check_model_runs(model_hist, model_future, dim, func)
    _check_grids(obs, model_hist, func)
    fut_period = period_or_default(model_future, future, "model_future", func)
    params: dict[str, Any] = dict(method=method, future=fut_period)

    if method == "monthly_ratio":
        hist_period = period_or_default(model_hist, historical, "model_hist", func)
        factor = _monthly_factors(obs, model_hist, model_future, hist_period, fut_period, min_fraction)
        out = _apply_monthly(obs, factor)
        attrs: dict[str, Any] = {
            "method": "monthly ratio (delta change): each observed step times its month's change factor, "
            "future / historical monthly normal of the model run, per member",
            "historical_period": list(hist_period),
            "future_period": list(fut_period),
            "observed_period": f"{obs['time'].dt.year.values[0]}-{obs['time'].dt.year.values[-1]}",
        }
        params["historical"] = hist_period
    else:
        if group not in _GROUPS:
            raise ParameterError(
                f"unknown group {group!r}",
                source=func,
                variable="group",
                expected="'month' or 'season'",
                fix="use group='month'",
            )
        for name, value in (("trace", trace), ("max_ratio", max_ratio)):
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value) or value <= 0:
                raise ParameterError(
                    f"{name}={value!r} is not a positive number",
                    source=func,
                    variable=name,
                    expected="a positive number",
                    fix="use trace=0.05 (mm) and max_ratio=2",
                )
        step_model = model_hist.attrs["step"]
        if step_obs != step_model or model_future.attrs["step"] != step_model:
            raise MismatchError(
                f"quantile delta mapping needs one time step; obs is per {step_obs}, the runs per "
                f"{step_model}/{model_future.attrs['step']}",
                source=func,
                variable="step",
                expected="observations and both runs on the same step (e.g. all daily)",
                fix="aggregate the finer series with cw.monthly_totals, or use method='monthly_ratio'",
            )
        common = _complete_years(obs) & _complete_years(model_hist)
        if not common:
            raise MismatchError(
                "the observations and the historical run share no complete year",
                source=func,
                variable="historical",
                expected="an overlapping calibration period",
                fix="use a historical run that overlaps the observed record",
            )
        if historical is None:
            hist_period = (min(common), max(common))
        else:
            hist_period = check_year_range(historical, func, "historical")
            if not set(range(hist_period[0], hist_period[1] + 1)) <= common:
                raise MismatchError(
                    f"historical={hist_period} is not covered by both the observations and the historical run",
                    source=func,
                    variable="historical",
                    expected=f"years within their common complete years {min(common)}-{max(common)}",
                    fix=f"choose a calibration period inside {min(common)}-{max(common)}",
                )
        o = _years(obs, *hist_period)
        h = _on_obs_grid(_years(model_hist, *hist_period), obs)
        f = _on_obs_grid(_years(model_future, *fut_period), obs)
        out = quantile_delta_map(o, h, f, group, trace, max_ratio, seed)
        attrs = {
            "method": "quantile delta mapping, multiplicative (Cannon, Sobie & Murdock 2015, "
            "doi:10.1175/JCLI-D-14-00754.1), empirical type-7 quantiles, per member",
            "calibration_period": list(hist_period),
            "future_period": list(fut_period),
            "group": group,
            "trace_mm": float(trace),
            "dry_days": (
                f"amounts below {trace:g} mm are dry: replaced by pseudo-random amounts in "
                f"(0, {trace / 2:g}) mm before the mapping (seed {seed}), and adjusted amounts "
                f"below {trace:g} mm set to 0"
            ),
            "max_ratio": float(max_ratio),
            "max_ratio_rule": f"relative change capped at {max_ratio:g} where the historical quantile "
            f"is below {10 * trace:g} mm",
        }
        params.update(historical=hist_period, group=group, trace=trace, max_ratio=max_ratio, seed=seed)

    out = out.transpose(*([member] if member else []), "time", ...)
    out.name = obs.name if method == "monthly_ratio" else (model_future.name or obs.name)
    base = obs.attrs if method == "monthly_ratio" else model_future.attrs
    out.attrs = {k: v for k, v in base.items() if k != "history"}
    out.attrs.update(
        units="mm",
        step=base.get("step"),
        long_name="precipitation, climate-change scenario",
        **attrs,
        grid=(
            "series without a grid"
            if not _has_grid(obs)
            else "observed grid" + ("" if _same_grid(model_hist, obs) else " (model runs remapped conservatively)")
        ),
        member_dim=member or "none",
        cautions=SCENARIO_CAUTIONS,
    )
    out = with_history(out, func, base, **params)
    if return_factors and method == "monthly_ratio":
        return out, with_history(factor, func, model_hist.attrs, **params)
    return out
