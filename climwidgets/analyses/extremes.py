"""Areal design depths: return levels of each basin's mean annual maxima, and a warming what-if.

The areal depth of a basin is the return level of the annual maxima of its area-weighted
mean series (the storm over the basin as a whole), with a parametric-bootstrap interval
(:func:`cw.return_levels`).  It is lower than point (gauge) depths of the same return
period.  :func:`warmed_depths` scales the depths by the Clausius-Clapeyron factor of
:func:`cw.warming_scaling` and names that factor in the table.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any
import pandas as pd

import xarray as xr

from ..compute.extremes import annual_maxima
from ..compute.gev import return_levels
from ..compute.regional import regional_frequency
from ..compute.warming import DESIGN_DEPTH_CAUTIONS, warming_scaling
from ..geo.aggregate import basin_means
from ..geo.basinset import as_basin_list
from .basins import basin_series
from .meta import describe, frame

__all__ = [
    "depth_field",
    "warmed_field",
    "regional_fit",
    "areal_design_depths",
    "point_design_depths",
    "warmed_depths",
    "depth_table",
    "point_depth_table",
    "regional_depth_field",
    "warmed_point_depths",
    "AREAL_NOTE",
    "POINT_NOTE",
    "DEPTH_COLUMNS",
    "POINT_COLUMNS",
]

AREAL_NOTE = (
    "basin depths are areal: the return level of the basin-mean annual maxima, lower than "
    "point (gauge) depths of the same return period"
)
DEPTH_COLUMNS = ("areal_estimate_mm", "areal_lower_mm", "areal_upper_mm", "warming_factor")
POINT_NOTE = (
    "point depths: at-site is each cell's own fit, averaged over the basin; regional pools the "
    "basin's cells by the index-flood method (one growth curve, each cell's own mean annual "
    "maximum). Where H1 >= 2 the basin is not one region and the regional column is not to be used"
)
POINT_COLUMNS = (
    "point_at_site_mm",
    "point_at_site_lower_mm",
    "point_at_site_upper_mm",
    "point_regional_mm",
    "point_regional_lower_mm",
    "point_regional_upper_mm",
)


def depth_field(
    pr: xr.DataArray,
    periods: Sequence[float] = (2, 10, 25, 50, 100),
    ci: float = 0.9,
    n_boot: int = 1000,
    year_start: int = 1,
    seed: Any = 0,
    **duration: Any,
) -> xr.Dataset:
    """Return levels of every cell: the map of point design depths (lazy).

    Parameters
    ----------
    pr : xarray.DataArray
        Daily or hourly precipitation depth per step (dims time, lat, lon).
    periods, ci, n_boot, seed
        Return periods (years), confidence level and bootstrap of :func:`cw.return_levels`.
    year_start : int
        First month of the year of the maxima (10 = water year).
    **duration
        ``duration_days=n`` or ``duration_hours=n`` of the maxima (default 1 day).

    Returns
    -------
    xarray.Dataset
        :func:`cw.return_levels` of :func:`cw.annual_maxima`: ``estimate``, ``lower`` and
        ``upper`` on (period, lat, lon), with the GEV parameters.

    References
    ----------
    Hosking, J. R. M. (1990) L-moments: analysis and estimation of distributions using linear
    combinations of order statistics. J. R. Stat. Soc. B 52, 105-124.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> f = depth_field(pr, periods=(10, 100), n_boot=50, duration_days=1).compute()
    >>> dict(f["estimate"].sizes), bool((f["lower"] <= f["estimate"]).all() and (f["estimate"] <= f["upper"]).all())
    ({'period': 2, 'lat': 2, 'lon': 2}, True)
    """
    ams = annual_maxima(pr, year_start=year_start, **(duration or {"duration_days": 1}))
    return return_levels(ams, periods=periods, ci=ci, n_boot=n_boot, seed=seed)


def warmed_field(levels: xr.Dataset, delta_t: float = 0.0, rate: float = 0.07) -> xr.Dataset:
    """The depths of :func:`depth_field` scaled by (1 + rate) ** delta_t (:func:`cw.warming_scaling`).

    The scaling is a what-if, not a projection; see :data:`cw.DESIGN_DEPTH_CAUTIONS`.

    Parameters
    ----------
    levels : xarray.Dataset
        From :func:`depth_field`.
    delta_t : float
        Warming in kelvin.
    rate : float
        Fractional change per kelvin (0.07: about 7 % per K).

    Returns
    -------
    xarray.Dataset
        The same variables, depths scaled.

    References
    ----------
    Trenberth, K. E., Dai, A., Rasmussen, R. M. & Parsons, D. B. (2003) The changing
    character of precipitation. Bull. Amer. Meteor. Soc. 84, 1205-1217 (the about 7 % per
    kelvin of the Clausius-Clapeyron relation). doi:10.1175/BAMS-84-9-1205

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> f = depth_field(pr, periods=(10,), n_boot=50, duration_days=1)
    >>> w = warmed_field(f, delta_t=2.0)
    >>> float((w["estimate"] / f["estimate"]).mean().round(4))  # 1.07 ** 2
    1.1449
    """
    return warming_scaling(levels, float(delta_t), rate=float(rate))


def areal_design_depths(
    pr: xr.DataArray,
    basins: Any,
    periods: Sequence[float] = (2, 10, 25, 50, 100),
    ci: float = 0.9,
    n_boot: int = 1000,
    year_start: int = 1,
    seed: Any = 0,
    series: xr.DataArray | None = None,
    **duration: Any,
) -> xr.Dataset:
    """Areal return levels of each basin (lazy Dataset on basin × return_period).

    Parameters
    ----------
    pr
        Daily or hourly precipitation depth per step in mm.
    basins
        A Basin, a list of them or a :class:`cw.BasinSet`.
    periods, ci, n_boot, seed
        Return periods (years), confidence level and bootstrap of :func:`cw.return_levels`.
    year_start
        First month of the year of the maxima (10 = water year).
    series
        The basin-mean series of ``pr`` (:func:`.basins.basin_series`), when already at hand.
    duration
        ``duration_days=n`` or ``duration_hours=n`` of the maxima (default 1 day).

    Returns
    -------
    xr.Dataset with ``areal_estimate_mm``, ``areal_lower_mm``, ``areal_upper_mm`` and
    ``warming_factor`` (1: no warming) on (basin, return_period), ``n_years`` on basin.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> a = areal_design_depths(pr, [square], periods=(10, 100), n_boot=50, duration_days=1).compute()
    >>> d = a.sel(basin="square")
    >>> bool((d["areal_lower_mm"] <= d["areal_estimate_mm"]).all()), int(d["n_years"])
    (True, 30)
    """
    basins = as_basin_list(basins, "areal_design_depths")
    if series is None:
        series = basin_series(pr, basins)
    series = series.reset_coords("covered_fraction", drop=True) if "covered_fraction" in series.coords else series
    ams = annual_maxima(series, year_start=year_start, **(duration or {"duration_days": 1}))
    rl = return_levels(ams, periods=periods, ci=ci, n_boot=n_boot, seed=seed)
    # extra dimensions (ensemble members) come first
    rl = rl.rename(period="return_period").transpose(..., "basin", "return_period")
    pct = f"{float(ci):.0%}"
    # one warming factor per basin and period: the same for every member
    table_dims = ("basin", "return_period")
    ones = xr.ones_like(rl["estimate"].isel({d: 0 for d in rl["estimate"].dims if d not in table_dims}, drop=True))
    ds = xr.Dataset(
        {
            "areal_estimate_mm": describe(rl["estimate"], "areal_estimate_mm"),
            "areal_lower_mm": describe(rl["lower"], "areal_lower_mm", label=f"lower {pct}"),
            "areal_upper_mm": describe(rl["upper"], "areal_upper_mm", label=f"upper {pct}"),
            "warming_factor": describe(ones, "warming_factor"),
            "n_years": describe(ams.notnull().sum("year"), "n_years"),
        }
    )
    ds["return_period"].attrs = {"units": "years", "long_name": "return period"}
    ds.attrs = {
        "duration": ams.attrs.get("duration", ""),
        "ci": float(ci),
        "n_boot": int(n_boot),
        "seed": seed,
        "year_start": year_start,
        "note": AREAL_NOTE,
        "cautions": list(DESIGN_DEPTH_CAUTIONS),
        "interval": rl.attrs.get("interval_method", ""),
    }
    return ds


def point_design_depths(
    pr: xr.DataArray,
    basins: Any,
    periods: Sequence[float] = (2, 10, 25, 50, 100),
    ci: float = 0.9,
    n_boot: int = 500,
    n_sim: int = 500,
    year_start: int = 1,
    seed: Any = 0,
    min_years: int = 10,
    regional: xr.Dataset | None = None,
    **duration: Any,
) -> xr.Dataset:
    """At-site and regional point depths of each basin, side by side (lazy Dataset, basin × return_period).

    ``regional`` is :func:`regional_fit` of the same data, basins and settings when already
    at hand (the design-depth view shares it with :func:`regional_depth_field`, so the
    regional analysis is built once).

    Both columns are point (cell) depths averaged over the basin, so they compare with each
    other, not with the areal depths of :func:`areal_design_depths`:

    * at-site: each cell's own L-moment GEV return level (:func:`cw.return_levels`), with
      its parametric-bootstrap interval;
    * regional: the index-flood estimate of :func:`cw.regional_frequency` with each basin
      as one region (a cell belongs to the basin covering at least half of it): the
      cell's mean annual maximum times the basin's growth curve, with the simulated
      interval of Hosking & Wallis (1997, sec. 6.4).

    The heterogeneity H1 and the number of discordant cells travel with each basin, so a
    reader sees when pooling is not justified (H1 >= 2).

    Parameters
    ----------
    pr
        Daily or hourly precipitation depth per step on a grid.
    basins
        A Basin, a list of them or a :class:`cw.BasinSet`; each basin is one region.
    periods, ci
        Return periods (years) and the confidence level of both intervals.
    n_boot, n_sim, seed
        Bootstrap replicates (both methods), simulated regions for H, and their seed.
    year_start
        First month of the year of the maxima (10 = water year).
    min_years
        Cells with fewer non-missing years are left out.
    duration
        ``duration_days=n`` or ``duration_hours=n`` of the maxima (default 1 day).

    Returns
    -------
    xr.Dataset
        The :data:`POINT_COLUMNS` on (basin, return_period); ``heterogeneity_h1``,
        ``discordant_cells`` and ``region_cells`` on basin; the design-depth cautions in
        ``attrs["cautions"]``.

    References
    ----------
    Hosking, J. R. M. & Wallis, J. R. (1997) Regional Frequency Analysis: An Approach Based
    on L-Moments. Cambridge University Press. doi:10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> p = point_design_depths(pr, [square], periods=(10,), n_boot=50, n_sim=50, duration_days=1).compute()
    >>> sorted(k for k in p.data_vars if k.startswith("point_"))[:2]
    ['point_at_site_lower_mm', 'point_at_site_mm']
    """
    basins = as_basin_list(basins, "point_design_depths")
    ams = annual_maxima(pr, year_start=year_start, **(duration or {"duration_days": 1}))
    at_site = return_levels(ams, periods=periods, ci=ci, n_boot=n_boot, seed=seed, min_years=min_years)
    if regional is None:
        regional = regional_frequency(
            ams, regions=basins, periods=periods, ci=ci, n_sim=n_sim, n_boot=n_boot, seed=seed, min_years=min_years
        )
    fields = xr.Dataset(
        {
            "point_at_site_mm": at_site["estimate"],
            "point_at_site_lower_mm": at_site["lower"],
            "point_at_site_upper_mm": at_site["upper"],
            "point_regional_mm": regional["estimate"],
            "point_regional_lower_mm": regional["lower"],
            "point_regional_upper_mm": regional["upper"],
        }
    ).rename(period="return_period")
    pct = f"{float(ci):.0%}"
    ds = xr.Dataset()
    for name in POINT_COLUMNS:
        field = fields[name]
        if name.startswith("point_regional"):
            # only the cells pooled into each basin's own region count for that basin
            per_basin = [basin_means(field.where(regional["cell_region"] == b.name), [b]) for b in basins]
            mean = xr.concat(per_basin, dim="basin")
        else:
            mean = basin_means(field.assign_attrs(units="mm"), basins)
        mean = mean.reset_coords("covered_fraction", drop=True).transpose("basin", "return_period")
        label = {"lower": f"{pct} lower", "upper": f"{pct} upper"}
        kind = "at-site" if "at_site" in name else "regional"
        end = next((v for k, v in label.items() if name.endswith(f"_{k}_mm")), None)
        ds[name] = describe(mean, name, **({"label": f"{kind} {end}"} if end else {}))
    names = [b.name for b in basins]
    h1 = regional["H1"].sel(region=names).rename(region="basin")
    critical = regional["discordancy_critical"].sel(region=names).rename(region="basin")
    cell_region = regional["cell_region"]
    discordant = [((cell_region == n) & (regional["discordancy"] > critical.sel(basin=n))).sum() for n in names]
    counted = [(cell_region == n).sum() for n in names]
    ds["heterogeneity_h1"] = describe(h1.drop_vars([c for c in h1.coords if c != "basin"]), "heterogeneity_h1")
    ds["discordant_cells"] = describe(xr.concat(discordant, dim="basin").assign_coords(basin=names), "discordant_cells")
    ds["region_cells"] = describe(xr.concat(counted, dim="basin").assign_coords(basin=names), "region_cells")
    ds["return_period"].attrs = {"units": "years", "long_name": "return period"}
    ds.attrs = {
        "duration": ams.attrs.get("duration", ""),
        "ci": float(ci),
        "n_boot": int(n_boot),
        "n_sim": int(n_sim),
        "seed": seed,
        "year_start": year_start,
        "note": POINT_NOTE,
        "cautions": list(DESIGN_DEPTH_CAUTIONS),
        "heterogeneity_rule": regional.attrs.get("heterogeneity_rule", ""),
    }
    return ds


def point_depth_table(ds: xr.Dataset, period: Any = None, display: bool = False) -> pd.DataFrame:
    """The at-site / regional table of :func:`point_design_depths`, per basin (at ``period``) or basin × period.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`point_design_depths`, computed.
    period : float, optional
        One return period; default all.
    display : bool
        For people (True) or for files.

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> p = point_design_depths(pr, [square], periods=(10,), n_boot=50, n_sim=50, duration_days=1).compute()
    >>> point_depth_table(p, period=10).columns.tolist()[:2]
    ['point_at_site_mm', 'point_at_site_lower_mm']
    """
    columns = (*POINT_COLUMNS, "heterogeneity_h1", "discordant_cells")
    if period is not None:
        return frame(ds.sel(return_period=period), columns=columns, display=display)
    return frame(ds, index=("basin", "return_period"), columns=columns, display=display)


def warmed_depths(ds: xr.Dataset, delta_t: float = 0.0, rate: float = 0.07) -> xr.Dataset:
    """``ds`` of :func:`areal_design_depths` with depths scaled for ``delta_t`` K of warming.

    The factor is that of :func:`cw.warming_scaling` ((1 + rate) ** delta_t) and is kept in
    ``warming_factor``; at ``delta_t = 0`` the numbers are unchanged.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`areal_design_depths`.
    delta_t : float
        Warming in kelvin.
    rate : float
        Fractional change per kelvin.

    Returns
    -------
    xarray.Dataset

    References
    ----------
    Trenberth, K. E., Dai, A., Rasmussen, R. M. & Parsons, D. B. (2003) The changing
    character of precipitation. Bull. Amer. Meteor. Soc. 84, 1205-1217 (the about 7 % per
    kelvin of the Clausius-Clapeyron relation). doi:10.1175/BAMS-84-9-1205

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> a = areal_design_depths(pr, [square], periods=(10,), n_boot=50, duration_days=1)
    >>> warmed_depths(a, delta_t=1.0)["warming_factor"].values.round(4).tolist()
    [[1.07]]
    """
    out = warming_scaling(ds, float(delta_t), rate=float(rate))
    factor = warming_scaling(xr.DataArray(1.0, attrs={"units": "mm"}), float(delta_t), rate=float(rate))
    out["warming_factor"] = (ds["warming_factor"] * float(factor)).assign_attrs(ds["warming_factor"].attrs)
    for name in ds.data_vars:
        out[name].attrs = dict(ds[name].attrs)
    out.attrs.update(delta_t=float(delta_t), rate=float(rate))
    return out


def depth_table(ds: xr.Dataset, period: Any = None, display: bool = False) -> pd.DataFrame:
    """The areal-depth table: one row per basin (at ``period``) or per basin and period.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`areal_design_depths`, computed.
    period : float, optional
        One return period; default all, indexed by (basin, return_period).
    display : bool
        Headings and scaling for people (True) or names and numbers for files.

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> a = areal_design_depths(pr, [square], periods=(10, 100), n_boot=50, duration_days=1).compute()
    >>> depth_table(a, period=100, display=True).columns.tolist()[:2]
    ['areal depth [mm]', 'lower 90% [mm]']
    """
    if period is not None:
        one = ds.sel(return_period=period)
        table = frame(one, columns=DEPTH_COLUMNS, display=display)
        return table
    table = frame(ds, index=("basin", "return_period"), columns=DEPTH_COLUMNS, display=display)
    return table


def regional_fit(
    pr: xr.DataArray,
    basins: Any,
    periods: Sequence[float] = (2, 10, 25, 50, 100),
    ci: float = 0.9,
    n_boot: int = 500,
    n_sim: int = 500,
    year_start: int = 1,
    seed: Any = 0,
    min_years: int = 10,
    **duration: Any,
) -> xr.Dataset:
    """:func:`cw.regional_frequency` of the annual maxima, each basin one region (lazy).

    The one regional analysis behind :func:`point_design_depths` and
    :func:`regional_depth_field`; pass it to both as ``regional=`` to build it once.

    Parameters
    ----------
    pr, basins, periods, ci, n_boot, n_sim, year_start, seed, min_years, **duration
        As in :func:`point_design_depths`.

    Returns
    -------
    xarray.Dataset
        Per region (basin): index flood, L-moment ratios, discordancy, H1 and the regional
        growth curve with its interval.

    References
    ----------
    Hosking, J. R. M. & Wallis, J. R. (1997) Regional Frequency Analysis: An Approach Based
    on L-Moments. Cambridge University Press. doi:10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> r = regional_fit(pr, [square], periods=(10,), n_boot=50, n_sim=50, duration_days=1)
    >>> bool(((0 < r["l_cv"]) & (r["l_cv"] < 1)).all())  # an L-CV lies between 0 and 1
    True
    """
    basins = as_basin_list(basins, "regional_fit")
    ams = annual_maxima(pr, year_start=year_start, **(duration or {"duration_days": 1}))
    return regional_frequency(
        ams, regions=basins, periods=periods, ci=ci, n_sim=n_sim, n_boot=n_boot, seed=seed, min_years=min_years
    )


def regional_depth_field(
    pr: xr.DataArray,
    basins: Any,
    periods: Sequence[float] = (2, 10, 25, 50, 100),
    ci: float = 0.9,
    n_boot: int = 500,
    n_sim: int = 500,
    year_start: int = 1,
    seed: Any = 0,
    min_years: int = 10,
    regional: xr.Dataset | None = None,
    **duration: Any,
) -> xr.Dataset:
    """Regional (index-flood) point depths of every cell, each basin pooled as one region (lazy).

    The per-cell counterpart of the regional columns of :func:`point_design_depths`: the
    cell's mean annual maximum times its basin's growth curve (:func:`cw.regional_frequency`),
    with the simulated interval; cells in no basin are missing.  Beside
    :func:`depth_field` (each cell's own fit) it shows how much pooling smooths the map.

    Parameters
    ----------
    pr, basins, periods, ci, n_boot, n_sim, year_start, seed, min_years, duration
        As in :func:`point_design_depths`.

    Returns
    -------
    xarray.Dataset
        ``estimate``, ``lower``, ``upper`` on (period, lat, lon) in mm, ``cell_region`` and
        the per-region ``H1``.

    References
    ----------
    Hosking, J. R. M. & Wallis, J. R. (1997) Regional Frequency Analysis: An Approach Based
    on L-Moments. Cambridge University Press. doi:10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> f = regional_depth_field(pr, [square], periods=(10,), n_boot=50, n_sim=50, duration_days=1)
    >>> dict(f["estimate"].sizes)
    {'lat': 2, 'lon': 2, 'period': 1}
    """
    ams = annual_maxima(pr, year_start=year_start, **(duration or {"duration_days": 1}))
    if regional is None:
        regional = regional_fit(pr, basins, periods, ci, n_boot, n_sim, year_start, seed, min_years, **duration)
    out = regional[["estimate", "lower", "upper", "cell_region", "H1"]]
    for name in ("estimate", "lower", "upper"):
        out[name].attrs["units"] = "mm"
    out.attrs = {
        "duration": ams.attrs.get("duration", ""),
        "ci": float(ci),
        "method": "index flood, each basin one region (Hosking & Wallis 1997)",
        "cautions": list(DESIGN_DEPTH_CAUTIONS),
    }
    return out


def warmed_point_depths(ds: xr.Dataset, delta_t: float = 0.0, rate: float = 0.07) -> xr.Dataset:
    """``ds`` of :func:`point_design_depths` with the depth columns scaled as :func:`warmed_depths` does.

    H1 and the cell counts are kept as they are; at ``delta_t = 0`` nothing changes.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`point_design_depths`.
    delta_t : float
        Warming in kelvin.
    rate : float
        Fractional change per kelvin.

    Returns
    -------
    xarray.Dataset

    References
    ----------
    Trenberth, K. E., Dai, A., Rasmussen, R. M. & Parsons, D. B. (2003) The changing
    character of precipitation. Bull. Amer. Meteor. Soc. 84, 1205-1217 (the about 7 % per
    kelvin of the Clausius-Clapeyron relation). doi:10.1175/BAMS-84-9-1205

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("1981-01-01", "2010-12-31", freq="D")  # 30 invented years, 2 x 2 cells
    >>> rng = np.random.default_rng(42)
    >>> pr = cw.open_precip(xr.DataArray(
    ...     rng.gamma(0.5, 8.0, size=(t.size, 2, 2)), dims=("time", "lat", "lon"), name="pr",
    ...     attrs={"units": "mm"}, coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> p = point_design_depths(pr, [square], periods=(10,), n_boot=50, n_sim=50, duration_days=1)
    >>> w = warmed_point_depths(p, delta_t=1.0)
    >>> float((w["point_regional_mm"] / p["point_regional_mm"]).max().round(4))
    1.07
    """
    out = warming_scaling(ds, float(delta_t), rate=float(rate))
    for name in ds.data_vars:
        out[name].attrs = dict(ds[name].attrs)
    out.attrs.update(delta_t=float(delta_t), rate=float(rate))
    return out
