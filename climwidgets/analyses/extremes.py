"""Areal design depths: return levels of each basin's mean annual maxima, and a warming what-if.

The areal depth of a basin is the return level of the annual maxima of its area-weighted
mean series (the storm over the basin as a whole), with a parametric-bootstrap interval
(:func:`cw.return_levels`).  It is lower than point (gauge) depths of the same return
period.  :func:`warmed_depths` scales the depths by the Clausius-Clapeyron factor of
:func:`cw.warming_scaling` and names that factor in the table.
"""

from __future__ import annotations

import xarray as xr

from ..compute.extremes import annual_maxima
from ..compute.gev import return_levels
from ..compute.warming import DESIGN_DEPTH_CAUTIONS, warming_scaling
from ..geo.basinset import as_basin_list
from .basins import basin_series
from .meta import describe, frame

__all__ = ["areal_design_depths", "warmed_depths", "depth_table", "AREAL_NOTE", "DEPTH_COLUMNS"]

AREAL_NOTE = ("basin depths are areal: the return level of the basin-mean annual maxima, lower than "
              "point (gauge) depths of the same return period")
DEPTH_COLUMNS = ("areal_estimate_mm", "areal_lower_mm", "areal_upper_mm", "warming_factor")


def areal_design_depths(pr: xr.DataArray, basins, periods=(2, 10, 25, 50, 100), ci: float = 0.9,
                        n_boot: int = 1000, year_start: int = 1, seed=0, series=None,
                        **duration) -> xr.Dataset:
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
    """
    basins = as_basin_list(basins, "areal_design_depths")
    if series is None:
        series = basin_series(pr, basins)
    series = series.reset_coords("covered_fraction", drop=True) if "covered_fraction" in series.coords else series
    ams = annual_maxima(series, year_start=year_start, **(duration or {"duration_days": 1}))
    rl = return_levels(ams, periods=periods, ci=ci, n_boot=n_boot, seed=seed)
    rl = rl.rename(period="return_period").transpose("basin", "return_period")
    pct = f"{float(ci):.0%}"
    ds = xr.Dataset({
        "areal_estimate_mm": describe(rl["estimate"], "areal_estimate_mm"),
        "areal_lower_mm": describe(rl["lower"], "areal_lower_mm", label=f"lower {pct}"),
        "areal_upper_mm": describe(rl["upper"], "areal_upper_mm", label=f"upper {pct}"),
        "warming_factor": describe(xr.ones_like(rl["estimate"]), "warming_factor"),
        "n_years": describe(ams.notnull().sum("year"), "n_years"),
    })
    ds["return_period"].attrs = {"units": "years", "long_name": "return period"}
    ds.attrs = {"duration": ams.attrs.get("duration", ""), "ci": float(ci), "n_boot": int(n_boot), "seed": seed,
                "year_start": year_start, "note": AREAL_NOTE, "cautions": list(DESIGN_DEPTH_CAUTIONS),
                "interval": rl.attrs.get("interval_method", "")}
    return ds


def warmed_depths(ds: xr.Dataset, delta_t: float = 0.0, rate: float = 0.07) -> xr.Dataset:
    """``ds`` of :func:`areal_design_depths` with depths scaled for ``delta_t`` K of warming.

    The factor is that of :func:`cw.warming_scaling` ((1 + rate) ** delta_t) and is kept in
    ``warming_factor``; at ``delta_t = 0`` the numbers are unchanged.
    """
    out = warming_scaling(ds, float(delta_t), rate=float(rate))
    factor = warming_scaling(xr.DataArray(1.0, attrs={"units": "mm"}), float(delta_t), rate=float(rate))
    out["warming_factor"] = (ds["warming_factor"] * float(factor)).assign_attrs(ds["warming_factor"].attrs)
    for name in ds.data_vars:
        out[name].attrs = dict(ds[name].attrs)
    out.attrs.update(delta_t=float(delta_t), rate=float(rate))
    return out


def depth_table(ds: xr.Dataset, period=None, display: bool = False):
    """The areal-depth table: one row per basin (at ``period``) or per basin and period."""
    if period is not None:
        one = ds.sel(return_period=period)
        table = frame(one, columns=DEPTH_COLUMNS, display=display)
        return table
    table = frame(ds, index=("basin", "return_period"), columns=DEPTH_COLUMNS, display=display)
    return table


