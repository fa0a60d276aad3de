"""Comparing precipitation products: alignment and agreement maps.

``align`` brings several products onto one period, one monthly time index and one grid;
``compare`` maps how a product agrees with a reference.  The basin table across products
is an analysis (``climwidgets.analyses.comparison.products_basin_table``).

Calendars: products are compared as monthly totals labelled by (year, month).  Each
product's monthly totals are relabelled to standard-calendar month starts
(``datetime64``), so a noleap February and a standard February are the same label; the
totals themselves are not changed (a noleap February total is 28 days of rain).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
import xarray as xr

from ..errors import GridError, MismatchError, ParameterError
from ..provenance import with_history
from ._time import check_precip, month_coverage, safe_divide

__all__ = ["align", "compare"]


# ---------------------------------------------------------------- align
def _check_products(datasets: Any, func: str) -> dict[str, xr.DataArray]:
    if not isinstance(datasets, dict) or not datasets:
        raise ParameterError(
            f"{func} needs a non-empty dict of products",
            source=func,
            expected="{'name': DataArray, ...}",
            fix="pass e.g. {'gauge': pr_a, 'radar': pr_b}",
        )
    for name, da in datasets.items():
        if not isinstance(da, xr.DataArray):
            raise ParameterError(
                f"product {name!r} is a {type(da).__name__}",
                source=func,
                expected="an xarray.DataArray of precipitation (mm per step)",
                fix="select the precipitation variable of the Dataset",
            )
        check_precip(da, func)
    return dict(datasets)


def _month_labels(time: xr.DataArray) -> pd.DatetimeIndex:
    """Standard-calendar month starts for any calendar's time coordinate."""
    frame = pd.DataFrame({"year": time.dt.year.values, "month": time.dt.month.values, "day": 1})
    return pd.DatetimeIndex(pd.to_datetime(frame))


def _complete_years(da: xr.DataArray) -> set[int]:
    """Years whose 12 months the time axis fully covers (from coordinates only)."""
    cov = month_coverage(da, da.attrs["step"])
    years = cov["time"].dt.year.values[cov.values]
    uniq, count = np.unique(years, return_counts=True)
    return set(uniq[count == 12].tolist())


def _calendar(da: xr.DataArray) -> str:
    try:
        return str(da["time"].dt.calendar)
    except (AttributeError, TypeError):  # pragma: no cover - very old xarray
        return "standard"


def _grid_key(obj: xr.DataArray | xr.Dataset) -> tuple[Any, ...]:
    """Centres and bounds of a rectilinear grid (for 'already on this grid' checks)."""
    from ..geo.grid import cell_bounds

    b = cell_bounds(obj)
    if b.kind != "rectilinear":
        return ("curvilinear", id(obj))
    return tuple(
        np.round(np.asarray(v, dtype=float), 9).tobytes()
        for v in (obj["lat"].values, obj["lon"].values, b.lat_lower, b.lat_upper, b.lon_lower, b.lon_upper)
    )


def _pick_grid(products: dict[str, xr.DataArray], grid: Any) -> Any:
    """The target grid: None -> shared grid or the coarsest rectilinear product."""
    from ..geo.grid import is_curvilinear

    if grid is None:
        keys = {_grid_key(da) for da in products.values()}
        if len(keys) == 1:
            return None
        rect = {n: da for n, da in products.items() if not is_curvilinear(da)}
        if not rect:
            raise GridError(
                "every product is on a curvilinear grid",
                source="align",
                expected="a rectilinear target grid",
                fix="pass grid=<a DataArray on a regular lat/lon grid>",
            )
        name = min(rect, key=lambda n: rect[n].sizes["lat"] * rect[n].sizes["lon"])
        return rect[name]
    if isinstance(grid, str):
        if grid not in products:
            raise ParameterError(
                f"grid={grid!r} is not one of the products",
                source="align",
                expected=" or ".join(repr(n) for n in products),
                fix="name a product, pass a DataArray, or leave grid=None",
            )
        if is_curvilinear(products[grid]):
            raise GridError(
                f"product {grid!r} is on a curvilinear grid",
                source="align",
                expected="a rectilinear target grid",
                fix="pass grid=<a DataArray on a regular lat/lon grid>",
            )
        return products[grid]
    return grid


