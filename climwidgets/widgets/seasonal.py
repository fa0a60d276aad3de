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

Per-basin numbers are those of :func:`cw.basin_shares` (the analysis every widget, the
report and the CSV use): the basin is one cell, its area-weighted mean monthly series
goes through ``cw.seasonal_fraction`` with the same season, years and averaging.  With
"ratio of sums" this is the ratio of basin-mean seasonal and annual totals (the share of
the basin's water); with "mean of ratios" it is the average of the basin's yearly
shares.  The chart shows those yearly shares and their Sen slope (``cw.trend``).

Basins are drawn on the map itself (the drawing tools below the controls), loaded, or
passed in (a list or a shared :class:`cw.BasinSet`).  The monthly totals are read once
(:func:`climwidgets.analyses.run.monthly_source`); maps are kept per (season, years,
averaging, year start) and basin numbers per basin outline, so a new basin is
summarised without recomputing the grid or the other basins.
"""

from __future__ import annotations

import pandas as pd
import xarray as xr
import ipywidgets as widgets

from ..analyses.basins import basin_shares, share_map
from ..analyses.meta import frame
from ..analyses.run import monthly_source
from ..cache import LRUCache
from ..compute._time import MONTH_NAMES as MONTH_LABELS
from ..compute._time import season_months
from ..errors import ParameterError
from ..plot.charts import series_with_trend
from .base import MONTH_OPTIONS as _MONTH_OPTIONS
from .base import BaseWidget
from .drawer import HostsDrawingTools
from .entry import year_range_entry
from .mapframe import MapFrame

__all__ = ["SeasonalShareWidget", "season_months"]

_BASIN_VARS = (
    "area_km2",
    "seasonal_share_1",
    "n_share_years",
    "seasonal_share_per_year",
    "share_slope",
    "share_pvalue",
    "share_intercept",
)


class SeasonalShareWidget(HostsDrawingTools, BaseWidget):
    """Map, basin table and per-year chart of the seasonal share of annual precipitation.

    Parameters
    ----------
    pr : DataArray (time, lat, lon), precipitation depth per step in mm
    basins : list of Basin or a shared cw.BasinSet, optional (changes to a shared set show here)
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

    def __init__(self, pr, basins=None, months=(7, 8), how="ratio_of_sums", years=None, year_start=1, export_dir="out"):
        self.pr = pr
        self._maps = LRUCache(maxsize=16)
        self._rows = LRUCache(maxsize=256)
        t = pr["time"].dt.year.values
        lo, hi = int(t.min()), int(t.max())
        months = tuple(months)
        lab = {"style": {"description_width": "110px"}, "layout": widgets.Layout(width="330px")}
        self.first = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[0], description="Season from", **lab)
        self.last = widgets.Dropdown(options=_MONTH_OPTIONS, value=months[-1], description="to", **lab)
        self.year_start = widgets.Dropdown(
            options=[("January (calendar year)", 1), ("October (water year)", 10)],
            value=year_start,
            description="Year starts in",
            **lab,
        )
        self.years = widgets.IntRangeSlider(
            value=tuple(years) if years else (lo, hi),
            min=lo,
            max=hi,
            description="Years",
            continuous_update=False,
            readout=False,
            style={"description_width": "110px"},
            layout=widgets.Layout(width="330px"),
        )
        # the slider's own readout is too narrow for a range of two years: typed year boxes instead
        self.years_first, self.years_last = year_range_entry(self.years)
        self.how = widgets.RadioButtons(
            options=[("ratio of sums", "ratio_of_sums"), ("mean of ratios", "mean_of_ratios")],
            value=how,
            description="Averaging",
            **lab,
        )
        self.chart_basin = widgets.Dropdown(options=[], description="Chart basin", **lab)
        self.season_note = widgets.HTML()
        frame = MapFrame(kind="share", title=None)
        self._make_tools(frame, basins)
        super().__init__(map_frame=frame, export_dir=export_dir)
        self.add_export("Per-year shares as CSV", self._write_per_year, "csv", stem="seasonal_share_per_year")
        self._basins_changed(self.basins, refresh=False)
        self.watch(self.first, self.last, self.year_start, self.years, self.how, self.chart_basin)
        self.refresh()

    # ------------------------------------------------------------ layout and parameters
    def build_controls(self):
        return [
            self.first,
            self.last,
            self.season_note,
            self.year_start,
            self.years,
            widgets.HBox(
                [self.years_first, widgets.Label("to"), self.years_last],
                layout=widgets.Layout(margin="0 0 2px 114px", align_items="center"),
            ),
            self.how,
            self.chart_basin,
            widgets.HTML("<hr style='margin:4px 0'>"),
            self.tools,
        ]

    def basins_changed(self, event, details):
        self.tools.sync()
        self._basins_changed(self.basins)

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
            raise ParameterError(
                "the season covers the whole year",
                source="seasonal share",
                variable="season",
                expected="a season shorter than 12 months",
                fix="choose an end month before the start month's predecessor",
            )
        label = f"{MONTH_LABELS[months[0] - 1]}–{MONTH_LABELS[months[-1] - 1]}"
        wraps = months[-1] < months[0]
        self.season_note.value = (
            f"<small>{len(months)} months ({label}){', over the new year' if wraps else ''}</small>"
        )
        years = tuple(self.years.value)
        if years == (self.years.min, self.years.max):
            years = None  # the whole record: every complete season-year, whatever its label
        return {
            "months": months,
            "how": self.how.value,
            "years": years,
            "year_start": self.year_start.value,
            "basins": self.basins,
            "chart_basin": self.chart_basin.value,
        }

    # ------------------------------------------------------------ computation
    def compute(self, months, how, years, year_start, basins, chart_basin):
        key = (months, how, years, year_start)
        monthly = monthly_source(self.pr)
        share = self._maps.get(key)
        if share is None:
            share = share_map(monthly, months=months, how=how, years=years, year_start=year_start)
        new = [b for b in basins if self._rows.get(key + (b.token, b.name)) is None]
        rows = basin_shares(monthly, new, months=months, how=how, years=years, year_start=year_start) if new else None
        return {"share": share, "rows": rows}

    def finish(self, computed, params):
        months, how, years, ys = params["months"], params["how"], params["years"], params["year_start"]
        key = (months, how, years, ys)
        self._maps.put(key, computed["share"])
        if computed["rows"] is not None:
            rows = computed["rows"]
            for name in rows["basin"].values:
                b = next(b for b in params["basins"] if b.name == name)
                self._rows.put(key + (b.token, b.name), rows.sel(basin=[name]))
        ds = xr.Dataset({"share": computed["share"]})
        basins = params["basins"]
        if basins:
            # only the basins not seen before were computed; the others come from the cache
            parts = [self._rows.get(key + (b.token, b.name)) for b in basins]
            rows = xr.concat(
                [p[[v for v in _BASIN_VARS if v in p]] for p in parts], dim="basin", combine_attrs="override"
            )
            ds["basin_share"] = rows["seasonal_share_1"]
            ds["per_year"] = rows["seasonal_share_per_year"]
            for name, var in (("slope", "share_slope"), ("pvalue", "share_pvalue"), ("intercept", "share_intercept")):
                if var in rows:
                    ds[name] = rows[var]
            self._basin_rows = rows
        used = computed["share"].attrs.get("years", [None, None])
        ds.attrs = {
            "season_months": list(months),
            "how": how,
            "first_year": used[0],
            "last_year": used[1],
            "year_start": ys,
        }
        return ds

    # ------------------------------------------------------------ display
    def basin_table(self, result) -> pd.DataFrame:
        """The table under the map, rendered from the analysis' own labels and units."""
        cols = ["area_km2", "seasonal_share_1", "share_slope", "share_pvalue", "n_share_years"]
        if "basin_share" not in result:
            return pd.DataFrame(index=pd.Index([], name="basin"))
        rows = self._basin_rows
        return frame(rows, columns=[c for c in cols if c in rows], display=True)

    def render(self, result, params):
        months = params["months"]
        label = f"{MONTH_LABELS[months[0] - 1]}–{MONTH_LABELS[months[-1] - 1]}"
        self.map.show_field(
            result["share"],
            kind="share",
            label=f"seasonal share {label} [%]",
            title=f"Share of annual precipitation falling {label}, "
            f"{result.attrs['first_year']}–{result.attrs['last_year']}",
        )
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
            raise ParameterError(
                "there are no basin series yet", source="seasonal share", fix="draw or load a basin first"
            )
        table = (100 * self.result["per_year"]).to_pandas().T
        table.columns = [f"{c} seasonal share [%]" for c in table.columns]
        self.write_table_csv(table, path, float_format="%.4f")
