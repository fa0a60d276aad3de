"""Precipitation indices of the ETCCDI core set, per cell, lazy on dask.

Definitions follow Karl, Nicholls & Ghazi (1999, Climatic Change 42, 3-7) and Zhang et al.
(2011, WIREs Climate Change 2, 851-870); the short names are the ETCCDI ones.

Conventions (stated again in every result's attrs)
--------------------------------------------------
* Daily input only.  A wet day has at least 1 mm (``pr >= 1``), a dry day less than 1 mm.
* Periods: 12-month years starting in ``year_start`` (labelled by the calendar year in
  which they end), meteorological seasons (DJF, MAM, JJA, SON; December counts to the next
  year's DJF) or calendar months.  Periods the time axis covers only in part (the ends of a
  record) are dropped.
* Missing days: a period with any missing day is NaN for every index (the rule for sums;
  it is also the ``missing="any"`` rule of the xclim library).
* Spells (CDD, CWD) are counted within the period: a spell crossing the period boundary is
  cut there and each part counts in its own period (xclim's ``resample_before_rl=True``).
  Spells are defined for years only; they are not offered for seasons or months.
* Percentile indices (R95p, R99p, R95pTOT, R99pTOT): the 95th and 99th percentiles of the
  wet days of the base period, pooled per cell (no day-of-year window, as ETCCDI defines
  them for precipitation), by the median-unbiased estimator, type 8 of Hyndman & Fan
  (1996, The American Statistician 50, 361-365): position ``h = (n + 1/3) p + 1/3`` among
  the n sorted wet days, linear between neighbours, clamped to the smallest and largest.
  This is numpy's ``method="median_unbiased"`` and xclim's ``alpha = beta = 1/3``.
  A day counts above the percentile when its depth is strictly greater.  No bootstrap:
  Zhang et al. (2005) apply it to temperature percentile indices only.
* Rx5day: a 5-day window belongs to the period containing its last day, so the first
  windows of a year reach back into the previous one; a window with a missing day is
  skipped.

Everything is xarray arithmetic and grouped reductions (flox on dask); spells use a running
maximum along time (``np.maximum.accumulate``, dask's cumulative reduction), so time may
stay chunked.  Only the percentiles need each cell's base period in one chunk.
"""

from __future__ import annotations

import datetime as _dt
import numbers
import re
from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr

from ..errors import DataValueError, ParameterError, TimeAxisError
from ..provenance import with_history
from ._time import (
    precip_mm,
    check_year_range,
    check_year_start,
    is_dask,
    safe_divide,
    source_name,
)
from .extremes import _check_regular

__all__ = ["INDEX_NAMES", "WET_DAY_MM", "precip_indices", "wet_day_percentiles"]

WET_DAY_MM = 1.0
INDEX_NAMES = (
    "PRCPTOT",
    "SDII",
    "R10mm",
    "R20mm",
    "CDD",
    "CWD",
    "R95p",
    "R99p",
    "R95pTOT",
    "R99pTOT",
    "Rx1day",
    "Rx5day",
)
_SPELLS = ("CDD", "CWD")
_FREQS = ("year", "season", "month")
_SEASONS = ("DJF", "MAM", "JJA", "SON")
_THRESHOLD_NAME = re.compile(r"^R(\d+(?:\.\d+)?)mm$")
_PERCENTILE = {"R95p": 95, "R99p": 99, "R95pTOT": 95, "R99pTOT": 99}

_META = {
    "PRCPTOT": ("mm", "total precipitation on wet days", "sum of daily precipitation on days with at least 1 mm"),
    "SDII": (
        "mm d-1",
        "simple daily intensity index",
        "PRCPTOT divided by the number of wet days (at least 1 mm); NaN without wet days",
    ),
    "CDD": (
        "d",
        "maximum number of consecutive dry days",
        "longest run of days with less than 1 mm, counted within the period",
    ),
    "CWD": (
        "d",
        "maximum number of consecutive wet days",
        "longest run of days with at least 1 mm, counted within the period",
    ),
    "Rx1day": ("mm", "maximum 1-day precipitation", "largest daily depth in the period"),
    "Rx5day": (
        "mm",
        "maximum consecutive 5-day precipitation",
        "largest sum over 5 consecutive days; a window belongs to the period of its last day",
    ),
}


