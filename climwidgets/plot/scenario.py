"""Marks on a map of a climate-change signal: the cells where the members do not agree.

Draws what :func:`climwidgets.analyses.scenario.signal_maps` computed; computes nothing
but the comparison of its agreement map with the level given.
"""

from __future__ import annotations

import numpy as np

__all__ = ["mark_low_agreement"]


def mark_low_agreement(ax, agreement, level: float, size: float = 16.0):
    """Dots on the cells of ``agreement`` (share of members, 0–1) below ``level``; returns the artist.

    ``ax`` is a cartopy GeoAxes; the dots are placed at the cell centres in lon/lat.
    Cells without a value get no dot.  Returns None when no cell is below the level.
    """
    from .maps import _ccrs

    values = np.asarray(agreement.values, dtype=float)
    lon, lat = np.asarray(agreement["lon"].values, dtype=float), np.asarray(agreement["lat"].values, dtype=float)
    if lon.ndim == 1 and values.ndim == 2:
        lon, lat = np.meshgrid(lon, lat) if agreement.dims[-1] == "lon" else np.meshgrid(lon, lat, indexing="ij")
    low = np.isfinite(values) & (values < level)
    if not low.any():
        return None
    return ax.scatter(lon[low], lat[low], s=size, c="0.1", marker=".", linewidths=0, transform=_ccrs().PlateCarree(),
                      zorder=5)
