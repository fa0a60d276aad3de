"""AnomalyWidget: how a month, season or year compares with the baseline normal.

Controls: period (month, season, year, water year), kind (difference from normal,
percent of normal, standardized anomaly, SPI with its accumulation scale), baseline years
and the time step shown.  The map shows the anomaly of every cell at the chosen step on a
diverging brown-green scale centred on zero (on 100 % for percent of normal).  Basins
get the anomaly of their area-weighted mean precipitation (``cw.basin_mean`` first, then
the same anomaly function), shown as a time series (SPI with its published classes as
bands) and as a table at the chosen step.

``widget.result`` is the anomaly field for all time steps, exactly what ``cw.anomaly``
(or ``cw.spi``) returns for the current parameters; ``widget.basin_series`` holds the
basin series (a DataFrame, one column per basin).  Moving the time step does not
recompute anything.
"""

from __future__ import annotations

import ipywidgets as widgets
import xarray as xr

from ..analyses.anomalies import (
    ANOMALY_KINDS,
    anomaly_field,
    anomaly_ranking,
    anomaly_series,
    decimal_time,
    step_labels,
)
from ..analyses.basins import basin_series
from ..analyses.meta import frame
from ..analyses.run import compute, small_in_memory
from ..compute._time import MONTH_NAMES, season_months
from ..compute.spi import SPI_SCALES
from ..errors import ParameterError
from ..geo.basinset import whole_grid_basin
from ..plot.charts import anomaly_chart
from ..plot.maps import record_limits
from .base import BaseWidget
from .entry import step_entry, year_range_entry
from .mapframe import MapFrame

__all__ = ["AnomalyWidget", "whole_grid_basin", "step_labels", "decimal_time", "season_months"]

PERIODS = [("month", "month"), ("season", "season"), ("year (Jan-Dec)", "year"), ("water year (Oct-Sep)", "water_year")]
KINDS = [
    ("percent of normal", "percent"),
    ("difference from normal (mm)", "absolute"),
    ("standardized anomaly", "standardized"),
    ("SPI", "spi"),
]
# colour style of the map for each kind (see climwidgets.plot.maps.KINDS)
_MAP_KIND = {"absolute": "difference", "percent": "percent", "standardized": "standardized", "spi": "standardized"}


