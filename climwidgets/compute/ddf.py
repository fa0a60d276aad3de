"""Depth-duration-frequency (DDF) tables: T-year depths for many durations, per cell or basin.

Method
------
For each duration: the annual maxima of running totals over that many steps
(:func:`~climwidgets.compute.extremes.annual_maxima`, same rules for windows, years and
completeness), a GEV fit by L-moments and return levels with parametric-bootstrap
intervals (:func:`~climwidgets.compute.gev.return_levels`).  The same seed serves every
duration, so the intervals of neighbouring durations share their random draws.

No crossing curves:

* in return period, by construction: each duration's GEV quantile rises with T, and the
  bootstrap bounds are percentiles of replicate curves that each rise with T;
* in duration, by a running (cumulative) maximum along duration of ``estimate``,
  ``lower`` and ``upper`` separately: a longer window can never hold less water than a
  shorter one inside it, so a fitted depth below that of a shorter duration is raised to
  it.  The running maximum keeps the order in T and ``lower <= estimate <= upper``.  The
  variable ``adjusted`` marks the raised estimates.

Basins: ``areal="series"`` (default) fits the basin-mean series
(:func:`~climwidgets.geo.aggregate.basin_mean` of every step), the areal depth itself;
``areal="arf"`` averages the cells' point DDF over the basin and multiplies by the fixed-
area reduction factor of :mod:`~climwidgets.compute.arf` for the basin's area.
"""

from __future__ import annotations

import numbers
import warnings
from typing import Any

import numpy as np
import pandas as pd
import xarray as xr

from ..errors import ParameterError, TimeAxisError
from ..geo.aggregate import basin_mean, basin_means, basin_weights
from ..provenance import with_history
from ._time import precip_mm, source_name
from .arf import ARF_SOURCE, ARFExtrapolationWarning, areal_reduction_factor
from .depth_units import check_depth_units, convert_depth
from .extremes import DEFAULT_MIN_VALID_FRACTION, annual_maxima_window
from .gev import return_levels
from .warming import DESIGN_DEPTH_CAUTIONS

__all__ = ["DDF_DAY_DURATIONS", "DDF_HOUR_DURATIONS", "depth_duration_frequency"]

DDF_HOUR_DURATIONS = (1, 2, 3, 6, 12, 24, 48, 72)
DDF_DAY_DURATIONS = tuple(range(1, 11))
_AREAL = ("series", "arf")
CONSISTENCY_METHOD = (
    "running maximum along duration of estimate, lower and upper; "
    "monotonic in return period by construction of the GEV quantile"
)


def _check_durations(durations: Any, step: str, src: str) -> tuple[int, ...]:
    unit = "hour" if step == "hour" else "day"
    if durations is None:
        return DDF_HOUR_DURATIONS if step == "hour" else DDF_DAY_DURATIONS
    try:
        items = tuple(durations)
    except TypeError:
        items = (durations,)
    fix = f"pass whole numbers of {unit}s, e.g. durations={DDF_HOUR_DURATIONS if step == 'hour' else (1, 2, 3, 5)}"
    limit = 24 * 31 if step == "hour" else 31
    if not items:
        raise ParameterError(
            "durations is empty", source=src, variable="durations", expected=f"whole numbers of {unit}s", fix=fix
        )
    for d in items:
        if isinstance(d, bool) or not isinstance(d, (int, np.integer)) or not 1 <= d <= limit:
            raise ParameterError(
                f"duration {d!r} is not allowed for {unit}ly data",
                source=src,
                variable="durations",
                expected=f"whole numbers of {unit}s from 1 to {limit}",
                fix=fix,
            )
    if len(set(items)) != len(items):
        raise ParameterError(
            f"durations={items} repeats a duration",
            source=src,
            variable="durations",
            expected="each duration once",
            fix=fix,
        )
    return tuple(sorted(int(d) for d in items))


def _basin_list(basins: Any) -> list[Any] | None:
    if basins is None:
        return None
    if isinstance(basins, dict):
        items = list(basins.values())
    elif hasattr(basins, "geometry"):
        items = [basins]
    else:
        items = list(basins)
    names = [getattr(b, "name", None) for b in items]
    if not items or any(not hasattr(b, "geometry") for b in items):
        raise ParameterError(
            "basins must be Basin objects",
            variable="basins",
            expected="a Basin, a list of Basins or a dict of Basins",
            fix="build basins with climwidgets.Basin.from_geojson or Basin.from_vertices",
        )
    if len(set(names)) != len(names):
        raise ParameterError(
            f"basin names repeat: {names}",
            variable="basins",
            expected="one name per basin",
            fix="give every basin its own name",
        )
    return items


def _running_max(x: np.ndarray) -> np.ndarray:
    """Running maximum along the last axis; NaN stays NaN and does not block later values."""
    acc = np.fmax.accumulate(x, axis=-1)
    return np.where(np.isnan(x), np.nan, acc)