def _meta(name: str) -> tuple[str, str, str]:
    if name in _META:
        return _META[name]
    if name in _PERCENTILE and name.endswith("TOT"):
        p = _PERCENTILE[name]
        return (
            "%",
            f"contribution to PRCPTOT from days above the {p}th percentile",
            f"100 * R{p}p / PRCPTOT; NaN where PRCPTOT is 0",
        )
    if name in _PERCENTILE:
        p = _PERCENTILE[name]
        return (
            "mm",
            f"precipitation on days above the {p}th percentile",
            (
                f"sum of daily precipitation on wet days with more than the {p}th percentile of "
                "the base period's wet days"
            ),
        )
    nn = _threshold(name)
    return (
        "d",
        f"number of days with at least {nn:g} mm",
        f"count of days with daily precipitation of {nn:g} mm or more",
    )


def _threshold(name: str) -> float | None:
    m = _THRESHOLD_NAME.match(name)
    return float(m.group(1)) if m else None


def _threshold_name(value: float) -> str:
    return f"R{value:g}mm"


# ----------------------------------------------------------------------------- numpy/dask core


def _cummax_last_axis(a: Any) -> Any:
    """Running maximum along the last axis (numpy or dask, time may stay chunked)."""
    if hasattr(a, "dask"):
        from dask.array.reductions import cumreduction

        return cumreduction(
            np.maximum.accumulate,
            np.maximum,
            np.iinfo(a.dtype).min,
            a,  # type: ignore[no-untyped-call]
            axis=a.ndim - 1,
            dtype=a.dtype,
        )
    return np.maximum.accumulate(a, axis=-1)


def _longest_spell(flag: xr.DataArray, period_start: np.ndarray, label: xr.DataArray) -> xr.DataArray:
    """Longest run of True per period, runs cut at period starts.

    The running length at day t is t minus the last reset before it: a day that is not in a
    spell resets to itself; the first day of a period resets to the day before it.
    """
    nt = flag.sizes["time"]
    idx = xr.DataArray(np.arange(nt, dtype=np.int32), dims="time")
    start = xr.DataArray(period_start, dims="time")
    reset = xr.where(flag, xr.where(start, idx - 1, np.int32(-1)), idx).astype(np.int32)  # type: ignore[no-untyped-call]
    last = xr.apply_ufunc(
        _cummax_last_axis, reset, input_core_dims=[["time"]], output_core_dims=[["time"]], dask="allowed"
    )
    run = (idx - last).assign_coords(time=flag["time"])
    longest: xr.DataArray = run.groupby(label).max("time", skipna=False)
    return longest


def _quantile_type8(x: np.ndarray, probs: np.ndarray) -> np.ndarray:
    """Hyndman & Fan type 8 quantiles along the last axis, NaN left out, vectorised.

    Returns an array with a trailing axis of len(probs); rows without values give NaN.
    """
    xs = np.sort(x, axis=-1)  # NaN sort to the end
    n = np.sum(~np.isnan(xs), axis=-1)
    out = np.full(x.shape[:-1] + (len(probs),), np.nan)
    last = np.maximum(n - 1, 0)[..., None]
    for i, p in enumerate(probs):  # two probabilities, not cells
        h = (n + 1.0 / 3.0) * p + 1.0 / 3.0  # 1-based position
        j = np.clip(np.floor(h).astype(int) - 1, 0, None)[..., None]  # 0-based lower neighbour
        g = (h - np.floor(h))[..., None]
        lo = np.take_along_axis(xs, np.minimum(j, last), axis=-1)
        hi = np.take_along_axis(xs, np.minimum(j + 1, last), axis=-1)
        q = (lo + g * (hi - lo))[..., 0]
        q = np.where(h < 1, xs[..., 0], q)
        q = np.where(h >= n, np.take_along_axis(xs, last, axis=-1)[..., 0], q)
        out[..., i] = np.where(n > 0, q, np.nan)
    return out


# ----------------------------------------------------------------------------- time labels


def _labels(times: xr.DataArray, freq: str, year_start: int) -> tuple[np.ndarray, tuple[int, ...]]:
    """Integer period code per day and the first month of each period kind."""
    years = times.dt.year.values.astype(int)
    months = times.dt.month.values.astype(int)
    if freq == "year":
        code = years + (months >= year_start) if year_start > 1 else years
        return code, (year_start,)
    if freq == "month":
        return years * 12 + months - 1, tuple(range(1, 13))
    season_year = years + (months == 12)
    return season_year * 4 + (months % 12) // 3, (12, 3, 6, 9)