def _common_months(
    products: dict[str, xr.DataArray], period: Any, func: str
) -> tuple[dict[str, xr.DataArray], tuple[int, int]]:
    """Monthly totals of every product on standard month starts over the common complete
    years (or ``period``, which must lie inside them); returns (dict, (first, last))."""
    from .totals import monthly_totals

    years = {n: _complete_years(da) for n, da in products.items()}
    common = set.intersection(*years.values())
    spans = "; ".join(f"{n}: {min(y)}-{max(y)}" if y else f"{n}: none" for n, y in years.items())
    if not common:
        raise MismatchError(
            "the products share no complete year (disjoint periods)",
            source=func,
            expected="at least one calendar year fully covered by every product",
            fix=f"choose products that overlap in time (complete years {spans})",
        )
    if period is not None:
        try:
            first, last = (int(v) for v in period)
        except (TypeError, ValueError):
            raise ParameterError(
                f"period={period!r} is not a pair of years",
                source=func,
                expected="(first_year, last_year)",
                fix="e.g. period=(1991, 2020)",
            ) from None
        wanted = set(range(first, last + 1))
        if first > last or not wanted <= common:
            raise MismatchError(
                f"period {first}-{last} is not covered by every product",
                source=func,
                expected=f"years within the common complete years {min(common)}-{max(common)}",
                fix=f"choose a period inside the common years ({spans})",
            )
        common = wanted
    out = {}
    for name, da in products.items():
        monthly = monthly_totals(da)
        labels = _month_labels(monthly["time"])
        keep = np.flatnonzero(np.isin(labels.year, sorted(common)))
        out[name] = monthly.isel(time=keep).assign_coords(time=labels[keep])
    return out, (min(common), max(common))


def align(
    datasets: dict[str, xr.DataArray],
    grid: Any = None,
    period: Any = None,
    method: str = "conservative",
    **regrid_kwargs: Any,
) -> dict[str, xr.DataArray]:
    """Bring several precipitation products to a common period, time index and grid.

    Parameters
    ----------
    datasets
        ``{name: DataArray}`` of precipitation depth per step (mm), any step and calendar.
    grid
        None: keep the grid if all products share it, else regrid onto the coarsest
        rectilinear product (fewest cells: comparing at the coarsest resolution avoids
        inventing detail).  A product name: that product's grid.  A DataArray, Dataset or
        dict of 1-D lat/lon: that grid.
    period
        None: all complete years common to every product.  ``(first_year, last_year)``:
        restricted to those years, which must be common to every product.
    method, regrid_kwargs
        Passed to :func:`climwidgets.regrid` for products not on the target grid.

    Returns
    -------
    dict
        ``{name: DataArray}`` of monthly totals (mm) on the same standard-calendar month
        starts, the same years and the same grid (``attrs["period"]`` names the years,
        ``attrs["source_calendar"]`` each product's calendar).  Lazy on dask input.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``datasets`` is not a non-empty dict of DataArrays, ``period`` is not a pair of
        years or ``grid`` names no product.
    climwidgets.errors.MismatchError
        When the products share no complete year, or ``period`` is not covered by every
        product.
    climwidgets.errors.GridError
        When no rectilinear target grid can be chosen, or a grid has no usable lat/lon.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> def daily(first, last, mm):  # a 2 x 2 grid of 1-degree cells, the same depth each day
    ...     time = pd.date_range(first, last, freq="D")
    ...     return xr.DataArray(np.full((time.size, 2, 2), mm), dims=("time", "lat", "lon"),
    ...                         coords={"time": time, "lat": [0.5, 1.5], "lon": [10.5, 11.5]},
    ...                         attrs={"units": "mm", "step": "day"})
    >>> out = cw.align({"gauge": daily("2001-01-01", "2003-12-31", 1.0),
    ...                 "radar": daily("2002-01-01", "2004-12-31", 2.0)})
    >>> radar = out["radar"]
    >>> radar.attrs["period"], radar.sizes["time"], radar.isel(lat=0, lon=0).values[:3]
    ('2002-2003', 24, array([62., 56., 62.]))
    """
    from .regrid import regrid

    products = _check_products(datasets, "align")
    monthly, (first, last) = _common_months(products, period, "align")
    target = _pick_grid(products, grid)
    target_key = None if target is None or isinstance(target, dict) else _grid_key(target)

    out = {}
    for name, da in products.items():
        m = monthly[name]
        if target is not None and (target_key is None or _grid_key(da) != target_key):
            m = regrid(m, target, method=method, **regrid_kwargs)
            m.attrs.pop("history", None)  # the chain is rebuilt below from the product's own
        m.attrs.update(source_calendar=_calendar(da), period=f"{first}-{last}")
        m.name = da.name if da.name is not None else name
        out[name] = with_history(
            m,
            "align",
            da.attrs,
            product=name,
            period=(first, last),
            grid="native" if target is None else "common",
            method=method,
        )
    return out


