"""Marks on a map of a climate-change signal: the cells where the members do not agree.

Draws what :func:`climwidgets.analyses.scenario.signal_maps` computed; computes nothing
but the comparison of its agreement map with the level given.
"""

from __future__ import annotations

import numpy as np

__all__ = ["mark_low_agreement"]


def mark_low_agreement(ax, agreement, level: float):
    """Hatch the cells of ``agreement`` (share of members, 0–1) below ``level``; returns the artist.

    ``ax`` is a cartopy GeoAxes; the cells are outlined from the grid's cell bounds
    (:func:`climwidgets.geo.grid.cell_bounds`), so a coarse model cell is hatched whole.
    Cells without a value are left as they are.  Returns None when no cell is below the level.
    """
    from .maps import _ccrs, _edges

    values = np.asarray(agreement.values, dtype=float)
    low = np.isfinite(values) & (values < level)
    if not low.any():
        return None
    lon_e, lat_e = _edges(agreement)
    marks = ax.pcolor(
        lon_e, lat_e, np.ma.masked_where(~low, np.ones_like(values)), transform=_ccrs().PlateCarree(), zorder=1.5
    )  # above the colours, under the basin outlines and names
    marks.set_facecolor("none")  # only the hatching: the colours of the change show through
    marks.set_edgecolor("0.2")
    marks.set_linewidth(0.0)
    marks.set_hatch("...")
    return marks
