"""Many statistics from one read of the data.

A summary needs monthly totals, annual totals, the seasonal share, the normals and the
annual maxima. Built one by one, each would read the whole record again. Here the daily
data feed two reductions only — monthly totals and annual maxima — and everything else is
derived from the (small) monthly totals, all inside one dask graph, so one ``compute``
reads every stored chunk once (docs/architecture.md).
"""

from __future__ import annotations

import xarray as xr

from .. import cache
from ..provenance import with_history
from . import _fused
from ._time import precip_mm
from .extremes import annual_maxima
from .normals import normals
from .seasonal import seasonal_fraction
from .totals import annual_totals, monthly_totals

__all__ = ["climatology_bundle"]


def _build(pr, months, baseline, year_start, maxima_days):
    pr, step = precip_mm(pr, "climatology_bundle")
    # one task per chunk read makes the monthly partials and maxima (see _fused); else plain
    fused = _fused.monthly_and_maxima(pr, step, maxima_days, year_start) \
        if _fused.applicable(pr, step, maxima_days) else None
    monthly = fused[0] if fused is not None else monthly_totals(pr)
    out = {
        "monthly_totals": monthly,
        "annual_totals": annual_totals(monthly, year_start=year_start),
        "seasonal_share": seasonal_fraction(monthly, months=months, year_start=year_start),
        "seasonal_share_per_year": seasonal_fraction(monthly, months=months, year_start=year_start,
                                                     per_year=True).rename(year="season_year"),
    }
    if baseline is not None:
        out["normals"] = normals(monthly, baseline=baseline)
    if step != "month":
        for days in maxima_days:
            amax = fused[1][days] if fused is not None else annual_maxima(pr, duration_days=days,
                                                                            year_start=year_start)
            out[f"annual_max_{days}day"] = amax.rename(year="maxima_year")
    grid = {"lat", "lon", "lat_lower", "lat_upper", "lon_lower", "lon_upper"}
    # per-variable bookkeeping coords (e.g. counts per cell) would clash when merged; grid coords stay
    ds = xr.Dataset({k: v.drop_vars([c for c in v.coords if c not in v.dims and c not in grid])
                     for k, v in out.items()})
    ds.attrs = {"source_history": pr.attrs.get("history", ""), "months": list(months), "year_start": year_start}
    return with_history(ds, "climatology_bundle", pr.attrs, months=tuple(months), baseline=baseline,
                        year_start=year_start, maxima_days=tuple(maxima_days))


def climatology_bundle(pr: xr.DataArray, months=(7, 8), baseline=None, year_start: int = 1,
                       maxima_days=(1,), compute: bool = False, use_cache: bool = False) -> xr.Dataset:
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
    compute
        True computes everything in one pass and returns in-memory results.
    use_cache
        True returns a computed result from the result cache (see ``climwidgets.cache``):
        the same data and parameters are never computed twice.

    Returns
    -------
    xr.Dataset with ``monthly_totals`` (time), ``annual_totals`` (year),
    ``seasonal_share``, ``seasonal_share_per_year`` (season_year), ``normals`` (month) and
    ``annual_max_<n>day`` (maxima_year). Per-year variables keep their own year dims
    because a season that wraps the year end is labelled by its own 12-month year.
    """
    months = tuple(months)
    maxima_days = tuple(maxima_days)
    if use_cache:
        return cache.cached("climatology_bundle", lambda: _build(pr, months, baseline, year_start, maxima_days),
                            pr, months=months, baseline=baseline, year_start=year_start, maxima_days=maxima_days)
    ds = _build(pr, months, baseline, year_start, maxima_days)
    return ds.compute() if compute else ds
