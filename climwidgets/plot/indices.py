"""Chart of a precipitation index per basin and year, with each basin's Sen slope line.

Draws the Dataset of :func:`climwidgets.analyses.indices.basin_index_table`; computes
nothing (the trend line is the table's ``index_slope`` and ``index_intercept``).
"""

from __future__ import annotations

import numpy as np

__all__ = ["basin_index_chart"]


def basin_index_chart(table, figsize=(8.5, 3.2)):
    """Per-year basin values (dots) and Sen slope lines (dashed) of one index; returns the Figure.

    ``table`` is a computed basin index table (None: an empty chart).
    """
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    ax = fig.add_subplot(1, 1, 1)
    if table is not None:
        series = table["index_per_year"]
        years = np.asarray(series["year"].values, dtype=float)
        units = series.attrs.get("display_units", series.attrs.get("units", ""))
        for i, name in enumerate(table["basin"].values):
            colour = f"C{i % 10}"
            ax.plot(years, series.sel(basin=name).values, "o-", ms=3, lw=0.8, color=colour)
            label = str(name)
            if "index_slope" in table:
                slope = float(table["index_slope"].sel(basin=name))
                icpt = float(table["index_intercept"].sel(basin=name))
                p = float(table["index_pvalue"].sel(basin=name))
                if np.isfinite(slope):
                    ax.plot(years, icpt + slope * years, "--", color=colour, lw=1.2)
                    label = f"{name}: {slope * 10:+.3g} {units} per decade (p = {p:.2f})"
            ax.plot([], [], "o--", ms=3, color=colour, label=label)  # one legend entry per basin
        ax.set_ylabel(f"{table.attrs.get('index', '')} [{units}]", fontsize=8)
        if len(table["basin"]):
            ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False)
    ax.set_xlabel("year")
    ax.set_title("basin values per year; dashed: Sen slope", fontsize=8)
    ax.grid(alpha=0.3)
    fig.tight_layout()
    return fig
