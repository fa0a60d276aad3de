"""ExtremesWidget: design depths — how deep a storm of a given duration gets once in N years.

Controls: duration (days, or hours for hourly data) and return period of the map,
confidence level, calendar or water year, bootstrap size, what the table shows, the
basin of the table, and a warming what-if (ΔT in °C and the rate in % per °C).

The first view is a table of design depths for one basin: rows are storm durations,
columns return periods, each cell the depth with its interval in brackets
(:func:`climwidgets.analyses.ddf_table.basin_design_table`, the fit of the basin-mean
series, consistent across durations).  The chart draws the same numbers as depth against
duration, one small panel per basin and one line per return period.  The table can also
show the areal depths of all basins at the chosen return period, or the point depths of
each basin at-site beside regional (index flood, :func:`cw.regional_frequency`, with H1).
The map shows the point depth of every cell, each cell's own fit (``cw.annual_maxima``
then ``cw.return_levels``) or, on request, the regional estimate with each basin pooled.
The design-depth cautions (``cw.DESIGN_DEPTH_CAUTIONS``) stay visible at the top.

``widget.levels`` is the Dataset of ``cw.return_levels`` for all return periods in
:data:`PERIODS`; ``widget.result`` is the same after ``cw.warming_scaling`` with the
chosen ΔT and rate (identical numbers at ΔT = 0); ``widget.design`` the basins' table of
design depths by duration (unwarmed), ``widget.point`` and ``widget.regional`` the point
depths and the regional map once asked for.  Changing the return period, the map layer
among the at-site ones, the table basin or the warming only redraws; the other controls
refit.  Fitting every cell with a bootstrap is the heavy part: ``n_boot`` defaults to 200
here (1000 or more for final numbers) and a progress bar runs meanwhile.
"""

from __future__ import annotations

import html

import ipywidgets as widgets
import xarray as xr

from ..analyses.basins import basin_series
from ..analyses.ddf_table import DESIGN_TABLE_NOTE, basin_design_table, design_depth_cells, design_depth_table
from ..analyses.extremes import (
    POINT_NOTE,
    areal_design_depths,
    depth_field,
    depth_table,
    point_design_depths,
    point_depth_table,
    regional_depth_field,
    regional_fit,
    warmed_depths,
    warmed_field,
    warmed_point_depths,
)
from ..cache import LRUCache
from ..compute.extremes import DAY_DURATIONS, HOUR_DURATIONS
from ..compute.warming import DESIGN_DEPTH_CAUTIONS
from ..errors import ParameterError
from ..geo.basinset import whole_grid_basin
from .base import _CSS, BaseWidget, df_to_html
from .mapframe import MapFrame

__all__ = ["ExtremesWidget", "PERIODS", "cautions_html"]

PERIODS = (2, 5, 10, 25, 50, 100)
LEVELS = (0.8, 0.9, 0.95)
AREAL_NOTE = (
    "Basin depths are areal: the return level of the basin-mean maxima. "
    "Areal depths are lower than point (gauge) depths of the same return period."
)
TABLE_KINDS = [("depths by duration", "ddf"), ("all basins, one period", "areal"), ("at-site and regional", "point")]
MAP_LAYERS = [
    ("at-site", "estimate"),
    ("at-site, lower bound", "lower"),
    ("at-site, upper bound", "upper"),
    ("regional (pooled)", "regional"),
]
N_SIM = 500  # simulated regions for the heterogeneity H1 (Hosking & Wallis 1997 use 500)


def cautions_html(cautions=DESIGN_DEPTH_CAUTIONS) -> str:
    items = "".join(f"<li>{html.escape(c)}</li>" for c in cautions)
    return (
        "<div style='border:1px solid #c9a227;background:#fff8e1;padding:4px 10px;"
        "font-size:12px;margin:4px 0'><b>Design-depth cautions</b><ul style='margin:2px 0'>"
        f"{items}</ul></div>"
    )


