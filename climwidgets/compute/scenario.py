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

import numpy as np
import scipy.stats
import xarray as xr

from ..errors import CalendarError, GridError, InputError, InsufficientDataError, MismatchError, ParameterError
from ..provenance import with_history
from ._time import check_precip, check_year_range
from .compare import _calendar, _complete_years
from .ensemble import MEMBER_DIMS, check_members

__all__ = ["SCENARIO_CAUTIONS", "check_model_runs", "delta_change", "period_or_default"]

SCENARIO_CAUTIONS = (
    ("Projections, not forecasts: a climate-change scenario depends on the climate models, the "
     "emission pathway (forcing scenario) and the downscaling or adjustment method chosen."),
    ("The spread of a small ensemble understates the full range of possible futures; members "
     "that agree are not thereby right."),
    ("Delta change keeps the observed sequence of weather and changes only monthly amounts; "
     "quantile delta mapping keeps the model's changes in each quantile and its own sequence."),
    "For planning, defer to adopted local climate-change guidance, codes and licensed engineering practice.",
)

_METHODS = ("monthly_ratio", "quantile_delta")
_GROUPS = ("month", "season")
_SAME_CALENDAR = {"gregorian": "standard", "proleptic_gregorian": "standard", "365_day": "noleap",
                  "366_day": "all_leap"}
_SEASON_OF_MONTH = np.array([0, 0, 1, 1, 1, 2, 2, 2, 3, 3, 3, 0])  # DJF, MAM, JJA, SON
_SEASONS = ("DJF", "MAM", "JJA", "SON")


# ---------------------------------------------------------------- validation
def _calendar_of(da) -> str:
    cal = _calendar(da)
    return _SAME_CALENDAR.get(cal, cal)


def check_model_runs(model_hist, model_future, dim, func):
    """Validate a historical and a future run: precipitation convention, members, calendar.

    Returns the member dimension (None for single runs).
    """
    for label, da in (("model_hist", model_hist), ("model_future", model_future)):
        _check_series(da, label, func)
    member = check_members(model_hist, model_future, dim, func)
    ch, cf = _calendar_of(model_hist), _calendar_of(model_future)
    if ch != cf:
        raise CalendarError(f"the historical run uses the {ch!r} calendar and the future run {cf!r}",
                            source=func, variable="time",
                            expected="both runs of a model on the same calendar",
                            fix="pair runs of the same model, or convert one with DataArray.convert_calendar")
    return member


def _check_series(da, label, func):
    if not isinstance(da, xr.DataArray):
        raise ParameterError(f"{label} is a {type(da).__name__}", source=func, variable=label,
                             expected="an xarray.DataArray of precipitation depth per step (mm)",
                             fix="open it with cw.open_precip or select one variable")
    try:
        return check_precip(da, func)
    except InputError as err:  # say which of the inputs is wrong
        raise type(err)(f"{label}: {err.problem}", source=func, variable=da.name, expected=err.expected,
                        fix=err.fix) from None


def period_or_default(da, period, label, func):
    """(first, last) complete years of ``da`` to use: ``period`` checked, or all complete years."""
    years = _complete_years(da)
    if not years:
        raise InsufficientDataError(f"{label} has no complete calendar year", source=func, variable=label,
                                    expected="at least one fully covered calendar year",
                                    fix="supply a longer record")
    if period is None:
        return min(years), max(years)
    first, last = check_year_range(period, func, label)
    missing = sorted(set(range(first, last + 1)) - years)
    if missing:
        raise InsufficientDataError(
            f"the period {first}-{last} is not covered by {label} (incomplete or absent years, "
            f"e.g. {missing[0]})", source=func, variable=label,
            expected=f"complete years of {label} within {min(years)}-{max(years)}",
            fix=f"choose a period inside {min(years)}-{max(years)}")
    return first, last


def _check_obs(obs, func):
    step = _check_series(obs, "obs", func)
    extra = [d for d in MEMBER_DIMS if d in obs.dims]
    if extra:
        raise ParameterError(f"the observations have a member dimension {extra[0]!r}", source=func,
                             variable="obs", expected="one observed record (no member dimension)",
                             fix=f"select one observed product, e.g. obs.isel({extra[0]}=0)")
    return step


def _has_grid(da) -> bool:
    return "lat" in da.coords and "lon" in da.coords


def _check_grids(obs, model_hist, func):
    """Gridded observations, or series (e.g. basin means) for observations and runs alike."""
    if _has_grid(obs) != _has_grid(model_hist):
        which = "the observations have" if not _has_grid(obs) else "the model runs have"
        raise GridError(f"{which} no lat/lon coordinates while the other input is gridded", source=func,
                        variable="obs" if not _has_grid(obs) else "model_hist",
                        expected="all inputs gridded (lat/lon), or all series such as basin means",
                        fix="open gridded data with cw.open_precip, or take cw.basin_mean of every input")


