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
import numpy as np
import pandas as pd
import xarray as xr

from ..compute._time import MONTH_NAMES, season_months
from ..compute.anomaly import anomaly
from ..compute.spi import SPI_CLASSES, SPI_SCALES, spi, spi_category
from ..errors import ParameterError
from ..geo.aggregate import basin_mean
from ..geo.basinset import whole_grid_basin
from .base import BaseWidget
from .mapframe import MapFrame

__all__ = ["AnomalyWidget", "whole_grid_basin", "step_labels", "decimal_time"]

PERIODS = [("month", "month"), ("season", "season"), ("year (Jan-Dec)", "year"),
           ("water year (Oct-Sep)", "water_year")]
KINDS = [("percent of normal", "percent"), ("difference from normal (mm)", "absolute"),
         ("standardized anomaly", "standardized"), ("SPI", "spi")]
# colour style of the map for each kind (see climwidgets.plot.maps.KINDS)
_MAP_KIND = {"absolute": "difference", "percent": "percent", "standardized": "standardized",
             "spi": "standardized"}
from ..analyses.anomalies import UNIT_WORDS as _UNIT_WORDS  # noqa: E402
from ..analyses.anomalies import step_table  # noqa: E402
from ..analyses.run import IN_MEMORY_BYTES  # noqa: E402


def step_labels(da) -> list[str]:
    """Readable labels of the steps of a result: 'YYYY-MM' on a time axis, 'YYYY' on years."""
    if "time" in da.dims:
        t = da["time"]
        return [f"{y:04d}-{m:02d}" for y, m in zip(t.dt.year.values, t.dt.month.values)]
    return [str(int(y)) for y in da["year"].values]


