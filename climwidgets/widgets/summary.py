"""Basin summary: the planner's page.

* the basin table of :func:`cw.basin_table` (area, annual mean, seasonal share, normal,
  volumes in million m³ and acre-feet, latest year as percent of normal; a Units menu shows
  inches, acre-feet and square miles instead);
* a chart of the monthly normals of each basin (the same analysis);
* a what-if calculator (:func:`cw.what_if`): "if the season's precipitation changed by
  this many percent, how much water would that be per year?", in m³ and acre-feet;
* drawing and loading tools: a basin drawn or loaded here joins the widget's basin set
  (shared with other widgets given the same :class:`cw.BasinSet`), and only its numbers
  are computed;
* exports: the table as CSV, the basin analysis as CF-NetCDF (``cw.to_netcdf``) and a
  self-contained HTML report (``cw.write_report``), all from the same computed analysis.

Figures are planning-level estimates from gridded data: gridded values smooth point
extremes and assume the record is representative of the planning period.
"""

from __future__ import annotations

import importlib.util

import ipywidgets as widgets
import numpy as np
import xarray as xr

from ..analyses.basins import SUMMARY_COLUMNS, WHAT_IF_COLUMNS, basin_table, summary_bundle, summary_maps, what_if
from ..analyses.meta import frame, unit_attrs
from ..analyses.run import monthly_source
from ..cache import LRUCache
from ..compute._time import season_months
from ..errors import InputError
from ..plot.charts import monthly_normals
from .base import MONTH_OPTIONS as _MONTH_OPTIONS
from .base import BaseWidget, _CSS, df_to_html
from .drawer import HostsDrawingTools
from .mapframe import MapFrame

__all__ = ["BasinSummaryWidget"]

_ROW_VARS = SUMMARY_COLUMNS + (
    "monthly_normal",
    "seasonal_share_per_year",
    "share_slope",
    "share_pvalue",
    "share_intercept",
)


def _has(module):
    try:
        return importlib.util.find_spec(module) is not None
    except ModuleNotFoundError:
        return False


