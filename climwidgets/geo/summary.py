"""Basin summary tables and a seasonal-change volume scenario.

The per-cell climatologies (annual totals, seasonal share, annual normal) come from the
public compute functions and are built once, lazily; each basin then only reduces its own
bounding box, and everything is computed in a single ``dask.compute`` for all basins.
"""

from __future__ import annotations

import dask
import numpy as np
import pandas as pd
import xarray as xr

from ..errors import ParameterError
from ..provenance import history_line
from .aggregate import ACRE_FOOT_M3, basin_mean, basin_weights
from .basin import Basin

__all__ = ["basin_summary", "scenario_delta"]


def _basins(basins, func) -> list:
    basins = [basins] if isinstance(basins, Basin) else list(basins)
    if not basins or not all(isinstance(b, Basin) for b in basins):
        raise ParameterError("basins must be a Basin or a non-empty list of Basin objects", source=func,
                             variable="basins", expected="Basin objects",
                             fix="build them with cw.Basin.from_vertices / from_geojson / from_shapefile")
    return basins


def _area_m2(basin, grid) -> float:
    _, w = basin_weights(basin, grid)
    return float(w.sum())


def _last_valid(series: pd.Series):
    s = series.dropna()
    return (int(s.index[-1]), float(s.iloc[-1])) if len(s) else (None, np.nan)


def basin_summary(pr: xr.DataArray, basins, months=(7, 8), baseline=(1991, 2020),
                  year_start: int = 1) -> pd.DataFrame:
    """One row per basin of water-planning figures from a precipitation grid (mm per step).

    Columns (units in the names):

    - ``area_km2``: Σ cell area × coverage (sphere of the authalic radius);
    - ``annual_mean_mm``: mean of the basin's annual totals over all complete years
      (12-month years starting in ``year_start``);
    - ``n_years``: how many complete years that mean rests on;
    - ``seasonal_share_1``: share of the annual total falling in ``months`` for the basin as
      a whole (ratio of sums; per-cell shares from :func:`cw.seasonal_fraction` weighted by
      each cell's annual mean, so wet cells count for more, as in the basin's own totals);
    - ``normal_annual_mm``: basin mean of :func:`cw.annual_normal` over ``baseline``;
    - ``volume_per_year_m3`` / ``volume_per_year_acre_ft``: annual_mean_mm as a volume;
    - ``latest_year``, ``latest_year_mm``, ``latest_year_percent_of_normal``: the last
      complete year and its total against the normal (percent of normal, "%");
    - ``data_coverage_1``: the smallest share of the basin's area that had data behind the
      row's figures (1 = complete).

    ``basins`` is a Basin or a list of them; the index holds their names.
    """
    from ..compute.normals import annual_normal
    from ..compute.seasonal import seasonal_fraction
    from ..compute.totals import annual_totals

    basins = _basins(basins, "basin_summary")
    annual = annual_totals(pr, year_start=year_start)
    share = seasonal_fraction(pr, months=months, year_start=year_start)
    # Annual mean in the same 12-month years the share was measured against.
    season_start = int(share.attrs.get("season_year_start", year_start))
    share_annual = annual if season_start == year_start else annual_totals(pr, year_start=season_start)
    share_annual_mean = share_annual.where(share_annual.notnull()).mean("year")
    seasonal_mean = (share * share_annual_mean).drop_vars("n_years", errors="ignore")
    share_annual_mean = share_annual_mean.where(seasonal_mean.notnull())
    normal = annual_normal(pr, baseline=baseline)

    lazy = []
    for b in basins:
        lazy.append((basin_mean(annual, b), basin_mean(seasonal_mean, b),
                     basin_mean(share_annual_mean, b), basin_mean(normal, b)))
    computed = dask.compute(*lazy)

    rows = []
    for b, (ann, seas, seas_ann, norm) in zip(basins, computed):
        area = _area_m2(b, pr)
        series = ann.to_series()
        mean_mm = float(series.mean()) if series.notna().any() else np.nan
        year, latest = _last_valid(series)
        normal_mm = float(norm)
        cov = [float(norm.covered_fraction), float(seas.covered_fraction)]
        if year is not None:
            cov.append(float(ann.covered_fraction.sel(year=year)))
        rows.append({
            "basin": b.name,
            "area_km2": area / 1e6,
            "annual_mean_mm": mean_mm,
            "n_years": int(series.notna().sum()),
            "seasonal_share_1": float(seas) / float(seas_ann) if float(seas_ann) > 0 else np.nan,
            "normal_annual_mm": normal_mm,
            "volume_per_year_m3": mean_mm / 1000.0 * area,
            "volume_per_year_acre_ft": mean_mm / 1000.0 * area / ACRE_FOOT_M3,
            "latest_year": year,
            "latest_year_mm": latest,
            "latest_year_percent_of_normal": 100.0 * latest / normal_mm if normal_mm > 0 else np.nan,
            "data_coverage_1": min(cov),
        })
    table = pd.DataFrame(rows).set_index("basin")
    table.attrs.update(
        months=list(months), baseline=list(baseline), year_start=year_start,
        season_year_start=season_start,
        note="areas on a sphere of the authalic radius 6371007.2 m; planning-level figures from gridded data",
        history=history_line("basin_summary", basins=[b.name for b in basins], months=tuple(months),
                             baseline=tuple(baseline), year_start=year_start),
    )
    return table


