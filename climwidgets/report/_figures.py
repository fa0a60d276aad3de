"""Figures for the HTML report, drawn off-screen and embedded as base64 PNG.

Maps reuse :func:`climwidgets.plot.maps.map_field` and the monthly-normals chart reuses
:func:`climwidgets.plot.charts.monthly_normals` (the widgets' own drawing code), so the
report and the widgets look alike.  The per-year seasonal-share panels are drawn here
(one small panel per basin, with the Sen slope line).  Figures are
``matplotlib.figure.Figure`` objects rendered by the Agg canvas: no pyplot state, no
window, nothing fetched.
"""

from __future__ import annotations

import base64
import io
import warnings

import numpy as np

__all__ = ["png_data_uri", "map_figure", "normals_figure", "share_figure", "plain_label"]

_MAX_PANELS = 8


def plain_label(text) -> str:
    """User text safe for matplotlib: '$' would start mathtext."""
    return str(text).replace("$", r"\$")


def png_data_uri(fig, dpi: int = 110) -> str:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, bbox_inches="tight", facecolor="white")
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def _safe_basins(basins):
    from ..geo.basin import Basin

    return [Basin(b.geometry, name=plain_label(b.name)) for b in basins or []]


def map_figure(field, basins=(), kind: str = "total"):
    """A map of a 2-D field with the basins outlined (coastlines only if on disk)."""
    from ..plot.maps import map_field

    # squeeze extra singleton dims only: a one-cell grid keeps its lat/lon (or y/x) to draw
    field = field.squeeze(
        [d for d in field.dims if field.sizes[d] == 1 and d not in ("lat", "lon", "y", "x")], drop=True
    )
    field.attrs = {**field.attrs, "long_name": plain_label(field.attrs.get("long_name", field.name or "value"))}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", UserWarning)  # "no coastlines on disk" is said in the caption
        fig, ax, _ = map_field(field, basins=_safe_basins(basins), kind=kind, figsize=(6.4, 4.4))
    return fig


def normals_figure(table, units: str = "mm"):
    """Monthly normals per basin (index month 1..12, one column per basin, in ``units``)."""
    from matplotlib.figure import Figure

    from ..plot.charts import monthly_normals

    fig = Figure(figsize=(6.6, 3.2))
    ax = fig.add_subplot(1, 1, 1)
    t = table.copy()
    t.columns = [plain_label(c) for c in t.columns]
    monthly_normals(t, ax=ax, units=units)
    ax.set_title("Monthly normal precipitation by basin", fontsize=10)
    fig.tight_layout()
    return fig


def share_figure(by_year, trends=None, season: str = ""):
    """Seasonal share of each year (%) per basin, one panel each, Sen slope dashed."""
    from matplotlib.figure import Figure

    trends = trends or {}
    names = list(by_year.columns)[:_MAX_PANELS]
    n = max(len(names), 1)
    fig = Figure(figsize=(6.6, 1.9 * n + 0.4))
    axes = fig.subplots(n, 1, sharex=True, squeeze=False)[:, 0]
    years = np.asarray(by_year.index, dtype=float)
    for ax, name in zip(axes, names):
        values = 100.0 * by_year[name].to_numpy(dtype=float)
        ax.plot(years, values, "o-", ms=3, lw=0.8, color="#2c7fb8", label="share of each year")
        if name in trends:
            slope, intercept, p = trends[name]
            if np.isfinite(slope) and np.isfinite(intercept):
                ax.plot(
                    years,
                    100.0 * (intercept + slope * years),
                    "--",
                    color="#d95f02",
                    lw=1.4,
                    label=f"Sen slope {1000.0 * slope:+.2g} % points per decade (Mann–Kendall p = {p:.2f})",
                )
        finite = values[np.isfinite(values)]
        if finite.size:
            mean = finite.mean()
            ax.axhline(mean, color="0.4", lw=0.7, ls=":", label=f"mean {mean:.1f} %")
        ax.set_title(plain_label(name), fontsize=9, loc="left")
        ax.set_ylabel("share [%]", fontsize=8)
        ax.grid(alpha=0.3)
        if finite.size:  # headroom so the legend sits above the points
            lo, hi = finite.min(), finite.max()
            ax.set_ylim(lo - 0.05 * (hi - lo or 1), hi + 0.45 * (hi - lo or 1))
        ax.legend(fontsize=6.5, loc="upper left", ncol=3, frameon=False)
        ax.tick_params(labelsize=7)
    axes[-1].set_xlabel("year (labelled by the year in which the 12-month year ends)", fontsize=8)
    fig.suptitle(plain_label(f"Seasonal share {season} of each year's precipitation".replace("  ", " ")), fontsize=10)
    fig.tight_layout()
    return fig