class BasinSummaryWidget(HostsDrawingTools, BaseWidget):
    """Basin table, monthly normals and a seasonal what-if in m³ and acre-feet.

    Parameters
    ----------
    pr : DataArray (time, lat, lon), precipitation depth per step in mm
    basins : list of Basin or a shared cw.BasinSet (may start empty: draw or load basins)
    months : season for the seasonal share column, default July–August
    baseline : (first, last) years of the normal; clipped to the data when it reaches beyond
    scenario_months, percent : the what-if season and change (default Nov–Mar, +5 %)

    Attributes
    ----------
    result : dict with ``summary`` (DataFrame, as cw.basin_summary), ``normals``
        (DataArray basin × month, mm), ``scenario`` (DataFrame, as cw.scenario_delta) and
        ``analysis`` (the computed Dataset of cw.basin_table the others are views of)
    """

    title = "Basin summary"
    export_stem = "basin_summary"

    def __init__(
        self,
        pr,
        basins=(),
        months=(7, 8),
        baseline=(1991, 2020),
        scenario_months=(11, 12, 1, 2, 3),
        percent=5.0,
        year_start=1,
        export_dir="out",
    ):
        self.pr = pr
        self._rows = LRUCache(maxsize=256)
        years = pr["time"].dt.year.values
        lo, hi = int(years.min()), int(years.max())
        b0, b1 = max(lo, int(baseline[0])), min(hi, int(baseline[1]))
        lab = {"style": {"description_width": "120px"}, "layout": widgets.Layout(width="340px")}
        months, scenario_months = tuple(months), tuple(scenario_months)
        self.first = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[0], description="Season from", **lab)
        self.last = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[-1], description="to", **lab)
        self.baseline = widgets.IntRangeSlider(
            value=(b0, b1),
            min=lo,
            max=hi,
            description="Normal period",
            continuous_update=False,
            readout=False,
            style={"description_width": "120px"},
            layout=widgets.Layout(width="250px"),
        )
        self.baseline_label = widgets.Label(f"{b0}–{b1}")
        self.baseline.observe(
            lambda c: setattr(self.baseline_label, "value", f"{c['new'][0]}–{c['new'][1]}"), names="value"
        )
        self.year_start = widgets.Dropdown(
            options=[("January (calendar year)", 1), ("October (water year)", 10)],
            value=year_start,
            description="Year starts in",
            **lab,
        )
        self.s_first = widgets.Dropdown(
            options=_MONTH_OPTIONS, value=scenario_months[0], description="What-if season", **lab
        )
        self.s_last = widgets.Dropdown(options=_MONTH_OPTIONS, value=scenario_months[-1], description="to", **lab)
        self.percent = widgets.FloatSlider(
            value=percent,
            min=-50,
            max=50,
            step=1,
            description="Change [%]",
            continuous_update=False,
            readout_format=".0f",
            **lab,
        )
        self.scenario_html = widgets.HTML()
        self.caution = widgets.HTML(
            "<small><i>Planning-level estimates from gridded data: gridded values smooth point extremes "
            "and assume the record represents the planning period. Defer to adopted local estimates "
            "and licensed engineering practice for design.</i></small>"
        )
        frame_ = MapFrame(kind="total")
        self._make_tools(frame_, basins)
        super().__init__(map_frame=frame_, export_dir=export_dir)
        at = list(self.children).index(self.table_html) + 1  # the what-if goes under the basin table
        self.children = (
            *self.children[:at],
            widgets.HTML("<b>What if the season changed?</b>"),
            self.scenario_html,
            *self.children[at:],
            self.caution,
        )
        self.export_formats = ["csv"]
        if _has("climwidgets.report.netcdf"):
            self.add_export("Basin analysis as NetCDF", self._write_netcdf, "nc", stem="basin_summary")
            self.export_formats.append("netcdf")
        if _has("climwidgets.report.html"):
            self.add_export("HTML report", self._write_html, "html", stem="basin_report")
            self.export_formats.append("html")
        self.watch(self.first, self.last, self.baseline, self.year_start, self.s_first, self.s_last, self.percent)
        self.refresh()

    def basins_changed(self, event, details):
        self.tools.sync()
        self.refresh()

    def build_controls(self):
        return [
            widgets.HTML("<b>Summary</b>"),
            self.first,
            self.last,
            widgets.HBox([self.baseline, self.baseline_label]),
            self.year_start,
            widgets.HTML("<b>What-if</b>"),
            self.s_first,
            self.s_last,
            self.percent,
            widgets.HTML("<hr style='margin:4px 0'>"),
            self.tools,
        ]

    def parameters(self):
        return {
            "months": season_months(self.first.value, self.last.value),
            "baseline": tuple(self.baseline.value),
            "year_start": self.year_start.value,
            "scenario_months": season_months(self.s_first.value, self.s_last.value),
            "percent": float(self.percent.value),
            "basins": self.basins,
        }

    @staticmethod
    def _key(params):
        return (
            params["months"],
            params["baseline"],
            params["year_start"],
            params["scenario_months"],
            params["percent"],
        )

    def compute(self, months, baseline, year_start, scenario_months, percent, basins):
        monthly = monthly_source(self.pr)  # one read of the data, kept for every later change
        bundle = summary_bundle(monthly, months=months, baseline=baseline, year_start=year_start)
        key = self._key(
            {
                "months": months,
                "baseline": baseline,
                "year_start": year_start,
                "scenario_months": scenario_months,
                "percent": percent,
            }
        )
        new = [b for b in basins if self._rows.get(key + (b.token, b.name)) is None]
        maps = summary_maps(None, months, baseline, year_start, bundle=bundle)
        out = {"normal_map": maps["annual_normal_map"], "share_map": maps["seasonal_share_map"]}
        if new:  # only basins not seen with these parameters are computed
            out["table"] = basin_table(
                monthly, new, months=months, baseline=baseline, year_start=year_start, bundle=bundle
            )[list(_ROW_VARS)]
            out["what_if"] = what_if(
                monthly, new, months=scenario_months, percent=percent, year_start=year_start, bundle=bundle
            )
        return out

    def finish(self, computed, params):
        key = self._key(params)
        if "table" in computed:
            for name in computed["table"]["basin"].values:
                b = next(b for b in params["basins"] if b.name == name)
                self._rows.put(
                    key + (b.token, b.name),
                    (computed["table"].sel(basin=[name]), computed["what_if"].sel(basin=[name])),
                )
        normal_map = computed["normal_map"]
        normal_map.attrs = {
            "units": "mm",
            "long_name": f"annual normal {params['baseline'][0]}–{params['baseline'][1]}",
        }
        result = {"normal_map": normal_map, "share_map": computed["share_map"]}
        if params["basins"]:
            parts = [self._rows.get(key + (b.token, b.name)) for b in params["basins"]]
            analysis = xr.concat([p[0] for p in parts], dim="basin", combine_attrs="override")
            what = xr.concat([p[1] for p in parts], dim="basin", combine_attrs="override")
            result.update(
                analysis=analysis,
                what_if=what,
                summary=self._frame(analysis, SUMMARY_COLUMNS, params, "basin_summary"),
                scenario=self._frame(what, WHAT_IF_COLUMNS, params, "scenario_delta"),
                normals=analysis["monthly_normal"].assign_attrs(units="mm", long_name="monthly normal, basin mean"),
            )
        return result

    @staticmethod
    def _frame(ds, columns, params, func):
        from ..provenance import history_line

        table = frame(ds, columns=columns)
        table.index.name = "basin"
        if func == "basin_summary":
            keys = ("months", "baseline", "year_start", "season_year_start", "note")
            table.attrs = {k: ds.attrs[k] for k in keys if k in ds.attrs}
            table.attrs["history"] = history_line(
                func,
                basins=list(table.index),
                months=tuple(params["months"]),
                baseline=tuple(params["baseline"]),
                year_start=params["year_start"],
            )
        else:
            table.attrs = {
                k: ds.attrs[k] for k in ("months", "percent", "year_start", "note", "history") if k in ds.attrs
            }
        return table

    def summary_table(self, result):
        """The basin table as shown (labels, units and scales of the analysis)."""
        if "analysis" not in result:
            return None
        return frame(result["analysis"], columns=SUMMARY_COLUMNS, display=True)

    def scenario_table(self, result):
        """The what-if table as shown."""
        if "what_if" not in result:
            return None
        return frame(result["what_if"], columns=WHAT_IF_COLUMNS, display=True)

    def render(self, result, params):
        self.map.show_field(result["normal_map"], kind="total", title="Annual normal")
        self.show_table(self.summary_table(result))
        self.scenario_html.value = _CSS + df_to_html(self.in_units(self.scenario_table(result)))
        if "normals" not in result:
            if self.chart is not None:
                self.chart.value = b""
            return
        self._baseline_shown = params["baseline"]
        self._chart(result, params["baseline"])

    def _chart(self, result, baseline):
        """The monthly normals chart, in the units chosen."""
        from matplotlib.figure import Figure

        fig = Figure(figsize=(6.0, 2.8))
        ax = fig.add_subplot(1, 1, 1)
        table = result["normals"].transpose("month", "basin").to_pandas()  # month × basin
        normals_in = unit_attrs({"units": "mm", "display_units": "mm", "display_scale": 1.0}, self.unit_system)
        monthly_normals(table * normals_in["display_scale"], ax=ax, units=normals_in["display_units"])
        b0, b1 = baseline
        ax.set_title(f"Monthly normals {b0}–{b1}, basin means", fontsize=9)
        self.show_chart(fig)

    def units_changed(self):
        """The what-if table and the chart in the units chosen (the base redraws table and map)."""
        if self.result is not None:
            self.scenario_html.value = _CSS + df_to_html(self.in_units(self.scenario_table(self.result)))
            if "normals" in self.result:
                self._chart(self.result, self._baseline_shown)

    # ------------------------------------------------------------ exports
    def _need_result(self):
        if self.result is None or "analysis" not in self.result:
            raise InputError(
                "there is nothing to export yet",
                source="basin summary",
                fix="draw or load a basin and wait for the computation to finish",
            )

    def _write_netcdf(self, path):
        from ..report.netcdf import to_netcdf

        self._need_result()
        ds = self.result["analysis"].drop_vars(["seasonal_share_per_year", "share_intercept"], errors="ignore")
        ds = ds.assign_coords(basin=np.array([str(v) for v in ds["basin"].values]))
        to_netcdf(ds, path, overwrite=True, title=self.with_member("Basin summary"))

    def _write_html(self, path):
        from ..report.content import report_content
        from ..report.html import write_report

        self._need_result()
        analysis = self.result["analysis"].copy()
        analysis["seasonal_share_map"] = self.result["share_map"]
        analysis["annual_normal_map"] = self.result["normal_map"]
        content = report_content(
            analysis,
            self.basins,
            self.pr,
            what=self.result["what_if"],
            title=self.with_member("Basin precipitation summary"),
        )
        write_report(content, path, overwrite=True, units=self.unit_system)
