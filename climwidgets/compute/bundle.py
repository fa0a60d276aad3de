"""Many statistics from one read of the data.

A summary needs monthly totals, annual totals, the seasonal share, the normals and the
annual maxima. Built one by one, each would read the whole record again. Here the daily
data feed two reductions only — monthly totals and annual maxima — and everything else is
derived from the (small) monthly totals, all inside one dask graph, so one ``compute``
reads every stored chunk once (docs/architecture.md).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

import xarray as xr

from .. import cache
from ..provenance import with_history
from . import _fused
from ._time import precip_mm
from .extremes import annual_maxima
from .indices import precip_indices
from .normals import normals
from .seasonal import seasonal_fraction
from .totals import annual_totals, monthly_totals

__all__ = ["climatology_bundle"]


def _build(
    pr: xr.DataArray,
    months: tuple[int, ...],
    baseline: Sequence[int] | None,
    year_start: int,
    maxima_days: tuple[int, ...],
    indices: tuple[str, ...] = (),
    index_base_period: Sequence[int] | None = None,
) -> xr.Dataset:
    pr, step = precip_mm(pr, "climatology_bundle")
    # one task per chunk read makes the monthly partials and maxima (see _fused); else plain
    fused = (
        _fused.monthly_and_maxima(pr, step, maxima_days, year_start)
        if _fused.applicable(pr, step, maxima_days)
        else None
    )
    monthly = fused[0] if fused is not None else monthly_totals(pr)
    out = {
        "monthly_totals": monthly,
        "annual_totals": annual_totals(monthly, year_start=year_start),
        "seasonal_share": seasonal_fraction(monthly, months=months, year_start=year_start),
        "seasonal_share_per_year": seasonal_fraction(
            monthly, months=months, year_start=year_start, per_year=True
        ).rename(year="season_year"),
    }
    if baseline is not None:
        out["normals"] = normals(monthly, baseline=baseline)
    if step != "month":
        for days in maxima_days:
            amax = fused[1][days] if fused is not None else annual_maxima(pr, duration_days=days, year_start=year_start)
            out[f"annual_max_{days}day"] = amax.rename(year="maxima_year")
    if indices:
        # same daily array, same graph: one compute reads each stored chunk once for all results
        ind = precip_indices(pr, names=tuple(indices), base_period=index_base_period, year_start=year_start)
        for name in ind.data_vars:
            out[f"index_{name}"] = (
                ind[name]
                .rename(year="index_year")
                .assign_attrs({**ind[name].attrs, **{k: v for k, v in ind.attrs.items() if k != "history"}})
            )
    grid = {"lat", "lon", "lat_lower", "lat_upper", "lon_lower", "lon_upper"}
    # per-variable bookkeeping coords (e.g. counts per cell) would clash when merged; grid coords stay
    ds = xr.Dataset(
        {k: v.drop_vars([c for c in v.coords if c not in v.dims and c not in grid]) for k, v in out.items()}
    )
    ds.attrs = {"source_history": pr.attrs.get("history", ""), "months": list(months), "year_start": year_start}
    return with_history(
        ds,
        "climatology_bundle",
        pr.attrs,
        months=tuple(months),
        baseline=baseline,
        year_start=year_start,
        maxima_days=tuple(maxima_days),
        indices=tuple(indices),
    )


def climatology_bundle(
    pr: xr.DataArray,
    months: Iterable[int] = (7, 8),
    baseline: Sequence[int] | None = None,
    year_start: int = 1,
    maxima_days: Iterable[int] = (1,),
    compute: bool = False,
    use_cache: bool = False,
    indices: str | Iterable[str] | None = (),
    index_base_period: Sequence[int] | None = None,
) -> xr.Dataset:
    """Monthly and annual totals, seasonal share, normals and annual maxima together.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm (``open_precip`` output or equivalent).
    months, year_start
        The season and the 12-month year (see ``seasonal_fraction``).
    baseline
        (first, last) years for the monthly normals; None leaves them out.
    maxima_days
        Durations (days) of annual maxima to include; skipped for monthly input.
    indices, index_base_period
        ETCCDI index names (``cw.precip_indices``, daily data only) to include, per year of
        ``year_start``, as ``index_<name>`` (index_year); the wet-day percentiles use
        ``index_base_period`` (None: every complete year).  They share the daily data's
        graph, so one compute still reads every stored chunk once.
    compute
        True computes everything in one pass and returns in-memory results.
    use_cache
        True returns a computed result from the result cache (see ``climwidgets.cache``):
        the same data and parameters are never computed twice.

    Returns
    -------
    xarray.Dataset
        ``monthly_totals`` (time), ``annual_totals`` (year), ``seasonal_share``,
        ``seasonal_share_per_year`` (season_year), ``normals`` (month) and
        ``annual_max_<n>day`` (maxima_year), ``index_<name>`` (index_year) when asked.
        Per-year variables keep their own year dims because a season that wraps the year
        end is labelled by its own 12-month year.  Lazy unless ``compute`` or
        ``use_cache`` is True.

    Raises
    ------
    climwidgets.errors.InputError
        When ``pr`` has no usable units or step, or a parameter is malformed (raised by the
        functions that make each statistic: ``seasonal_fraction``, ``normals``,
        ``annual_maxima``, ``precip_indices``).

    References
    ----------
    WMO (2017). WMO Guidelines on the Calculation of Climate Normals. WMO-No. 1203.
    World Meteorological Organization, Geneva (the completeness rules of the totals and
    normals).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> pr = xr.DataArray(np.ones(time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})  # 1 mm every day
    >>> ds = cw.climatology_bundle(pr, months=(7, 8), compute=True)
    >>> sorted(ds.data_vars)
    ['annual_max_1day', 'annual_totals', 'monthly_totals', 'seasonal_share',
     'seasonal_share_per_year']
    >>> ds["annual_totals"].values, round(float(ds["seasonal_share"]), 4)  # 62 of 365 days
    (array([365., 365.]), 0.1699)
    """
    months = tuple(months)
    maxima_days = tuple(maxima_days)
    indices = (indices,) if isinstance(indices, str) else tuple(indices or ())
    extra: dict[str, Any] = {"indices": indices, "index_base_period": index_base_period} if indices else {}
    if use_cache:
        return cache.cached(
            "climatology_bundle",
            lambda: _build(pr, months, baseline, year_start, maxima_days, **extra),
            pr,
            months=months,
            baseline=baseline,
            year_start=year_start,
            maxima_days=maxima_days,
            **extra,
        )
    ds = _build(pr, months, baseline, year_start, maxima_days, **extra)
    return ds.compute() if compute else ds
