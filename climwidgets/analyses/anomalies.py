"""Anomalies of a month, season or year: the field, the basin series, the table at a step.

The anomaly of a basin is the anomaly of its area-weighted mean precipitation
(:func:`.basins.basin_series` first, then :func:`cw.anomaly` or :func:`cw.spi`): the basin
is treated as one cell, so a basin value is what a gauge-like record of the basin would
give, not the mean of the cells' anomalies.  :func:`anomaly_ranking` turns the basin
series into the table shown at one step: the value, its rank from the driest, the driest
and wettest in the record and, for SPI, its class.

Every variable carries its label, units and display format (:mod:`.meta`), so the
widget, its CSV and a report show the same words.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr

from ..compute.anomaly import anomaly
from ..compute.spi import spi, spi_category
from ..errors import ParameterError
from .basins import basin_series
from .meta import describe

__all__ = [
    "ANOMALY_KINDS",
    "UNIT_WORDS",
    "anomaly_field",
    "anomaly_series",
    "basin_anomalies",
    "anomaly_ranking",
    "step_labels",
    "decimal_time",
]

#: The kinds of anomaly: plain words and the units they are shown in.
ANOMALY_KINDS = {
    "percent": ("percent of normal", "%"),
    "absolute": ("difference from normal", "mm"),
    "standardized": ("standardized anomaly", "standard deviations"),
    "spi": ("SPI", "standard deviations"),
}
#: How the stored anomaly units read on screen.
UNIT_WORDS = {"1": "standard deviations", "%": "%", "mm": "mm"}


def _check_kind(kind: str) -> None:
    if kind not in ANOMALY_KINDS:
        raise ParameterError(
            f"kind={kind!r} is not known",
            source="climwidgets.analyses.anomalies",
            variable="kind",
            expected=f"one of {sorted(ANOMALY_KINDS)}",
            fix="pass kind='percent', 'absolute', 'standardized' or 'spi'",
        )


def _label(kind: str, scale: int) -> str:
    return f"SPI, {int(scale)}-month" if kind == "spi" else ANOMALY_KINDS[kind][0]


def _anomaly(
    pr: xr.DataArray, kind: str, period: Any, months: Any, scale: int, baseline: Sequence[int]
) -> xr.DataArray:
    _check_kind(kind)
    if kind == "spi":
        return spi(pr, scale=scale, baseline=baseline)
    return anomaly(pr, baseline=baseline, kind=kind, period=period, months=months)


def anomaly_field(
    pr: xr.DataArray,
    kind: str = "percent",
    period: str = "month",
    months: Any = None,
    scale: int = 3,
    baseline: Sequence[int] = (1991, 2020),
) -> xr.DataArray:
    """The anomaly of every cell and step, with the words it is shown under (lazy).

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step (dims time, lat, lon; any units the loader accepts).
    kind : {"percent", "absolute", "standardized", "spi"}
        Percent of normal, difference from normal (mm), standardized anomaly, or SPI.
    period : {"month", "season", "year", "water_year"}
        The totals compared with their normal (ignored for SPI, which is monthly).
    months : sequence of int, optional
        The season's months for ``period="season"``.
    scale : int
        SPI accumulation in months (``kind="spi"`` only).
    baseline : (int, int)
        First and last year of the normal (or of the SPI fit).

    Returns
    -------
    xarray.DataArray
        Exactly :func:`cw.anomaly` (or :func:`cw.spi`) for these parameters, with the
        attributes ``label``, ``display_units`` and ``display_format`` added.

    References
    ----------
    WMO (2017) WMO Guidelines on the Calculation of Climate Normals, WMO-No. 1203.
    WMO (2012) Standardized Precipitation Index User Guide, WMO-No. 1090.

    Examples
    --------
    Four years of one cell whose monthly totals grow by 1 mm a month; the annual totals
    against their 2001-2004 normal:

    >>> import numpy as np, pandas as pd, xarray as xr
    >>> t = pd.date_range("2001-01-01", "2004-12-01", freq="MS")
    >>> pr = xr.DataArray(np.arange(1.0, 49.0)[:, None, None], dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": [0.5], "lon": [0.5]},
    ...                   attrs={"units": "mm", "step": "month"})
    >>> a = anomaly_field(pr, kind="absolute", period="year", baseline=(2001, 2004))
    >>> a.squeeze().values.round(1).tolist(), a.attrs["display_format"]
    ([-216.0, -72.0, 72.0, 216.0], '.1f')
    """
    out = _anomaly(pr, kind, period, months, scale, baseline)
    return out.assign_attrs(
        label=_label(kind, scale),
        display_units=ANOMALY_KINDS[kind][1],
        display_format=".1f" if kind in ("percent", "absolute") else ".2f",
    )


def anomaly_series(
    series: xr.DataArray,
    kind: str = "percent",
    period: str = "month",
    months: Any = None,
    scale: int = 3,
    baseline: Sequence[int] = (1991, 2020),
) -> xr.Dataset:
    """Anomalies of basin-mean series (basin, time): a Dataset (basin, step) (lazy).

    Parameters
    ----------
    series : xarray.DataArray
        Basin-mean precipitation with dims (basin, time), as :func:`.basins.basin_series`
        gives; its ``units`` attribute is read.
    kind, period, months, scale, baseline
        As in :func:`anomaly_field`.

    Returns
    -------
    xarray.Dataset
        ``anomaly`` (basin, time) — or (basin, year) for years and seasons — and, for SPI,
        ``spi_class`` (the WMO class of every value).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> t = pd.date_range("2001-01-01", "2004-12-01", freq="MS")
    >>> series = xr.DataArray(np.arange(1.0, 49.0)[None, :], dims=("basin", "time"),
    ...                       coords={"basin": ["square"], "time": t},
    ...                       attrs={"units": "mm", "step": "month"})
    >>> ds = anomaly_series(series, kind="percent", period="year", baseline=(2001, 2004))
    >>> ds["anomaly"].sel(basin="square").values.round(1).tolist()  # 78, 222, 366, 510 of 294 mm
    [26.5, 75.5, 124.5, 173.5]
    """
    series = series.reset_coords(drop=True)
    out = _anomaly(series, kind, period, months, scale, baseline)
    ds = xr.Dataset({"anomaly": out.assign_attrs(label=_label(kind, scale), display_units=ANOMALY_KINDS[kind][1])})
    if kind == "spi":
        ds["spi_class"] = spi_category(out)
    return ds


def basin_anomalies(
    pr: xr.DataArray,
    basins: Any,
    kind: str = "percent",
    period: str = "month",
    months: Any = None,
    scale: int = 3,
    baseline: Sequence[int] = (1991, 2020),
) -> xr.Dataset:
    """Anomalies of each basin's area-weighted mean precipitation (lazy).

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step (dims time, lat, lon).
    basins : list[Any] of Basin or BasinSet
        The basins; their means come from one weighted sum (one read for all basins).
    kind, period, months, scale, baseline
        As in :func:`anomaly_field`.

    Returns
    -------
    xarray.Dataset
        As :func:`anomaly_series`.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr, climwidgets as cw
    >>> t = pd.date_range("2001-01-01", "2004-12-01", freq="MS")
    >>> pr = xr.DataArray(np.tile(np.arange(1.0, 49.0)[:, None, None], (1, 2, 2)), dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": [0.5, 1.5], "lon": [0.5, 1.5]},
    ...                   attrs={"units": "mm", "step": "month"})
    >>> b = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="square")
    >>> ds = basin_anomalies(pr, [b], kind="absolute", period="year", baseline=(2001, 2004))
    >>> ds["anomaly"].sel(basin="square").values.round(1).tolist()
    [-216.0, -72.0, 72.0, 216.0]
    """
    series = basin_series(pr, basins)
    return anomaly_series(series, kind=kind, period=period, months=months, scale=scale, baseline=baseline)


def step_labels(da: xr.DataArray) -> list[str]:
    """Readable labels of the steps of a result: 'YYYY-MM' on a time axis, 'YYYY' on years.

    Parameters
    ----------
    da : xarray.DataArray
        A result on ``time`` or on ``year``.

    Returns
    -------
    list of str
        One label per step, in order.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> da = xr.DataArray([1.0, 2.0], dims="time",
    ...                   coords={"time": pd.to_datetime(["2010-07-01", "2010-08-01"])})
    >>> step_labels(da), step_labels(xr.DataArray([1.0], dims="year", coords={"year": [2010]}))
    (['2010-07', '2010-08'], ['2010'])
    """
    if "time" in da.dims:
        t = da["time"]
        return [f"{y:04d}-{m:02d}" for y, m in zip(t.dt.year.values, t.dt.month.values)]
    return [str(int(y)) for y in da["year"].values]


def decimal_time(da: xr.DataArray) -> np.ndarray:
    """Year + (month - 1) / 12 on a time axis (any calendar), the year itself on years.

    Parameters
    ----------
    da : xarray.DataArray
        A result on ``time`` or on ``year``.

    Returns
    -------
    numpy.ndarray
        One float per step, for a time axis of a plot or a trend.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> da = xr.DataArray([1.0, 2.0], dims="time",
    ...                   coords={"time": pd.to_datetime(["2010-01-01", "2010-07-01"])})
    >>> decimal_time(da).tolist()
    [2010.0, 2010.5]
    """
    if "time" in da.dims:
        t = da["time"]
        return t.dt.year.values + (t.dt.month.values - 1) / 12.0
    return np.asarray(da["year"].values, dtype=float)


def anomaly_ranking(series: xr.Dataset, step: str) -> xr.Dataset:
    """Where ``step`` stands in each basin's record (a Dataset over basin, in memory).

    Parameters
    ----------
    series : xarray.Dataset
        The result of :func:`basin_anomalies` or :func:`anomaly_series` (computed or lazy).
    step : str
        A step label of :func:`step_labels` ("2010-07", or "2010" for years).

    Returns
    -------
    xarray.Dataset
        Over ``basin``: ``anomaly_at_step`` (labelled with the step), ``rank_from_driest``
        (1 = the driest step of the record; ties share the driest place they hold; missing
        where the step has no value), ``steps_in_record``, ``driest_in_record``,
        ``wettest_in_record`` and, for SPI, ``spi_class``.

    Raises
    ------
    ParameterError
        If ``step`` is not a step of the series.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> series = xr.Dataset({"anomaly": (("basin", "year"), np.array([[-5.0, 10.0, -20.0, 3.0]]),
    ...                                  {"units": "%"})},
    ...                     coords={"basin": ["square"], "year": [2001, 2002, 2003, 2004]})
    >>> r = anomaly_ranking(series, "2001")
    >>> [float(r[k][0]) for k in ("anomaly_at_step", "rank_from_driest", "driest_in_record")]
    [-5.0, 2.0, -20.0]
    """
    values = series["anomaly"]
    labels = step_labels(values)
    if step not in labels:
        raise ParameterError(
            f"step {step!r} is not in the record ({labels[0]} to {labels[-1]})",
            source="anomaly_ranking",
            variable="step",
            expected="a label from step_labels()",
            fix="choose a step inside the record",
        )
    dim = "time" if "time" in values.dims else "year"
    i = labels.index(step)
    a = np.asarray(values.transpose("basin", dim).values, dtype=float)
    at = a[:, i]
    valid = np.isfinite(a)
    with np.errstate(invalid="ignore"):
        below = np.where(valid, a < at[:, None], False).sum(axis=1)
    rank = np.where(np.isfinite(at), below + 1.0, np.nan)
    with np.errstate(all="ignore"):
        driest = np.where(valid.any(axis=1), np.nanmin(np.where(valid, a, np.inf), axis=1), np.nan)
        wettest = np.where(valid.any(axis=1), np.nanmax(np.where(valid, a, -np.inf), axis=1), np.nan)
    units = values.attrs.get("units", "")
    shown = UNIT_WORDS.get(units, units)
    fmt = ".1f" if units in ("%", "mm") else ".2f"
    basin = values["basin"].values

    def var(x: Any, name: str, **attrs: Any) -> xr.DataArray:
        return describe(xr.DataArray(x, dims="basin", coords={"basin": basin}), name, **attrs)

    out = xr.Dataset(
        {
            "anomaly_at_step": var(
                at,
                "anomaly_at_step",
                label=step,
                units=units,
                display_units=shown,
                display_format=fmt,
                description=f"{values.attrs.get('label', 'anomaly')} at {step}",
            ),
            "rank_from_driest": var(rank, "rank_from_driest"),
            "steps_in_record": var(valid.sum(axis=1), "steps_in_record"),
            "driest_in_record": var(driest, "driest_in_record", units=units, display_units=shown, display_format=fmt),
            "wettest_in_record": var(
                wettest, "wettest_in_record", units=units, display_units=shown, display_format=fmt
            ),
        }
    )
    if "spi_class" in series:
        out["spi_class"] = var(
            np.asarray(series["spi_class"].transpose("basin", dim).values)[:, i].astype(str), "spi_class"
        )
    out.attrs = {"step": step, "anomaly": values.attrs.get("label", "")}
    return out
