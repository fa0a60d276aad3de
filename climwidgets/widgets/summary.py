"""Basin summary: the planner's page.

* the table of :func:`cw.basin_summary` (area, annual mean, seasonal share, normal,
  volumes in m³ and acre-feet, latest year as percent of normal);
* a chart of monthly normals per basin (:func:`cw.normals` then :func:`cw.basin_mean`);
* a what-if calculator (:func:`cw.scenario_delta`): "if the season's precipitation changed
  by this many percent, how much water would that be per year?", in m³ and acre-feet;
* exports: the summary as CSV, the monthly normals per basin as CF-NetCDF
  (``cw.to_netcdf``) and a self-contained HTML report (``cw.write_report``) when
  ``climwidgets.report`` provides them.

Figures are planning-level estimates from gridded data: gridded values smooth point
extremes and assume the record is representative of the planning period.
"""

from __future__ import annotations

import importlib.util

import ipywidgets as widgets
import numpy as np
import pandas as pd
import xarray as xr

from ..compute.normals import normals
from ..geo.aggregate import basin_mean
from ..geo.summary import basin_summary, scenario_delta
from ..plot.charts import monthly_normals
from .base import BaseWidget, _CSS, df_to_html
from .mapframe import MapFrame
from .seasonal import _MONTH_OPTIONS, season_months

__all__ = ["BasinSummaryWidget"]

_SUMMARY_LABELS = {
    "area_km2": "area [km²]",
    "annual_mean_mm": "annual mean [mm]",
    "n_years": "years",
    "seasonal_share_1": "seasonal share [%]",
    "normal_annual_mm": "annual normal [mm]",
    "volume_per_year_m3": "volume per year [million m³]",
    "volume_per_year_acre_ft": "volume per year [acre-feet]",
    "latest_year": "latest year",
    "latest_year_mm": "latest year [mm]",
    "latest_year_percent_of_normal": "latest year [% of normal]",
    "data_coverage_1": "area with data [%]",
}

_SCENARIO_LABELS = {
    "season": "season",
    "percent": "change [%]",
    "n_seasons": "seasons",
    "seasonal_volume_per_year_m3": "season's volume per year [million m³]",
    "delta_volume_per_year_m3": "change per year [million m³]",
    "delta_volume_per_year_acre_ft": "change per year [acre-feet]",
}


def _readable(df, labels, scale):
    out = df.copy()
    for col, factor in scale.items():
        if col in out:
            out[col] = out[col] * factor
    return out.rename(columns=labels)[[labels[c] for c in labels if c in df.columns]]


def _has(module):
    try:
        return importlib.util.find_spec(module) is not None
    except ModuleNotFoundError:
        return False


