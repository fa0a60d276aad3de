"""The depth-duration-frequency table as users see it (rows: durations; one basin or cell).

Built on :func:`cw.depth_duration_frequency`; labels, units and formats come from
:data:`climwidgets.analyses.meta.CATALOGUE` (``ddf_estimate``, ``ddf_lower``,
``ddf_upper``), the depth units ("mm" or "in") from the table itself.  The design-depth
cautions travel in ``attrs["cautions"]``.
"""

from __future__ import annotations

import pandas as pd
import xarray as xr

from ..errors import ParameterError
from .meta import describe, frame

__all__ = ["ddf_long_table", "ddf_wide_table", "DDF_COLUMNS"]

DDF_COLUMNS = ("ddf_estimate", "ddf_lower", "ddf_upper")


def _one(ds: xr.Dataset, basin=None) -> xr.Dataset:
    if "basin" in ds.dims:
        names = [str(b) for b in ds["basin"].values]
        if basin is None and len(names) == 1:
            basin = names[0]
        if basin not in names:
            raise ParameterError(f"basin {basin!r} is not in the table", source="ddf table", variable="basin",
                                 expected=f"one of {names}", fix="pass basin= one of those names")
        return ds.sel(basin=basin)
    extra = [d for d in ds["estimate"].dims if d not in ("duration", "period")]
    if extra:
        raise ParameterError(f"the table has per-cell dims {extra}", source="ddf table", variable="ds",
                             expected="a basin table, or one cell (select it first)",
                             fix="pass basins= to cw.depth_duration_frequency, or ds.isel(lat=..., lon=...)")
    return ds


def _labels(ds: xr.Dataset) -> list[str]:
    unit = str(ds.attrs.get("duration_units", "days")).rstrip("s")
    return [f"{int(d)} {unit}{'s' if int(d) > 1 else ''}" for d in ds["duration"].values]


def ddf_long_table(ds: xr.Dataset, basin=None, display: bool = False) -> pd.DataFrame:
    """One row per (duration, return period): depth, lower, upper (stored, or shown)."""
    one = _one(ds, basin)
    units = str(one["estimate"].attrs.get("units", "mm"))
    pct = f"{float(ds.attrs.get('ci', 0.9)):.0%}" if "ci" in ds.attrs else ""
    described = xr.Dataset({
        "ddf_estimate": describe(one["estimate"], "ddf_estimate", units=units, display_units=units),
        "ddf_lower": describe(one["lower"], "ddf_lower", units=units, display_units=units,
                              **({"label": f"lower {pct}"} if pct else {})),
        "ddf_upper": describe(one["upper"], "ddf_upper", units=units, display_units=units,
                              **({"label": f"upper {pct}"} if pct else {})),
    }).assign_coords(duration=("duration", _labels(one))).transpose("duration", "period")
    table = frame(described, index=("duration", "period"), columns=DDF_COLUMNS, display=display)
    table.index = table.index.set_names(["duration", "return period [years]"])
    return table


def ddf_wide_table(ds: xr.Dataset, basin=None) -> pd.DataFrame:
    """Depths as shown: rows durations, columns return periods ("100 years"), in the table's units."""
    one = _one(ds, basin)
    units = str(one["estimate"].attrs.get("units", "mm"))
    est = one["estimate"].transpose("duration", "period")
    table = pd.DataFrame(est.values, index=pd.Index(_labels(one), name="duration"),
                         columns=[f"{int(p)} years" for p in one["period"].values])
    attrs = describe(est, "ddf_estimate", units=units, display_units=units).attrs
    table.attrs = {"columns": {c: {**attrs, "label": f"{c}"} for c in table.columns}, "units": units}
    return table
