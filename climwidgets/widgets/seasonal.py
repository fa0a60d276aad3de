"""Seasonal share: what share of the year's precipitation falls in a season, where, and
whether it is changing.

Controls, in plain words:

* **Season from … to …**: two month menus.  The season runs from the first month to the
  second, inclusive, and may run over the new year (November to March is five months).
* **Year starts in**: January (calendar year) or October (water year); the season is
  measured against the 12-month year that contains it (``cw.seasonal_fraction``).
* **Years**: the range of year labels used; the slider's full range means "all complete
  years" (a season over the new year has no year labelled with the record's first year).
* **Averaging**: "ratio of sums" (sum of seasonal totals over sum of annual totals) or
  "mean of ratios" (average of each year's share).
* **Chart basin**: the basin whose per-year share and Sen slope are charted.

Per-basin numbers treat the basin as one cell: the area-weighted basin-mean series
(``cw.basin_mean(pr, basin)``) goes through ``cw.seasonal_fraction`` with the same
season, years and averaging.  With "ratio of sums" this is the ratio of basin-mean
seasonal and annual totals (the share of the basin's water); with "mean of ratios" it
is the average of the basin's yearly shares.  The chart shows those yearly shares and
their Sen slope (``cw.trend``).

Basins are drawn on the map itself (the drawing tools below the controls), or passed in.
Maps are cached per (season, years, averaging, year start) and basin series per basin
outline, so a new basin is summarised without recomputing the grid.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr
import ipywidgets as widgets

from ..compute.seasonal import seasonal_fraction
from ..compute.trend import trend
from ..errors import ParameterError
from ..geo.aggregate import basin_mean
from ..plot.charts import MONTH_LABELS, series_with_trend
from .base import BaseWidget
from .drawer import DrawingTools, HostsDrawingTools
from .mapframe import MapFrame

__all__ = ["SeasonalShareWidget", "season_months"]

_MONTH_OPTIONS = [(name, i + 1) for i, name in enumerate(
    ["January", "February", "March", "April", "May", "June", "July", "August", "September",
     "October", "November", "December"])]


def season_months(first: int, last: int) -> tuple:
    """Consecutive months from ``first`` to ``last`` inclusive, wrapping over December."""
    n = (last - first) % 12 + 1
    return tuple((first - 1 + k) % 12 + 1 for k in range(n))


class SeasonalShareWidget(HostsDrawingTools, BaseWidget):
    """Map, basin table and per-year chart of the seasonal share of annual precipitation.

    Parameters
    ----------
    pr : DataArray (time, lat, lon), precipitation depth per step in mm
    basins : list of Basin, optional
    months : the starting season, default July–August
    how : 'ratio_of_sums' or 'mean_of_ratios'
    years : (first, last) or None for all complete years
    year_start : 1 (calendar year) or 10 (water year)

    Attributes
    ----------
    result : Dataset with ``share`` (lat, lon; fraction), ``basin_share`` (basin),
        ``per_year`` (basin, year), ``slope`` (per year) and ``pvalue`` (basin)
    table : DataFrame shown under the map (shares and slopes in %)
    basins : list of Basin (drawn, loaded or passed in)
    """

    title = "Seasonal share of annual precipitation"
    export_stem = "seasonal_share"

    def __init__(self, pr, basins=None, months=(7, 8), how="ratio_of_sums", years=None, year_start=1,
                 export_dir="out"):
        self.pr = pr
        self._maps = {}
        self._series = {}
        t = pr["time"].dt.year.values
        lo, hi = int(t.min()), int(t.max())
        months = tuple(months)
        lab = {"style": {"description_width": "110px"}, "layout": widgets.Layout(width="330px")}
        self.first = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[0], description="Season from", **lab)
        self.last = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[-1], description="to", **lab)
        self.year_start = widgets.Dropdown(options=[("January (calendar year)", 1), ("October (water year)", 10)],
                                           value=year_start, description="Year starts in", **lab)
        self.years = widgets.IntRangeSlider(value=tuple(years) if years else (lo, hi), min=lo, max=hi,
                                            description="Years", continuous_update=False, readout=False,
                                            style={"description_width": "110px"},
                                            layout=widgets.Layout(width="240px"))
        # the slider's own readout is too narrow for a range of two years: a label instead
        self.years_label = widgets.Label(f"{self.years.value[0]}–{self.years.value[1]}")
        self.years.observe(lambda c: setattr(self.years_label, "value", f"{c['new'][0]}–{c['new'][1]}"),
                           names="value")
        self.how = widgets.RadioButtons(options=[("ratio of sums", "ratio_of_sums"),
                                                 ("mean of ratios", "mean_of_ratios")],
                                        value=how, description="Averaging", **lab)
        self.chart_basin = widgets.Dropdown(options=[], description="Chart basin", **lab)
        self.season_note = widgets.HTML()
        frame = MapFrame(kind="share", title=None)
        self.tools = DrawingTools(frame, basins or [], report=self._report)
        super().__init__(map_frame=frame, export_dir=export_dir)
        self.add_export("Per-year shares as CSV", self._write_per_year, "csv", stem="seasonal_share_per_year")
        self.tools.on_change(self._basins_changed)
        self._basins_changed(self.tools.basins, refresh=False)
        self.watch(self.first, self.last, self.year_start, self.years, self.how, self.chart_basin)
        self.refresh()

    # ------------------------------------------------------------ layout and parameters
    def build_controls(self):
        return [self.first, self.last, self.season_note, self.year_start,
                widgets.HBox([self.years, self.years_label]), self.how, self.chart_basin,
                widgets.HTML("<hr style='margin:4px 0'>"), self.tools]


    def _basins_changed(self, basins, refresh=True):
        names = [b.name for b in basins]
        keep = self.chart_basin.value if self.chart_basin.value in names else (names[0] if names else None)
        with self.quiet():
            self.chart_basin.options = names
            self.chart_basin.value = keep
        if refresh:
            self.refresh()

    def parameters(self):
        months = season_months(self.first.value, self.last.value)
        if len(months) == 12:
            raise ParameterError("the season covers the whole year", source="seasonal share",
                                 variable="season", expected="a season shorter than 12 months",
                                 fix="choose an end month before the start month's predecessor")
        label = f"{MONTH_LABELS[months[0] - 1]}–{MONTH_LABELS[months[-1] - 1]}"
        wraps = months[-1] < months[0]
        self.season_note.value = (f"<small>{len(months)} months ({label})"
                                  f"{', over the new year' if wraps else ''}</small>")
        years = tuple(self.years.value)
        if years == (self.years.min, self.years.max):
            years = None  # the whole record: every complete season-year, whatever its label
        return {"months": months, "how": self.how.value, "years": years,
                "year_start": self.year_start.value, "basins": list(self.tools.basins),
                "chart_basin": self.chart_basin.value}

    # ------------------------------------------------------------ computation
    def compute(self, months, how, years, year_start, basins, chart_basin):
        key = (months, how, years, year_start)
        share = self._maps.get(key)
        if share is None:
            share = seasonal_fraction(self.pr, months=months, how=how, years=years, year_start=year_start)
        series = {b.token: self._series.get(b.token) for b in basins}
        for b in basins:
            if series[b.token] is None:
                series[b.token] = basin_mean(self.pr, b)
        return {"share": share, "series": series}

    def finish(self, computed, params):
        key = tuple(params[k] for k in ("months", "how", "years", "year_start"))
        self._maps[key] = computed["share"]
        self._series.update(computed["series"])
        months, how, years, ys = params["months"], params["how"], params["years"], params["year_start"]
        ds = xr.Dataset({"share": computed["share"]})
        basins = params["basins"]
        if basins:
            names = [b.name for b in basins]
            # one (basin, time) array: two seasonal_fraction calls whatever the number of basins
            stacked = xr.concat([computed["series"][b.token].reset_coords(drop=True) for b in basins],
                                dim=pd.Index(names, name="basin"))
            stacked.attrs = computed["series"][basins[0].token].attrs
            ds["basin_share"] = seasonal_fraction(stacked, months=months, how=how, years=years,
                                                  year_start=ys).reset_coords(drop=True)
            ds["per_year"] = seasonal_fraction(stacked, months=months, years=years, year_start=ys,
                                               per_year=True).reset_coords(drop=True)
            tr = trend(ds["per_year"], dim="year")
            ds["slope"] = tr["slope"]
            ds["pvalue"] = tr["pvalue"]
            ds["intercept"] = tr["intercept"]
            ds["basin_share"].attrs = {"units": "1", "long_name": "basin seasonal share",
                                       "method": "cw.seasonal_fraction of the cw.basin_mean series", "how": how}
            ds["per_year"].attrs = {"units": "1", "long_name": "basin seasonal share, per year"}
        used = computed["share"].attrs.get("years", [None, None])
        ds.attrs = {"season_months": list(months), "how": how, "first_year": used[0], "last_year": used[1],
                    "year_start": ys}
        return ds

    # ------------------------------------------------------------ display
    def basin_table(self, result) -> pd.DataFrame:
        """The table under the map: shares and Sen slopes in %, with the basin area."""
        cols = ["area [km²]", "seasonal share [%]", "Sen slope [% points per decade]", "Mann-Kendall p", "years"]
        if "basin_share" not in result:
            return pd.DataFrame(columns=cols, index=pd.Index([], name="basin"))
        areas = {b.name: b.area_m2 / 1e6 for b in self.tools.basins}
        names = [str(n) for n in result["basin"].values]
        n_years = result["per_year"].notnull().sum("year").values
        return pd.DataFrame({
            "area [km²]": [areas.get(n, np.nan) for n in names],
            "seasonal share [%]": 100 * result["basin_share"].values,
            "Sen slope [% points per decade]": 1000 * result["slope"].values,
            "Mann-Kendall p": result["pvalue"].values,
            "years": n_years.astype(int),
        }, index=pd.Index(names, name="basin"))

    def render(self, result, params):
        months = params["months"]
        label = f"{MONTH_LABELS[months[0] - 1]}–{MONTH_LABELS[months[-1] - 1]}"
        self.map.show_field(result["share"], kind="share", vmin=0.0,
                            label=f"seasonal share {label} [fraction of the year's total]",
                            title=f"Share of annual precipitation falling {label}, "
                                  f"{result.attrs['first_year']}–{result.attrs['last_year']}")
        self.show_table(self.basin_table(result))
        name = params["chart_basin"]
        if name is not None and "basin_share" in result and name in list(result["basin"].values):
            from matplotlib.figure import Figure

            fig = Figure(figsize=(6.0, 2.8))
            ax = fig.add_subplot(1, 1, 1)
            sel = result.sel(basin=name)
            series = sel["per_year"].dropna("year")
            series.attrs = {"long_name": f"{label} share", "units": "%"}
            series_with_trend(series, sel[["slope", "intercept", "pvalue"]], ax=ax, scale=100.0, units="%")
            ax.set_title(f"{name}: {label} share per year", fontsize=9)
            self.show_chart(fig)
        elif self.chart is not None:
            self.chart.value = b""

    def _write_per_year(self, path):
        if self.result is None or "per_year" not in self.result:
            raise ParameterError("there are no basin series yet", source="seasonal share",
                                 fix="draw or load a basin first")
        (100 * self.result["per_year"]).to_pandas().T.to_csv(path, float_format="%.4f")