class BasinSummaryWidget(BaseWidget):
    """Basin table, monthly normals and a seasonal what-if in m³ and acre-feet.

    Parameters
    ----------
    pr : DataArray (time, lat, lon), precipitation depth per step in mm
    basins : list of Basin (at least one)
    months : season for the seasonal share column, default July–August
    baseline : (first, last) years of the normal; clipped to the data when it reaches beyond
    scenario_months, percent : the what-if season and change (default Nov–Mar, +5 %)

    Attributes
    ----------
    result : dict with ``summary`` (DataFrame of cw.basin_summary), ``normals``
        (DataArray basin × month, mm) and ``scenario`` (DataFrame of cw.scenario_delta)
    """

    title = "Basin summary"
    export_stem = "basin_summary"

    def __init__(self, pr, basins, months=(7, 8), baseline=(1991, 2020), scenario_months=(11, 12, 1, 2, 3),
                 percent=5.0, year_start=1, export_dir="out"):
        self.pr = pr
        self.basins = list(basins)
        years = pr["time"].dt.year.values
        lo, hi = int(years.min()), int(years.max())
        b0, b1 = max(lo, int(baseline[0])), min(hi, int(baseline[1]))
        lab = {"style": {"description_width": "120px"}, "layout": widgets.Layout(width="340px")}
        months, scenario_months = tuple(months), tuple(scenario_months)
        self.first = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[0], description="Season from", **lab)
        self.last = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[-1], description="to", **lab)
        self.baseline = widgets.IntRangeSlider(value=(b0, b1), min=lo, max=hi, description="Normal period",
                                               continuous_update=False, readout=False,
                                               style={"description_width": "120px"},
                                               layout=widgets.Layout(width="250px"))
        self.baseline_label = widgets.Label(f"{b0}–{b1}")
        self.baseline.observe(lambda c: setattr(self.baseline_label, "value", f"{c['new'][0]}–{c['new'][1]}"),
                              names="value")
        self.year_start = widgets.Dropdown(options=[("January (calendar year)", 1), ("October (water year)", 10)],
                                           value=year_start, description="Year starts in", **lab)
        self.s_first = widgets.Dropdown(options=_MONTH_OPTIONS, value=scenario_months[0],
                                        description="What-if season", **lab)
        self.s_last = widgets.Dropdown(options=_MONTH_OPTIONS, value=scenario_months[-1], description="to", **lab)
        self.percent = widgets.FloatSlider(value=percent, min=-50, max=50, step=1, description="Change [%]",
                                           continuous_update=False, readout_format=".0f", **lab)
        self.scenario_html = widgets.HTML()
        self.caution = widgets.HTML(
            "<small><i>Planning-level estimates from gridded data: gridded values smooth point extremes "
            "and assume the record represents the planning period. Defer to adopted local estimates "
            "and licensed engineering practice for design.</i></small>")
        frame = MapFrame(kind="total")
        super().__init__(map_frame=frame, export_dir=export_dir)
        self.children = (*self.children[:3], widgets.HTML("<b>What if the season changed?</b>"),
                         self.scenario_html, *self.children[3:], self.caution)
        self.export_formats = ["csv"]
        if _has("climwidgets.report.netcdf"):
            self.add_export("Monthly normals as NetCDF", self._write_netcdf, "nc", stem="basin_monthly_normals")
            self.export_formats.append("netcdf")
        if _has("climwidgets.report.html"):
            self.add_export("HTML report", self._write_html, "html", stem="basin_report")
            self.export_formats.append("html")
        self.watch(self.first, self.last, self.baseline, self.year_start, self.s_first, self.s_last, self.percent)
        self.refresh()

    def build_controls(self):
        return [widgets.HTML("<b>Summary</b>"), self.first, self.last,
                widgets.HBox([self.baseline, self.baseline_label]), self.year_start,
                widgets.HTML("<b>What-if</b>"), self.s_first, self.s_last, self.percent]

    def parameters(self):
        return {"months": season_months(self.first.value, self.last.value),
                "baseline": tuple(self.baseline.value), "year_start": self.year_start.value,
                "scenario_months": season_months(self.s_first.value, self.s_last.value),
                "percent": float(self.percent.value)}

    def compute(self, months, baseline, year_start, scenario_months, percent):
        norm = normals(self.pr, baseline=baseline)
        per_basin = [basin_mean(norm, b).reset_coords(drop=True) for b in self.basins]
        return {
            "summary": basin_summary(self.pr, self.basins, months=months, baseline=baseline,
                                     year_start=year_start),
            "normals": xr.concat(per_basin, dim=pd.Index([b.name for b in self.basins], name="basin")),
            "normal_map": norm.sum("month", skipna=False),
            "scenario": scenario_delta(self.pr, self.basins, months=scenario_months, percent=percent,
                                       year_start=year_start),
        }

    def finish(self, computed, params):
        normal_map = computed.pop("normal_map")
        normal_map.attrs = {"units": "mm", "long_name": f"annual normal {params['baseline'][0]}–"
                                                        f"{params['baseline'][1]}"}
        computed["normals"].attrs.update(units="mm", long_name="monthly normal, basin mean")
        self._normal_map = normal_map
        return computed

    def summary_table(self, result):
        return _readable(result["summary"], _SUMMARY_LABELS,
                         {"seasonal_share_1": 100.0, "data_coverage_1": 100.0, "volume_per_year_m3": 1e-6})

    def scenario_table(self, result):
        return _readable(result["scenario"], _SCENARIO_LABELS,
                         {"seasonal_volume_per_year_m3": 1e-6, "delta_volume_per_year_m3": 1e-6})

    def render(self, result, params):
        self.map.show_field(self._normal_map, kind="total", vmin=0.0, title="Annual normal")
        if [b.name for b in self.map.basins] != [b.name for b in self.basins]:
            self.map.set_basins(self.basins)
        self.show_table(self.summary_table(result))
        self.scenario_html.value = _CSS + df_to_html(self.scenario_table(result))
        from matplotlib.figure import Figure

        fig = Figure(figsize=(6.0, 2.8))
        ax = fig.add_subplot(1, 1, 1)
        table = result["normals"].to_pandas().T  # month × basin
        monthly_normals(table, ax=ax, units="mm")
        b0, b1 = params["baseline"]
        ax.set_title(f"Monthly normals {b0}–{b1}, basin means", fontsize=9)
        self.show_chart(fig)

    # ------------------------------------------------------------ exports
    def _need_result(self):
        if self.result is None:
            from ..errors import InputError

            raise InputError("there is nothing to export yet", source="basin summary",
                             fix="wait for the computation to finish")

    def _write_netcdf(self, path):
        from ..report.netcdf import to_netcdf

        self._need_result()
        da = self.result["normals"].rename("monthly_normal")
        da = da.assign_coords(basin=np.array([str(v) for v in da["basin"].values]))
        to_netcdf(da, path, overwrite=True)

    def _write_html(self, path):
        from ..report.html import write_report

        self._need_result()
        write_report(self.result["summary"], path, overwrite=True)