def _same_grid(a, b) -> bool:
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


def _on_obs_grid(field, obs):
    """``field`` conservatively remapped onto the observed grid (unchanged when already on it)."""
    from .regrid import regrid

    if _same_grid(field, obs):
        return field
    out = regrid(field, obs, method="conservative")
    out.attrs.pop("history", None)
    return out


def _years(da, first, last):
    y = da["time"].dt.year
    return da.isel(time=np.flatnonzero(((y >= first) & (y <= last)).values))


# ---------------------------------------------------------------- monthly ratio
def _monthly_factors(obs, model_hist, model_future, hist_period, fut_period, min_fraction):
    from .normals import normals

    nh = normals(model_hist, baseline=hist_period, min_fraction=min_fraction).drop_vars("n_years")
    nf = normals(model_future, baseline=fut_period, min_fraction=min_fraction).drop_vars("n_years")
    nh, nf = _on_obs_grid(nh, obs), _on_obs_grid(nf, obs)
    # a month that is dry in both periods does not change (factor 1); one that is dry only
    # in the historical period cannot be scaled from zero (NaN)
    factor = xr.where(nh > 0, nf / nh.where(nh > 0), xr.where((nh == 0) & (nf == 0), 1.0, np.nan))
    factor.name = "change_factor"
    factor.attrs = {"units": "1", "long_name": "monthly change factor (future / historical monthly normal)",
                    "historical_period": list(hist_period), "future_period": list(fut_period)}
    return factor


def _apply_monthly(obs, factor):
    month = obs["time"].dt.month
    per_step = factor.sel(month=month).drop_vars("month")
    return obs * per_step


# ---------------------------------------------------------------- quantile delta mapping
def _splitmix64(x):
    """SplitMix64 finaliser on uint64 arrays (Steele, Lea & Flood 2014): a well-mixed hash."""
    x = x + np.uint64(0x9E3779B97F4A7C15)
    x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return x ^ (x >> np.uint64(31))


def _uniform(key, seed, salt, n):
    """Uniform (0, 1) numbers for positions 0..n-1 of each series identified by ``key``."""
    with np.errstate(over="ignore"):
        base = _splitmix64(key.astype(np.uint64) * np.uint64(4) + np.uint64(salt) + _splitmix64(
            np.uint64(seed)))
        h = _splitmix64(base[..., None] + np.arange(n, dtype=np.uint64))
    return ((h >> np.uint64(11)).astype(np.float64) + 0.5) / float(1 << 53)


def _jitter(x, key, seed, salt, trace):
    """Dry amounts (below trace) replaced by pseudo-random amounts in (0, trace/2)."""
    u = _uniform(key, seed, salt, x.shape[-1])
    return np.where(x < trace, u * (trace / 2.0), x)


def _quantile_at(sorted_x, count, tau):
    """Type-7 empirical quantiles of each row of ``sorted_x`` (NaN last) at per-value ``tau``."""
    pos = tau * (count - 1)
    lo = np.clip(np.floor(np.nan_to_num(pos)), 0, None).astype(np.intp)
    hi = np.minimum(lo + 1, np.maximum(count - 1, 0)).astype(np.intp)
    lo = np.minimum(lo, np.maximum(count - 1, 0)).astype(np.intp)
    a = np.take_along_axis(sorted_x, lo, -1)
    b = np.take_along_axis(sorted_x, hi, -1)
    q = a + (pos - lo) * (b - a)
    return np.where(count > 0, q, np.nan)


def _qdm_block(obs, hist, fut, key, g_obs, g_hist, g_fut, trace, max_ratio, ratio_trace, seed, jitter):
    """Quantile delta mapping on one block: arrays (..., time); returns (..., time of fut)."""
    shape = np.broadcast_shapes(obs.shape[:-1], hist.shape[:-1], fut.shape[:-1], key.shape)
    obs = np.broadcast_to(obs, shape + obs.shape[-1:]).astype(float)
    hist = np.broadcast_to(hist, shape + hist.shape[-1:]).astype(float)
    fut = np.broadcast_to(fut, shape + fut.shape[-1:]).astype(float)
    key = np.broadcast_to(key, shape)
    if jitter:
        nan_o, nan_h, nan_f = np.isnan(obs), np.isnan(hist), np.isnan(fut)
        obs = np.where(nan_o, np.nan, _jitter(obs, key, seed, 1, trace))
        hist = np.where(nan_h, np.nan, _jitter(hist, key, seed, 2, trace))
        fut = np.where(nan_f, np.nan, _jitter(fut, key, seed, 3, trace))
    out = np.full(fut.shape, np.nan)
    for g in np.unique(g_fut):  # a loop over the 12 months (or 4 seasons), not over cells
        o, h, f = obs[..., g_obs == g], hist[..., g_hist == g], fut[..., g_fut == g]
        n_o = np.sum(~np.isnan(o), -1, keepdims=True)
        n_h = np.sum(~np.isnan(h), -1, keepdims=True)
        n_f = np.sum(~np.isnan(f), -1, keepdims=True)
        rank = scipy.stats.rankdata(f, axis=-1, nan_policy="omit") if f.shape[-1] else f
        tau = np.where(n_f > 1, (rank - 1.0) / np.maximum(n_f - 1, 1), 0.5)
        q_obs = _quantile_at(np.sort(o, -1), n_o, tau)
        q_hist = _quantile_at(np.sort(h, -1), n_h, tau)
        with np.errstate(divide="ignore", invalid="ignore"):
            delta = f / q_hist
        delta = np.where(q_hist < ratio_trace, np.minimum(delta, max_ratio), delta)
        adjusted = q_obs * delta
        if jitter:
            adjusted = np.where(adjusted < trace, 0.0, adjusted)
        out[..., g_fut == g] = adjusted
    return out


