"""IndicesWidget: ETCCDI precipitation indices as a map and a basin table.

Controls: the index, the years over which it is averaged (first, last), the threshold of
``R<nn>mm`` and the percentile base period.  The map shows the period mean of the chosen
index per cell (:func:`climwidgets.analyses.indices.index_map`); the table gives each
basin's mean, Sen slope and Mann-Kendall p (:func:`~climwidgets.analyses.indices.basin_index_table`);
the chart shows the basin values per year with their trend lines.  The per-cell indices
of all years are computed once per threshold and base period and kept, so choosing
another index or period only averages them again.
"""

from __future__ import annotations

import ipywidgets as widgets
import xarray as xr

from ..analyses.indices import basin_index_table, gridded_indices, index_map, index_table, index_trend_map
from ..analyses.meta import index_meta
from ..compute.indices import INDEX_NAMES
from ..errors import ParameterError
from ..geo.basinset import whole_grid_basin
from .base import BaseWidget
from .mapframe import MapFrame

__all__ = ["IndicesWidget"]

_SHARE = ("R95pTOT", "R99pTOT")


class IndicesWidget(BaseWidget):
    """Map and basin table of one ETCCDI precipitation index.

    Parameters
    ----------
    pr : DataArray
        Daily precipitation depth in mm (``cw.open_precip`` output).
    basins : list of Basin or a shared cw.BasinSet, optional
        Basins of the table; without them the whole grid is used.
    threshold : float, default 25
        The nn of the extra index ``R<nn>mm`` (mm).
    base_period : (first, last), optional
        Years of the wet-day percentiles (default: every complete year).
    export_dir : folder for the export buttons.
    """

    title = "Precipitation indices (ETCCDI)"
    export_stem = "precipitation_indices"
    member_whole = ("indices",)  # the per-year indices are kept per member for the next choice

    def __init__(self, pr, basins=None, threshold=25.0, base_period=None, export_dir="out"):
        step = pr.attrs.get("step") if isinstance(pr, xr.DataArray) else None
        if step != "day":
            raise ParameterError(
                f"the precipitation step is {step!r}",
                source="IndicesWidget",
                variable="pr",
                expected="daily precipitation (attrs['step'] == 'day')",
                fix="open the daily file with cw.open_precip",
            )
        self.pr = pr
        self.use_basins(basins)
        self._whole = whole_grid_basin(pr)
        self._indices = {}
        years = sorted({int(y) for y in pr["time"].dt.year.values})
        style = {"description_width": "110px"}
        lay = widgets.Layout(width="290px")
        self.index = widgets.Dropdown(
            options=self._options(float(threshold)),
            value="PRCPTOT",
            description="Index",
            style=style,
            layout=widgets.Layout(width="390px"),
        )
        self.first = widgets.BoundedIntText(
            value=years[0], min=years[0], max=years[-1], description="First year", style=style, layout=lay
        )
        self.last = widgets.BoundedIntText(
            value=years[-1], min=years[0], max=years[-1], description="Last year", style=style, layout=lay
        )
        self.threshold = widgets.BoundedFloatText(
            value=float(threshold), min=1.0, max=500.0, step=5.0, description="Threshold (mm)", style=style, layout=lay
        )
        self.layer = widgets.Dropdown(
            options=[
                ("mean over the years", "mean"),
                ("Sen slope per decade", "slope"),
                ("Mann-Kendall p of the trend", "pvalue"),
            ],
            value="mean",
            description="Map shows",
            style=style,
            layout=lay,
        )
        self.base_period = base_period
        self.about = widgets.HTML("", layout=widgets.Layout(width="390px"))
        super().__init__(map_frame=MapFrame(basins=self.basins, kind="total"), export_dir=export_dir)
        self.watch(self.index, self.first, self.last, self.threshold, self.layer)
        self.refresh()

    @staticmethod
    def _options(nn):
        name = f"R{nn:g}mm"
        return [(index_meta(n).label, n) for n in INDEX_NAMES] + [(index_meta(name).label, name)]

    # ------------------------------------------------------------ BaseWidget hooks
    def build_controls(self):
        note = widgets.HTML(
            "<small>Wet day: at least 1 mm. The threshold sets the extra index R&lt;nn&gt;mm. "
            "The map is the mean over the years chosen; "
            "a basin's value is the area-weighted mean of its cells' index.</small>",
            layout=widgets.Layout(width="390px"),
        )
        return [self.index, self.first, self.last, self.threshold, self.layer, note, self.about]

    def parameters(self):
        first, last = int(self.first.value), int(self.last.value)
        if first > last:
            raise ParameterError(
                f"the first year {first} is after the last year {last}",
                source="IndicesWidget",
                variable="years",
                expected="first year <= last year",
                fix="swap the years",
            )
        nn = float(self.threshold.value)
        name = f"R{nn:g}mm"
        if self.index.value not in INDEX_NAMES and self.index.value != name:
            with self.quiet():  # the threshold changed: offer the new R<nn>mm, keep it chosen
                self.index.options = self._options(nn)
                self.index.value = name
        elif name not in [v for _, v in self.index.options]:
            with self.quiet():
                keep = self.index.value
                self.index.options = self._options(nn)
                self.index.value = keep
        return {"name": self.index.value, "period": (first, last), "threshold": nn, "layer": self.layer.value}

    def compute(self, name, period, threshold, layer="mean"):
        key = (threshold, self.base_period)
        ind = self._indices.get(key)
        if ind is None:
            ind = gridded_indices(self.pr, base_period=self.base_period, thresholds=(threshold,))
        basins = self.basins_or_whole_grid(self._whole)
        if layer == "mean":
            field = index_map(ind, name, period)
        else:
            trends = index_trend_map(ind, name, period)
            field = trends["slope_per_decade" if layer == "slope" else "pvalue"]
        return {
            "indices": ind,
            "map": field,
            "table": basin_index_table(ind, basins, name, period) if basins else None,
            "key": key,
        }

    def finish(self, computed, params):
        self._indices = {computed["key"]: computed["indices"]}  # computed: kept for the next index or period
        return computed

    def render(self, result, params):
        name = params["name"]
        field = result["map"]
        a = field.attrs
        first, last = params["period"]
        layer = params.get("layer", "mean")
        kind = {"mean": "share" if name in _SHARE else "total", "slope": "difference", "pvalue": "share"}[layer]
        what = {"mean": "mean", "slope": "Sen slope", "pvalue": "Mann-Kendall p"}[layer]
        units = a.get("display_units", a.get("units", ""))
        self.map.show_field(
            field,
            kind=kind,
            label=f"{name} {what}" + (f" [{units}]" if units else ""),
            title=f"{index_meta(name).label}, {what} {first}-{last}",
        )
        self.about.value = f"<small>{a.get('description', '')}</small>"
        table = result["table"]
        self.show_table(None if table is None else index_table(table, display=True))
        from ..plot.indices import basin_index_chart

        self.show_chart(basin_index_chart(table))

    def _write_csv(self, path):
        from ..report.indices_section import indices_csv

        if self.result is None or self.result["table"] is None:
            return super()._write_csv(path)
        indices_csv(self.result["table"], path, overwrite=True)