def decimal_time(da) -> np.ndarray:
    """Year + (month - 1) / 12 on a time axis (any calendar), the year itself on years."""
    if "time" in da.dims:
        t = da["time"]
        return t.dt.year.values + (t.dt.month.values - 1) / 12.0
    return np.asarray(da["year"].values, dtype=float)


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
            raise ParameterError(f"pr is a {type(pr).__name__}", source="AnomalyWidget", variable="pr",
                                 expected="a precipitation DataArray with a time dimension (mm per step)",
                                 fix="open the data with cw.open_precip")
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
        self.scale = widgets.Dropdown(options=[(f"{s} month{'s' if s > 1 else ''}", s) for s in SPI_SCALES],
                                      value=3, description="SPI scale", style=style, layout=lay)
        month_opts = [(name, i + 1) for i, name in enumerate(MONTH_NAMES)]
        self.season_from = widgets.Dropdown(options=month_opts, value=12, description="Season from",
                                            style=style, layout=lay)
        self.season_to = widgets.Dropdown(options=month_opts, value=2, description="through",
                                          style=style, layout=lay)
        self.baseline = widgets.IntRangeSlider(value=(max(y0, baseline[0]), min(y1, baseline[1])), min=y0, max=y1,
                                               description="Baseline years", style=style, layout=lay,
                                               continuous_update=False)
        self.step = widgets.SelectionSlider(options=["-"], description="Time step shown", style=style,
                                            layout=lay, continuous_update=False)
        super().__init__(map_frame=MapFrame(basins=self.basins, kind="percent"), export_dir=export_dir)
        self.watch(self.period, self.kind, self.scale, self.season_from, self.season_to, self.baseline)
        self.step.observe(self._on_step, names="value")
        self.period.observe(self._enable, names="value")
        self.kind.observe(self._enable, names="value")
        self._enable()
        self.refresh()

    # ------------------------------------------------------------ BaseWidget hooks
    def build_controls(self):
        note = widgets.HTML("<small>SPI is monthly: it ignores the period setting. "
                            "Basin values are anomalies of the basin-mean precipitation.</small>")
        return [self.period, self.season_from, self.season_to, self.kind, self.scale, self.baseline,
                self.step, note]

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
            raise ParameterError("the baseline is a single year", source="AnomalyWidget", variable="baseline",
                                 expected="a range of years, 30 by WMO practice",
                                 fix="widen the baseline years slider")
        if kind == "spi":
            params.update(period="month", months=None, scale=int(self.scale.value))
        else:
            period = self.period.value
            months = season_months(self.season_from.value, self.season_to.value) if period == "season" else None
            params.update(period=period, months=months, scale=None)
        return params

    def _anomaly(self, pr, kind, period, months, scale, baseline):
        if kind == "spi":
            return spi(pr, scale=scale, baseline=baseline)
        return anomaly(pr, baseline=baseline, kind=kind, period=period, months=months)

    @property
    def _series_basins(self):
        return self.basins_or_whole_grid(self._whole)

    def _inputs(self):
        """The precipitation and the basin-mean series, each read once and kept."""
        import dask

        if self._cache is None:
            pr = self.pr
            # A small grid is read into memory once (analyses.run.IN_MEMORY_BYTES): anomaly
            # graphs over many small selections cost more in dask overhead than the arithmetic.
            if pr.chunks is not None and pr.nbytes <= IN_MEMORY_BYTES:
                pr = pr.load()
            self._cache = pr
        pr = self._cache
        new = {(b.token, b.name): basin_mean(pr, b) for b in self._series_basins
               if (b.token, b.name) not in self._series}
        if new:  # only basins not seen before
            (done,) = dask.compute(new)
            self._series.update(done)
        return pr, {b.name: self._series[(b.token, b.name)] for b in self._series_basins}

    def compute(self, **params):
        pr, basin_pr = self._inputs()
        field = self._anomaly(pr, **params)
        series = {name: self._anomaly(s, **params) for name, s in basin_pr.items()}
        classes = {n: spi_category(s) for n, s in series.items()} if params["kind"] == "spi" else {}
        return {"field": field, "series": series, "classes": classes}

    def finish(self, computed, params):
        field = computed["field"]
        series = computed["series"]
        frame = pd.DataFrame({name: s.values for name, s in series.items()},
                             index=pd.Index(step_labels(field), name="step"))
        classes = pd.DataFrame({name: c.values for name, c in computed["classes"].items()},
                               index=frame.index) if computed["classes"] else None
        self._pending = {id(field): (frame, classes, self._colour_limits(field, params["kind"]))}
        return field

    def _colour_limits(self, field, kind):
        """Symmetric limits fixed over the whole record, so steps are comparable."""
        if kind in ("spi", "standardized"):
            return -3.0, 3.0
        centre = 100.0 if kind == "percent" else 0.0
        dev = np.abs(np.asarray(field.values, dtype=float) - centre)
        dev = dev[np.isfinite(dev)]
        half = float(np.percentile(dev, 98)) if dev.size else 1.0
        # percent of normal cannot fall below 0: keep the scale within 0-200 %
        half = min(max(half, 10.0), 100.0) if kind == "percent" else max(half, 1.0)
        return centre - half, centre + half

    def render(self, result, params):
        frame, classes, limits = self._pending.pop(id(result), (None, None, None))
        self.basin_series, self.basin_classes, self._limits = frame, classes, limits
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
        units = self.result.attrs.get("units", "")
        name = self.result.attrs.get("long_name", "anomaly")
        return f"{name} [{_UNIT_WORDS.get(units, units)}]"

    def _short_label(self):
        p = self._params
        return {"percent": "percent of normal [%]", "absolute": "difference from normal [mm]",
                "standardized": "standardized anomaly [sd]"}.get(p["kind"], f"SPI, {p['scale']}-month [sd]")

    def _show_step(self):
        field = self.shown()
        kind = self._params["kind"]
        vmin, vmax = self._limits
        self.map.show_field(field, kind=_MAP_KIND[kind], vmin=vmin, vmax=vmax, label=self._label(),
                            title=f"{self.step.value}")
        self.show_table(self._table())
        self.show_chart(self._chart())

    def _table(self):
        return step_table(self.basin_series, self.step.value, self.result.attrs.get("units", ""),
                          self.basin_classes)

    def _chart(self):
        from matplotlib.figure import Figure

        kind = self._params["kind"]
        fig = Figure(figsize=(7.5, 3.0))
        ax = fig.add_subplot(1, 1, 1)
        x = decimal_time(self.result)
        if kind == "spi":
            _spi_bands(ax)
        else:
            ax.axhline(100.0 if kind == "percent" else 0.0, color="0.3", lw=0.8)
        if self.basin_series is not None:
            for name in self.basin_series.columns:
                ax.plot(x, self.basin_series[name].to_numpy(dtype=float), lw=1.0, label=str(name))
        ax.axvline(x[self.step_index], color="k", ls=":", lw=1.0)
        ax.set_ylabel(self._short_label(), fontsize=8)
        ax.set_xlabel("year")
        if kind in ("spi", "standardized"):
            lo = np.nanmin(self.basin_series.to_numpy(dtype=float)) if self.basin_series is not None else -3
            hi = np.nanmax(self.basin_series.to_numpy(dtype=float)) if self.basin_series is not None else 3
            ax.set_ylim(min(-3.0, lo - 0.2), max(3.0, hi + 0.2))
        ax.grid(alpha=0.3)
        ax.legend(fontsize=7, loc="upper left", ncol=4)
        title = "basin-mean series" if self.basins else "area-weighted mean of the whole grid"
        ax.set_title(f"{title}; dotted line: {self.step.value}", fontsize=9)
        fig.tight_layout()
        return fig


def _spi_bands(ax):
    """Shade the SPI classes (WMO 2012 SPI User Guide, Table 1) from dry brown to wet green."""
    import matplotlib

    cmap = matplotlib.colormaps["BrBG"]
    edges = [c[0] for c in SPI_CLASSES]  # lower bounds from the top class down
    tops = [np.inf] + edges[:-1]
    n = len(SPI_CLASSES)
    for i, ((lower, name), top) in enumerate(zip(SPI_CLASSES, tops)):
        lo, hi = max(lower, -10.0), min(top, 10.0)
        colour = cmap(1.0 - (i + 0.5) / n)
        ax.axhspan(lo, hi, color=colour, alpha=0.25 if name != "near normal" else 0.08, lw=0)
        mid = {"extremely wet": 2.5, "extremely dry": -2.5}.get(name, (lo + hi) / 2)
        ax.text(1.005, mid, name, transform=ax.get_yaxis_transform(), fontsize=6, va="center",
                color="0.25", clip_on=False)
