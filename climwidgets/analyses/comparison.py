"""Basin climatology across precipitation products, with the spread between them.

Each product is summarized on its own grid (area-weighted basin mean, no regridding) over
the complete years common to all products; the per-basin numbers of every product come
from one stacked (basin, time) series per product (:func:`.basins.basin_series`), and all
products are computed in one ``dask.compute``.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
import xarray as xr

from ..compute.compare import _check_products, _common_months, align, compare
from ..compute.normals import annual_normal
from ..compute.seasonal import seasonal_fraction
from ..compute.totals import annual_totals
from ..compute.trend import trend
from ..geo.basinset import as_basin_list
from ..provenance import with_history
from .basins import basin_series
from .meta import describe, frame

__all__ = [
    "products_table",
    "products_basin_table",
    "products_frame",
    "agreement_maps",
    "aligned_products",
    "METRICS",
    "PRODUCT_COLUMNS",
    "SPREAD_RANGE",
    "SPREAD_CV",
]

#: The agreement metrics of two products: plain words, and how their units read on screen.
METRICS = {
    "bias": "bias (other - reference)",
    "ratio": "ratio of means (other / reference)",
    "rmse": "RMSE of monthly totals",
    "corr": "correlation of monthly totals",
    "kge": "Kling-Gupta efficiency",
    "nse": "Nash-Sutcliffe efficiency",
}
_UNIT_WORDS = {"mm/yr": "mm per year", "mm": "mm per month", "1": "no unit"}

SPREAD_RANGE = "spread: max - min"
SPREAD_CV = "spread: coefficient of variation"
PRODUCT_COLUMNS = ("annual_mean_mm", "seasonal_share", "normal_mm", "trend_mm_per_year", "trend_pvalue")
_DESCRIPTION = {"annual_mean_mm": "mean annual total of the basin over the complete years common to all products"}


def products_table(
    datasets: dict[str, Any], basins: Any, months: Any = (7, 8), baseline: Sequence[int] | None = None
) -> xr.Dataset:
    """Basin climatology per product, with the spread across products (lazy Dataset).

    Per basin and product: mean annual total, seasonal share of ``months`` (ratio of
    sums), annual normal over ``baseline`` (default: the whole common period) and the Sen
    slope / Mann-Kendall p-value of the annual totals.  Each product is summarized on its
    own grid (area-weighted basin mean, no regridding) over the complete years common to
    all products.  After the products come two more entries of the ``product`` dimension:
    ``"spread: max - min"`` and ``"spread: coefficient of variation"`` (population standard
    deviation / mean across products; missing for the trend, whose mean can be near zero,
    and for the p-value).

    Parameters
    ----------
    datasets : dict[str, Any] of {name: DataArray}
        Precipitation products (any step, calendar and grid); at least two.
    basins : list[Any] of Basin or BasinSet
    months : sequence of int
        The season whose share is reported.
    baseline : (int, int), optional
        The normal period; default the whole common period.

    Returns
    -------
    xarray.Dataset
        The :data:`PRODUCT_COLUMNS` on (basin, product), described for tables; ``attrs``
        hold the period, the season, the baseline and the spread's definition.  One
        ``compute`` reads each product's chunks once.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")
    >>> def product(mm_per_day):  # two invented products: 1 and 1.5 mm every day
    ...     return cw.open_precip(xr.DataArray(
    ...         np.full((t.size, 2, 2), mm_per_day), dims=("time", "lat", "lon"), name="pr",
    ...         coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}, attrs={"units": "mm"}))
    >>> products = {"a": product(1.0), "b": product(1.5)}
    >>> b = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> ds = products_table(products, [b]).compute()
    >>> ds["annual_mean_mm"].sel(basin="square").values.round(3).tolist()  # 1461 days / 4 years
    [365.25, 547.875, 182.625, 0.2]
    """
    func = "products_basin_table"
    products = _check_products(datasets, func)
    basins = as_basin_list(basins, func)
    monthly, (first, last) = _common_months(products, None, func)
    base = (first, last) if baseline is None else tuple(int(v) for v in baseline)

    parts = []
    for m in monthly.values():
        series = basin_series(m, basins).reset_coords("covered_fraction", drop=True)
        annual = annual_totals(series)
        tr = trend(annual, dim="year")
        values = (
            annual.mean("year"),
            seasonal_fraction(series, months),
            annual_normal(series, baseline=base),
            tr["slope"],
            tr["pvalue"],
        )
        parts.append(
            xr.Dataset(
                {
                    c: v.reset_coords(drop=True).drop_attrs() if hasattr(v, "drop_attrs") else v.reset_coords(drop=True)
                    for c, v in zip(PRODUCT_COLUMNS, values)
                }
            )
        )
    per_product = xr.concat(parts, dim="product").assign_coords(product=np.array(list(products), dtype=object))
    mean = per_product.mean("product")
    cv = per_product.std("product") / mean.where(mean != 0)
    for c in ("trend_mm_per_year", "trend_pvalue"):
        cv[c] = cv[c] * np.nan
    spread = per_product.max("product") - per_product.min("product")
    spread["trend_pvalue"] = spread["trend_pvalue"] * np.nan
    table = xr.concat(
        [
            per_product,
            spread.expand_dims(product=np.array([SPREAD_RANGE], dtype=object)),
            cv.expand_dims(product=np.array([SPREAD_CV], dtype=object)),
        ],
        dim="product",
    ).transpose(..., "basin", "product")  # ensemble members first
    out = xr.Dataset(
        {
            c: describe(table[c], c, **({"description": _DESCRIPTION[c]} if c in _DESCRIPTION else {}))
            for c in PRODUCT_COLUMNS
        }
    )
    out.attrs = {
        "period": f"{first}-{last}",
        "season_months": tuple(months),
        "baseline": base,
        "spread": "max - min and coefficient of variation (population sd / mean) across products",
    }
    return with_history(
        out,
        func,
        None,
        products=tuple(products),
        basins=tuple(b.name for b in basins),
        months=tuple(months),
        baseline=base,
    )


def products_basin_table(
    datasets: dict[str, Any], basins: Any, months: Any = (7, 8), baseline: Sequence[int] | None = None
) -> pd.DataFrame:
    """:func:`products_table` computed into a table indexed by (basin, product).

    The columns are the :data:`PRODUCT_COLUMNS` (numbers as stored); ``attrs["columns"]``
    holds each column's label, units and description, and ``attrs`` the period, the
    season, the baseline and a history line.

    Parameters
    ----------
    datasets, basins, months, baseline
        As for :func:`products_table`.

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")
    >>> def product(mm_per_day):  # two invented products: 1 and 1.5 mm every day
    ...     return cw.open_precip(xr.DataArray(
    ...         np.full((t.size, 2, 2), mm_per_day), dims=("time", "lat", "lon"), name="pr",
    ...         coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}, attrs={"units": "mm"}))
    >>> products = {"a": product(1.0), "b": product(1.5)}
    >>> b = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> products_basin_table(products, [b])["annual_mean_mm"].round(2).tolist()
    [365.25, 547.88, 182.62, 0.2]
    """
    from .run import compute

    (ds,) = compute(products_table(datasets, basins, months=months, baseline=baseline))
    return products_frame(ds)


def products_frame(ds: xr.Dataset) -> pd.DataFrame:
    """A computed :func:`products_table` as a DataFrame indexed by (basin, product).

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`products_table`, computed.

    Returns
    -------
    pandas.DataFrame
        Numbers as stored; ``attrs["columns"]`` holds each column's words.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")
    >>> def product(mm_per_day):  # two invented products: 1 and 1.5 mm every day
    ...     return cw.open_precip(xr.DataArray(
    ...         np.full((t.size, 2, 2), mm_per_day), dims=("time", "lat", "lon"), name="pr",
    ...         coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}, attrs={"units": "mm"}))
    >>> products = {"a": product(1.0), "b": product(1.5)}
    >>> b = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> products_frame(products_table(products, [b]).compute()).index.tolist()[:2]
    [('square', 'a'), ('square', 'b')]
    """
    table = frame(ds, index=("basin", "product"), columns=PRODUCT_COLUMNS)
    table.attrs.update(ds.attrs)
    return table


def aligned_products(datasets: dict[str, Any], **options: Any) -> dict[str, Any]:
    """The products on their common complete months and one grid (:func:`cw.align`; by default the
    coarsest product's grid; ``options`` are those of :func:`cw.align`).

    Parameters
    ----------
    datasets : dict of {name: xarray.DataArray}
        Precipitation products.
    **options
        Passed to :func:`cw.align`.

    Returns
    -------
    dict of {name: xarray.DataArray}
        Monthly totals on one grid and one period.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")
    >>> def product(mm_per_day):  # two invented products: 1 and 1.5 mm every day
    ...     return cw.open_precip(xr.DataArray(
    ...         np.full((t.size, 2, 2), mm_per_day), dims=("time", "lat", "lon"), name="pr",
    ...         coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}, attrs={"units": "mm"}))
    >>> products = {"a": product(1.0), "b": product(1.5)}
    >>> aligned = aligned_products(products)
    >>> dict(aligned["b"].sizes)
    {'time': 48, 'lat': 2, 'lon': 2}
    """
    return align(datasets, **options)


def agreement_maps(aligned: dict[str, Any], reference: str, other: str, kge: str = "2009") -> xr.Dataset:
    """Per-cell agreement of ``other`` with ``reference`` (lazy), each metric with its words.

    Parameters
    ----------
    aligned : dict[str, Any] of {name: DataArray}
        Products from :func:`aligned_products` (one grid, one period).
    reference, other : str
        The two products compared.
    kge : {"2009", "2012"}
        Form of the Kling-Gupta efficiency (Gupta et al. 2009, or Kling et al. 2012).

    Returns
    -------
    xarray.Dataset
        :func:`cw.compare` of the two: ``bias``, ``ratio``, ``rmse``, ``corr``, ``kge``,
        ``nse``; each variable carries ``label`` and ``display_units`` (the words of
        :data:`METRICS`).

    References
    ----------
    Gupta, H. V., Kling, H., Yilmaz, K. K. and Martinez, G. F. (2009) Decomposition of the
    mean squared error and NSE performance criteria. J. Hydrol. 377, 80-91.
    doi:10.1016/j.jhydrol.2009.08.003

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-31", freq="D")
    >>> def product(mm_per_day):  # two invented products: 1 and 1.5 mm every day
    ...     return cw.open_precip(xr.DataArray(
    ...         np.full((t.size, 2, 2), mm_per_day), dims=("time", "lat", "lon"), name="pr",
    ...         coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]}, attrs={"units": "mm"}))
    >>> products = {"a": product(1.0), "b": product(1.5)}
    >>> maps = agreement_maps(aligned_products(products), "a", "b")
    >>> float(maps["ratio"].mean())  # b is 1.5 times a everywhere
    1.5
    """
    if reference == other:
        from ..errors import ParameterError

        raise ParameterError(
            f"reference and other are both {reference!r}",
            source="agreement_maps",
            variable="other",
            expected="two different products",
            fix="choose another product as 'Other'",
        )
    out = compare(aligned[reference], aligned[other], kge=kge)
    for name in out.data_vars:
        if name in METRICS:
            units = out[name].attrs.get("units", "")
            out[name].attrs.update(label=METRICS[name], display_units=_UNIT_WORDS.get(units, units))
    return out
