"""Small grids and basins shared by the geo tests (invented open-ocean coordinates)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr


def rect_grid(lat0, lat1, lon0, lon1, step, ntime=None, value=0.0):
    """A cell-centred rectilinear grid covering [lat0, lat1] × [lon0, lon1]."""
    lat = np.arange(lat0 + step / 2, lat1, step)
    lon = np.arange(lon0 + step / 2, lon1, step)
    if ntime is None:
        return xr.DataArray(
            np.full((lat.size, lon.size), value),
            coords={"lat": lat, "lon": lon},
            dims=("lat", "lon"),
            attrs={"units": "mm"},
        )
    time = pd.date_range("2001-01-01", periods=ntime, freq="MS")
    return xr.DataArray(
        np.full((ntime, lat.size, lon.size), value),
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        attrs={"units": "mm", "step": "month"},
    )


def rotated_grid(ny=12, nx=15, lat0=-30.0, lon0=-140.0, step=0.5, angle_deg=20.0):
    """A curvilinear grid: a rectangular mesh rotated by ``angle_deg`` in lon/lat."""
    j, i = np.mgrid[0:ny, 0:nx].astype(float)
    a = np.radians(angle_deg)
    lon = lon0 + step * (i * np.cos(a) - j * np.sin(a))
    lat = lat0 + step * (i * np.sin(a) + j * np.cos(a))
    return xr.DataArray(
        np.zeros((ny, nx)),
        dims=("y", "x"),
        coords={"lat": (("y", "x"), lat), "lon": (("y", "x"), lon)},
        attrs={"units": "mm"},
    )


def star_polygon(rng, cx, cy, r_min, r_max, n=12):
    """A random star-shaped (hence simple) ring around (cx, cy)."""
    t = np.sort(rng.uniform(0, 2 * np.pi, n))
    t = t[np.concatenate([[True], np.diff(t) > 1e-3])]
    r = rng.uniform(r_min, r_max, t.size)
    return list(zip(cx + r * np.cos(t), cy + r * np.sin(t)))