# ---------------------------------------------------------------- compare
def _pearson(x: xr.DataArray, y: xr.DataArray, dim: str) -> xr.DataArray:
    """Pearson r of two pair-masked arrays (NaN where either has no spread)."""
    dx, dy = x - x.mean(dim), y - y.mean(dim)
    return safe_divide((dx * dy).mean(dim), np.sqrt((dx**2).mean(dim) * (dy**2).mean(dim)))  # type: ignore[arg-type]


_DESCRIPTIONS = {
    "bias": ("mm/yr", "mean annual difference other - reference; monthly input: mean monthly difference x 12"),
    "ratio": ("1", "mean of other / mean of reference"),
    "rmse": ("mm", "root-mean-square difference per time step"),
    "corr": ("1", "Pearson correlation of the totals"),
    "anomaly_corr": (
        "1",
        "Pearson correlation of monthly anomalies, each product against its "
        "own monthly climatology over the compared period",
    ),
    "kge": ("1", "Kling-Gupta efficiency"),
    "nse": (
        "1",
        "Nash-Sutcliffe efficiency, Nash & Sutcliffe (1970) J. Hydrol. 10, 282-290: "
        "1 - sum((other - reference)^2) / sum((reference - mean reference)^2)",
    ),
    "n": ("1", "number of time steps where both products have data"),
}
_KGE = {
    "2009": "Gupta, Kling, Yilmaz & Martinez (2009) J. Hydrol. 377, 80-91: "
    "1 - sqrt((r-1)^2 + (alpha-1)^2 + (beta-1)^2), alpha = sd ratio, beta = mean ratio",
    "2012": "Kling, Fuchs & Paulin (2012) J. Hydrol. 424-425, 264-277: "
    "1 - sqrt((r-1)^2 + (gamma-1)^2 + (beta-1)^2), gamma = ratio of coefficients of variation",
}


