"""Basin climatology across precipitation products, with the spread between them.

Each product is summarized on its own grid (area-weighted basin mean, no regridding) over
the complete years common to all products; the per-basin numbers of every product come
from one stacked (basin, time) series per product (:func:`.basins.basin_series`), and all
products are computed in one ``dask.compute``.
"""

from __future__ import annotations

import dask
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
from .meta import CATALOGUE

__all__ = ["products_basin_table", "agreement_maps", "aligned_products", "METRICS", "PRODUCT_COLUMNS",
           "SPREAD_RANGE", "SPREAD_CV"]

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
_DESCRIPTION = {"annual_mean_mm": "mean annual total over the common period (mm)"}


def products_basin_table(datasets: dict, basins, months=(7, 8), baseline=None) -> pd.DataFrame:
    """Basin climatology per product, with the spread across products.

    Per basin and product: mean annual total, seasonal share of ``months`` (ratio of
    sums), annual normal over ``baseline`` (default: the whole common period) and the Sen
    slope / Mann-Kendall p-value of the annual totals.  After the products of each basin
    come two rows: ``"spread: max - min"`` and ``"spread: coefficient of variation"``
    (population standard deviation / mean across products; left empty for the trend,
    whose mean can be near zero, and for the p-value).

    Returns a DataFrame indexed by (basin, product); ``attrs`` holds the column
    descriptions, the period, the season, the baseline and a history line.
    """
    func = "products_basin_table"
    products = _check_products(datasets, func)
    basins = as_basin_list(basins, func)
    monthly, (first, last) = _common_months(products, None, func)
    base = (first, last) if baseline is None else tuple(int(v) for v in baseline)

    lazy = {}
    for name, m in monthly.items():
        series = basin_series(m, basins).reset_coords("covered_fraction", drop=True)
        annual = annual_totals(series)
        tr = trend(annual, dim="year")
        lazy[name] = (annual.mean("year"), seasonal_fraction(series, months), annual_normal(series, baseline=base),
                      tr["slope"], tr["pvalue"])
    (values,) = dask.compute(lazy)

    rows, index = [], []
    for j, basin in enumerate(basins):
        block = np.array([[float(v.isel(basin=j)) for v in values[n]] for n in products])
        rows.extend(block)
        index.extend((basin.name, n) for n in products)
        mean = block.mean(axis=0)
        cv = block.std(axis=0) / np.where(mean != 0, mean, np.nan)
        cv[3:] = np.nan
        rows.extend([block.max(axis=0) - block.min(axis=0), cv])
        index.extend([(basin.name, SPREAD_RANGE), (basin.name, SPREAD_CV)])
    table = pd.DataFrame(rows, index=pd.MultiIndex.from_tuples(index, names=["basin", "product"]),
                         columns=list(PRODUCT_COLUMNS))
    table.loc[(slice(None), SPREAD_RANGE), "trend_pvalue"] = np.nan
    columns = {c: _DESCRIPTION.get(c, f"{CATALOGUE[c].description} ({CATALOGUE[c].units})") for c in PRODUCT_COLUMNS}
    table.attrs = {"columns": columns, "period": f"{first}-{last}", "season_months": tuple(months),
                   "baseline": base,
                   "spread": "max - min and coefficient of variation (population sd / mean) across products"}
    return with_history(table, func, None, products=tuple(products),
                        basins=tuple(b.name for b in basins), months=tuple(months), baseline=base)


def aligned_products(datasets: dict, **options) -> dict:
    """The products on their common complete months and one grid (:func:`cw.align`; by default the
    coarsest product's grid; ``options`` are those of :func:`cw.align`)."""
    return align(datasets, **options)


def agreement_maps(aligned: dict, reference: str, other: str, kge: str = "2009") -> xr.Dataset:
    """Per-cell agreement of ``other`` with ``reference`` (lazy), each metric with its words.

    Parameters
    ----------
    aligned : dict of {name: DataArray}
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
    """
    if reference == other:
        from ..errors import ParameterError

        raise ParameterError(f"reference and other are both {reference!r}", source="agreement_maps",
                             variable="other", expected="two different products",
                             fix="choose another product as 'Other'")
    out = compare(aligned[reference], aligned[other], kge=kge)
    for name in out.data_vars:
        if name in METRICS:
            units = out[name].attrs.get("units", "")
            out[name].attrs.update(label=METRICS[name], display_units=_UNIT_WORDS.get(units, units))
    return out
