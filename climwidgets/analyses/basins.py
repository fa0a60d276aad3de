"""The basin table, the seasonal share per basin and the seasonal what-if.

Every basin figure starts from one series per basin: the area-weighted basin mean
(``cw.basin_mean``) of the monthly totals of :func:`cw.climatology_bundle`.  Annual
totals, the seasonal share, the normals and the what-if season all follow from that
(basin, time) series, so the basin is treated as one cell and every widget, export and
report shows the same number for it.  Because the per-cell maps of the same bundle are
part of the same dask graph, one ``compute`` of an analysis reads every stored chunk of
the data once.

The area of a basin is :attr:`cw.Basin.area_m2`: the area of its outline on the sphere of
the authalic radius, edges straight in lon/lat.  Volumes are the basin mean depth times
that area.  Basin means are weighted by cell area × coverage; where part of the basin has
no data, the rest stands for it, and ``data_coverage_1`` says how much had data.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
import xarray as xr

from ..compute.bundle import climatology_bundle
from ..compute.normals import normals
from ..compute.seasonal import season_label, seasonal_fraction, seasonal_totals
from ..compute.totals import annual_totals, monthly_totals
from ..compute.trend import trend
from ..errors import InsufficientDataError, ParameterError
from ..geo.aggregate import ACRE_FOOT_M3, basin_means
from ..geo.basinset import as_basin_list
from ..provenance import history_line
from .meta import CATALOGUE, describe, frame

__all__ = [
    "basin_series",
    "basin_table",
    "summary_bundle",
    "summary_maps",
    "share_map",
    "field_means",
    "field_means_table",
    "basin_shares",
    "what_if",
    "basin_summary",
    "scenario_delta",
    "SUMMARY_COLUMNS",
    "WHAT_IF_COLUMNS",
    "AREA_DEFINITION",
]

AREA_DEFINITION = (
    "basin area: the outline's area on a sphere of the authalic radius 6 371 007.2 m, "
    "edges straight in lon/lat; volumes are the basin mean depth times this area"
)

SUMMARY_COLUMNS = (
    "area_km2",
    "annual_mean_mm",
    "n_years",
    "seasonal_share_1",
    "normal_annual_mm",
    "volume_per_year_m3",
    "volume_per_year_acre_ft",
    "latest_year",
    "latest_year_mm",
    "latest_year_percent_of_normal",
    "data_coverage_1",
)
WHAT_IF_COLUMNS = (
    "season",
    "percent",
    "n_seasons",
    "seasonal_volume_per_year_m3",
    "delta_volume_per_year_m3",
    "delta_volume_per_year_acre_ft",
)


def _monthly(pr: xr.DataArray, bundle: xr.Dataset | None) -> xr.DataArray:
    if bundle is not None:
        return bundle["monthly_totals"]
    return pr if pr.attrs.get("step") == "month" else monthly_totals(pr)


def basin_series(field: xr.DataArray, basins: Any) -> xr.DataArray:
    """Area-weighted basin means of ``field`` stacked on a ``basin`` dimension (lazy).

    Other dimensions (time, month, member ...) pass through; the coordinate
    ``covered_fraction`` (basin, ...) is the share of each basin's weighted area with data.

    Parameters
    ----------
    field : xarray.DataArray
        On the grid (lat, lon) or (y, x), with any other dimensions.
    basins : Basin, list of Basin or BasinSet

    Returns
    -------
    xarray.DataArray
        On ``basin`` and the other dimensions of ``field``.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> basin_series(pr, [square]).isel(time=[0, 190]).values.round(6).tolist()
    [[1.0, 3.0]]
    """
    basins = as_basin_list(basins, "basin_series")
    out = basin_means(field, basins)  # one selection and one weighted sum: one read for all basins
    dims = [d for d in out.dims if d != "basin"]
    out = out.transpose("basin", *dims)
    out.attrs = {k: v for k, v in field.attrs.items() if k in ("units", "step", "standard_name", "cell_methods")}
    return out


def _areas(basins: Any) -> xr.DataArray:
    return xr.DataArray(np.array([b.area_m2 for b in basins]), dims="basin", coords={"basin": [b.name for b in basins]})


def basin_shares(
    pr: xr.DataArray,
    basins: Any,
    months: Any = (7, 8),
    how: str = "ratio_of_sums",
    years: Sequence[int] | None = None,
    year_start: int = 1,
    bundle: xr.Dataset | None = None,
) -> xr.Dataset:
    """Seasonal share of each basin, per year and over the years, with its Sen slope (lazy).

    Returns a Dataset (basin) with ``area_km2``, ``seasonal_share_1`` (``how`` over
    ``years``), ``share_slope``, ``share_pvalue``, ``n_share_years`` and the per-year
    share ``seasonal_share_per_year`` (basin, year) with the trend's ``share_intercept``.

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step.
    basins : Basin, list of Basin or BasinSet
    months : sequence of int
        The season.
    how : {"ratio_of_sums", "mean_of_ratios"}
        Over the years: the season's total over the annual total, or the mean yearly share.
    years : (int, int), optional
        Year labels to use; default all complete years.
    year_start : int
        First month of the year.
    bundle : xarray.Dataset, optional
        From :func:`summary_bundle`, to share one pass.

    Returns
    -------
    xarray.Dataset

    References
    ----------
    Sen, P. K. (1968) Estimates of the regression coefficient based on Kendall's tau.
    J. Am. Stat. Assoc. 63, 1379-1389. doi:10.1080/01621459.1968.10480934

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> # by hand: the share is 62 days x 3 mm of 365.25 + 2 x 62 mm a year, 186 / 489.25
    >>> round(float(basin_shares(pr, [square])["seasonal_share_1"][0]), 4)
    0.3802
    """
    basins = as_basin_list(basins, "basin_shares")
    series = basin_series(_monthly(pr, bundle), basins).reset_coords("covered_fraction", drop=True)
    share = seasonal_fraction(series, months=months, how=how, years=years, year_start=year_start)
    per_year = seasonal_fraction(series, months=months, years=years, year_start=year_start, per_year=True)
    ds = xr.Dataset(
        {
            "area_km2": describe(_areas(basins) / 1e6, "area_km2"),
            "seasonal_share_1": describe(share.reset_coords(drop=True), "seasonal_share_1", how=how),
            "n_share_years": describe(per_year.notnull().sum("year"), "n_share_years"),
            "seasonal_share_per_year": per_year.reset_coords(drop=True).assign_attrs(
                units="1", label="seasonal share, per year", long_name="basin seasonal share per year"
            ),
        }
    )
    try:
        tr = trend(per_year.reset_coords(drop=True), dim="year")
    except InsufficientDataError:
        tr = None
    if tr is not None:
        ds["share_slope"] = describe(tr["slope"], "share_slope")
        ds["share_pvalue"] = describe(tr["pvalue"], "share_pvalue")
        ds["share_intercept"] = tr["intercept"].assign_attrs(units="1")
    ds.attrs = {
        "season": season_label(tuple(months)),
        "season_months": list(months),
        "how": how,
        "year_start": year_start,
        "season_year_start": share.attrs.get("season_year_start", year_start),
        "first_year": share.attrs.get("years", [None, None])[0],
        "last_year": share.attrs.get("years", [None, None])[1],
        "area": AREA_DEFINITION,
    }
    return ds


_CELL_BOUNDS = ("lat_lower", "lat_upper", "lon_lower", "lon_upper")


def _grid_map(da: xr.DataArray) -> xr.DataArray:
    """A map without scalar leftovers, keeping the cell bounds (a one-cell grid needs them to be drawn)."""
    return da.reset_coords([c for c in da.coords if c not in da.dims and c not in _CELL_BOUNDS], drop=True)


def summary_bundle(
    pr: xr.DataArray, months: Any = (7, 8), baseline: Sequence[int] = (1991, 2020), year_start: int = 1
) -> xr.Dataset:
    """The :func:`cw.climatology_bundle` behind the basin table and its maps (lazy).

    Pass it as ``bundle=`` to :func:`basin_table`, :func:`summary_maps` and :func:`what_if`
    so that they share one graph: one ``compute`` of them all reads each chunk once.

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step.
    months : sequence of int
        The season.
    baseline : (int, int)
        The normal period.
    year_start : int
        First month of the year (10 for an October water year).

    Returns
    -------
    xarray.Dataset
        Monthly and annual totals, seasonal shares and normals (lazy).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> bundle = summary_bundle(pr, baseline=(2001, 2004))
    >>> table = basin_table(pr, [square], baseline=(2001, 2004), bundle=bundle)
    >>> maps = summary_maps(None, bundle=bundle)
    >>> from climwidgets.analyses.run import compute
    >>> table, maps = compute(table, maps)  # one pass over the data for both
    >>> float(maps["seasonal_share_map"].mean().round(4))
    0.3802
    """
    return climatology_bundle(pr, months=tuple(months), baseline=tuple(baseline), year_start=year_start, maxima_days=())


def summary_maps(
    pr: xr.DataArray | None,
    months: Any = (7, 8),
    baseline: Sequence[int] = (1991, 2020),
    year_start: int = 1,
    bundle: xr.Dataset | None = None,
) -> xr.Dataset:
    """The two maps beside the basin table: seasonal share and annual normal of every cell (lazy).

    Parameters
    ----------
    pr : xarray.DataArray or None
        Precipitation depth per step; unused when ``bundle`` is given.
    months, baseline, year_start
        The season, the normal period (first, last) and the first month of the year.
    bundle : xarray.Dataset, optional
        A :func:`summary_bundle` with the same parameters (shares its graph).

    Returns
    -------
    xarray.Dataset
        ``seasonal_share_map`` (ratio of the season's and the years' sums, units "1") and,
        when the bundle has normals, ``annual_normal_map`` (the sum of the 12 monthly
        normals, mm; missing where any month has no normal).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> maps = summary_maps(pr, baseline=(2001, 2004)).compute()
    >>> float(maps["annual_normal_map"].mean())
    489.25
    """
    months, baseline = tuple(months), tuple(baseline)
    if bundle is None:
        if pr is None:
            raise ParameterError(
                "summary_maps needs pr or bundle",
                source="summary_maps",
                variable="pr",
                expected="a precipitation DataArray, or the bundle of summary_bundle",
                fix="pass pr=... or bundle=...",
            )
        bundle = summary_bundle(pr, months, baseline, year_start)
    ds = xr.Dataset(
        {
            "seasonal_share_map": _grid_map(bundle["seasonal_share"]).assign_attrs(
                units="1", long_name=f"seasonal share ({season_label(months)})", **_share_display(months)
            )
        }
    )
    if "normals" in bundle:
        ds["annual_normal_map"] = _grid_map(bundle["normals"].sum("month", skipna=False)).assign_attrs(
            units="mm", long_name=f"annual normal {baseline[0]}–{baseline[1]}"
        )
    return ds


def share_map(
    pr: xr.DataArray,
    months: Any = (7, 8),
    how: str = "ratio_of_sums",
    years: Sequence[int] | None = None,
    year_start: int = 1,
) -> xr.DataArray:
    """The seasonal share of every cell (:func:`cw.seasonal_fraction`, lazy).

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step (monthly totals are fastest).
    months, how, years, year_start
        As for :func:`cw.seasonal_fraction`: the season, the averaging ("ratio_of_sums" or
        "mean_of_ratios"), the season-years used and the first month of the year.

    Returns
    -------
    xarray.DataArray
        The share (units "1") on the grid.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> # by hand: the share is 62 days x 3 mm of 365.25 + 2 x 62 mm a year, 186 / 489.25
    >>> share_map(pr).round(4).values.tolist()
    [[0.3802, 0.3802], [0.3802, 0.3802]]
    """
    share = seasonal_fraction(pr, months=months, how=how, years=years, year_start=year_start)
    return share.assign_attrs(_share_display(months))


def _share_display(months: Any) -> dict[str, Any]:
    """How a share map is shown: in % like the basin tables (the catalogue's seasonal share)."""
    meta = CATALOGUE["seasonal_share_1"]
    return {
        "label": f"seasonal share {season_label(tuple(months))}",
        "display_units": meta.display_units,
        "display_scale": meta.display_scale,
        "display_format": meta.display_format,
    }


def field_means(field: xr.DataArray, basins: Any) -> xr.Dataset:
    """Area and area-weighted mean of any field per basin (lazy): the table beside drawn basins.

    Parameters
    ----------
    field : xarray.DataArray
        A map (lat, lon) in any units; its ``units`` attribute names the mean's.
    basins : list[Any] of Basin or BasinSet

    Returns
    -------
    xarray.Dataset
        ``area_km2`` and ``mean`` on ``basin``, described for tables.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> out = field_means(pr.isel(time=190), [square])
    >>> round(float(out["mean"][0]), 6), out["mean"].attrs["units"]
    (3.0, 'mm')
    """
    basins = as_basin_list(basins, "field_means")
    means = basin_series(field, basins).reset_coords(drop=True)
    return field_means_table(basins, means.assign_attrs(units=field.attrs.get("units", "")))


def field_means_table(basins: Any, means: xr.DataArray) -> xr.Dataset:
    """:func:`field_means` from basin means already at hand (``means`` on basin, with units).

    Parameters
    ----------
    basins : list of Basin or BasinSet
        The basins of ``means``, in its order.
    means : xarray.DataArray
        Basin means on ``basin``, with a ``units`` attribute.

    Returns
    -------
    xarray.Dataset
        ``area_km2`` and ``mean`` on ``basin``, described for tables.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> means = basin_series(pr.isel(time=0), [square]).assign_attrs(units="mm")
    >>> float(field_means_table([square], means)["mean"][0])
    1.0
    """
    units = means.attrs.get("units", "")
    return xr.Dataset(
        {
            "area_km2": describe(_areas(basins) / 1e6, "area_km2"),
            "mean": describe(
                means,
                "mean",
                label="mean",
                units=units,
                display_units=units,
                description="area-weighted basin mean of the field shown",
            ),
        }
    )


def basin_table(
    pr: xr.DataArray,
    basins: Any,
    months: Any = (7, 8),
    baseline: Sequence[int] = (1991, 2020),
    year_start: int = 1,
    bundle: xr.Dataset | None = None,
) -> xr.Dataset:
    """The basin table of water-planning figures as a lazy Dataset, with its maps.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm (``cw.open_precip`` output or equivalent).
    basins
        A Basin, a list of them or a :class:`cw.BasinSet`; names must be unique.
    months, baseline, year_start
        The season, the normal period (first, last) and the first month of the year.
    bundle
        A :func:`cw.climatology_bundle` of ``pr`` with the same parameters, to share its
        graph with other analyses (default: built here).

    Returns
    -------
    xr.Dataset, lazy on dask input:

    - on ``basin`` the columns of :data:`SUMMARY_COLUMNS` (see :data:`meta.CATALOGUE`);
    - ``monthly_normal`` (basin, month) in mm and ``seasonal_share_per_year``
      (basin, year) with ``share_slope`` / ``share_pvalue`` / ``share_intercept``;
    - the maps ``seasonal_share_map`` and ``annual_normal_map`` on the grid.

    One ``compute`` reads each stored chunk of ``pr`` once.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> # by hand: the share is 62 days x 3 mm of 365.25 + 2 x 62 mm a year, 186 / 489.25
    >>> ds = basin_table(pr, [square], baseline=(2001, 2004)).compute()
    >>> round(float(ds["seasonal_share_1"][0]), 4), float(ds["annual_mean_mm"][0])
    (0.3802, 489.25)
    """
    func = "basin_table"
    basins = as_basin_list(basins, func)
    months, baseline = tuple(months), tuple(baseline)
    if bundle is None:
        bundle = summary_bundle(pr, months, baseline, year_start)
    series = basin_series(bundle["monthly_totals"], basins)
    covered = series["covered_fraction"]
    series = series.reset_coords("covered_fraction", drop=True)
    annual = annual_totals(series, year_start=year_start).reset_coords(drop=True)
    mean_mm = annual.mean("year")
    n_years = annual.notnull().sum("year")
    latest = annual["year"].where(annual.notnull()).max("year")
    latest_mm = annual.where(annual["year"] == latest).max("year")
    monthly_normal = normals(series, baseline=baseline).reset_coords(drop=True)
    normal = monthly_normal.sum("month", skipna=False)
    area_m2 = _areas(basins)
    volume = mean_mm / 1000.0 * area_m2
    shares = basin_shares(pr, basins, months=months, year_start=year_start, bundle=bundle)
    ds = xr.Dataset(
        {
            "area_km2": shares["area_km2"],
            "annual_mean_mm": describe(mean_mm, "annual_mean_mm"),
            "n_years": describe(n_years, "n_years"),
            "seasonal_share_1": shares["seasonal_share_1"],
            "normal_annual_mm": describe(normal, "normal_annual_mm"),
            "volume_per_year_m3": describe(volume, "volume_per_year_m3"),
            "volume_per_year_acre_ft": describe(volume / ACRE_FOOT_M3, "volume_per_year_acre_ft"),
            "latest_year": describe(latest, "latest_year"),
            "latest_year_mm": describe(latest_mm, "latest_year_mm"),
            "latest_year_percent_of_normal": describe(
                100.0 * latest_mm / normal.where(normal > 0), "latest_year_percent_of_normal"
            ),
            "data_coverage_1": describe(covered.min("time"), "data_coverage_1"),
            "monthly_normal": monthly_normal.assign_attrs(
                units="mm", label="monthly normal", long_name="monthly normal, basin mean"
            ),
        }
    )
    ds.update(summary_maps(None, months, baseline, year_start, bundle=bundle))
    for name in ("seasonal_share_per_year", "share_slope", "share_pvalue", "share_intercept"):
        if name in shares:
            ds[name] = shares[name]
    ds.attrs = {
        "months": list(months),
        "baseline": list(baseline),
        "year_start": year_start,
        "season_year_start": shares.attrs["season_year_start"],
        "area": AREA_DEFINITION,
        "note": "areas on a sphere of the authalic radius 6371007.2 m; planning-level figures from gridded data",
        "history": history_line(
            func, basins=[b.name for b in basins], months=months, baseline=baseline, year_start=year_start
        ),
    }
    return ds


def _check_percent(given: object, func: str) -> float:
    try:
        percent = float(given)  # type: ignore[arg-type]  # anything float() takes
    except (TypeError, ValueError):
        percent = np.nan
    if not np.isfinite(percent) or percent <= -100.0:
        raise ParameterError(
            f"percent={percent!r} is not a usable change",
            source=func,
            variable="percent",
            expected="a finite number above -100",
            fix="pass e.g. percent=5.0 for 5 % more, -10.0 for 10 % less",
        )
    return percent


def what_if(
    pr: xr.DataArray,
    basins: Any,
    months: Any = (11, 12, 1, 2, 3),
    percent: float = 5.0,
    year_start: int = 1,
    years: Sequence[int] | None = None,
    bundle: xr.Dataset | None = None,
) -> xr.Dataset:
    """Change in mean annual basin volume if the season's precipitation changed by ``percent``.

    The season's mean basin total over complete seasons (optionally ``years=(first,
    last)`` year labels) times the basin area is the season's volume per year; the rest
    of the year is unchanged, so the annual volume changes by ``percent`` of it.  Returns
    a lazy Dataset on ``basin`` with the columns of :data:`WHAT_IF_COLUMNS`.

    A planning what-if, not a forecast: defer to adopted local estimates for water supply.

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step.
    basins : Basin, list of Basin or BasinSet
    months : sequence of int
        The season that changes.
    percent : float
        Its change in percent (-10 for 10 % less); above -100.
    year_start : int
        First month of the year.
    years : (int, int), optional
        Year labels of the seasons to average.
    bundle : xarray.Dataset, optional
        From :func:`summary_bundle`.

    Returns
    -------
    xarray.Dataset

    Raises
    ------
    ParameterError
        For a percent that is not a number above -100.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> ds = what_if(pr, [square], months=(7, 8), percent=10.0).compute()
    >>> # by hand: 186 mm over the basin's area, 10 % of it
    >>> area_m2 = square.area_m2
    >>> round(float(ds["delta_volume_per_year_m3"][0]) / (0.10 * 0.186 * area_m2), 4)
    1.0
    """
    func = "scenario_delta"
    basins = as_basin_list(basins, func)
    percent = _check_percent(percent, func)
    series = basin_series(_monthly(pr, bundle), basins).reset_coords("covered_fraction", drop=True)
    seasonal = seasonal_totals(series, months, year_start=year_start)
    if years is not None:
        first, last = years
        seasonal = seasonal.sel(year=slice(int(first), int(last)))
        if seasonal.sizes["year"] == 0:
            raise ParameterError(
                f"no seasons between {first} and {last}",
                source=func,
                variable="years",
                expected="year labels inside the data",
                fix="widen years= or leave it out",
            )
    volume = seasonal.mean("year").reset_coords(drop=True) / 1000.0 * _areas(basins)
    delta = volume * percent / 100.0
    label = seasonal.attrs.get("season", season_label(tuple(months)))
    n = len(basins)
    ds = xr.Dataset(
        {
            "season": describe(xr.DataArray(np.array([label] * n, dtype=object), dims="basin"), "season"),
            "percent": describe(xr.DataArray(np.full(n, percent), dims="basin"), "percent"),
            "n_seasons": describe(seasonal.notnull().sum("year").reset_coords(drop=True), "n_seasons"),
            "seasonal_volume_per_year_m3": describe(volume, "seasonal_volume_per_year_m3"),
            "delta_volume_per_year_m3": describe(delta, "delta_volume_per_year_m3"),
            "delta_volume_per_year_acre_ft": describe(delta / ACRE_FOOT_M3, "delta_volume_per_year_acre_ft"),
        },
        coords={"basin": [b.name for b in basins]},
    )
    ds.attrs = {
        "months": list(months),
        "percent": percent,
        "year_start": year_start,
        "area": AREA_DEFINITION,
        "note": "planning-level estimate: only the season's precipitation is scaled",
        "history": history_line(
            func, basins=[b.name for b in basins], months=tuple(months), percent=percent, year_start=year_start
        ),
    }
    return ds


def _table(ds: xr.Dataset, columns: Sequence[str] | None, keys: Sequence[str]) -> pd.DataFrame:
    out = frame(ds, index=("basin",), columns=columns)
    out.index.name = "basin"
    out.attrs = {k: ds.attrs[k] for k in keys if k in ds.attrs}
    return out


def basin_summary(
    pr: xr.DataArray,
    basins: Any,
    months: Any = (7, 8),
    baseline: Sequence[int] = (1991, 2020),
    year_start: int = 1,
) -> pd.DataFrame:
    """One row per basin of water-planning figures from a precipitation grid (mm per step).

    The computed columns of :func:`basin_table` (:data:`SUMMARY_COLUMNS`, units in the
    names): area, annual mean, complete years, seasonal share, annual normal, volume per
    year in m³ and acre-feet, the latest complete year against the normal and the share
    of the basin with data.  ``attrs`` hold the parameters, a note and a history line.

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step.
    basins : Basin, list of Basin or BasinSet
    months : sequence of int
        The season.
    baseline : (int, int)
        The normal period.
    year_start : int
        First month of the year.

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> row = basin_summary(pr, [square], baseline=(2001, 2004)).loc["square"]
    >>> float(row["annual_mean_mm"]), int(row["n_years"])
    (489.25, 4)
    """
    ds = basin_table(pr, basins, months=months, baseline=baseline, year_start=year_start)
    ds = ds[list(SUMMARY_COLUMNS)].compute()
    out = _table(ds, SUMMARY_COLUMNS, ("months", "baseline", "year_start", "season_year_start", "note"))
    out.attrs["history"] = history_line(
        "basin_summary", basins=list(out.index), months=tuple(months), baseline=tuple(baseline), year_start=year_start
    )
    return out


def scenario_delta(
    pr: xr.DataArray,
    basin: Any,
    months: Any = (11, 12, 1, 2, 3),
    percent: float = 5.0,
    year_start: int = 1,
    years: Sequence[int] | None = None,
) -> pd.DataFrame:
    """:func:`what_if` computed, as a DataFrame (one row per basin, :data:`WHAT_IF_COLUMNS`).

    Parameters
    ----------
    pr, basin, months, percent, year_start, years
        As for :func:`what_if` (``basin``: one basin or several).

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")  # 3 mm a day in Jul-Aug, else 1
    >>> pr = cw.open_precip(xr.DataArray(
    ...     np.where(t.month.isin([7, 8]), 3.0, 1.0)[:, None, None] * np.ones((1, 2, 2)),
    ...     dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm"},
    ...     coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}))
    >>> square = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> scenario_delta(pr, [square], months=(7, 8), percent=10.0)["n_seasons"].tolist()
    [4]
    """
    ds = what_if(pr, basin, months=months, percent=percent, year_start=year_start, years=years).compute()
    return _table(ds, WHAT_IF_COLUMNS, ("months", "percent", "year_start", "note", "history"))
