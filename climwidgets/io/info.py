"""A plain-text description of what the loader sees in a source (used by `climwidgets info`)."""

from __future__ import annotations

from collections.abc import Sequence
from os import PathLike

import numpy as np

from .loader import open_precip


def _fmt_time(value: object) -> str:
    text = str(value)
    return text[:19].replace("T", " ")


def describe(
    source: str | PathLike[str] | Sequence[str | PathLike[str]], var: str | None = None, scan: bool = False
) -> str:
    """A plain-text page on what :func:`~climwidgets.io.loader.open_precip` sees in a source.

    Parameters
    ----------
    source : str, os.PathLike or list
        What ``climwidgets info`` was given.
    var : str, optional
        The variable, when the file has several.
    scan : bool, default False
        Also read the data once to count missing values and the range.

    Returns
    -------
    str
        Lines "sources:", "variable:", "conversion:", "time step:", "grid:", ...

    Raises
    ------
    climwidgets.InputError
        Whatever the reader refuses.

    Examples
    --------
    >>> import os, tempfile, numpy as np, pandas as pd, xarray as xr
    >>> path = os.path.join(tempfile.mkdtemp(), "pr.nc")
    >>> xr.Dataset({"pr": (("time", "lat", "lon"), np.ones((3, 2, 2)), {"units": "mm"})},
    ...            coords={"time": pd.date_range("2001-01-01", periods=3),
    ...                    "lat": [10.0, 11.0], "lon": [0.0, 1.0]}).to_netcdf(path)
    >>> print(describe(path).splitlines()[3])
    time step:    day  calendar: standard
    """
    src = source[0] if isinstance(source, (list, tuple)) and len(source) == 1 else source
    pr = open_precip(src, var=var, validate=False)
    a = pr.attrs
    lines = [
        f"sources:      {a['sources']}",
        f"variable:     {a['original_variable']} (units '{a['original_units']}')",
        f"conversion:   {a['conversion']}",
        f"time step:    {a['step']}  calendar: {a['calendar']}",
        f"period:       {_fmt_time(pr.time.values[0])} to {_fmt_time(pr.time.values[-1])} ({pr.sizes['time']} steps)",
    ]
    if a.get("native_step"):
        lines.append(f"native step:  {a['native_step']} (summed to hourly totals)")
    for dim in (str(d) for d in pr.dims if d not in ("time", "lat", "lon", "y", "x")):
        labels = (
            ", ".join(map(str, pr[dim].values[:5])) + (" …" if pr.sizes[dim] > 5 else "") if dim in pr.coords else ""
        )
        lines.append(f"{dim + ':':<13} {pr.sizes[dim]} ({labels})" if labels else f"{dim + ':':<13} {pr.sizes[dim]}")
    if a.get("time_gaps_filled_with_missing"):
        lines.append(
            f"gaps:         {a['time_gaps_filled_with_missing']} missing time steps filled with missing values"
        )
    if "lat" in pr.dims:
        lat, lon = pr.lat.values, pr.lon.values
        dlat = float(np.median(np.diff(lat))) if lat.size > 1 else float("nan")
        dlon = float(np.median(np.diff(lon))) if lon.size > 1 else float("nan")
        lines.append(
            f"grid:         rectilinear {lat.size} x {lon.size} (lat x lon), spacing {dlat:.4g} x {dlon:.4g} deg"
        )
        lines.append(
            f"extent:       lat {pr.lat_lower.values.min():.4g}..{pr.lat_upper.values.max():.4g}, "
            f"lon {pr.lon_lower.values.min():.4g}..{pr.lon_upper.values.max():.4g}"
        )
    else:
        kind = "projected, lat/lon from the grid mapping" if "crs" in pr.coords else "2-D lat/lon"
        lines.append(f"grid:         curvilinear {pr.sizes['y']} x {pr.sizes['x']} (y x x), {kind}")
        lines.append(
            f"extent:       lat {float(pr.lat.min()):.4g}..{float(pr.lat.max()):.4g}, "
            f"lon {float(pr.lon.min()):.4g}..{float(pr.lon.max()):.4g}"
        )
    lines.append(f"cell bounds:  {a.get('cell_bounds', '?')}")
    if pr.chunks is not None:
        shape = tuple(c[0] for c in pr.chunks)
        n = int(np.prod([len(c) for c in pr.chunks]))
        lines.append(f"dask chunks:  {shape} x {n} chunks; {pr.nbytes / 1e9:.3g} GB as float64 in memory")
    if a.get("absent_chunks"):
        lines.append(f"absent:       {a['absent_chunks']}")
    if a.get("missing_value_heuristics"):
        lines.append(f"missing:      {a['missing_value_heuristics']}")
    if scan:
        from dask.base import compute as dask_compute

        total, valid, lowest, highest = dask_compute(pr.size, pr.count(), pr.min(), pr.max())  # type: ignore[no-untyped-call]
        frac = 1 - int(valid) / total
        lines.append(f"missing data: {frac:.2%} of values; range {float(lowest):.4g}..{float(highest):.4g} mm per step")
    else:
        lines.append("missing data: not counted (add --scan to read the data and count missing values)")
    return "\n".join(lines)