def _table(
    series: xr.DataArray,
    durations: tuple[int, ...],
    step: str,
    periods: Any,
    ci: float,
    n_boot: int,
    seed: Any,
    year_start: int,
    min_valid_fraction: float,
    min_years: int,
) -> xr.Dataset:
    """Per-duration maxima and return levels, made consistent across durations."""
    maxima, levels = [], []
    for d in durations:  # a handful of durations, each vectorised over cells; d steps each
        am = annual_maxima_window(series, d, f"{d} {step}", year_start, min_valid_fraction)
        maxima.append(am)
        levels.append(return_levels(am, periods=periods, ci=ci, n_boot=n_boot, seed=seed, min_years=min_years))
    dim = pd.Index(np.asarray(durations, dtype=int), name="duration")
    am = xr.concat(maxima, dim=dim, coords="minimal", compat="override", join="outer")
    rl = xr.concat(
        [r[["estimate", "lower", "upper", "loc", "scale", "shape"]] for r in levels],
        dim=dim,
        coords="minimal",
        compat="override",
    )
    raw = rl["estimate"]
    consistent = {}
    for v in ("estimate", "lower", "upper"):
        x = rl[v].chunk({"duration": -1}) if rl[v].chunks is not None else rl[v]
        consistent[v] = xr.apply_ufunc(
            _running_max,
            x,
            input_core_dims=[["duration"]],
            output_core_dims=[["duration"]],
            dask="parallelized",
            output_dtypes=[float],
        ).transpose(*rl[v].dims)
    ds = xr.Dataset(
        {
            **consistent,
            "adjusted": consistent["estimate"] > raw,
            "loc": rl["loc"],
            "scale": rl["scale"],
            "shape": rl["shape"],
            "annual_max": am,
        }
    )
    ds.attrs = {k: v for k, v in levels[0].attrs.items() if k not in ("history", "duration")}
    for v in ("estimate", "lower", "upper"):
        ds[v].attrs = dict(levels[0][v].attrs)
    ds["adjusted"].attrs = {"units": "1", "long_name": "estimate raised to that of a shorter duration"}
    ds["annual_max"].attrs = {"units": "mm", "long_name": "annual maximum of running totals"}
    for v in ("loc", "scale", "shape"):
        ds[v].attrs = dict(levels[0][v].attrs)
    return ds