def scenario_delta(pr: xr.DataArray, basin, months=(11, 12, 1, 2, 3), percent: float = 5.0,
                   year_start: int = 1, years=None) -> pd.DataFrame:
    """Change in mean annual basin volume if the season's precipitation changes by ``percent``.

    The season's mean total over complete seasons (:func:`cw.seasonal_totals`, optionally
    restricted to ``years=(first, last)`` year labels) is scaled by ``percent``/100; the rest
    of the year is unchanged, so the annual volume changes by the same amount.  Returns a
    DataFrame, one row per basin, with columns ``season``, ``percent``,
    ``seasonal_volume_per_year_m3``, ``delta_volume_per_year_m3``,
    ``delta_volume_per_year_acre_ft`` and ``n_seasons``.
    """
    from ..compute.seasonal import seasonal_totals

    basins = _basins(basin, "scenario_delta")
    try:
        percent = float(percent)
    except (TypeError, ValueError):
        percent = np.nan
    if not np.isfinite(percent) or percent <= -100.0:
        raise ParameterError(f"percent={percent!r} is not a usable change", source="scenario_delta",
                             variable="percent", expected="a finite number above -100",
                             fix="pass e.g. percent=5.0 for 5 % more, -10.0 for 10 % less")
    seasonal = seasonal_totals(pr, months, year_start=year_start)
    if years is not None:
        first, last = years
        seasonal = seasonal.sel(year=slice(int(first), int(last)))
        if seasonal.sizes["year"] == 0:
            raise ParameterError(f"no seasons between {first} and {last}", source="scenario_delta",
                                 variable="years", expected="year labels inside the data",
                                 fix="widen years= or leave it out")
    computed = dask.compute(*[basin_mean(seasonal, b) for b in basins])
    rows = []
    for b, series in zip(basins, computed):
        area = _area_m2(b, pr)
        s = series.to_series()
        mean_mm = float(s.mean()) if s.notna().any() else np.nan
        vol = mean_mm / 1000.0 * area
        delta = vol * percent / 100.0
        rows.append({"basin": b.name, "season": seasonal.attrs.get("season", str(tuple(months))),
                     "percent": percent, "n_seasons": int(s.notna().sum()),
                     "seasonal_volume_per_year_m3": vol, "delta_volume_per_year_m3": delta,
                     "delta_volume_per_year_acre_ft": delta / ACRE_FOOT_M3})
    table = pd.DataFrame(rows).set_index("basin")
    table.attrs.update(months=list(months), percent=percent, year_start=year_start,
                       note="planning-level estimate: only the season's precipitation is scaled",
                       history=history_line("scenario_delta", basins=[b.name for b in basins],
                                            months=tuple(months), percent=percent, year_start=year_start))
    return table
