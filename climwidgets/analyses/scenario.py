"""Climate-change signals per basin and per cell: seasonal share, annual normal, design depths.

:func:`basin_signals` averages a historical and a future model run over each basin and
compares them with :mod:`climwidgets.compute.signals`: the change in the seasonal share
(future − historical) and the change in the annual normal (future / historical − 1), per
member, then the ensemble mean, the lowest and highest member and the share of members
agreeing on the sign (:func:`climwidgets.compute.ensemble.ensemble_summary`).
:func:`signal_maps` gives the same changes cell by cell, for maps.
:func:`basin_depth_signals` compares the areal design depths of the two runs
(:func:`climwidgets.analyses.extremes.areal_design_depths`, daily or hourly runs).

``method`` chooses what is compared (:data:`SCENARIO_METHODS`):

* ``"none"``: the model runs as they are, future against historical;
* ``"monthly_ratio"``: the observations against the delta-change scenario of
  :func:`climwidgets.compute.scenario.delta_change` (observed record times each member's
  monthly change factors), over the same observed years;
* ``"quantile_delta"``: the observations over the calibration period against the
  quantile-delta-mapped future run.

With observations the changes are on the observed grid.  The scenario cautions
(:data:`climwidgets.compute.scenario.SCENARIO_CAUTIONS`) travel in the result's
attributes; every view of these numbers shows them.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

import xarray as xr

from ..compute.ensemble import ensemble_summary
from ..compute.normals import annual_normal
from ..compute.scenario import SCENARIO_CAUTIONS, _years, check_model_runs, delta_change, period_or_default
from ..compute.seasonal import season_label, seasonal_fraction
from ..compute.signals import annual_normal_signal, seasonal_share_signal
from ..compute.totals import monthly_totals
from ..errors import ParameterError
from ..provenance import history_line
from .basins import basin_series
from .meta import describe, ensemble_attrs

__all__ = [
    "AGREEMENT_LEVEL",
    "METHOD_LABELS",
    "SCENARIO_METHODS",
    "basin_depth_signals",
    "basin_signals",
    "signal_maps",
]

#: What each ``method`` compares, in plain words.
SCENARIO_METHODS = {
    "none": "model runs as they are: future run against historical run",
    "monthly_ratio": "delta change: the observed record against the observed record times each member's "
    "monthly change factors (future / historical monthly normal)",
    "quantile_delta": "quantile delta mapping: the observations over the calibration period against the "
    "future run adjusted to them, quantile by quantile (Cannon et al. 2015)",
}

#: The methods' short names, for menus.
METHOD_LABELS = {
    "none": "model runs as they are",
    "monthly_ratio": "delta change (monthly ratio)",
    "quantile_delta": "quantile delta mapping",
}

#: Share of members that must agree on the sign of a change for it to count as agreed
#: (the 80 % rule of IPCC AR6 WG I, Cross-Chapter Box Atlas.1, from memory); maps mark
#: cells below it.
AGREEMENT_LEVEL = 0.8

_SIGNALS = ("share_change_1", "normal_change_1")


def _monthly(run: xr.DataArray) -> xr.DataArray:
    return run if run.attrs.get("step") == "month" else monthly_totals(run)


def _per_basin(run: xr.DataArray, basins: Any) -> xr.DataArray:
    series = basin_series(_monthly(run), basins)
    out = series.reset_coords("covered_fraction", drop=True)
    out.attrs = dict(run.attrs, step="month")
    return out


def _strip(da: xr.DataArray) -> xr.DataArray:
    return da.drop_vars([c for c in da.coords if c not in da.dims])


def _summary(change: xr.DataArray, member: str | None, kind: str) -> xr.Dataset:
    """``change`` with the ensemble figures as ``change_<stat>`` (compute.signals' names)."""
    out = xr.Dataset({"change": change})
    if member is not None:
        for name, var in ensemble_summary(change, dim=member, change=kind).data_vars.items():
            out[f"change_{name}"] = var
    return out


def _pair_signals(
    base: xr.DataArray, scen: xr.DataArray, months: Any, pb: Sequence[int], pf: Sequence[int], member: str | None
) -> tuple[xr.Dataset, xr.Dataset]:
    """Share difference and normal ratio of ``scen`` over ``pf`` against ``base`` over ``pb``.

    ``base`` (the observations) may lack the member dimension and be on another calendar
    than ``scen``: each is reduced to its own share and normal first.
    """
    sh = _strip(seasonal_fraction(_years(base, *pb), tuple(months)))
    sf = _strip(seasonal_fraction(_years(scen, *pf), tuple(months)))
    nh = _strip(annual_normal(base, baseline=tuple(pb)))
    nf = _strip(annual_normal(scen, baseline=tuple(pf)))
    return _summary(sf - sh, member, "difference"), _summary(nf / nh.where(nh > 0), member, "ratio")


def _check_method(method: str, obs: xr.DataArray | None, func: str) -> None:
    if method not in SCENARIO_METHODS:
        raise ParameterError(
            f"unknown method {method!r}",
            source=func,
            variable="method",
            expected=" or ".join(repr(m) for m in SCENARIO_METHODS),
            fix="use method='none', 'monthly_ratio' or 'quantile_delta'",
        )
    if method != "none" and obs is None:
        raise ParameterError(
            f"method {method!r} adjusts the runs to observations, and none were given",
            source=func,
            variable="obs",
            expected="an observed record (cw.open_precip)",
            fix="pass obs=..., or method='none' to compare the model runs as they are",
        )


def _scenario(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    obs: xr.DataArray | None,
    method: str,
    historical: Sequence[int] | None,
    future: Sequence[int] | None,
    dim: str | None,
    func: str,
) -> tuple[xr.DataArray, xr.DataArray, tuple[int, ...], tuple[int, ...], str | None, dict[str, Any]]:
    """(base, scenario, base period, scenario period, member dim, attrs) for an observation-based method."""
    member = check_model_runs(model_hist, model_future, dim, func)
    assert obs is not None  # _check_method refuses these methods without observations
    obs_m, hist_m, fut_m = _monthly(obs), _monthly(model_hist), _monthly(model_future)
    if method == "monthly_ratio":
        scen = delta_change(obs_m, hist_m, fut_m, "monthly_ratio", historical=historical, future=future, dim=dim)
        pb = pf = period_or_default(obs_m, None, "obs", func)
        attrs = {
            "model_historical_period": list(scen.attrs["historical_period"]),
            "model_future_period": list(scen.attrs["future_period"]),
        }
    else:
        # quantile delta mapping needs one time step: monthly totals of all three
        scen = delta_change(obs_m, hist_m, fut_m, "quantile_delta", historical=historical, future=future, dim=dim)
        pb, pf = tuple(scen.attrs["calibration_period"]), tuple(scen.attrs["future_period"])
        attrs = {"calibration_period": list(pb)}
    return obs_m, scen, pb, pf, member, attrs


def _signals(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    months: Any,
    historical: Sequence[int] | None,
    future: Sequence[int] | None,
    dim: str | None,
    obs: xr.DataArray | None,
    method: str,
    reduce: Callable[[xr.DataArray], xr.DataArray],
    func: str,
) -> tuple[xr.Dataset, xr.Dataset, str | None, dict[str, Any]]:
    """The share and normal signals (compute.signals layout) of the chosen comparison."""
    _check_method(method, obs, func)
    if method == "none":
        hist, fut = reduce(model_hist), reduce(model_future)
        share = seasonal_share_signal(hist, fut, months=months, historical=historical, future=future, dim=dim)
        normal = annual_normal_signal(hist, fut, historical=historical, future=future, dim=dim)
        member = share.attrs.get("member_dim", "none")
        return (
            share,
            normal,
            (None if member == "none" else member),
            {"historical_period": share.attrs["historical_period"], "future_period": share.attrs["future_period"]},
        )
    base, scen, pb, pf, member, attrs = _scenario(model_hist, model_future, obs, method, historical, future, dim, func)
    share, normal = _pair_signals(reduce(base), reduce(scen), months, pb, pf, member)
    return share, normal, member, dict(attrs, historical_period=list(pb), future_period=list(pf))


def _dataset(
    share: xr.Dataset, normal: xr.Dataset, member: str | None, months: Any, attrs: Any, history: str
) -> xr.Dataset:
    ds = xr.Dataset(
        {
            "share_change_1": describe(share["change"], "share_change_1"),
            "normal_change_1": describe(normal["change"] - 1.0, "normal_change_1"),
        }
    )
    if member is not None:
        for name, sig, offset in (("share_change_1", share, 0.0), ("normal_change_1", normal, 1.0)):
            a = ds[name].attrs
            ds[f"{name}_mean"] = (sig["change_mean"] - offset).assign_attrs(ensemble_attrs(a, "mean"))
            ds[f"{name}_lower"] = (sig["change_min"] - offset).assign_attrs(ensemble_attrs(a, "min"))
            ds[f"{name}_upper"] = (sig["change_max"] - offset).assign_attrs(ensemble_attrs(a, "max"))
            ds[f"{name}_agreement"] = describe(
                sig["change_agreement"], "agreement_1", label=f"{a['label']}, members agreeing"
            )
    ds.attrs = {
        "months": list(months),
        "season": season_label(tuple(months)),
        **attrs,
        "member_dim": member or "none",
        "cautions": list(SCENARIO_CAUTIONS),
        "history": history,
    }
    return ds


def basin_signals(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    basins: Any,
    months: Any = (7, 8),
    historical: Sequence[int] | None = None,
    future: Sequence[int] | None = None,
    dim: str | None = None,
    obs: xr.DataArray | None = None,
    method: str = "none",
) -> xr.Dataset:
    """Change in seasonal share and annual normal of each basin, per member and over the ensemble.

    Parameters
    ----------
    model_hist, model_future
        Historical and future runs of the same members (mm per step, same calendar).
    basins
        A Basin, a list of them or a :class:`cw.BasinSet`.
    months
        The season of the seasonal share.
    historical, future
        (first, last) years of each model run's period; default all complete years of
        each run (with ``quantile_delta``: the calibration years common to ``obs`` and
        the historical run).
    dim
        The member dimension when it is not one of the usual names.
    obs
        Observed precipitation (mm per step, no member dimension), for the methods that
        adjust the runs to observations.
    method
        ``"none"`` (default), ``"monthly_ratio"`` or ``"quantile_delta"``: what is
        compared (:data:`SCENARIO_METHODS`, module notes).

    Returns
    -------
    xr.Dataset
        On (basin, member): ``share_change_1`` and ``normal_change_1``.  On basin, with
        members: ``<name>_mean``, ``<name>_lower`` (lowest member), ``<name>_upper``
        (highest member) and ``<name>_agreement``.  ``attrs``: ``historical_period`` and
        ``future_period`` (the periods compared), ``method``, ``comparison`` (words),
        ``cautions`` (the scenario cautions).

    Raises
    ------
    ParameterError
        An unknown method, or a method that needs observations without them.

    References
    ----------
    Hyndman, R. J. and Fan, Y. (1996): Sample quantiles in statistical packages. The
    American Statistician 50, 361–365, doi:10.1080/00031305.1996.10473566.

    Cannon, A. J., Sobie, S. R. and Murdock, T. Q. (2015): Bias correction of GCM
    precipitation by quantile mapping. J. Climate 28, 6938–6959, doi:10.1175/JCLI-D-14-00754.1.

    Examples
    --------
    Two members over two years each; member ``b`` is 20 % wetter in the future run:

    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> def run(start, factor):
    ...     t = xr.date_range(start, periods=24, freq="MS")
    ...     v = np.full((2, 24, 2, 3), 50.0) * np.array([1.0, factor])[:, None, None, None]
    ...     return xr.DataArray(v, dims=("member", "time", "lat", "lon"),
    ...                         coords={"member": ["a", "b"], "time": t, "lat": [0.5, 1.5],
    ...                                 "lon": [0.5, 1.5, 2.5]},
    ...                         attrs={"units": "mm", "step": "month"})
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> out = basin_signals(run("1991-01-01", 1.0), run("2071-01-01", 1.2), [west])
    >>> out["normal_change_1"].round(3).values.tolist(), round(float(out["normal_change_1_mean"][0]), 3)
    ([[0.0, 0.2]], 0.1)
    """
    func = "basin_signals"
    share, normal, member, attrs = _signals(
        model_hist,
        model_future,
        months,
        historical,
        future,
        dim,
        obs,
        method,
        lambda run: _per_basin(run, basins),
        func,
    )
    attrs.update(method=method, comparison=SCENARIO_METHODS[method])
    return _dataset(
        share,
        normal,
        member,
        months,
        attrs,
        history_line(func, months=tuple(months), historical=historical, future=future, method=method),
    )


def signal_maps(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    months: Any = (7, 8),
    historical: Sequence[int] | None = None,
    future: Sequence[int] | None = None,
    dim: str | None = None,
    obs: xr.DataArray | None = None,
    method: str = "none",
) -> xr.Dataset:
    """The changes of :func:`basin_signals` cell by cell: maps per member and over the ensemble.

    Parameters
    ----------
    model_hist, model_future, months, historical, future, dim, obs, method
        As for :func:`basin_signals`.

    Returns
    -------
    xr.Dataset
        ``share_change_1`` and ``normal_change_1`` on (member, lat, lon) (the model grid
        with ``method="none"``, the observed grid otherwise) and, with members, their
        ``_mean``, ``_lower``, ``_upper`` and ``_agreement`` on (lat, lon); the same
        attributes as :func:`basin_signals`.

    Raises
    ------
    ParameterError
        An unknown method, or a method that needs observations without them.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> def run(first, summer):
    ...     t = pd.date_range(f"{first}-01-01", periods=24, freq="MS")
    ...     v = np.where(np.isin(t.month, (7, 8)), 40.0 * summer, 10.0)
    ...     return xr.DataArray(v[None, :, None, None] * np.ones((2, 1, 1, 1)), dims=("member", "time", "lat", "lon"),
    ...                         coords={"member": ["a", "b"], "time": t, "lat": [0.25], "lon": [0.25]},
    ...                         attrs={"units": "mm", "step": "month"})
    >>> maps = signal_maps(run(1981, 1.0), run(2041, 1.5))
    >>> round(float(maps["normal_change_1_mean"].squeeze()), 4)  # (120 + 100) / 180 - 1
    0.2222
    """
    func = "signal_maps"
    share, normal, member, attrs = _signals(
        model_hist, model_future, months, historical, future, dim, obs, method, lambda run: run, func
    )
    attrs.update(method=method, comparison=SCENARIO_METHODS[method])
    return _dataset(
        share,
        normal,
        member,
        months,
        attrs,
        history_line(func, months=tuple(months), historical=historical, future=future, method=method),
    )


def basin_depth_signals(
    model_hist: xr.DataArray,
    model_future: xr.DataArray,
    basins: Any,
    periods: Sequence[float] = (100,),
    duration_days: int = 1,
    historical: Sequence[int] | None = None,
    future: Sequence[int] | None = None,
    dim: str | None = None,
    n_boot: int = 200,
    ci: float = 0.9,
    seed: int = 0,
) -> xr.Dataset:
    """Change in each basin's areal design depth, future / historical − 1, per member and over the ensemble.

    Each member's historical and future run is averaged over the basin and the return
    level of the basin-mean annual maxima taken
    (:func:`climwidgets.analyses.extremes.areal_design_depths`, GEV by L-moments); the
    change is the ratio of the two estimates minus one.

    Parameters
    ----------
    model_hist, model_future
        Daily or hourly historical and future runs of the same members (mm per step).
    basins
        A Basin, a list of them or a :class:`cw.BasinSet`.
    periods
        Return periods in years (default the 100-year depth).
    duration_days
        Duration of the annual maxima in days (default 1).
    historical, future
        (first, last) years of each run (default all complete years of each).
    dim
        The member dimension when it is not one of the usual names.
    n_boot, ci, seed
        Bootstrap of :func:`cw.return_levels` (the intervals are not part of the change).

    Returns
    -------
    xr.Dataset
        On (basin, return_period, member): ``historical_depth_mm``, ``future_depth_mm`` and
        ``depth_change_1``; with members, on (basin, return_period): ``<name>_mean`` of the
        three, ``depth_change_1_lower`` / ``_upper`` (lowest / highest member) and
        ``depth_change_1_agreement``.  ``attrs["cautions"]``: the scenario cautions and the
        design-depth cautions.

    Raises
    ------
    ParameterError, InputError
        Runs that are not daily or hourly, periods too short for a fit.

    References
    ----------
    Hosking, J. R. M. (1990): L-moments: analysis and estimation of distributions using
    linear combinations of order statistics. J. R. Stat. Soc. B 52, 105–124,
    doi:10.1111/j.2517-6161.1990.tb01775.x.

    Examples
    --------
    A future run 10 % wetter every day: the L-moment GEV scales with the data, so every
    depth grows by 10 %:

    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> rng = np.random.default_rng(0)
    >>> wet = rng.gamma(0.5, 8.0, (2, 20 * 365, 2, 3))
    >>> def run(start, values):
    ...     t = xr.date_range(start, periods=20 * 365, freq="D", calendar="noleap")
    ...     return xr.DataArray(values, dims=("member", "time", "lat", "lon"),
    ...                         coords={"member": ["a", "b"], "time": t, "lat": [0.5, 1.5],
    ...                                 "lon": [0.5, 1.5, 2.5]},
    ...                         attrs={"units": "mm", "step": "day"})
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> out = basin_depth_signals(run("1981-01-01", wet), run("2071-01-01", wet * 1.1), west,
    ...                           periods=[10], n_boot=50)
    >>> out["depth_change_1"].round(3).values.ravel().tolist()
    [0.1, 0.1]
    """
    from ..compute.warming import DESIGN_DEPTH_CAUTIONS
    from .extremes import areal_design_depths

    func = "basin_depth_signals"
    member = check_model_runs(model_hist, model_future, dim, func)
    step = model_hist.attrs.get("step")
    if step not in ("day", "hour") and not str(step).endswith("hour"):
        raise ParameterError(
            f"the runs are {step!r} totals",
            source=func,
            variable="model_hist",
            expected="daily or hourly runs for annual maxima of daily depths",
            fix="open the daily files of the runs; monthly runs give no design depths",
        )
    ph = period_or_default(model_hist, historical, "model_hist", func)
    pf = period_or_default(model_future, future, "model_future", func)

    def estimate(run: xr.DataArray) -> xr.DataArray:
        return areal_design_depths(
            run,
            basins,
            periods=tuple(periods),
            ci=float(ci),
            n_boot=int(n_boot),
            seed=seed,
            duration_days=int(duration_days),
        )["areal_estimate_mm"]

    dh, df = estimate(_years(model_hist, *ph)), estimate(_years(model_future, *pf))
    ratio = _summary(df / dh.where(dh > 0), member, "ratio")
    ds = xr.Dataset(
        {
            "historical_depth_mm": describe(dh, "historical_depth_mm"),
            "future_depth_mm": describe(df, "future_depth_mm"),
            "depth_change_1": describe(ratio["change"] - 1.0, "depth_change_1"),
        }
    )
    if member is not None:
        for name in ("historical_depth_mm", "future_depth_mm"):
            ds[f"{name}_mean"] = ds[name].mean(member).assign_attrs(ensemble_attrs(ds[name].attrs, "mean"))
        a = ds["depth_change_1"].attrs
        ds["depth_change_1_mean"] = (ratio["change_mean"] - 1.0).assign_attrs(ensemble_attrs(a, "mean"))
        ds["depth_change_1_lower"] = (ratio["change_min"] - 1.0).assign_attrs(ensemble_attrs(a, "min"))
        ds["depth_change_1_upper"] = (ratio["change_max"] - 1.0).assign_attrs(ensemble_attrs(a, "max"))
        ds["depth_change_1_agreement"] = describe(
            ratio["change_agreement"], "agreement_1", label=f"{a['label']}, members agreeing"
        )
    ds["return_period"].attrs = {"units": "years", "long_name": "return period"}
    ds.attrs = {
        "duration": f"{int(duration_days)} day",
        "historical_period": list(ph),
        "future_period": list(pf),
        "member_dim": member or "none",
        "ci": float(ci),
        "n_boot": int(n_boot),
        "cautions": list(SCENARIO_CAUTIONS) + list(DESIGN_DEPTH_CAUTIONS),
        "history": history_line(func, periods=tuple(periods), duration_days=duration_days, historical=ph, future=pf),
    }
    return ds