class AnomalyWidget(BaseWidget):
    """Anomalies against the baseline normal: map, basin series and basin table.

    Parameters
    ----------
    pr : DataArray
        Precipitation depth per step in mm (dims time, lat, lon), numpy- or dask-backed.
    basins : list of Basin or a shared cw.BasinSet, optional (changes to a shared set show here)
        Basins for the series and the table; without them the whole grid is used.
    baseline : (first, last) years, optional
        Default (1991, 2020) when the data cover it, else the whole record.
    export_dir : folder for the export buttons.
    """

    title = "Anomalies: percent of normal, standardized anomaly, SPI"
    export_stem = "anomaly"

    def __init__(self, pr, basins=None, baseline=None, export_dir="out"):
        if not isinstance(pr, xr.DataArray) or "time" not in pr.dims:
            raise ParameterError(
                f"pr is a {type(pr).__name__}",
                source="AnomalyWidget",
                variable="pr",
                expected="a precipitation DataArray with a time dimension (mm per step)",
                fix="open the data with cw.open_precip",
            )
        self.pr = pr
        self.use_basins(basins)
        self._whole = whole_grid_basin(pr)
        self._series = {}
        years = pr["time"].dt.year.values
        y0, y1 = int(years.min()), int(years.max())
        if baseline is None:
            baseline = (1991, 2020) if y0 <= 1991 and y1 >= 2020 else (y0, y1)
        self.basin_series = None
        self._pending = {}
        self._cache = None
        self._updating = False
        style = {"description_width": "110px"}
        lay = widgets.Layout(width="290px")
        self.period = widgets.Dropdown(options=PERIODS, value="month", description="Period", style=style, layout=lay)
        self.kind = widgets.Dropdown(options=KINDS, value="percent", description="Kind", style=style, layout=lay)
        self.scale = widgets.Dropdown(
            options=[(f"{s} month{'s' if s > 1 else ''}", s) for s in SPI_SCALES],
            value=3,
            description="SPI scale",
            style=style,
            layout=lay,
        )
        month_opts = [(name, i + 1) for i, name in enumerate(MONTH_NAMES)]
        self.season_from = widgets.Dropdown(
            options=month_opts, value=12, description="Season from", style=style, layout=lay
        )
        self.season_to = widgets.Dropdown(options=month_opts, value=2, description="through", style=style, layout=lay)
        self.baseline = widgets.IntRangeSlider(
            value=(max(y0, baseline[0]), min(y1, baseline[1])),
            min=y0,
            max=y1,
            description="Baseline years",
            style=style,
            layout=lay,
            continuous_update=False,
            readout=False,
        )
        self.baseline_first, self.baseline_last = year_range_entry(self.baseline)
        self.step = widgets.SelectionSlider(
            options=["-"], description="Time step", style=style, layout=lay, continuous_update=False, readout=False
        )
        # hundreds of months on a short track: a typed 'YYYY-MM' box and one-step buttons
        self.step_note = widgets.HTML("")
        self.step_box, self.step_prev, self.step_next = step_entry(self.step, self.step_note)
        # a long record of several basins overplots: the chart shows one basin, or all of them
        self.chart_basin = widgets.Dropdown(
            options=[("all basins", None)], value=None, description="Chart shows", style=style, layout=lay
        )
        super().__init__(map_frame=MapFrame(basins=self.basins, kind="percent"), export_dir=export_dir)
        self.watch(self.period, self.kind, self.scale, self.season_from, self.season_to, self.baseline)
        self.chart_basin.observe(self._on_chart_basin, names="value")
        self.step.observe(self._on_step, names="value")
        self.period.observe(self._enable, names="value")
        self.kind.observe(self._enable, names="value")
        self._enable()
        self.refresh()

    # ------------------------------------------------------------ BaseWidget hooks
    def build_controls(self):
        note = widgets.HTML(
            "<small>SPI is monthly: it ignores the period setting. "
            "Basin values are anomalies of the basin-mean precipitation.</small>"
        )
        indent = widgets.Layout(margin="0 0 2px 114px", align_items="center")
        years = widgets.HBox([self.baseline_first, widgets.Label("to"), self.baseline_last], layout=indent)
        step = widgets.HBox([self.step_prev, self.step_box, self.step_next], layout=indent)
        return [
            self.period,
            self.season_from,
            self.season_to,
            self.kind,
            self.scale,
            self.baseline,
            years,
            self.step,
            step,
            self.step_note,
            self.chart_basin,
            note,
        ]

    def _enable(self, *_):
        spi_kind = self.kind.value == "spi"
        self.scale.disabled = not spi_kind
        self.period.disabled = spi_kind
        seasonal = self.period.value == "season" and not spi_kind
        self.season_from.disabled = self.season_to.disabled = not seasonal

    def parameters(self):
        kind = self.kind.value
        params = {"kind": kind, "baseline": tuple(int(v) for v in self.baseline.value)}
        if params["baseline"][0] == params["baseline"][1]:
            raise ParameterError(
                "the baseline is a single year",
                source="AnomalyWidget",
                variable="baseline",
                expected="a range of years, 30 by WMO practice",
                fix="widen the baseline years slider",
            )
        if kind == "spi":
            params.update(period="month", months=None, scale=int(self.scale.value))
        else:
            period = self.period.value
            months = season_months(self.season_from.value, self.season_to.value) if period == "season" else None
            params.update(period=period, months=months, scale=None)
        return params

    @property
    def _series_basins(self):
        return self.basins_or_whole_grid(self._whole)

    def _inputs(self):
        """The precipitation and the basin-mean series (basin, time), each read once and kept."""
        if self._cache is None:
            self._cache = small_in_memory(self.pr)
        pr = self._cache
        basins = self._series_basins
        new = [b for b in basins if (b.token, b.name) not in self._series]
        if new:  # only basins not seen before, all in one weighted sum
            (done,) = compute(basin_series(pr, new).reset_coords(drop=True))
            for b in new:
                self._series[(b.token, b.name)] = done.sel(basin=b.name)
        series = xr.concat([self._series[(b.token, b.name)] for b in basins], dim="basin")
        return pr, series

    def compute(self, **params):
        pr, series = self._inputs()
        return {"field": anomaly_field(pr, **params), "basins": anomaly_series(series, **params)}

    def finish(self, computed, params):
        field = computed["field"]
        kind = params["kind"]
        # one colour scale over the whole record, so that steps are comparable
        if kind in ("spi", "standardized"):
            limits = (-3.0, 3.0)
        elif kind == "percent":  # percent of normal cannot fall below 0: keep within 0-200 %
            limits = record_limits(field.values, centre=100.0, floor=10.0, ceiling=100.0)
        else:
            limits = record_limits(field.values, centre=0.0)
        self._pending = {id(field): (computed["basins"], limits)}
        return field

    def render(self, result, params):
        self.basin_anomalies, self._limits = self._pending.pop(id(result), (None, None))
        values = self.basin_anomalies["anomaly"]
        self.basin_series = values.transpose("basin", ...).to_pandas().T
        self.basin_series.index = step_labels(values)
        self.basin_series.index.name = "step"
        self.basin_series.columns.name = None
        self._params = params
        labels = step_labels(result)
        current = self.step.value
        self._updating = True
        try:
            self.step.options = labels
            self.step.value = current if current in labels else labels[-1]
        finally:
            self._updating = False
        self._show_step()

    # ------------------------------------------------------------ time step
    def _on_step(self, change):
        if self._updating or self.result is None:
            return
        self._show_step()

    @property
    def step_index(self) -> int:
        return list(self.step.options).index(self.step.value)

    def shown(self) -> xr.DataArray:
        """The map currently shown: ``widget.result`` at the chosen time step."""
        dim = "time" if "time" in self.result.dims else "year"
        return self.result.isel({dim: self.step_index})

    def _label(self):
        """'label [units]' of the anomaly, the same words in colour bar, chart and table."""
        return f"{self.result.attrs['label']} [{self.result.attrs['display_units']}]"

    def _show_step(self):
        field = self.shown()
        kind = self._params["kind"]
        vmin, vmax = self._limits
        self.map.show_field(
            field,
            kind=_MAP_KIND[kind],
            vmin=vmin,
            vmax=vmax,
            label=self._label(),
            title=f"{ANOMALY_KINDS[kind][0]}, {self.step.value}",
        )
        self.show_table(frame(anomaly_ranking(self.basin_anomalies, self.step.value), display=True))
        title = "basin-mean series" if self.basins else "area-weighted mean of the whole grid"
        series = self.basin_anomalies["anomaly"]
        names = [str(n) for n in series["basin"].values]
        self._updating = True
        try:  # the chart's basin menu follows the basins; a long record opens on one basin
            options = [("all basins", None)] + [(n, n) for n in names]
            if list(self.chart_basin.options) != options:
                keep = self.chart_basin.value
                self.chart_basin.options = options
                long = series.sizes[series.dims[-1]] > 240 and len(names) > 1
                self.chart_basin.value = keep if keep in names else (names[0] if long else None)
        finally:
            self._updating = False
        if self.chart_basin.value is not None:
            series = series.sel(basin=[self.chart_basin.value])
            title = f"{self.chart_basin.value}, basin-mean series"
        self.show_chart(
            anomaly_chart(series, self.step_index, kind, self._label(), f"{title}; dotted line: {self.step.value}")
        )

    def _on_chart_basin(self, change):
        if self._updating or self.result is None:
            return
        self._show_step()  # a redraw: nothing is computed
