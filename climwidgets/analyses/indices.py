"""ETCCDI precipitation indices as users see them: per-cell maps and basin tables.

Built on :func:`cw.precip_indices` (per cell, per year).  A basin's index is the
area-weighted basin mean of the per-cell index (as gridded index products average cell
values; it is *not* the index of the basin-mean series, which would smooth the daily
values first and give fewer dry days and smaller maxima).  Over a chosen period of years
the table gives the mean, the Sen slope and the two-sided Mann-Kendall p of the basin's
per-year index (:func:`cw.trend`).  Labels, units and formats come from
:data:`climwidgets.analyses.meta.INDEX_CATALOGUE`.

References
----------
Karl, T. R., Nicholls, N. & Ghazi, A. (1999) Climatic Change 42, 3-7.
Zhang, X. et al. (2011) WIREs Climate Change 2, 851-870. doi:10.1002/wcc.147
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any
import pandas as pd

import numpy as np
import xarray as xr

from ..compute.indices import precip_indices
from ..compute.trend import trend
from ..errors import InsufficientDataError, ParameterError
from ..geo.basinset import as_basin_list
from .basins import basin_series
from .meta import describe, frame, index_meta

__all__ = [
    "gridded_indices",
    "index_map",
    "index_trend_map",
    "basin_index_table",
    "index_table",
    "INDEX_TABLE_COLUMNS",
    "BASIN_INDEX_NOTE",
]

INDEX_TABLE_COLUMNS = ("area_km2", "index_mean", "index_slope", "index_pvalue", "n_index_years")
BASIN_INDEX_NOTE = (
    "a basin's index is the area-weighted mean of the per-cell index, not the index of the basin-mean series"
)


def _index_attrs(name: str, compute_attrs: dict[str, Any]) -> dict[str, Any]:
    attrs = index_meta(name).attrs()
    attrs["long_name"] = compute_attrs.get("long_name", attrs["label"])
    attrs["definition"] = compute_attrs.get("description", "")
    return attrs


def gridded_indices(
    pr: xr.DataArray,
    names: Sequence[str] | None = None,
    base_period: Sequence[int] = (1961, 1990),
    year_start: int = 1,
    thresholds: Sequence[float] = (),
    indices: xr.Dataset | None = None,
) -> xr.Dataset:
    """Per-cell, per-year ETCCDI indices with their display attributes (lazy).

    Parameters
    ----------
    pr
        Daily precipitation depth in mm.
    names, base_period, year_start, thresholds
        As for :func:`cw.precip_indices` (annual indices only here).
    indices
        The Dataset of :func:`cw.precip_indices` when already at hand (for example from
        :func:`cw.climatology_bundle`); ``pr`` and the other parameters are then unused.

    Returns
    -------
    xr.Dataset
        On (year, space) with one variable per index; attrs state the conventions.

    References
    ----------
    Zhang, X. et al. (2011): Indices for monitoring changes in extremes based on daily
    temperature and precipitation data. WIREs Climate Change 2, 851–870,
    doi:10.1002/wcc.147.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> t = xr.date_range("2001-01-01", periods=5 * 365, freq="D", calendar="noleap")
    >>> daily = np.broadcast_to((np.asarray(t.year) - 1999.0)[:, None, None], (t.size, 2, 3))
    >>> pr = xr.DataArray(daily.copy(), dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                   attrs={"units": "mm", "step": "day"})  # 2 mm a day in 2001 ... 6 in 2005
    >>> ind = gridded_indices(pr, names=["PRCPTOT", "Rx1day"], base_period=(2001, 2005))
    >>> ind["PRCPTOT"].isel(lat=0, lon=0).values.tolist()  # 365 wet days a year
    [730.0, 1095.0, 1460.0, 1825.0, 2190.0]
    >>> ind["Rx1day"].attrs["units"]
    'mm'
    """
    ds = (
        indices
        if indices is not None
        else precip_indices(pr, names=names, base_period=base_period, year_start=year_start, thresholds=thresholds)
    )
    out = ds.copy(deep=False)
    for name in ds.data_vars:
        out[name].attrs = _index_attrs(str(name), ds[name].attrs)
    return out


def _years(indices: xr.Dataset, period: Any, source: str) -> tuple[int, int]:
    have = np.asarray(indices["year"].values, dtype=int)
    if period is None:
        return int(have.min()), int(have.max())
    try:
        first, last = (int(v) for v in period)
    except (TypeError, ValueError):
        raise ParameterError(
            f"period={period!r} is not a pair of years",
            source=source,
            variable="period",
            expected="(first, last) years",
            fix="pass for example period=(1991, 2020)",
        ) from None
    if first > last or first < have.min() or last > have.max():
        raise ParameterError(
            f"period {first}-{last} is not within the index years {have.min()}-{have.max()}",
            source=source,
            variable="period",
            expected=f"first <= last within {have.min()}-{have.max()}",
            fix="choose years inside the record, or period=None for all of them",
        )
    return first, last


def _check_name(indices: xr.Dataset, name: str, source: str) -> None:
    if name not in indices.data_vars:
        raise ParameterError(
            f"index {name!r} was not computed",
            source=source,
            variable="name",
            expected=f"one of {tuple(map(str, indices.data_vars))}",
            fix="add it to names= (or thresholds= for R<nn>mm)",
        )


def index_map(indices: xr.Dataset, name: str, period: Any = None) -> xr.DataArray:
    """Mean of one index over the years of ``period`` (first, last), per cell (lazy).

    A cell is NaN when any year of the period is NaN (a year with a missing day), so the
    mean never rests on fewer years than the period says.

    Parameters
    ----------
    indices : xarray.Dataset
        Per-year indices, as from :func:`gridded_indices`.
    name : str
        The index (a variable of ``indices``, e.g. ``"Rx1day"``).
    period : (int, int), optional
        First and last year; default all years of ``indices``.

    Returns
    -------
    xarray.DataArray
        The mean per cell, named ``name``, with the index's attributes and ``years``.

    Raises
    ------
    ParameterError
        An index that was not computed, or a period that is not a pair of years inside
        the record.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> t = xr.date_range("2001-01-01", periods=5 * 365, freq="D", calendar="noleap")
    >>> daily = np.broadcast_to((np.asarray(t.year) - 1999.0)[:, None, None], (t.size, 2, 3))
    >>> pr = xr.DataArray(daily.copy(), dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                   attrs={"units": "mm", "step": "day"})  # 2 mm a day in 2001 ... 6 in 2005
    >>> ind = gridded_indices(pr, names=["PRCPTOT", "Rx1day"], base_period=(2001, 2005))
    >>> m = index_map(ind, "Rx1day", period=(2001, 2003))
    >>> float(m.isel(lat=0, lon=0)), m.attrs["years"]
    (3.0, '2001-2003')
    """
    _check_name(indices, name, "index_map")
    first, last = _years(indices, period, "index_map")
    sel = indices[name].sel(year=slice(first, last))
    out = sel.mean("year", skipna=False)
    out.attrs = {**indices[name].attrs, "years": f"{first}-{last}"}
    return out.rename(name)


def index_trend_map(indices: xr.Dataset, name: str, period: Any = None) -> xr.Dataset:
    """Per-cell Sen slope (per decade) and two-sided Mann-Kendall p of one index over ``period`` (lazy).

    Returns a Dataset with ``slope_per_decade`` (index units per decade) and ``pvalue``
    (:func:`cw.trend` along ``year``; NaN years are skipped per cell).

    Parameters
    ----------
    indices : xarray.Dataset
        Per-year indices, as from :func:`gridded_indices`.
    name : str
        The index (a variable of ``indices``, e.g. ``"Rx1day"``).
    period : (int, int), optional
        First and last year; default all years of ``indices``.

    Returns
    -------
    xarray.Dataset
        ``slope_per_decade`` and ``pvalue`` per cell, with labels and display formats.

    Raises
    ------
    ParameterError
        An index that was not computed, or a period that is not a pair of years inside
        the record.  Also a period of fewer than 3 years.

    References
    ----------
    Sen, P. K. (1968): Estimates of the regression coefficient based on Kendall's tau.
    J. Am. Stat. Assoc. 63, 1379–1389, doi:10.1080/01621459.1968.10480934.

    Mann, H. B. (1945): Nonparametric tests against trend. Econometrica 13, 245–259,
    doi:10.2307/1907187.

    Examples
    --------
    Rx1day grows by 1 mm a year; five rising years give Mann-Kendall S = 10, variance
    5·4·15/18, z = 9/√16.67 = 2.20 and p = 0.027 (normal approximation with continuity
    correction, hand-computed):

    >>> import numpy as np, xarray as xr
    >>> t = xr.date_range("2001-01-01", periods=5 * 365, freq="D", calendar="noleap")
    >>> daily = np.broadcast_to((np.asarray(t.year) - 1999.0)[:, None, None], (t.size, 2, 3))
    >>> pr = xr.DataArray(daily.copy(), dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                   attrs={"units": "mm", "step": "day"})  # 2 mm a day in 2001 ... 6 in 2005
    >>> ind = gridded_indices(pr, names=["PRCPTOT", "Rx1day"], base_period=(2001, 2005))
    >>> tr = index_trend_map(ind, "Rx1day")
    >>> float(tr["slope_per_decade"][0, 0]), round(float(tr["pvalue"][0, 0]), 3)
    (10.0, 0.027)
    """
    _check_name(indices, name, "index_trend_map")
    first, last = _years(indices, period, "index_trend_map")
    if last - first < 2:
        raise ParameterError(
            f"period {first}-{last} has fewer than 3 years",
            source="index_trend_map",
            variable="period",
            expected="at least 3 years for a trend",
            fix="choose a longer period",
        )
    attrs = indices[name].attrs
    units, shown = attrs.get("units", ""), attrs.get("display_units", "")
    tr = trend(indices[name].sel(year=slice(first, last)), dim="year")
    slope = (10.0 * tr["slope"]).rename("slope_per_decade")
    slope.attrs = {
        "units": f"{units}/decade",
        "label": f"{name} Sen slope",
        "display_units": f"{shown} per decade",
        "display_format": ".3g",
        "years": f"{first}-{last}",
        "description": f"Sen slope of the per-year {name}, per decade",
    }
    pvalue = tr["pvalue"].rename("pvalue")
    pvalue.attrs = {
        "units": "1",
        "label": f"{name} Mann-Kendall p",
        "display_units": "",
        "display_format": ".2f",
        "years": f"{first}-{last}",
        "description": "two-sided Mann-Kendall p-value of the per-year index",
    }
    return xr.Dataset({"slope_per_decade": slope, "pvalue": pvalue})


def basin_index_table(indices: xr.Dataset, basins: Any, name: str, period: Any = None) -> xr.Dataset:
    """One index per basin over ``period``: mean, Sen slope, Mann-Kendall p and the per-year series.

    Returns a lazy Dataset on ``basin`` with ``area_km2``, ``index_mean``, ``index_slope``
    (index units per year; shown per decade), ``index_pvalue``, ``n_index_years``, and
    ``index_per_year`` (basin, year) with ``index_intercept`` for the trend line.

    Parameters
    ----------
    indices : xarray.Dataset
        Per-year indices, as from :func:`gridded_indices`.
    basins : Basin, list of Basin or BasinSet
        The basins.
    name : str
        The index (a variable of ``indices``, e.g. ``"Rx1day"``).
    period : (int, int), optional
        First and last year; default all years of ``indices``.

    Returns
    -------
    xarray.Dataset
        As described above; ``attrs`` name the index, the years and :data:`BASIN_INDEX_NOTE`.

    Raises
    ------
    ParameterError
        An index that was not computed, or a period that is not a pair of years inside
        the record.

    References
    ----------
    Sen, P. K. (1968): Estimates of the regression coefficient based on Kendall's tau.
    J. Am. Stat. Assoc. 63, 1379–1389, doi:10.1080/01621459.1968.10480934.

    Mann, H. B. (1945): Nonparametric tests against trend. Econometrica 13, 245–259,
    doi:10.2307/1907187.

    Examples
    --------
    >>> import climwidgets as cw
    >>> import numpy as np, xarray as xr
    >>> t = xr.date_range("2001-01-01", periods=5 * 365, freq="D", calendar="noleap")
    >>> daily = np.broadcast_to((np.asarray(t.year) - 1999.0)[:, None, None], (t.size, 2, 3))
    >>> pr = xr.DataArray(daily.copy(), dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                   attrs={"units": "mm", "step": "day"})  # 2 mm a day in 2001 ... 6 in 2005
    >>> ind = gridded_indices(pr, names=["PRCPTOT", "Rx1day"], base_period=(2001, 2005))
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> bt = basin_index_table(ind, [west], "Rx1day")
    >>> [float(bt[k][0]) for k in ("index_mean", "index_slope")], int(bt["n_index_years"][0])
    ([4.0, 1.0], 5)
    """
    _check_name(indices, name, "basin_index_table")
    basins = as_basin_list(basins, "basin_index_table")
    first, last = _years(indices, period, "basin_index_table")
    attrs = indices[name].attrs
    units, shown = attrs.get("units", ""), attrs.get("display_units", "")
    per_year = basin_series(indices[name].sel(year=slice(first, last)).assign_attrs(units=units), basins)
    per_year = per_year.reset_coords(drop=True)
    areas = xr.DataArray(
        np.array([b.area_m2 for b in basins]) / 1e6, dims="basin", coords={"basin": [b.name for b in basins]}
    )
    ds = xr.Dataset(
        {
            "area_km2": describe(areas, "area_km2"),
            "index_mean": describe(
                per_year.mean("year"),
                "index_mean",
                label=f"{name} mean",
                units=units,
                display_units=shown,
                display_format=attrs.get("display_format", ".4g"),
            ),
            "n_index_years": describe(per_year.notnull().sum("year"), "n_index_years"),
            "index_per_year": per_year.assign_attrs(
                label=f"{name} per year", units=units, display_units=shown, long_name=attrs.get("label", name)
            ),
        }
    )
    if per_year.sizes["year"] >= 3:
        try:
            tr = trend(per_year, dim="year")
        except InsufficientDataError:
            tr = None
        if tr is not None:
            ds["index_slope"] = describe(
                tr["slope"],
                "index_slope",
                label=f"{name} Sen slope",
                units=f"{units}/yr",
                display_units=f"{shown} per decade",
            )
            ds["index_pvalue"] = describe(tr["pvalue"], "index_pvalue")
            ds["index_intercept"] = tr["intercept"].assign_attrs(units=units)
    ds.attrs = {
        "index": name,
        "first_year": first,
        "last_year": last,
        "note": BASIN_INDEX_NOTE,
        **{
            k: v
            for k, v in indices.attrs.items()
            if k
            in (
                "wet_day",
                "spell_convention",
                "missing_rule",
                "percentile_method",
                "base_period",
                "year_label",
                "history",
            )
        },
    }
    return ds


def index_table(ds: xr.Dataset, display: bool = False) -> pd.DataFrame:
    """The basin index table (rows: basins) as stored (CSV) or as shown (widgets, report).

    Parameters
    ----------
    ds : xarray.Dataset
        A result of :func:`basin_index_table`.
    display : bool
        ``True``: columns headed and scaled as shown to a user; ``False`` (default): as stored.

    Returns
    -------
    pandas.DataFrame
        Rows basins; the :data:`INDEX_TABLE_COLUMNS` present in ``ds``.

    Examples
    --------
    >>> import climwidgets as cw
    >>> import numpy as np, xarray as xr
    >>> t = xr.date_range("2001-01-01", periods=5 * 365, freq="D", calendar="noleap")
    >>> daily = np.broadcast_to((np.asarray(t.year) - 1999.0)[:, None, None], (t.size, 2, 3))
    >>> pr = xr.DataArray(daily.copy(), dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                   attrs={"units": "mm", "step": "day"})  # 2 mm a day in 2001 ... 6 in 2005
    >>> ind = gridded_indices(pr, names=["PRCPTOT", "Rx1day"], base_period=(2001, 2005))
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> table = index_table(basin_index_table(ind, [west], "Rx1day"))
    >>> table.columns.tolist()
    ['area_km2', 'index_mean', 'index_slope', 'index_pvalue', 'n_index_years']
    """
    columns = [c for c in INDEX_TABLE_COLUMNS if c in ds.data_vars]
    return frame(ds, columns=columns, display=display)