def _complete_codes(times: xr.DataArray, code: np.ndarray, start_months: tuple[int, ...]) -> np.ndarray:
    """Codes of periods the time axis covers completely (regular daily axis assumed)."""
    first = times.isel(time=0)
    one_day = np.timedelta64(1, "D") if np.issubdtype(times.dtype, np.datetime64) else _dt.timedelta(days=1)
    after = xr.DataArray([times.values[-1] + one_day], dims="t")
    starts_ok = int(first.dt.day) == 1 and int(first.dt.month) in start_months
    ends_ok = int(after.dt.day[0]) == 1 and int(after.dt.month[0]) in start_months
    uniq = np.unique(code)
    keep = np.ones(uniq.size, bool)
    if not starts_ok:
        keep[0] = False
    if not ends_ok:
        keep[-1] = False
    return uniq[keep]


# ----------------------------------------------------------------------------- validation


def _check_names(names: Any, thresholds: Any, freq: str, src: str) -> list[str]:
    fix = f"choose from {INDEX_NAMES} or 'R<nn>mm' such as 'R25mm'"
    if names is None:
        chosen = [n for n in INDEX_NAMES if freq == "year" or n not in _SPELLS]
    else:
        if isinstance(names, str):
            names = (names,)
        chosen = []
        for n in names:
            if not isinstance(n, str) or (n not in INDEX_NAMES and _threshold(n) is None):
                raise ParameterError(
                    f"unknown index {n!r}", source=src, variable="names", expected="ETCCDI short names", fix=fix
                )
            if n in _SPELLS and freq != "year":
                raise ParameterError(
                    f"{n} is defined for years only, not freq={freq!r}",
                    source=src,
                    variable="names",
                    expected="freq='year' for CDD and CWD",
                    fix="drop CDD/CWD from names or use freq='year'",
                )
            if n not in chosen:
                chosen.append(n)
    try:
        extra = tuple(thresholds)
    except TypeError:
        extra = (thresholds,)
    for t in extra:
        if isinstance(t, bool) or not isinstance(t, numbers.Real) or not np.isfinite(t) or t <= 0:  # type: ignore[call-overload]  # numbers.Real stubs
            raise ParameterError(
                f"threshold {t!r} is not a positive depth",
                source=src,
                variable="thresholds",
                expected="depths in mm greater than 0",
                fix="pass for example thresholds=(25, 50)",
            )
        name = _threshold_name(float(t))
        if name not in chosen:
            chosen.append(name)
    return chosen


def _check_freq(freq: str, year_start: int, src: str) -> None:
    if freq not in _FREQS:
        raise ParameterError(
            f"freq={freq!r} is not supported",
            source=src,
            variable="freq",
            expected="'year', 'season' or 'month'",
            fix="pass freq='year'",
        )
    if freq != "year" and year_start != 1:
        raise ParameterError(
            f"year_start={year_start} only applies to freq='year'",
            source=src,
            variable="year_start",
            expected="year_start=1 with seasons or months",
            fix="leave year_start at 1, or use freq='year' for water years",
        )


def _whole_time(da: xr.DataArray) -> xr.DataArray:
    """Rechunk so each cell's time axis is one chunk; spatial chunks shrink to keep memory."""
    if not is_dask(da):
        return da
    import dask

    with dask.config.set({"array.chunk-size": "32MiB"}):  # the sort makes a few copies of a chunk
        return da.chunk({d: (-1 if d == "time" else "auto") for d in da.dims})


# ----------------------------------------------------------------------------- public