def _group_ids(da, group):
    month = da["time"].dt.month.values
    return month if group == "month" else _SEASON_OF_MONTH[month - 1]


def _cell_key(template):
    """An integer per cell of the observed grid (its position), small and in memory.

    Members share it, so a member's pseudo-random dry amounts are the same as when that
    member is adjusted on its own.
    """
    dims = list(template.dims)
    key = xr.DataArray(np.int64(0))
    stride = 1
    for d in reversed(dims):
        key = key + xr.DataArray(np.arange(template.sizes[d], dtype=np.int64) * stride, dims=d)
        stride *= template.sizes[d]
    return key.transpose(*dims) if dims else key


def _quantile_delta(obs, hist, fut, group, trace, max_ratio, seed, jitter):
    g_obs, g_hist, g_fut = (_group_ids(x, group) for x in (obs, hist, fut))
    missing = sorted(set(g_fut.tolist()) - set(g_obs.tolist()) | set(g_fut.tolist()) - set(g_hist.tolist()))
    if missing:
        label = ([f"month {m}" for m in missing] if group == "month" else [_SEASONS[s] for s in missing])
        raise InsufficientDataError(f"no calibration data for {', '.join(label)}", source="delta_change",
                                    variable="time", expected="observations and historical run in every "
                                    "month (season) of the future run", fix="use longer records")
    o = obs.rename(time="time_obs").drop_vars("time_obs")
    h = hist.rename(time="time_hist").drop_vars("time_hist")
    key = _cell_key(o.isel(time_obs=0, drop=True))
    if fut.chunks is not None or o.chunks is not None or h.chunks is not None:
        o, h, f = o.chunk({"time_obs": -1}), h.chunk({"time_hist": -1}), fut.chunk({"time": -1})
    else:
        f = fut
    out = xr.apply_ufunc(
        _qdm_block, o, h, f, key,
        kwargs=dict(g_obs=g_obs, g_hist=g_hist, g_fut=g_fut, trace=float(trace), max_ratio=float(max_ratio),
                    ratio_trace=10.0 * float(trace), seed=int(seed), jitter=jitter),
        input_core_dims=[["time_obs"], ["time_hist"], ["time"], []], output_core_dims=[["time"]],
        dask="parallelized", output_dtypes=[float],
    )
    return out.assign_coords(time=fut["time"])


