"""ScenarioWidget: climate-change signals of a model ensemble, as a map and a basin table.

Controls, in plain words:

* **Season from … to …**: the season of the seasonal share (it may run over the new year).
* **Historical years** and **Future years**: the periods of the two runs compared (the
  sliders' full range means every complete year of the run).
* **Method**: the model runs as they are; delta change (the observed record times each
  member's monthly change factors); or quantile delta mapping of the future run to the
  observations.  The last two are offered when observations are given (``obs=``).
* **Map shows**: the change in the annual normal or in the seasonal share.
* **Design depth** (daily or hourly runs): the return period of the 1-day areal depth
  whose change the table gives.

The map follows the "Ensemble member" menu (one member, the ensemble mean or the spread
between members, :mod:`climwidgets.widgets.members`); dots mark the cells where fewer
than :data:`climwidgets.analyses.scenario.AGREEMENT_LEVEL` of the members agree on the
sign of the change.  The table always gives the ensemble figures of every basin: mean,
lowest and highest member and the members agreeing
(:func:`climwidgets.analyses.scenario.basin_signals`, with
:func:`~climwidgets.analyses.scenario.basin_depth_signals` for design depths).  The
scenario cautions stand above the map whatever is shown, and travel in the CSV's
metadata file.
"""

from __future__ import annotations

import html

import ipywidgets as widgets
import xarray as xr

from ..analyses.meta import CATALOGUE, frame
from ..analyses.scenario import AGREEMENT_LEVEL, METHOD_LABELS, basin_depth_signals, basin_signals, signal_maps
from ..cache import LRUCache
from ..compute._time import season_months
from ..compute.scenario import SCENARIO_CAUTIONS
from ..errors import ParameterError
from ..geo.basinset import whole_grid_basin
from .base import _CSS, MONTH_OPTIONS, BaseWidget, df_to_html
from .mapframe import MapFrame

__all__ = ["ScenarioWidget"]

_LAYERS = [(CATALOGUE[n].label, n) for n in ("normal_change_1", "share_change_1")]
_DAILY = ("day", "hour")


def _years(da):
    years = da["time"].dt.year.values
    return int(years.min()), int(years.max())


