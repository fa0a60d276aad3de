"""The depth-duration-frequency table as users see it (rows: durations; one basin or cell).

Built on :func:`cw.depth_duration_frequency`; labels, units and formats come from
:data:`climwidgets.analyses.meta.CATALOGUE` (``ddf_estimate``, ``ddf_lower``,
``ddf_upper``), the depth units ("mm" or "in") from the table itself.  The design-depth
cautions travel in ``attrs["cautions"]``.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from typing import Any

import pandas as pd
import xarray as xr

from ..errors import ParameterError
from .meta import describe, frame

__all__ = [
    "ddf_long_table",
    "ddf_wide_table",
    "DDF_COLUMNS",
    "basin_design_table",
    "design_depth_table",
    "design_depth_cells",
    "DESIGN_TABLE_NOTE",
]

DDF_COLUMNS = ("ddf_estimate", "ddf_lower", "ddf_upper")


def _one(ds: xr.Dataset, basin: Any = None) -> xr.Dataset:
    if "basin" in ds.dims:
        names = [str(b) for b in ds["basin"].values]
        if basin is None and len(names) == 1:
            basin = names[0]
        if basin not in names:
            raise ParameterError(
                f"basin {basin!r} is not in the table",
                source="ddf table",
                variable="basin",
                expected=f"one of {names}",
                fix="pass basin= one of those names",
            )
        return ds.sel(basin=basin)
    extra = [d for d in ds["estimate"].dims if d not in ("duration", "period")]
    if extra:
        raise ParameterError(
            f"the table has per-cell dims {extra}",
            source="ddf table",
            variable="ds",
            expected="a basin table, or one cell (select it first)",
            fix="pass basins= to cw.depth_duration_frequency, or ds.isel(lat=..., lon=...)",
        )
    return ds


def _labels(ds: xr.Dataset) -> list[str]:
    unit = str(ds.attrs.get("duration_units", "days")).rstrip("s")
    return [f"{int(d)} {unit}{'s' if int(d) > 1 else ''}" for d in ds["duration"].values]


def ddf_long_table(ds: xr.Dataset, basin: Any = None, display: bool = False) -> pd.DataFrame:
    """One row per (duration, return period): depth, lower, upper (stored, or shown).

    Parameters
    ----------
    ds : xarray.Dataset
        :func:`cw.depth_duration_frequency` (``estimate``, ``lower``, ``upper`` on duration
        and period) of basins (a ``basin`` dimension) or of one cell.
    basin : str, optional
        The basin to show; may be left out when the table has one basin or none.
    display : bool
        ``True``: columns headed and scaled as shown to a user; ``False`` (default): as stored.

    Returns
    -------
    pandas.DataFrame
        Index (duration, return period [years]); columns :data:`DDF_COLUMNS`.

    Raises
    ------
    ParameterError
        A basin not in the table, or per-cell dimensions left (several cells).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> depths = {"estimate": [[80.0, 100.0], [110.0, 140.0]],
    ...           "lower": [[70.0, 85.0], [95.0, 115.0]], "upper": [[90.0, 120.0], [125.0, 170.0]]}
    >>> ds = xr.Dataset({k: (("duration", "period"), np.array(v), {"units": "mm"})
    ...                  for k, v in depths.items()},
    ...                 coords={"duration": [1, 2], "period": [10.0, 100.0]},
    ...                 attrs={"ci": 0.9, "duration_units": "days"})
    >>> table = ddf_long_table(ds)
    >>> table.index.names, table.loc[("2 days", 100.0)].tolist()
    (FrozenList(['duration', 'return period [years]']), [140.0, 115.0, 170.0])
    """
    one = _one(ds, basin)
    units = str(one["estimate"].attrs.get("units", "mm"))
    pct = f"{float(ds.attrs.get('ci', 0.9)):.0%}" if "ci" in ds.attrs else ""
    described = (
        xr.Dataset(
            {
                "ddf_estimate": describe(one["estimate"], "ddf_estimate", units=units, display_units=units),
                "ddf_lower": describe(
                    one["lower"],
                    "ddf_lower",
                    units=units,
                    display_units=units,
                    **({"label": f"lower {pct}"} if pct else {}),
                ),
                "ddf_upper": describe(
                    one["upper"],
                    "ddf_upper",
                    units=units,
                    display_units=units,
                    **({"label": f"upper {pct}"} if pct else {}),
                ),
            }
        )
        .assign_coords(duration=("duration", _labels(one)))
        .transpose("duration", "period")
    )
    table = frame(described, index=("duration", "period"), columns=DDF_COLUMNS, display=display)
    table.index = table.index.set_names(["duration", "return period [years]"])
    return table


def ddf_wide_table(ds: xr.Dataset, basin: Any = None) -> pd.DataFrame:
    """Depths as shown: rows durations, columns return periods ("100 years"), in the table's units.

    Parameters
    ----------
    ds : xarray.Dataset
        :func:`cw.depth_duration_frequency` (``estimate``, ``lower``, ``upper`` on duration
        and period) of basins (a ``basin`` dimension) or of one cell.
    basin : str, optional
        The basin to show; may be left out when the table has one basin or none.

    Returns
    -------
    pandas.DataFrame
        The estimates, rows durations ("1 day"), columns return periods ("10 years");
        ``attrs["columns"]`` holds each column's display attributes, ``attrs["units"]``
        the depth units.

    Raises
    ------
    ParameterError
        A basin not in the table, or per-cell dimensions left (several cells).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> depths = {"estimate": [[80.0, 100.0], [110.0, 140.0]],
    ...           "lower": [[70.0, 85.0], [95.0, 115.0]], "upper": [[90.0, 120.0], [125.0, 170.0]]}
    >>> ds = xr.Dataset({k: (("duration", "period"), np.array(v), {"units": "mm"})
    ...                  for k, v in depths.items()},
    ...                 coords={"duration": [1, 2], "period": [10.0, 100.0]},
    ...                 attrs={"ci": 0.9, "duration_units": "days"})
    >>> ddf_wide_table(ds).to_dict()
    {'10 years': {'1 day': 80.0, '2 days': 110.0}, '100 years': {'1 day': 100.0, '2 days': 140.0}}
    """
    one = _one(ds, basin)
    units = str(one["estimate"].attrs.get("units", "mm"))
    est = one["estimate"].transpose("duration", "period")
    table = pd.DataFrame(
        est.values,
        index=pd.Index(_labels(one), name="duration"),
        columns=[f"{int(p)} years" for p in one["period"].values],
    )
    attrs = describe(est, "ddf_estimate", units=units, display_units=units).attrs
    table.attrs = {"columns": {c: {**attrs, "label": f"{c}"} for c in table.columns}, "units": units}
    return table


DESIGN_TABLE_NOTE = (
    "How deep a storm of each duration gets, on average once in N years, over the basin as a "
    "whole (the fit of the basin-mean series: areal depths, lower than point (gauge) depths). "
    "In brackets: the range the fit allows at the chosen confidence level (sampling only)."
)


def basin_design_table(
    series: xr.DataArray,
    durations: Sequence[float] | None = None,
    periods: Sequence[float] = (2, 5, 10, 25, 50, 100),
    ci: float = 0.9,
    n_boot: int = 1000,
    year_start: int = 1,
    seed: Any = 0,
) -> xr.Dataset:
    """Design depths of each basin by duration and return period, from its basin-mean series.

    Parameters
    ----------
    series : xarray.DataArray
        Basin-mean daily or hourly depths in mm on (basin, time), as from
        :func:`climwidgets.analyses.basins.basin_series` (so a widget reads each basin once).
    durations, periods, ci, n_boot, year_start, seed
        As in :func:`cw.depth_duration_frequency`.

    Returns
    -------
    xarray.Dataset
        :func:`cw.depth_duration_frequency` of the series: ``estimate``, ``lower`` and
        ``upper`` on (duration, period, basin), depths consistent across durations, with
        ``attrs["areal"]`` saying they are fits of the basin-mean series and the cautions.

    References
    ----------
    Hosking, J. R. M. (1990): L-moments: analysis and estimation of distributions using
    linear combinations of order statistics. J. R. Stat. Soc. B 52, 105–124,
    doi:10.1111/j.2517-6161.1990.tb01775.x.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> t = xr.date_range("1981-01-01", periods=20 * 365, freq="D", calendar="noleap")
    >>> rain = np.random.default_rng(0).gamma(0.5, 8.0, (1, t.size))
    >>> series = xr.DataArray(rain, dims=("basin", "time"), coords={"basin": ["west"], "time": t},
    ...                       attrs={"units": "mm", "step": "day"})
    >>> ds = basin_design_table(series, durations=[1, 2], periods=[10], n_boot=50)
    >>> depth = ds["estimate"].sel(basin="west", period=10.0)
    >>> ds.attrs["areal"], bool(depth.sel(duration=2) >= depth.sel(duration=1))
    ('fit of the basin-mean series', True)
    """
    from ..compute.ddf import depth_duration_frequency

    series = series.drop_vars([c for c in series.coords if c not in series.dims], errors="ignore")
    ds = depth_duration_frequency(
        series, durations=durations, periods=periods, ci=ci, n_boot=n_boot, seed=seed, year_start=year_start
    )
    ds.attrs.update(areal="fit of the basin-mean series", ci=float(ci), note=DESIGN_TABLE_NOTE)
    return ds


def _columns(one: xr.Dataset, pct: str) -> Iterator[tuple[str, str, Any, dict[str, str]]]:
    for p in one["period"].values:
        name = f"{int(p)} years"
        yield name, "estimate", p, {"label": name}
        yield f"{name} lower {pct}", "lower", p, {"label": f"{name} lower {pct}"}
        yield f"{name} upper {pct}", "upper", p, {"label": f"{name} upper {pct}"}


def design_depth_table(ds: xr.Dataset, basin: Any = None) -> pd.DataFrame:
    """Numbers of the design-depth table: rows durations, per return period the depth and its interval.

    Columns "10 years", "10 years lower 90%", "10 years upper 90%", ... in the table's
    units; ``attrs["columns"]`` carries their display formats (meta ``ddf_estimate``).
    This is what the CSV export holds; :func:`design_depth_cells` is what people read.

    Parameters
    ----------
    ds : xarray.Dataset
        :func:`cw.depth_duration_frequency` (``estimate``, ``lower``, ``upper`` on duration
        and period) of basins (a ``basin`` dimension) or of one cell.
    basin : str, optional
        The basin to show; may be left out when the table has one basin or none.

    Returns
    -------
    pandas.DataFrame
        Rows durations; per return period the depth and the bounds of its interval.

    Raises
    ------
    ParameterError
        A basin not in the table, or per-cell dimensions left (several cells).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> depths = {"estimate": [[80.0, 100.0], [110.0, 140.0]],
    ...           "lower": [[70.0, 85.0], [95.0, 115.0]], "upper": [[90.0, 120.0], [125.0, 170.0]]}
    >>> ds = xr.Dataset({k: (("duration", "period"), np.array(v), {"units": "mm"})
    ...                  for k, v in depths.items()},
    ...                 coords={"duration": [1, 2], "period": [10.0, 100.0]},
    ...                 attrs={"ci": 0.9, "duration_units": "days"})
    >>> design_depth_table(ds).columns.tolist()[:3]
    ['10 years', '10 years lower 90%', '10 years upper 90%']
    """
    one = _one(ds, basin)
    units = str(one["estimate"].attrs.get("units", "mm"))
    pct = f"{float(ds.attrs.get('ci', 0.9)):.0%}"
    data, described = {}, {}
    for name, var, p, over in _columns(one, pct):
        da = one[var].sel(period=p).transpose("duration")
        data[name] = da.values
        described[name] = describe(da, "ddf_estimate", units=units, display_units=units, **over).attrs
    table = pd.DataFrame(data, index=pd.Index(_labels(one), name="duration"))
    table.attrs = {"columns": described, "units": units}
    return table


def design_depth_cells(table: pd.DataFrame) -> pd.DataFrame:
    """The table of :func:`design_depth_table` as people read it: one cell 'depth (lower–upper)' per period.

    Parameters
    ----------
    table : pandas.DataFrame
        A result of :func:`design_depth_table` (its ``attrs`` give formats and units).

    Returns
    -------
    pandas.DataFrame
        Text cells, rows durations, one column per return period ("10 years [mm]").

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> depths = {"estimate": [[80.0, 100.0], [110.0, 140.0]],
    ...           "lower": [[70.0, 85.0], [95.0, 115.0]], "upper": [[90.0, 120.0], [125.0, 170.0]]}
    >>> ds = xr.Dataset({k: (("duration", "period"), np.array(v), {"units": "mm"})
    ...                  for k, v in depths.items()},
    ...                 coords={"duration": [1, 2], "period": [10.0, 100.0]},
    ...                 attrs={"ci": 0.9, "duration_units": "days"})
    >>> design_depth_cells(design_depth_table(ds)).loc["1 day"].tolist()
    ['80.0 (70.0–90.0)', '100.0 (85.0–120.0)']
    """
    from .meta import format_cell

    cols = table.attrs.get("columns", {})
    units = table.attrs.get("units", "mm")
    periods = [c for c in table.columns if c.endswith(" years")]
    out = {}
    for c in periods:
        low = next(k for k in table.columns if k.startswith(f"{c} lower"))
        up = next(k for k in table.columns if k.startswith(f"{c} upper"))
        out[f"{c} [{units}]"] = [
            f"{format_cell(e, cols.get(c, {}))} "
            f"({format_cell(a, cols.get(low, {}))}–{format_cell(b, cols.get(up, {}))})"
            for e, a, b in zip(table[c], table[low], table[up])
        ]
    cells = pd.DataFrame(out, index=table.index)
    cells.columns.name = "once in"
    return cells
