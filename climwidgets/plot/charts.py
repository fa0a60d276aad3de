"""Static charts shared by widgets and reports: per-year series with a trend line, and
monthly normals by basin.  Functions take ``ax=None`` and make a figure only when no axes
is given; they return the artists they drew.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "series_with_trend",
    "monthly_normals",
    "design_depth_chart",
    "anomaly_chart",
    "spi_bands",
    "contrast_chart",
    "products_chart",
    "MONTH_LABELS",
]

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
        text = (
            f"Sen slope {slope * 10:+.3g} {'% points' if units == '%' else units} per decade (Mann-Kendall p = {p:.2f})"
        )
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


def design_depth_chart(table, warming=None, period=None, ci=0.9, max_panels=6, figsize=None):
    """Design depth against storm duration, one small panel per basin, one line per return period.

    ``table`` is the Dataset of :func:`climwidgets.analyses.ddf_table.basin_design_table`
    (estimate, lower, upper on duration × period × basin; None: an empty chart).  Each
    return period is one line, darker for rarer storms; its interval is drawn as thin
    whiskers at each duration, for the ``period`` chosen only (so the panels stay
    readable).  ``warming`` (ΔT, rate in %, factor) adds the scaled line of ``period``
    dashed.  Durations sit at even steps (1, 2, 3 ... days or the hour durations).
    Returns the Figure.
    """
    from matplotlib.figure import Figure

    names = [] if table is None else [str(b) for b in np.atleast_1d(table["basin"].values)][:max_panels]
    n = max(len(names), 1)
    cols = 2 if n == 4 else min(n, 3)  # four basins as two by two, not three and one
    rows = int(np.ceil(n / cols))
    fig = Figure(figsize=figsize or (3.2 * cols + 0.6, 2.4 * rows + 0.8))
    axes = [fig.add_subplot(rows, cols, i + 1) for i in range(n)]
    if table is None:
        axes[0].text(0.5, 0.5, "no basins", ha="center", va="center", transform=axes[0].transAxes)
        return fig
    durations = np.asarray(table["duration"].values)
    unit = str(table.attrs.get("duration_units", "days")).rstrip("s")
    short = {"day": "d", "hour": "h"}.get(unit, unit)
    x = np.arange(durations.size)
    periods = [int(p) for p in table["period"].values]
    shades = np.linspace(0.35, 1.0, len(periods))
    units = str(table["estimate"].attrs.get("units", "mm"))
    from matplotlib import colormaps

    cmap = colormaps["Blues"]
    for ax, name in zip(axes, names):
        one = table.sel(basin=name)
        for p, shade in zip(periods, shades):
            est = one["estimate"].sel(period=p).values
            ax.plot(
                x,
                est,
                "-",
                color=cmap(shade),
                lw=1.6 if p == period else 1.0,
                label=f"once in {p} years",
                marker="o" if p == period else None,
                ms=3,
            )
            if p == period:
                lo, hi = one["lower"].sel(period=p).values, one["upper"].sel(period=p).values
                ax.vlines(x, lo, hi, color=cmap(shade), lw=0.8, alpha=0.8)
                if warming is not None:
                    ax.plot(
                        x,
                        est * warming[2],
                        "--",
                        color="#b2182b",
                        lw=1.0,
                        label=f"+{warming[0]:g} °C at {warming[1]:g} % per °C",
                    )
        ax.set_title(name, fontsize=10)
        ax.set_xticks(x, [f"{int(d)}{short}" for d in durations], fontsize=8)
        ax.tick_params(axis="y", labelsize=8)
        ax.set_ylim(bottom=0)
        ax.grid(alpha=0.3)
    for ax in axes[::cols]:
        ax.set_ylabel(f"depth [{units}]", fontsize=9)
    for ax in axes[-cols:]:
        ax.set_xlabel(f"storm duration [{unit}s]", fontsize=9)
    handles, labels = axes[0].get_legend_handles_labels()
    fig.legend(handles, labels, loc="lower center", ncol=min(len(labels), 3), fontsize=8, frameon=False)
    note = f"whiskers: {ci:.0%} interval of the {period}-year depth" if period is not None else ""
    fig.suptitle(f"How deep a storm gets, by duration; {note}", fontsize=10)
    fig.tight_layout(rect=(0, 0.05 + 0.1 / rows, 1, 0.96))
    return fig


def spi_bands(ax):
    """Shade the SPI classes (WMO 2012, SPI User Guide, Table 1) from dry brown to wet green."""
    import matplotlib

    from ..compute.spi import SPI_CLASSES

    cmap = matplotlib.colormaps["BrBG"]
    edges = [c[0] for c in SPI_CLASSES]  # lower bounds from the top class down
    tops = [np.inf] + edges[:-1]
    n = len(SPI_CLASSES)
    for i, ((lower, name), top) in enumerate(zip(SPI_CLASSES, tops)):
        lo, hi = max(lower, -10.0), min(top, 10.0)
        colour = cmap(1.0 - (i + 0.5) / n)
        ax.axhspan(lo, hi, color=colour, alpha=0.25 if name != "near normal" else 0.08, lw=0)
        mid = {"extremely wet": 2.5, "extremely dry": -2.5}.get(name, (lo + hi) / 2)
        ax.text(
            1.005, mid, name, transform=ax.get_yaxis_transform(), fontsize=6, va="center", color="0.25", clip_on=False
        )


def anomaly_chart(series, step_index, kind, ylabel, title, figsize=(7.5, 3.0)):
    """Basin anomaly series against time, the step shown marked by a dotted line.

    ``series`` is the ``anomaly`` DataArray (basin, time or year) of
    :func:`climwidgets.analyses.anomalies.basin_anomalies`; ``kind`` its kind ("spi"
    shades the SPI classes, "percent" draws the 100 % line, others the zero line).
    Returns the Figure.
    """
    from matplotlib.figure import Figure

    from ..analyses.anomalies import decimal_time

    fig = Figure(figsize=figsize)
    ax = fig.add_subplot(1, 1, 1)
    x = decimal_time(series)
    if kind == "spi":
        spi_bands(ax)
    else:
        ax.axhline(100.0 if kind == "percent" else 0.0, color="0.3", lw=0.8)
    values = np.asarray(series.values, dtype=float)
    for name, row in zip(series["basin"].values, values):
        ax.plot(x, row, lw=1.0, label=str(name))
    ax.axvline(x[step_index], color="k", ls=":", lw=1.0)
    ax.set_ylabel(ylabel, fontsize=8)
    ax.set_xlabel("year")
    if kind in ("spi", "standardized") and np.isfinite(values).any():
        ax.set_ylim(min(-3.0, np.nanmin(values) - 0.2), max(3.0, np.nanmax(values) + 0.2))
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, loc="upper left", ncol=4)
    ax.set_title(title, fontsize=9)
    fig.tight_layout()
    return fig


_MODEL_COLOUR = "#762a83"
_SIDE_COLOURS = {"windward": "#1b7837", "leeward": "#b35806"}


def contrast_chart(observed, mean, model, elevation, gradients, figsize=(9.0, 3.4)):
    """The profile along the wind and the fit on terrain height, side by side (a Figure).

    Arguments are those of :func:`climwidgets.analyses.orographic.orographic_contrast`:
    ``observed`` (with ``distance_km`` and the band means), the mean annual total, the
    linear model's rate, the terrain and the per-side ``gradients``.
    """
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    ax_d, ax_z = fig.add_subplot(1, 2, 1), fig.add_subplot(1, 2, 2)
    dist = np.asarray(observed["distance_km"].values, dtype=float).ravel()
    obs = np.asarray(mean.values, dtype=float).ravel()
    model = np.asarray(model.values, dtype=float).ravel()
    z = np.asarray(elevation.transpose("lat", "lon").values, dtype=float).ravel()
    ok = np.isfinite(dist)
    ax_d.scatter(dist[ok], obs[ok], s=6, color="#2166ac", alpha=0.6, label="observed cells")
    _band_steps(ax_d, observed)
    ax_d.axvline(0.0, color="k", lw=0.8)
    ax_d.set_xlabel("along-wind distance from the crest [km] (< 0 windward)")
    ax_d.set_ylabel("mean annual total [mm]", fontsize=8)
    twin = ax_d.twinx()
    twin.scatter(dist[ok], model[ok], s=5, marker="x", color=_MODEL_COLOUR, alpha=0.6, label="linear model")
    twin.set_ylabel("linear model rate [mm per hour]", fontsize=8, color=_MODEL_COLOUR)
    handles = ax_d.get_legend_handles_labels()[0] + twin.get_legend_handles_labels()[0]
    ax_d.legend(handles=handles, fontsize=7, loc="upper right")
    ax_d.set_title("profile along the wind", fontsize=9)
    for side, sign in (("windward", (dist < 0) & (z > 0)), ("leeward", (dist > 0) & (z > 0))):
        ax_z.scatter(z[sign], obs[sign], s=6, color=_SIDE_COLOURS[side], alpha=0.6)
        g = gradients.get(side)
        if g is None:
            ax_z.plot([], [], color=_SIDE_COLOURS[side], label=f"{side}: too few cells for a fit")
            continue
        zz = np.linspace(np.nanmin(z[sign]), np.nanmax(z[sign]), 2)
        slope = float(g["slope"])
        ax_z.plot(
            zz,
            float(g["intercept"]) + slope / 100.0 * zz,
            color=_SIDE_COLOURS[side],
            label=f"{side}: {slope:+.0f} mm per 100 m ({float(g['lower']):+.0f} to {float(g['upper']):+.0f})",
        )
    ax_z.set_xlabel("terrain height [m]")
    ax_z.set_ylabel("mean annual total [mm]", fontsize=8)
    ax_z.legend(fontsize=7, loc="upper left")
    ax_z.set_title("against elevation (cells above 0 m)", fontsize=9)
    for ax in (ax_d, ax_z):
        ax.grid(alpha=0.3)
    fig.tight_layout()
    return fig


def _band_steps(ax, obs):
    one = "band" not in obs.dims
    for i in range(1 if one else obs.sizes["band"]):
        o = obs if one else obs.isel(band=i)
        lo, hi = float(o["band_lower_km"]), float(o["band_upper_km"])
        ax.hlines(
            float(o["windward_mean"]),
            -hi,
            -lo,
            color=_SIDE_COLOURS["windward"],
            lw=2.5,
            label="windward band mean" if i == 0 else None,
        )
        ax.hlines(
            float(o["leeward_mean"]),
            lo,
            hi,
            color=_SIDE_COLOURS["leeward"],
            lw=2.5,
            label="leeward band mean" if i == 0 else None,
        )


def products_chart(table, products, figsize=(6.5, 3.0)):
    """Mean annual total of each basin, one bar per product (a Figure).

    ``table`` is the basin table of
    :func:`climwidgets.analyses.comparison.products_basin_table` (index basin, product).
    """
    from matplotlib.figure import Figure

    basins = list(dict.fromkeys(table.index.get_level_values("basin")))
    fig = Figure(figsize=figsize)
    ax = fig.add_subplot(1, 1, 1)
    width = 0.8 / len(products)
    x = np.arange(len(basins))
    for i, name in enumerate(products):
        values = [table.loc[(b, name), "annual_mean_mm"] for b in basins]
        ax.bar(x + (i - (len(products) - 1) / 2) * width, values, width, label=str(name), color=f"C{i % 10}")
    ax.set_xticks(x, basins, fontsize=8)
    ax.set_ylabel("mean annual total [mm]", fontsize=8)
    ax.set_title(f"basin means per product, {table.attrs.get('period', '')}", fontsize=9)
    ax.legend(fontsize=7)
    ax.grid(alpha=0.3, axis="y")
    fig.tight_layout()
    return fig