def depth_duration_frequency(
    pr: xr.DataArray,
    durations: Any = None,
    periods: Any = (2, 5, 10, 25, 50, 100),
    ci: float = 0.9,
    basins: Any = None,
    areal: str = "series",
    units: str = "mm",
    n_boot: int = 1000,
    seed: Any = 0,
    year_start: int = 1,
    min_valid_fraction: float = DEFAULT_MIN_VALID_FRACTION,
    min_years: int = 10,
) -> xr.Dataset:
    """Depth-duration-frequency table: T-year depths by duration and return period.

    Parameters
    ----------
    pr
        Precipitation depth per step (mm), hourly or daily, dims ``time`` plus spatial dims,
        numpy- or dask-backed, no gaps in the time axis (missing steps as NaN).
    durations
        Whole numbers of steps' units: hours for hourly data (default 1, 2, 3, 6, 12, 24,
        48, 72), days for daily data (default 1 to 10).
    periods
        Return periods in years (each > 1).
    ci
        Confidence level of the bootstrap interval (``lower``, ``upper``).
    basins
        None (a table per cell), or a Basin, a list or a dict of Basins (a table per basin,
        dim ``basin``).
    areal
        With basins: ``"series"`` fits the basin-mean series (areal depths directly);
        ``"arf"`` averages the point (cell) tables over the basin and applies the fixed-
        area reduction factor (TP-29 curves, Leclerc & Schaake 1972) for the basin's area.
    units
        ``"mm"`` or ``"in"`` (exactly 25.4 mm) for the depths in the result.
    n_boot, seed, min_years
        As in :func:`~climwidgets.compute.gev.return_levels`.
    year_start, min_valid_fraction
        As in :func:`~climwidgets.compute.extremes.annual_maxima`.

    Returns
    -------
    xarray.Dataset
        ``estimate``, ``lower``, ``upper`` over (``duration``, ``period``, cells or
        ``basin``), ``adjusted`` (estimates raised for consistency), the per-duration GEV
        ``loc``, ``scale``, ``shape`` and the ``annual_max`` series; with ``areal="arf"``
        also ``areal_reduction_factor`` and ``basin_area_km2``.  ``attrs["cautions"]``
        holds the design-depth cautions.

    Raises
    ------
    climwidgets.errors.ParameterError
        Bad durations, areal choice, units, basins or fit settings.
    climwidgets.errors.TimeAxisError
        Monthly data, or gaps in the time axis.

    References
    ----------
    Hosking, J. R. M. & Wallis, J. R. (1997) Regional Frequency Analysis: An Approach Based
    on L-Moments. Cambridge University Press. doi:10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2020-12-31", freq="D")
    >>> rng = np.random.default_rng(0)  # 20 years of invented daily rain at one point
    >>> pr = xr.DataArray(rng.gamma(0.5, 8.0, time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})
    >>> table = cw.depth_duration_frequency(pr, durations=(1, 2, 3), periods=(2, 10, 100),
    ...                                     n_boot=50)
    >>> table["estimate"].values.round(1)  # rows: 1, 2, 3 days; columns: 2, 10, 100 years
    array([[41.7, 56.1, 71.2],
           [48.4, 64.3, 81.3],
           [57.3, 72.7, 84.5]])
    """
    pr, step = precip_mm(pr, "depth_duration_frequency")
    src = source_name(pr)
    if step == "month":
        raise TimeAxisError(
            "monthly totals cannot give depth-duration-frequency tables",
            source=src,
            variable=pr.name,
            expected="hourly or daily depths",
            fix="use hourly or daily data",
        )
    durs = _check_durations(durations, step, src)
    check_depth_units(units)
    if areal not in _AREAL:
        raise ParameterError(
            f"areal={areal!r} is not offered",
            variable="areal",
            expected="'series' (fit the basin-mean series) or 'arf' (point depths x ARF)",
            fix="pass areal='series' or areal='arf'",
        )
    if not isinstance(n_boot, numbers.Integral):
        raise ParameterError(
            f"n_boot={n_boot!r} is not a whole number",
            variable="n_boot",
            expected="an integer of at least 50",
            fix="use n_boot=1000",
        )
    items = _basin_list(basins)
    fit = dict(
        durations=durs,
        step=step,
        periods=periods,
        ci=ci,
        n_boot=n_boot,
        seed=seed,
        year_start=year_start,
        min_valid_fraction=min_valid_fraction,
        min_years=min_years,
    )
    hours = np.asarray(durs, dtype=float) * (1 if step == "hour" else 24)

    if items is None:
        ds = _table(pr, **fit)
    elif areal == "series":
        # every basin from one selection and one weighted sum: one read for all basins
        series = basin_means(pr, items).drop_vars("covered_fraction", errors="ignore")
        series = series.assign_coords(basin=("basin", np.array([b.name for b in items])))
        ds = _table(series, **fit)
    else:
        ds = _arf_tables(pr, items, fit, hours)
    ds = ds.assign_coords(duration_hours=("duration", hours, {"units": "hours"}))
    ds["duration"].attrs.update(units=f"{step}s", long_name="duration of the running total")
    ds.attrs.update(
        cautions=DESIGN_DEPTH_CAUTIONS,
        duration_units=f"{step}s",
        consistency=CONSISTENCY_METHOD,
        areal="none (per cell)"
        if items is None
        else ("fit of the basin-mean series" if areal == "series" else f"mean point depth x ARF: {ARF_SOURCE}"),
    )
    ds = convert_depth(ds, units)
    return with_history(
        ds,
        "depth_duration_frequency",
        pr.attrs,
        durations=durs,
        periods=tuple(np.atleast_1d(periods).tolist()),
        ci=ci,
        basins=None if items is None else tuple(b.name for b in items),
        areal=areal,
        units=units,
        n_boot=n_boot,
        seed=seed,
        year_start=year_start,
        min_valid_fraction=min_valid_fraction,
        min_years=min_years,
    )


def _arf_tables(pr: xr.DataArray, items: list[Any], fit: dict[str, Any], hours: np.ndarray) -> xr.Dataset:
    """Point tables on each basin's cells, averaged over the basin, times the ARF."""
    tables = []
    for b in items:  # a few basins; each table is vectorised over its cells
        isel, _ = basin_weights(b, pr)
        point = _table(pr.isel(isel), **fit)
        area_km2 = float(b.area_m2) / 1e6
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ARFExtrapolationWarning)
            arf = areal_reduction_factor(
                xr.DataArray(hours, dims="duration", coords={"duration": point["duration"]}), area_km2
            )
        for w in caught:
            warnings.warn(f"basin {b.name!r}: {w.message}", ARFExtrapolationWarning, stacklevel=3)
        mean = {
            v: basin_mean(point[v], b).drop_vars("covered_fraction", errors="ignore") * arf
            for v in ("estimate", "lower", "upper")
        }
        one = xr.Dataset(mean)
        for v in mean:
            one[v].attrs = dict(point[v].attrs)
        one["areal_reduction_factor"] = arf.drop_vars([c for c in arf.coords if c != "duration"])
        one["basin_area_km2"] = xr.DataArray(area_km2, attrs={"units": "km2", "long_name": "basin area (geodesic)"})
        one["point_adjusted_cells"] = point["adjusted"].sum(
            [d for d in point["adjusted"].dims if d not in ("duration", "period")]
        )
        one["point_adjusted_cells"].attrs = {"units": "1", "long_name": "cells whose point estimate was raised"}
        one.attrs = dict(point.attrs)
        one.attrs["arf_extrapolated"] = int(arf.attrs["extrapolated"])
        tables.append(one)
    out = xr.concat(tables, dim="basin", combine_attrs="override")
    out = out.assign_coords(basin=("basin", np.array([b.name for b in items])))
    out = out.transpose("duration", "period", "basin", ...)
    out.attrs["arf_extrapolated"] = int(any(t.attrs["arf_extrapolated"] for t in tables))
    return out