def wet_day_percentiles(
    pr: xr.DataArray,
    base_period: Sequence[int] | None = (1961, 1990),
    year_start: int = 1,
    percentiles: Sequence[float] = (95, 99),
) -> xr.DataArray:
    """Percentiles of the base period's wet days (>= 1 mm) per cell, Hyndman & Fan type 8.

    See the module notes.

    Parameters
    ----------
    pr
        Daily precipitation depth (mm), as in :func:`precip_indices`.
    base_period
        (first, last) years of the base period, inside the data's complete years; None
        uses every complete year.
    year_start
        First month of the 12-month years that make the base period.
    percentiles
        The percentiles (0-100) to compute.

    Returns
    -------
    xarray.DataArray
        ``wet_day_percentile`` with a ``percentile`` dimension, units "mm"; NaN in a cell
        without wet days.  Lazy on dask input.

    Raises
    ------
    climwidgets.errors.TimeAxisError
        Not daily data.
    climwidgets.errors.ParameterError
        A base period outside the data's complete years, or a bad ``year_start``.

    References
    ----------
    Hyndman, R. J. & Fan, Y. (1996) Sample quantiles in statistical packages. The American
    Statistician 50, 361-365. doi:10.1080/00031305.1996.10473566

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> from climwidgets.compute.indices import wet_day_percentiles
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> week = [0.0, 0.0, 2.0, 12.0, 0.5, 25.0, 0.0]  # the same invented week, repeated
    >>> pr = xr.DataArray(np.resize(week, time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})
    >>> wet_day_percentiles(pr, base_period=None, percentiles=(50, 95)).values
    array([12., 25.])
    """
    pr, step = precip_mm(pr, "wet_day_percentiles")
    src = source_name(pr)
    if step != "day":
        raise TimeAxisError(
            f"the data step is {step!r}",
            source=src,
            variable=pr.name,
            expected="daily depths",
            fix="sum to days first: pr.resample(time='1D').sum(skipna=False)",
        )
    year_start = check_year_start(year_start, "wet_day_percentiles")
    code, starts = _labels(pr["time"], "year", year_start)
    complete = _complete_codes(pr["time"], code, starts)
    if base_period is None:
        first, last = int(complete.min()), int(complete.max())
    else:
        first, last = check_year_range(base_period, "precip_indices", "base_period")
        if first < complete.min() or last > complete.max():
            raise ParameterError(
                f"base_period=({first}, {last}) lies outside the data's complete years "
                f"{complete.min()}-{complete.max()}",
                source=src,
                variable="base_period",
                expected=f"years within {complete.min()}-{complete.max()}",
                fix="choose a base period inside the record, or base_period=None for the whole record",
            )
    in_base = (code >= first) & (code <= last)
    base = pr.isel(time=np.flatnonzero(in_base))
    wet = _whole_time(base.where(base >= WET_DAY_MM))
    probs = np.asarray(percentiles, dtype=float) / 100.0
    out: xr.DataArray = xr.apply_ufunc(
        _quantile_type8,
        wet,
        kwargs=dict(probs=probs),
        input_core_dims=[["time"]],
        output_core_dims=[["percentile"]],
        dask="parallelized",
        output_dtypes=[float],
        dask_gufunc_kwargs=dict(output_sizes={"percentile": probs.size}),
    )
    out = out.assign_coords(percentile=("percentile", np.asarray(percentiles, dtype=float)))
    if is_dask(pr):
        out = out.chunk({d: pr.chunksizes[d] for d in out.dims if d in pr.chunksizes})
    out = out.rename("wet_day_percentile")
    out.attrs = dict(
        units="mm",
        long_name="percentile of wet-day precipitation in the base period",
        base_period=f"{first}-{last}",
        method="Hyndman & Fan (1996) type 8 (median-unbiased)",
    )
    return out