class ExtremesWidget(BaseWidget):
    """Return levels per cell and per basin, with intervals and a warming what-if.

    Parameters
    ----------
    pr : DataArray
        Daily or hourly precipitation depth per step in mm (dims time, lat, lon).
    basins : list of Basin or a shared cw.BasinSet, optional (changes to a shared set show here)
        Basins for the table; without them the whole grid is used.
    n_boot : int, default 200
        Bootstrap resamples for the intervals (kept modest so the widget stays quick).
    export_dir : folder for the export buttons.
    """

    title = "Design depths: how deep a storm gets once in N years"
    export_stem = "design_depths"
    member_whole = ("fresh",)
    member_state = ("design", "point", "regional")  # the basin series are kept per member (widgets/members.py)

    def __init__(self, pr, basins=None, n_boot=200, export_dir="out"):
        step = getattr(pr, "attrs", {}).get("step") if isinstance(pr, xr.DataArray) else None
        if step not in ("day", "hour"):
            raise ParameterError(
                f"the precipitation step is {step!r}",
                source="ExtremesWidget",
                variable="pr",
                expected="daily or hourly precipitation (attrs['step'] 'day' or 'hour')",
                fix="open the daily or hourly file with cw.open_precip",
            )
        self.pr = pr
        self.step_kind = step
        self.use_basins(basins)
        self._whole = whole_grid_basin(pr)
        self.levels = None
        self.basin_levels = None
        self.design = self.point = self.regional = None
        self._fits = LRUCache(maxsize=8)  # the per-cell fit, kept while the regional part is asked for
        self._pending = {}
        self._series = LRUCache(maxsize=256)
        style = {"description_width": "140px"}  # "Bootstrap samples" whole at 1400 px
        lay = widgets.Layout(width="320px")
        if step == "day":
            opts = [(f"{d} day{'s' if d > 1 else ''}", d) for d in DAY_DURATIONS]
        else:
            opts = [(f"{h} hour{'s' if h > 1 else ''}", h) for h in HOUR_DURATIONS]
        self.duration = widgets.Dropdown(
            options=opts, value=opts[0][1] if step == "day" else 24, description="Duration", style=style, layout=lay
        )
        self.period = widgets.Dropdown(
            options=[(f"{t} years", t) for t in PERIODS],
            value=100,
            description="Return period",
            style=style,
            layout=lay,
        )
        self.level = widgets.Dropdown(
            options=[(f"{c:.0%}", c) for c in LEVELS],
            value=0.9,
            description="Confidence level",
            style=style,
            layout=lay,
        )
        self.year = widgets.Dropdown(
            options=[("calendar (Jan-Dec)", 1), ("water year (Oct-Sep)", 10)],
            value=1,
            description="Year",
            style=style,
            layout=lay,
        )
        self.n_boot = widgets.BoundedIntText(
            value=int(n_boot), min=50, max=20000, step=50, description="Bootstrap samples", style=style, layout=lay
        )
        self.layer = widgets.Dropdown(
            options=MAP_LAYERS, value="estimate", description="Map shows", style=style, layout=lay
        )
        self.table_kind = widgets.Dropdown(
            options=TABLE_KINDS, value="ddf", description="Table shows", style=style, layout=lay
        )
        self.table_basin = widgets.Dropdown(options=[], description="Table basin", style=style, layout=lay)
        self.delta_t = widgets.FloatSlider(
            value=0.0,
            min=0.0,
            max=5.0,
            step=0.5,
            description="Warming ΔT (°C)",
            style=style,
            layout=lay,
            continuous_update=False,
        )
        self.rate = widgets.FloatSlider(
            value=7.0,
            min=0.0,
            max=14.0,
            step=0.5,
            description="Rate (% per °C)",
            style=style,
            layout=lay,
            continuous_update=False,
        )
        super().__init__(map_frame=MapFrame(basins=self.basins, kind="total"), export_dir=export_dir)
        self.add_export("Basin depths as CSV", self._write_depths, "csv", stem="basin_return_levels")
        # the cautions sit under the title and never go away
        self.cautions = widgets.HTML(cautions_html())
        self.areal_note = widgets.HTML("")
        kids = list(self.children)
        at = 1 if self.title else 0
        kids.insert(at, self.cautions)
        kids.insert(kids.index(self.table_html), self.areal_note)
        self.children = kids
        self._sync_basins()
        self.watch(self.duration, self.level, self.year, self.n_boot)
        self.watch_display(self.period, self.table_basin, self.delta_t, self.rate)
        # the regional part is fitted only once asked for (a map layer or a table)
        self.layer.observe(self._needs_regional, names="value")
        self.table_kind.observe(self._needs_regional, names="value")
        self.refresh()

    def _wants_regional(self):
        return self.layer.value == "regional" or self.table_kind.value == "point"

    def _needs_regional(self, _=None):
        if self._wants_regional() and self.basins and self.point is None:
            self.refresh()
        else:
            self._redraw()

    def _sync_basins(self):
        names = [b.name for b in self._table_basins]
        keep = self.table_basin.value if self.table_basin.value in names else (names[0] if names else None)
        with self.quiet():
            self.table_basin.options = names
            self.table_basin.value = keep

    def basins_changed(self, event, details):
        self._sync_basins()
        super().basins_changed(event, details)

    # ------------------------------------------------------------ BaseWidget hooks
    def build_controls(self):
        what_if = widgets.HTML(
            "<small>Warming what-if: depths scaled by (1 + rate)<sup>ΔT</sup>, "
            "about 7 % per °C from the Clausius-Clapeyron relation.</small>"
        )
        return [
            self.duration,
            self.period,
            self.level,
            self.year,
            self.n_boot,
            self.table_kind,
            self.table_basin,
            self.layer,
            self.delta_t,
            self.rate,
            what_if,
        ]

    def parameters(self):
        n_boot = int(self.n_boot.value)
        if n_boot < 50:
            raise ParameterError(
                f"{n_boot} bootstrap samples are too few",
                source="ExtremesWidget",
                variable="n_boot",
                expected="at least 50 (1000 for final numbers)",
                fix="raise the bootstrap samples",
            )
        key = "duration_days" if self.step_kind == "day" else "duration_hours"
        return {
            key: int(self.duration.value),
            "year_start": int(self.year.value),
            "ci": float(self.level.value),
            "n_boot": n_boot,
            "regional": bool(self._wants_regional()),
        }

    @property
    def _table_basins(self):
        return self.basins_or_whole_grid(self._whole)

    def compute(self, ci, n_boot, year_start, regional=False, **duration):
        basins = self._table_basins
        # basin means do not depend on the parameters: each basin's series is read once
        new = [b for b in basins if self._series.get((b.token, b.name)) is None]
        fresh = basin_series(self.pr, new) if new else None
        kw = dict(periods=PERIODS, ci=ci, n_boot=n_boot)
        key = (tuple(duration.items()), year_start, ci, n_boot)
        levels = self._fits.get(key)
        if levels is None:
            levels = depth_field(self.pr, year_start=year_start, **kw, **duration)
        out = {"levels": levels, "fresh": fresh, "key": key}
        if basins:
            parts = {b.name: self._series.get((b.token, b.name)) for b in basins}
            series = xr.concat(
                [parts[b.name] if parts[b.name] is not None else fresh.sel(basin=[b.name]) for b in basins], dim="basin"
            )
            out["depths"] = areal_design_depths(
                None, basins, periods=PERIODS, ci=ci, n_boot=n_boot, year_start=year_start, series=series, **duration
            )
            durations = [v for _, v in self.duration.options]
            out["design"] = basin_design_table(
                series.reset_coords(drop=True),
                durations=durations,
                periods=PERIODS,
                ci=ci,
                n_boot=n_boot,
                year_start=year_start,
            )
            if regional and self.basins:
                fit = dict(periods=PERIODS, ci=ci, n_boot=n_boot, n_sim=N_SIM, year_start=year_start, **duration)
                pooled = regional_fit(self.pr, self.basins, **fit)  # one regional analysis for table and map
                out["point"] = point_design_depths(self.pr, self.basins, regional=pooled, **fit)
                out["regional"] = regional_depth_field(self.pr, self.basins, regional=pooled, **fit)
        return out

    def finish(self, computed, params):
        fresh = computed["fresh"]
        if fresh is not None:
            basins = {b.name: b for b in self._table_basins}
            for name in fresh["basin"].values:
                if name in basins:
                    self._series.put((basins[name].token, name), fresh.sel(basin=[name]))
        levels = computed["levels"]
        self._fits.put(computed["key"], levels)
        self._pending = {id(levels): computed}
        return levels

    def render(self, levels, params):
        self.levels = levels
        computed = self._pending.pop(id(levels), {})
        self.basin_levels = computed.get("depths")
        self.design = computed.get("design")
        self.point = computed.get("point")
        self.regional = computed.get("regional")
        self._show()

    # ------------------------------------------------------------ redraw only
    def _warm(self, ds):
        return warmed_field(ds, float(self.delta_t.value), rate=float(self.rate.value) / 100.0)

    def _can_redraw(self):
        return self.levels is not None

    def warmed(self):
        """The areal depths of the basins with the chosen warming (analyses.extremes.warmed_depths)."""
        if self.basin_levels is None:
            return None
        return warmed_depths(self.basin_levels, float(self.delta_t.value), rate=float(self.rate.value) / 100.0)

    def _show(self):
        self.result = self._warm(self.levels)
        t = int(self.period.value)
        dur = self.levels.attrs.get("duration", "")
        warm = f", +{self.delta_t.value:g} °C" if self.delta_t.value else ""
        layer = self.layer.value
        if layer == "regional" and self.regional is not None:
            field = self._warm(self.regional)["estimate"].sel(period=t)
            what = "regional (basins pooled)"
        else:
            layer = layer if layer != "regional" else "estimate"  # no basins: nothing to pool
            field = self.result[layer].sel(period=t)
            what = {"estimate": "at-site", "lower": "at-site lower bound", "upper": "at-site upper bound"}[layer]
        self.table_basin.disabled = self.table_kind.value != "ddf"  # the other tables list every basin
        self.map.show_field(
            field,
            kind="total",
            label=f"{dur} depth, once in {t} years [mm]",
            title=f"{dur} storm depth once in {t} years, {what}{warm}",
        )
        kind = self.table_kind.value
        table = self._table(t)
        self.show_table(table)
        if kind == "ddf" and table is not None:
            # people read one cell per return period, 'depth (lower–upper)'; the CSV keeps the numbers
            caption = (
                f"<b>{html.escape(str(self.table_basin.value))}</b>: design depths by storm duration and "
                f"return period{html.escape(warm)}"
            )
            self.table_html.value = _CSS + caption + df_to_html(design_depth_cells(table))
        notes = {"ddf": DESIGN_TABLE_NOTE, "areal": AREAL_NOTE, "point": POINT_NOTE}
        note = notes[kind]
        if kind == "point" and self.point is not None:
            h1 = {str(b): float(v) for b, v in zip(self.point["basin"].values, self.point["heterogeneity_h1"].values)}
            mixed = [b for b, v in h1.items() if v >= 2]
            if mixed:
                note += f". Not one region (H1 >= 2): {', '.join(mixed)}"
        self.areal_note.value = f"<small>{html.escape(note)}</small>"
        self.show_chart(self._chart())

    def _table(self, t):
        kind = self.table_kind.value
        factor = dict(delta_t=float(self.delta_t.value), rate=float(self.rate.value) / 100.0)
        if kind == "ddf":
            if self.design is None or self.table_basin.value is None:
                return None
            return design_depth_table(warmed_field(self.design, **factor), basin=self.table_basin.value)
        if kind == "point":
            if self.point is None:
                return None
            return point_depth_table(warmed_point_depths(self.point, **factor), period=t, display=True)
        warmed = self.warmed()
        return None if warmed is None else depth_table(warmed, period=t, display=True)

    def _write_csv(self, path):
        """The table shown, with the design-depth cautions and the table's note in its metadata."""
        if self.table is None:
            raise ParameterError(
                "there is no table to export yet", source="design depths", fix="wait for the computation to finish"
            )
        prov = self.csv_provenance()
        note = {"ddf": DESIGN_TABLE_NOTE, "areal": AREAL_NOTE, "point": POINT_NOTE}[self.table_kind.value]
        title = {
            "ddf": f"design depths of {self.table_basin.value} by duration and return period",
            "areal": "areal depths of the basins",
            "point": "at-site and regional point depths",
        }
        prov.update(notes=[note], cautions=DESIGN_DEPTH_CAUTIONS, title=title[self.table_kind.value])
        self.write_table_csv(self.table, path, provenance=prov)

    def _write_depths(self, path):
        warmed = self.warmed()
        if warmed is None:
            raise ParameterError(
                "there are no basin depths yet", source="design-storm depths", fix="wait for the computation to finish"
            )
        prov = self.csv_provenance()
        prov.update(notes=[warmed.attrs.get("note", "")], cautions=DESIGN_DEPTH_CAUTIONS, title="basin return levels")
        self.write_table_csv(depth_table(warmed), path, provenance=prov)

    def _chart(self):
        from ..compute.warming import warming_scaling
        from ..plot.charts import design_depth_chart

        warming = None
        if self.delta_t.value:
            factor = float(
                warming_scaling(
                    xr.DataArray(1.0, attrs={"units": "mm"}),
                    float(self.delta_t.value),
                    rate=float(self.rate.value) / 100.0,
                )
            )
            warming = (self.delta_t.value, self.rate.value, factor)
        return design_depth_chart(
            self.design, warming=warming, period=int(self.period.value), ci=self.levels.attrs.get("ci", 0.9)
        )