class ScenarioWidget(BaseWidget):
    """Map and basin table of the climate-change signals of a historical and a future run.

    Parameters
    ----------
    hist, future : DataArray
        Historical and future runs of the same members (mm per step, ``cw.open_precip``
        output), with a member dimension or none (one run).
    basins : list of Basin or a shared cw.BasinSet, optional
        Basins of the table; without them the whole model grid is one basin.
    obs : DataArray, optional
        Observed precipitation on its own grid: offers delta change and quantile delta
        mapping (the changes are then on the observed grid).
    months : the starting season, default July–August
    historical, future_period : (first, last) years, optional (default every complete year)
    method : 'none', 'monthly_ratio' or 'quantile_delta'
    design_period : return period (years) of the design-depth change, daily or hourly runs
    n_boot : bootstrap size of the design-depth fits (only the estimates are used)
    export_dir : folder for the export buttons

    Attributes
    ----------
    result : dict with ``maps`` (:func:`signal_maps`, seen as the member view chosen),
        ``signals`` (:func:`basin_signals`, all members) and ``depths``
        (:func:`basin_depth_signals` at the chosen return period, or None)
    table : DataFrame shown under the map (the ensemble figures of every basin)
    """

    title = "Climate-change scenario"
    export_stem = "scenario_signals"
    member_whole = ("signals", "depths")  # the table gives the ensemble figures whatever the map shows

    def __init__(
        self,
        hist,
        future,
        basins=None,
        obs=None,
        months=(7, 8),
        historical=None,
        future_period=None,
        method="none",
        design_period=100,
        n_boot=200,
        export_dir="out",
    ):
        for label, da in (("hist", hist), ("future", future)):
            if not isinstance(da, xr.DataArray):
                raise ParameterError(
                    f"{label} is a {type(da).__name__}",
                    source="ScenarioWidget",
                    variable=label,
                    expected="a DataArray of precipitation (cw.open_precip)",
                    fix="open the run with cw.open_precip",
                )
        self.pr, self.future, self.obs = hist, future, obs
        self.n_boot = int(n_boot)
        self.use_basins(basins)
        self._whole = whole_grid_basin(hist.isel({d: 0 for d in hist.dims if d not in ("time", "lat", "lon")}))
        self._results = LRUCache(maxsize=16)
        self._dots = None
        lab = {"style": {"description_width": "130px"}, "layout": widgets.Layout(width="340px")}
        months = tuple(months)
        self.first = widgets.Dropdown(options=MONTH_OPTIONS, value=months[0], description="Season from", **lab)
        self.last = widgets.Dropdown(options=MONTH_OPTIONS, value=months[-1], description="to", **lab)
        self.historical, self.historical_label = self._slider("Historical years", hist, historical)
        self.future_years, self.future_label = self._slider("Future years", future, future_period)
        methods = ["none"] + (["monthly_ratio", "quantile_delta"] if obs is not None else [])
        if method not in methods:
            raise ParameterError(
                f"method {method!r} is not offered here",
                source="ScenarioWidget",
                variable="method",
                expected=" or ".join(repr(m) for m in methods),
                fix="pass obs=... for delta change or quantile delta mapping",
            )
        self.method = widgets.Dropdown(
            options=[(METHOD_LABELS[m], m) for m in methods], value=method, description="Method", **lab
        )
        self.layer = widgets.Dropdown(options=_LAYERS, value="normal_change_1", description="Map shows", **lab)
        self.daily = hist.attrs.get("step") in _DAILY or str(hist.attrs.get("step", "")).endswith("hour")
        self.design_period = widgets.Dropdown(
            options=[(f"{t}-year 1-day", t) for t in (10, 25, 50, 100)],
            value=design_period if design_period in (10, 25, 50, 100) else 100,
            description="Design depth",
            style=lab["style"],
            layout=widgets.Layout(width="340px"),
        )  # its own: hidden alone
        if not self.daily:  # monthly runs give no design depths: the note under the controls says so
            self.design_period.layout.display = "none"
        self.about = widgets.HTML(layout=widgets.Layout(width="340px"))
        self.cautions = widgets.HTML(
            "<div style='border-left:4px solid #b5651d;background:#fbf4ec;padding:4px 10px;margin:4px 0;"
            "font-size:12px;max-width:980px'><b>Before using these numbers:</b><ol style='margin:2px 0 2px 18px;"
            "padding:0'>" + "".join(f"<li>{html.escape(c)}</li>" for c in SCENARIO_CAUTIONS) + "</ol></div>"
        )
        super().__init__(
            map_frame=MapFrame(basins=self.basins, kind="difference", figsize=(5.6, 4.2)),
            export_dir=export_dir,
            chart=False,
        )
        self.add_export("Report as HTML", self._write_report, "html", stem="scenario_report")
        if self.member is not None:  # the menu's words need a little more room than the base gives
            self.member.style.description_width = "130px"
            self.member.layout.width = "340px"
        # the cautions stand under the title, above the map and the table, whatever is shown
        self.children = (self.children[0], self.cautions, *self.children[1:])
        self.watch(self.first, self.last, self.historical, self.future_years, self.method, self.design_period)
        self.watch_display(self.layer)
        self.refresh()

    @staticmethod
    def _slider(description, run, period):
        lo, hi = _years(run)
        slider = widgets.IntRangeSlider(
            value=tuple(period) if period else (lo, hi),
            min=lo,
            max=hi,
            description=description,
            continuous_update=False,
            readout=False,
            style={"description_width": "130px"},
            layout=widgets.Layout(width="270px"),
        )
        label = widgets.Label(f"{slider.value[0]}–{slider.value[1]}")
        slider.observe(lambda c: setattr(label, "value", f"{c['new'][0]}–{c['new'][1]}"), names="value")
        return slider, label

    # ------------------------------------------------------------ BaseWidget hooks
    def build_controls(self):
        depth_note = (
            ""
            if self.daily
            else "<br>Design-depth change: needs daily or hourly runs; these runs are "
            f"{html.escape(str(self.pr.attrs.get('step', '?')))} totals."
        )
        note = widgets.HTML(
            f"<small>Dotted cells on the map: fewer than {100 * AGREEMENT_LEVEL:.0f} % of the members agree on "
            f"the sign of the change. The table gives the ensemble figures of every basin; the "
            f"member menu chooses what the map shows.{depth_note}</small>",
            layout=widgets.Layout(width="340px"),
        )
        return [
            self.first,
            self.last,
            widgets.HBox([self.historical, self.historical_label]),
            widgets.HBox([self.future_years, self.future_label]),
            self.method,
            self.layer,
            self.design_period,
            note,
            self.about,
        ]

    @staticmethod
    def _period(slider):
        value = tuple(int(v) for v in slider.value)
        return None if value == (slider.min, slider.max) else value  # full range: every complete year

    def parameters(self):
        months = season_months(self.first.value, self.last.value)
        if len(months) == 12:
            raise ParameterError(
                "the season covers the whole year",
                source="ScenarioWidget",
                variable="season",
                expected="a season shorter than 12 months",
                fix="choose an end month before the start month's predecessor",
            )
        return {
            "months": months,
            "historical": self._period(self.historical),
            "future": self._period(self.future_years),
            "method": self.method.value,
            "design_period": self.design_period.value if self.daily else None,
            "basins": self.basins,
        }

    def compute(self, months, historical, future, method, design_period, basins):
        key = (months, historical, future, method, design_period, tuple((b.token, b.name) for b in basins))
        cached = self._results.get(key)
        if cached is not None:
            return cached
        shown = self.basins_or_whole_grid(self._whole)
        run = dict(months=months, historical=historical, future=future, obs=self.obs, method=method)
        out = {
            "maps": signal_maps(self.pr, self.future, **run),
            "signals": basin_signals(self.pr, self.future, shown, **run),
            "depths": None,
            "key": key,
        }
        if design_period is not None:
            depths = basin_depth_signals(
                self.pr,
                self.future,
                shown,
                periods=(design_period,),
                historical=historical,
                future=future,
                n_boot=self.n_boot,
            )
            out["depths"] = depths.sel(return_period=design_period, drop=True)
        return out

    def finish(self, computed, params):
        self._results.put(computed["key"], computed)
        return computed

    def render(self, result, params):
        self._show()
        signals = result["signals"]
        table = self.basin_table(result)
        self.show_table(table)
        hp, fp = signals.attrs["historical_period"], signals.attrs["future_period"]
        extra = ""
        if "model_historical_period" in signals.attrs:
            mh, mf = signals.attrs["model_historical_period"], signals.attrs["model_future_period"]
            extra = f" Change factors from the model years {mh[0]}–{mh[1]} and {mf[0]}–{mf[1]}."
        depth = ""
        if result["depths"] is not None:
            d = result["depths"].attrs
            depth = (
                f" Design depths: the model runs as they are, {d['future_period'][0]}–"
                f"{d['future_period'][1]} against {d['historical_period'][0]}–{d['historical_period'][1]}."
            )
        self.about.value = (
            f"<small><b>Compared:</b> {html.escape(signals.attrs['comparison'])}; "
            f"{fp[0]}–{fp[1]} against {hp[0]}–{hp[1]}.{html.escape(extra + depth)}</small>"
        )

    def _show(self):
        result = self.result
        field = result["maps"][self.layer.value]
        signals = result["signals"]
        hp, fp = signals.attrs["historical_period"], signals.attrs["future_period"]
        season = signals.attrs["season"]
        words = "annual normal" if self.layer.value == "normal_change_1" else f"{season} share"
        self.map.show_field(
            field, kind="difference", title=f"Change in {words}, {fp[0]}–{fp[1]} against {hp[0]}–{hp[1]}"
        )
        self._mark(result["maps"].get(f"{self.layer.value}_agreement"))

    def _mark(self, agreement):
        from ..plot.scenario import mark_low_agreement

        if self._dots is not None:
            try:
                self._dots.remove()
            except (ValueError, NotImplementedError, AttributeError):
                pass  # the axes were rebuilt (another grid): the dots went with them
            self._dots = None
        if agreement is not None and self.map.ax is not None:
            self._dots = mark_low_agreement(self.map.ax, agreement, AGREEMENT_LEVEL)
        self.map.redraw()

    def basin_table(self, result):
        """The table under the map: the ensemble figures (or the run's change) of every basin, as shown."""
        signals = result["signals"]
        ensemble = signals.attrs.get("member_dim", "none") != "none"
        parts = [signals if ensemble else signals[["share_change_1", "normal_change_1"]]]
        if result["depths"] is not None:
            depths = result["depths"]
            names = [n for n in depths.data_vars if n.startswith("depth_change_1")] if ensemble else ["depth_change_1"]
            parts.append(depths[names])
        return frame(xr.merge(parts, combine_attrs="override"), display=True)

    def show_table(self, df):
        """The table with a caption naming what it shows (ensemble figures, not the member view)."""
        self.table = df
        signals = self.result["signals"] if self.result is not None else None
        n = signals.sizes.get(signals.attrs.get("member_dim", ""), 0) if signals is not None else 0
        head = (
            (
                f"<div style='margin:2px 0'><small><b>Table:</b> ensemble figures of {n} members (mean, lowest and "
                f"highest member, members agreeing on the sign)</small></div>"
            )
            if n
            else ""
        )
        self.table_html.value = _CSS + head + df_to_html(df)

    # ------------------------------------------------------------ exports
    def export_tag(self):
        try:
            params = self.parameters()
        except ParameterError:
            params = {}
        parts = [super().export_tag()]
        if params.get("method"):
            parts.append(params["method"].replace("_", "-"))
        return "_".join(p for p in parts if p)

    def csv_provenance(self):
        out = super().csv_provenance()
        sources = []
        for da in (self.pr, self.future, self.obs):  # the files cw.open_precip read, as the jobs list them
            if da is not None:
                found = [s for s in str(da.attrs.get("sources", "")).split("; ") if s]
                found = found or [s for s in [getattr(da, "encoding", {}).get("source")] if s]
                sources += [s for s in found if s not in sources]
        out["inputs"] = sources or None
        out["cautions"] = list(SCENARIO_CAUTIONS)
        if self.result is not None:
            a = self.result["signals"].attrs
            out["notes"] = [
                f"compared: {a['comparison']}; {a['future_period'][0]}-{a['future_period'][1]} "
                f"against {a['historical_period'][0]}-{a['historical_period'][1]}"
            ]
        return out

    def _write_report(self, path):
        from ..report.scenario_section import write_scenario_report

        if self.result is None:
            raise ParameterError(
                "there are no numbers to report yet", source="ScenarioWidget", fix="wait for the computation to finish"
            )
        prov = self.csv_provenance()
        params = {k: v for k, v in prov["parameters"].items() if v is not None}
        write_scenario_report(
            self.result["signals"],
            path,
            overwrite=True,
            inputs=prov["inputs"],
            parameters=params,
            depths=None if self.result["depths"] is None else self._depths_for_report(),
        )

    def _depths_for_report(self):
        depths = self.result["depths"]
        return depths.expand_dims(return_period=[self.design_period.value]).transpose("basin", "return_period", ...)