def compare(a: xr.DataArray, b: xr.DataArray, dim: str = "time", kge: str = "2009") -> xr.Dataset:
    """Agreement maps of product ``b`` against the reference ``a``.

    Both must share coordinates (use :func:`align` first).  Only time steps where both have
    data are used.  Input: monthly totals (``attrs["step"] == "month"``) or annual totals
    (``dim="year"``).

    Parameters
    ----------
    a
        The reference product: monthly totals (``attrs["step"] == "month"``) or annual
        totals (``dim="year"``), in mm.
    b
        The product compared with it, on the same coordinates and step.
    dim
        The time dimension ("time" for monthly totals, "year" for annual totals).
    kge
        The Kling-Gupta efficiency form: "2009" (Gupta et al. 2009, the ratio of standard
        deviations) or "2012" (Kling et al. 2012, the ratio of coefficients of variation).

    Returns
    -------
    xarray.Dataset
        Maps of ``bias`` (mm/yr; for monthly input the mean monthly difference × 12),
        ``ratio`` (mean b / mean a), ``rmse`` (mm per step), ``corr`` (Pearson r),
        ``anomaly_corr`` (monthly input only: Pearson r of anomalies against each
        product's own monthly climatology), ``kge``, ``nse`` and ``n`` (pairs used); NaN
        where fewer than 2 pairs.  Population (ddof = 0) spreads; the ddof cancels in the
        KGE ratios.  Lazy on dask input.

    Raises
    ------
    climwidgets.errors.ParameterError
        When an input is not a DataArray, has no ``dim``, ``kge`` is not a known form, or
        the reference is not monthly or annual totals.
    climwidgets.errors.MismatchError
        When the steps differ or the two products do not share coordinates.

    References
    ----------
    Nash, J. E. and Sutcliffe, J. V. (1970). River flow forecasting through conceptual
    models part I: a discussion of principles. Journal of Hydrology, 10(3), 282-290.
    https://doi.org/10.1016/0022-1694(70)90255-6

    Gupta, H. V., Kling, H., Yilmaz, K. K. and Martinez, G. F. (2009). Decomposition of
    the mean squared error and NSE performance criteria: implications for improving
    hydrological modelling. Journal of Hydrology, 377(1-2), 80-91.
    https://doi.org/10.1016/j.jhydrol.2009.08.003

    Kling, H., Fuchs, M. and Paulin, M. (2012). Runoff conditions in the upper Danube
    basin under an ensemble of climate change scenarios. Journal of Hydrology, 424-425,
    264-277. https://doi.org/10.1016/j.jhydrol.2012.01.011

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", periods=24, freq="MS")
    >>> ref = xr.DataArray(np.tile([50.0, 80.0, 120.0], 8), dims="time", coords={"time": time},
    ...                    attrs={"units": "mm", "step": "month"}, name="gauge")
    >>> other = (1.1 * ref).assign_attrs(ref.attrs).rename("radar")  # 10 % wetter
    >>> ds = cw.compare(ref, other)
    >>> {k: round(float(ds[k]), 3) for k in ("bias", "ratio", "corr", "kge", "nse")}
    {'bias': 100.0, 'ratio': 1.1, 'corr': 1.0, 'kge': 0.859, 'nse': 0.906}
    """
    for name, x in (("a", a), ("b", b)):
        if not isinstance(x, xr.DataArray):
            raise ParameterError(
                f"{name} is a {type(x).__name__}",
                source="compare",
                expected="an xarray.DataArray",
                fix="select one variable first",
            )
        if dim not in x.dims:
            raise ParameterError(
                f"{name} has no dimension {dim!r} (dims {tuple(x.dims)})",
                source="compare",
                expected=f"a {dim!r} dimension",
                fix="pass dim= the name of the time dimension",
            )
    kge = str(kge)
    if kge not in _KGE:
        raise ParameterError(
            f"unknown KGE form {kge!r}",
            source="compare",
            expected="'2009' (Gupta et al.) or '2012' (Kling et al.)",
            fix="use kge='2009'",
        )
    step = a.attrs.get("step")
    if dim == "year" or step == "year":
        per_year = 1.0
    elif step == "month":
        per_year = 12.0
    else:
        raise ParameterError(
            f"compare needs monthly or annual totals, the reference has step {step!r}",
            source="compare",
            expected="attrs['step'] == 'month', or dim='year'",
            fix="pass products through cw.align (monthly totals) first",
        )
    if b.attrs.get("step", step) != step:
        raise MismatchError(
            f"steps differ: {step!r} and {b.attrs.get('step')!r}",
            source="compare",
            expected="the same time step",
            fix="pass both through cw.align first",
        )
    try:
        a, b = xr.align(a, b, join="exact")
    except ValueError as err:
        raise MismatchError(
            "the two products do not share coordinates",
            source="compare",
            expected="identical time and grid coordinates",
            fix=f"pass them through cw.align first ({err})",
        ) from None

    valid = a.notnull() & b.notnull()
    a, b = a.where(valid), b.where(valid)
    n = valid.sum(dim)
    ma, mb = a.mean(dim), b.mean(dim)
    sa, sb = a.std(dim), b.std(dim)
    r = _pearson(a, b, dim)
    beta = safe_divide(mb, ma)
    spread = safe_divide(sb, sa) if kge == "2009" else safe_divide(safe_divide(sb, mb), safe_divide(sa, ma))
    sq = ((b - a) ** 2).sum(dim)
    out: dict[str, Any] = {
        "bias": (mb - ma) * per_year,
        "ratio": beta,
        "rmse": np.sqrt(safe_divide(sq, n.astype(float))),
        "corr": r,
        "kge": 1 - np.sqrt((r - 1) ** 2 + (spread - 1) ** 2 + (beta - 1) ** 2),
        "nse": 1 - safe_divide(sq, ((a - ma) ** 2).sum(dim)),
    }
    if dim == "time" and step == "month":
        months = a[dim].dt.month
        ana = a.groupby(months) - a.groupby(months).mean(dim)
        anb = b.groupby(months) - b.groupby(months).mean(dim)
        out["anomaly_corr"] = _pearson(
            ana.drop_vars("month", errors="ignore"), anb.drop_vars("month", errors="ignore"), dim
        )
    enough = n >= 2
    ds = xr.Dataset({k: v.where(enough) for k, v in out.items()})
    ds["n"] = n
    for k in ds.data_vars:
        units, text = _DESCRIPTIONS[k]  # type: ignore[index]  # the names are the str keys above
        ds[k].attrs = {"units": units, "description": text}
    ds["kge"].attrs["description"] = _KGE[kge]
    ds["kge"].attrs["kge_form"] = kge
    ds.attrs = {
        "reference": str(a.name),
        "other": str(b.name),
        "kge_form": kge,
        "convention": "bias, ratio and efficiencies are of 'other' (b) against the reference (a)",
    }
    return with_history(ds, "compare", a.attrs, dim=dim, kge=kge, reference=str(a.name), other=str(b.name))
