"""Static charts shared by widgets and reports: per-year series with a trend line, and
monthly normals by basin.  Functions take ``ax=None`` and make a figure only when no axes
is given; they return the artists they drew.
"""

from __future__ import annotations

import numpy as np

__all__ = ["series_with_trend", "monthly_normals", "MONTH_LABELS"]

from ..compute._time import MONTH_NAMES as MONTH_LABELS  # noqa: E402  (the one month-name table)


def _axes(ax, figsize):
    if ax is not None:
        return ax
    from matplotlib.figure import Figure

    return Figure(figsize=figsize).add_subplot(1, 1, 1)


def _units(obj):
    return (getattr(obj, "attrs", {}) or {}).get("units", "")


def series_with_trend(series, trend=None, ax=None, label=None, scale=1.0, units=None, figsize=(5.5, 3.0)):
    """Per-year values as dots joined by a thin line, with the Sen slope line if ``trend`` given.

    Parameters
    ----------
    series : DataArray with dim ``year``
    trend : Dataset from ``cw.trend(series)`` (``slope``, ``intercept``, ``pvalue``), optional
    scale : float
        Display factor (100 to show a fraction in %); ``units`` then names the shown units.
    """
    ax = _axes(ax, figsize)
    years = np.asarray(series["year"].values, dtype=float)
    values = np.asarray(series.values, dtype=float) * scale
    units = units if units is not None else _units(series)
    artists = list(ax.plot(years, values, "o-", ms=3, lw=0.8, color="#2c7fb8", label=label or "per year"))
    if trend is not None:
        slope = float(trend["slope"]) * scale
        intercept = float(trend["intercept"]) * scale
        p = float(trend["pvalue"])
        fit = intercept + slope * years
        text = f"Sen slope {slope * 10:+.3g} {'% points' if units == '%' else units} per decade (Mann-Kendall p = {p:.2f})"
        artists += ax.plot(years, fit, "--", color="#d95f02", lw=1.5, label=text)
    ax.set_xlabel("year")
    ax.set_ylabel(f"{series.attrs.get('long_name', series.name or 'value')} [{units}]", fontsize=8)
    ax.legend(fontsize=7, loc="best")
    ax.grid(alpha=0.3)
    return artists


def monthly_normals(table, ax=None, units="mm", figsize=(5.5, 3.0)):
    """Monthly normals per basin: ``table`` is a DataFrame, index month 1..12, one column per basin."""
    ax = _axes(ax, figsize)
    artists = []
    months = np.asarray(table.index, dtype=int)
    for name in table.columns:
        artists += ax.plot(months, table[name].to_numpy(dtype=float), "o-", ms=3, lw=1.2, label=str(name))
    ax.set_xticks(range(1, 13), MONTH_LABELS, fontsize=7)
    ax.set_ylabel(f"monthly normal [{units}]", fontsize=8)
    ax.set_xlabel("month")
    if len(table.columns):
        ax.legend(fontsize=7, loc="best")
    ax.grid(alpha=0.3)
    return artists