def precip_indices(
    pr: xr.DataArray,
    names: Any = None,
    base_period: Sequence[int] | None = (1961, 1990),
    year_start: int = 1,
    freq: str = "year",
    thresholds: Any = (),
) -> xr.Dataset:
    """ETCCDI precipitation indices per cell and period.

    Parameters
    ----------
    pr
        Daily precipitation depth (mm), dims ``time`` plus spatial dims, numpy- or
        dask-backed, datetime64 or cftime time axis without gaps (missing days as NaN).
    names
        Index short names (default: all of :data:`INDEX_NAMES` that ``freq`` allows).
        ``"R<nn>mm"`` (e.g. ``"R25mm"``) asks for the count of days with at least nn mm.
    base_period
        (first, last) years for the wet-day percentiles of R95p, R99p, R95pTOT, R99pTOT
        (default 1961-1990, the ETCCDI base); ``None`` uses every complete year.
    year_start
        First month of the year for ``freq="year"`` (10 gives October-September water
        years labelled by the year in which they end).
    freq
        ``"year"`` (dim ``year``), ``"season"`` or ``"month"`` (dim ``time`` holding the
        first day of each period, with ``year`` and ``season``/``month`` coordinates).
        CDD and CWD are for years only.
    thresholds
        Extra wet-day thresholds in mm: ``thresholds=(25,)`` adds ``R25mm``.

    Returns
    -------
    xarray.Dataset
        One variable per index with ``units``, ``long_name`` and ``description``; the
        dataset attrs state the conventions (wet day, spells, percentiles, missing days).

    Raises
    ------
    climwidgets.errors.ParameterError
        Unknown index, bad frequency, threshold or base period.
    climwidgets.errors.TimeAxisError
        Not daily, or gaps in the time axis.
    climwidgets.errors.DataValueError
        Negative depths (checked on numpy-backed input).

    References
    ----------
    Karl, T. R., Nicholls, N. & Ghazi, A. (1999) CLIVAR/GCOS/WMO workshop on indices and
    indicators for climate extremes. Climatic Change 42, 3-7. doi:10.1023/A:1005491526870
    Zhang, X. et al. (2011) Indices for monitoring changes in extremes based on daily
    temperature and precipitation data. WIREs Climate Change 2, 851-870. doi:10.1002/wcc.147
    Hyndman, R. J. & Fan, Y. (1996) Sample quantiles in statistical packages. The American
    Statistician 50, 361-365. doi:10.1080/00031305.1996.10473566

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    >>> week = [0.0, 0.0, 2.0, 12.0, 0.5, 25.0, 0.0]  # the same invented week, repeated
    >>> pr = xr.DataArray(np.resize(week, time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "day"})
    >>> ds = cw.precip_indices(pr, names=("PRCPTOT", "R10mm", "CDD", "CWD", "SDII"),
    ...                        base_period=None)
    >>> {name: ds[name].values.tolist() for name in ds.data_vars}  # 2001 and 2002
    {'PRCPTOT': [2028.0, 2028.0], 'R10mm': [104.0, 104.0], 'CDD': [3.0, 3.0],
     'CWD': [2.0, 2.0], 'SDII': [13.0, 13.0]}
    """
    pr, step = precip_mm(pr, "precip_indices")
    src = source_name(pr)
    if step != "day":
        raise TimeAxisError(
            f"the data step is {step!r}; the ETCCDI indices are defined on days",
            source=src,
            variable=pr.name,
            expected="daily depths (attrs['step'] == 'day')",
            fix="sum to days first: pr.resample(time='1D').sum(skipna=False), step='day'",
        )
    year_start = check_year_start(year_start, "precip_indices")
    _check_freq(freq, year_start, src)
    chosen = _check_names(names, thresholds, freq, src)
    _check_regular(pr["time"].values, "day", src)
    if not is_dask(pr) and bool((pr < 0).any()):
        raise DataValueError(
            "negative precipitation depths",
            source=src,
            variable=pr.name,
            expected="depths >= 0 mm (missing values as NaN)",
            fix="set negative fill values to NaN before calling",
        )

    code, starts = _labels(pr["time"], freq, year_start)
    complete = _complete_codes(pr["time"], code, starts)
    if complete.size == 0:
        raise TimeAxisError(
            f"no complete {freq} on the time axis",
            source=src,
            variable=pr.name,
            expected=f"at least one fully covered {freq}",
            fix="use a longer record",
        )
    label = xr.DataArray(code, dims="time", coords={"time": pr["time"]}, name="period")
    period_start = np.r_[True, code[1:] != code[:-1]]
    data = pr.astype(float) if pr.dtype.kind != "f" else pr
    data = data.drop_vars([c for c in data.coords if c != "time" and "time" in data[c].dims])

    def by_period(x: xr.DataArray, how: str) -> Any:
        # skipna=False: the reduced values hold no NaN (masked first or masked after), and
        # the NaN-aware grouped kernels are several times slower
        kw = {"skipna": False} if how in ("sum", "max") else {}
        return getattr(x.groupby(label), how)("time", **kw)

    wet = data >= WET_DAY_MM
    out: dict[str, Any] = {}
    need_total = any(n in chosen for n in ("PRCPTOT", "SDII", "R95pTOT", "R99pTOT"))
    total: Any = by_period(data.where(wet, 0.0), "sum") if need_total else None
    if "PRCPTOT" in chosen:
        out["PRCPTOT"] = total
    if "SDII" in chosen:
        out["SDII"] = safe_divide(total, by_period(wet, "sum"))
    for n in chosen:
        nn = _threshold(n)
        if nn is not None:
            out[n] = by_period(data >= nn, "sum").astype(float)
    if "CDD" in chosen:
        out["CDD"] = _longest_spell(data < WET_DAY_MM, period_start, label).astype(float)
    if "CWD" in chosen:
        out["CWD"] = _longest_spell(wet, period_start, label).astype(float)
    wanted_p = sorted({_PERCENTILE[n] for n in chosen if n in _PERCENTILE})
    base_label = None
    if wanted_p:
        perc = wet_day_percentiles(pr, base_period, year_start if freq == "year" else 1, wanted_p)
        base_label = perc.attrs["base_period"]
        for p in wanted_p:
            thr = perc.sel(percentile=float(p), drop=True)
            amount = by_period(data.where(wet & (data > thr), 0.0), "sum").where(thr.notnull())
            if f"R{p}p" in chosen:
                out[f"R{p}p"] = amount
            if f"R{p}pTOT" in chosen:
                out[f"R{p}pTOT"] = 100.0 * safe_divide(amount, total)
    if "Rx1day" in chosen:
        out["Rx1day"] = by_period(data, "max")  # a period with a missing day is masked below
    if "Rx5day" in chosen:
        # windows reaching back over a missing day (or before the record) never win
        windows = sum(data.shift(time=j) for j in range(5)).fillna(-np.inf)  # type: ignore[union-attr]  # shifts: cheaper than rolling on dask
        out["Rx5day"] = by_period(windows, "max")

    missing = by_period(data.isnull(), "any")
    ds = xr.Dataset({n: out[n].where(~missing) for n in chosen}).sel(period=complete)
    ds = _relabel(ds, pr["time"], code, complete, freq)
    for n in chosen:
        units, long_name, description = _meta(n)
        ds[n].attrs = dict(units=units, long_name=long_name, description=description)
    year_label = (
        "calendar year"
        if year_start == 1
        else f"12-month year starting in month {year_start}, labelled by the year it ends"
    )
    ds.attrs = dict(
        indices="ETCCDI (Karl et al. 1999; Zhang et al. 2011)",
        freq=freq,
        year_start=year_start,
        year_label=year_label
        if freq == "year"
        else ("DJF, MAM, JJA, SON; December counts to the next year's DJF" if freq == "season" else "calendar month"),
        wet_day=f"daily precipitation >= {WET_DAY_MM:g} mm; dry day < {WET_DAY_MM:g} mm",
        missing_rule="a period with any missing day is NaN; periods the time axis covers only in part are dropped",
        spell_convention="spells are cut at the period boundary; each part counts in its own period",
        percentile_method=(
            "wet days of the base period pooled per cell; Hyndman & Fan (1996) type 8 "
            "(median-unbiased); above means strictly greater"
        ),
        rolling_window="Rx5day windows belong to the period of their last day",
    )
    if base_label is not None:
        ds.attrs["base_period"] = base_label
    if freq != "year" and names is None:
        ds.attrs["omitted"] = "CDD and CWD (defined for years only)"
    return with_history(
        ds, "precip_indices", pr.attrs, names=tuple(chosen), base_period=base_period, year_start=year_start, freq=freq
    )


def _relabel(ds: xr.Dataset, times: xr.DataArray, code: np.ndarray, complete: np.ndarray, freq: str) -> xr.Dataset:
    """Replace the integer period code with the house coordinates."""
    if freq == "year":
        return ds.rename(period="year").assign_coords(year=("year", complete.astype(int)))
    _, first_pos = np.unique(code, return_index=True)
    pos = first_pos[np.searchsorted(np.unique(code), complete)]
    t = times.values[pos]
    ds = ds.rename(period="time").assign_coords(time=("time", t))
    if freq == "month":
        return ds.assign_coords(year=("time", complete // 12), month=("time", complete % 12 + 1))
    return ds.assign_coords(year=("time", complete // 4), season=("time", np.asarray(_SEASONS)[complete % 4]))