# ---------------------------------------------------------------- public function
def delta_change(obs: xr.DataArray, model_hist: xr.DataArray, model_future: xr.DataArray,
                 method: str = "monthly_ratio", *, historical=None, future=None, dim=None,
                 group: str = "month", trace: float = 0.05, max_ratio: float = 2.0, seed: int = 0,
                 min_fraction: float = 0.8, return_factors: bool = False):
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
    ParameterError
        Unknown method or group, bad trace or max_ratio, observations with a member dimension.
    UnitsError, TimeAxisError
        An input not in mm per step or without a usable time axis.
    MismatchError
        Runs with different members, or one without the member dimension; quantile delta
        with different time steps or without common calibration years.
    CalendarError
        Historical and future runs on different calendars.
    InsufficientDataError
        A requested period not covered by complete years.
    GridError
        Observed and model grids that do not overlap.

    References
    ----------
    Cannon, A. J., Sobie, S. R. and Murdock, T. Q. (2015): Bias correction of GCM
    precipitation by quantile mapping: how well do methods preserve changes in quantiles
    and extremes? J. Climate 28, 6938–6959, doi:10.1175/JCLI-D-14-00754.1.

    Hyndman, R. J. and Fan, Y. (1996): Sample quantiles in statistical packages. The
    American Statistician 50, 361–365, doi:10.1080/00031305.1996.10473566.
    """
    func = "delta_change"
    if method not in _METHODS:
        raise ParameterError(f"unknown method {method!r}", source=func, variable="method",
                             expected=" or ".join(repr(m) for m in _METHODS),
                             fix="use method='monthly_ratio' (delta change) or 'quantile_delta'")
    step_obs = _check_obs(obs, func)
    member = check_model_runs(model_hist, model_future, dim, func)
    _check_grids(obs, model_hist, func)
    fut_period = period_or_default(model_future, future, "model_future", func)
    params = dict(method=method, future=fut_period)

    if method == "monthly_ratio":
        hist_period = period_or_default(model_hist, historical, "model_hist", func)
        factor = _monthly_factors(obs, model_hist, model_future, hist_period, fut_period, min_fraction)
        out = _apply_monthly(obs, factor)
        attrs = {"method": "monthly ratio (delta change): each observed step times its month's change factor, "
                           "future / historical monthly normal of the model run, per member",
                 "historical_period": list(hist_period), "future_period": list(fut_period),
                 "observed_period": f"{obs['time'].dt.year.values[0]}-{obs['time'].dt.year.values[-1]}"}
        params["historical"] = hist_period
    else:
        if group not in _GROUPS:
            raise ParameterError(f"unknown group {group!r}", source=func, variable="group",
                                 expected="'month' or 'season'", fix="use group='month'")
        for name, value in (("trace", trace), ("max_ratio", max_ratio)):
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value) \
                    or value <= 0:
                raise ParameterError(f"{name}={value!r} is not a positive number", source=func, variable=name,
                                     expected="a positive number", fix="use trace=0.05 (mm) and max_ratio=2")
        step_model = model_hist.attrs["step"]
        if step_obs != step_model or model_future.attrs["step"] != step_model:
            raise MismatchError(
                f"quantile delta mapping needs one time step; obs is per {step_obs}, the runs per "
                f"{step_model}/{model_future.attrs['step']}", source=func, variable="step",
                expected="observations and both runs on the same step (e.g. all daily)",
                fix="aggregate the finer series with cw.monthly_totals, or use method='monthly_ratio'")
        common = _complete_years(obs) & _complete_years(model_hist)
        if not common:
            raise MismatchError("the observations and the historical run share no complete year",
                                source=func, variable="historical",
                                expected="an overlapping calibration period",
                                fix="use a historical run that overlaps the observed record")
        if historical is None:
            hist_period = (min(common), max(common))
        else:
            hist_period = check_year_range(historical, func, "historical")
            if not set(range(hist_period[0], hist_period[1] + 1)) <= common:
                raise MismatchError(
                    f"historical={hist_period} is not covered by both the observations and the historical run",
                    source=func, variable="historical",
                    expected=f"years within their common complete years {min(common)}-{max(common)}",
                    fix=f"choose a calibration period inside {min(common)}-{max(common)}")
        o = _years(obs, *hist_period)
        h = _on_obs_grid(_years(model_hist, *hist_period), obs)
        f = _on_obs_grid(_years(model_future, *fut_period), obs)
        out = _quantile_delta(o, h, f, group, trace, max_ratio, seed, jitter=True)
        attrs = {"method": "quantile delta mapping, multiplicative (Cannon, Sobie & Murdock 2015, "
                           "doi:10.1175/JCLI-D-14-00754.1), empirical type-7 quantiles, per member",
                 "calibration_period": list(hist_period), "future_period": list(fut_period),
                 "group": group, "trace_mm": float(trace),
                 "dry_days": (f"amounts below {trace:g} mm are dry: replaced by pseudo-random amounts in "
                              f"(0, {trace / 2:g}) mm before the mapping (seed {seed}), and adjusted amounts "
                              f"below {trace:g} mm set to 0"),
                 "max_ratio": float(max_ratio),
                 "max_ratio_rule": f"relative change capped at {max_ratio:g} where the historical quantile "
                                   f"is below {10 * trace:g} mm"}
        params.update(historical=hist_period, group=group, trace=trace, max_ratio=max_ratio, seed=seed)

    out = out.transpose(*([member] if member else []), "time", ...)
    out.name = obs.name if method == "monthly_ratio" else (model_future.name or obs.name)
    base = obs.attrs if method == "monthly_ratio" else model_future.attrs
    out.attrs = {k: v for k, v in base.items() if k != "history"}
    out.attrs.update(units="mm", step=base.get("step"),
                     long_name="precipitation, climate-change scenario", **attrs,
                     grid=("series without a grid" if not _has_grid(obs) else "observed grid"
                           + ("" if _same_grid(model_hist, obs) else " (model runs remapped conservatively)")),
                     member_dim=member or "none", cautions=SCENARIO_CAUTIONS)
    out = with_history(out, func, base, **params)
    if return_factors and method == "monthly_ratio":
        return out, with_history(factor, func, model_hist.attrs, **params)
    return out
