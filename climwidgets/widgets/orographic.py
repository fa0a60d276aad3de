"""OrographicContrastWidget: windward versus leeward precipitation across a mountain crest.

Controls: the wind direction (degrees the wind blows from), the crest (derived from the
terrain, or drawn by clicking on the map), the distance bands from the crest (km), the
confidence level and bootstrap size of the leeward/windward ratio, and the wind speed and
temperature, background rain rate and delays of the linear orographic model.

The observed contrast comes from ``cw.rain_shadow`` on the per-year annual totals
(``cw.annual_totals``), so the ratio carries a bootstrap interval over years; the
height dependence from ``cw.elevation_gradient`` on each side; the physical expectation
from ``cw.linear_orographic_precip`` (Smith & Barstad 2004) passed through the same
``cw.rain_shadow`` with the same crest and bands, so that the observed and modelled
ratios sit side by side in the table.

``widget.result`` is the observed ``cw.rain_shadow`` Dataset; ``widget.model`` the
modelled rate field, ``widget.model_contrast`` its ``cw.rain_shadow`` Dataset,
``widget.gradients`` the ``cw.elevation_gradient`` Dataset per side and ``widget.crest``
the crest used.
"""

from __future__ import annotations

import html

import ipywidgets as widgets
import numpy as np
import xarray as xr

from ..analyses.orographic import MODEL_BACKGROUND_MM_H, MODEL_DELAY_S, MODEL_NOTE, band_table, orographic_contrast
from ..errors import ParameterError
from ..plot.charts import contrast_chart
from .base import BaseWidget
from .entry import number_entry
from .mapframe import MapFrame

__all__ = ["OrographicContrastWidget", "parse_bands"]

LAYERS = [
    ("mean annual total", "observed"),
    ("distance from the crest", "distance"),
    ("linear model (rate)", "model"),
    ("terrain", "terrain"),
]


def parse_bands(text: str) -> tuple[float, ...]:
    """'0, 25, 50' -> (0.0, 25.0, 50.0): band edges in km from the crest."""
    try:
        edges = tuple(float(v) for v in str(text).replace(";", ",").split(",") if v.strip())
    except ValueError:
        edges = ()
    if len(edges) < 2 or any(b <= a for a, b in zip(edges, edges[1:])) or edges[0] < 0:
        raise ParameterError(
            f"distance bands {text!r} are not increasing distances",
            source="OrographicContrastWidget",
            variable="distance bands",
            expected="two or more increasing distances in km, starting at 0 or more, e.g. '0, 25, 50'",
            fix="type the band edges separated by commas",
        )
    return edges


class OrographicContrastWidget(BaseWidget):
    """Windward/leeward contrast, profiles and the linear orographic model, side by side.

    Parameters
    ----------
    pr : DataArray
        Precipitation depth per step in mm (dims time, lat, lon).
    elevation : DataArray
        Terrain height in metres on the same (lat, lon) grid.
    basins : list of Basin or a shared cw.BasinSet, optional (changes to a shared set show here)
        Outlines drawn on the map.
    n_boot : int, default 500
        Bootstrap resamples of years for the ratio's interval.
    export_dir : folder for the export buttons.
    """

    title = "Windward and leeward: orographic contrast"
    export_stem = "orographic_contrast"

    def __init__(self, pr, elevation, basins=None, n_boot=500, export_dir="out"):
        for name, obj in (("pr", pr), ("elevation", elevation)):
            if not isinstance(obj, xr.DataArray):
                raise ParameterError(
                    f"{name} is a {type(obj).__name__}",
                    source="OrographicContrastWidget",
                    variable=name,
                    expected="an xarray DataArray",
                    fix="open it with cw.open_precip / cw.open_elevation",
                )
        self.pr = pr
        self.elevation = elevation
        self.use_basins(basins)
        self.model = self.model_contrast = None
        self.gradients = {}
        self.crest = None
        self.drawn_crest = []
        self._pending = {}
        top = float(np.nanmax(np.asarray(elevation.values, dtype=float)))
        style = {"description_width": "130px"}
        lay = widgets.Layout(width="310px")
        # 360 degrees on a short track: a typed box beside the slider, to the degree
        self.wind_from = widgets.IntSlider(
            value=270,
            min=0,
            max=359,
            step=1,
            description="Wind from (°)",
            style=style,
            layout=widgets.Layout(width="236px"),
            readout=False,
            continuous_update=False,
        )
        self.wind_from_box = number_entry(self.wind_from)
        self.crest_mode = widgets.ToggleButtons(
            options=[("from terrain", "terrain"), ("drawn on map", "drawn")],
            value="terrain",
            description="Crest",
            style=style,
        )
        self.min_height = widgets.BoundedFloatText(
            value=round(0.1 * top, -1),
            min=0.0,
            max=max(top, 1.0),
            description="Lowest crest (m)",
            style=style,
            layout=lay,
        )
        self.draw = widgets.ToggleButton(
            value=False,
            description="Draw crest",
            icon="pencil",
            tooltip="click on the map to add crest points",
            layout=widgets.Layout(width="auto"),
        )
        self.clear = widgets.Button(description="Clear crest", icon="times", layout=widgets.Layout(width="auto"))
        self.bands = widgets.Text(
            value="0, 25, 50", description="Bands (km)", style=style, layout=lay, continuous_update=False
        )
        self.level = widgets.Dropdown(
            options=[("80%", 0.8), ("90%", 0.9), ("95%", 0.95)],
            value=0.9,
            description="Confidence level",
            style=style,
            layout=lay,
        )
        self.n_boot = widgets.BoundedIntText(
            value=int(n_boot), min=50, max=20000, step=50, description="Bootstrap samples", style=style, layout=lay
        )
        self.wind_speed = widgets.FloatSlider(
            value=10.0,
            min=2.0,
            max=30.0,
            step=1.0,
            description="Wind speed (m/s)",
            style=style,
            layout=lay,
            continuous_update=False,
        )
        self.temperature = widgets.FloatSlider(
            value=10.0,
            min=-10.0,
            max=30.0,
            step=1.0,
            description="Temperature (°C)",
            style=style,
            layout=lay,
            continuous_update=False,
        )
        self.background = widgets.BoundedFloatText(
            value=MODEL_BACKGROUND_MM_H,
            min=0.0,
            max=50.0,
            step=0.5,
            description="Background (mm/h)",
            style=style,
            layout=lay,
            tooltip="uniform non-orographic rain rate added to the model",
        )
        self.delay = widgets.FloatSlider(
            value=MODEL_DELAY_S,
            min=200.0,
            max=2000.0,
            step=100.0,
            description="Delays τc = τf (s)",
            style=style,
            layout=lay,
            continuous_update=False,
            readout_format=".0f",
        )
        self.layer = widgets.Dropdown(
            options=LAYERS, value="observed", description="Map shows", style=style, layout=lay
        )
        super().__init__(
            map_frame=MapFrame(basins=self.basins, kind="difference", outline=elevation), export_dir=export_dir
        )
        self.watch(
            self.wind_from,
            self.crest_mode,
            self.min_height,
            self.bands,
            self.level,
            self.n_boot,
            self.wind_speed,
            self.temperature,
            self.background,
            self.delay,
        )
        self.watch_display(self.layer)
        self.clear.on_click(lambda _: self.clear_crest())
        self.map.on_click(self._on_map_click)
        self.model_note = widgets.HTML(f"<div style='font-size:12px;max-width:900px'>{html.escape(MODEL_NOTE)}</div>")
        kids = list(self.children)
        kids.insert(kids.index(self.table_html) + 1, self.model_note)  # the note sits under the band table
        self.children = kids
        self.refresh()

    def basins_changed(self, event, details):
        self.map.set_basins(self.basins)  # outlines only: the contrast does not depend on basins

    # ------------------------------------------------------------ BaseWidget hooks
    def build_controls(self):
        head = widgets.HTML("<b>Observed contrast</b>")
        model = widgets.HTML("<b>Linear orographic model</b> <small>(Smith &amp; Barstad 2004)</small>")
        wind = widgets.HBox([self.wind_from, self.wind_from_box])
        return [
            head,
            wind,
            self.crest_mode,
            self.min_height,
            widgets.HBox([self.draw, self.clear]),
            self.bands,
            self.level,
            self.n_boot,
            model,
            self.wind_speed,
            self.temperature,
            self.background,
            self.delay,
            self.layer,
        ]

    def parameters(self):
        params = {
            "wind_from": float(self.wind_from.value),
            "band_km": parse_bands(self.bands.value),
            "ci": float(self.level.value),
            "n_boot": int(self.n_boot.value),
            "wind_speed": float(self.wind_speed.value),
            "temperature_c": float(self.temperature.value),
            "p_background": float(self.background.value),
            "tau": float(self.delay.value),
        }
        if self.crest_mode.value == "drawn":
            if len(self.drawn_crest) < 2:
                raise ParameterError(
                    f"the drawn crest has {len(self.drawn_crest)} point(s)",
                    source="OrographicContrastWidget",
                    variable="crest",
                    expected="at least two points along the crest",
                    fix="switch on 'Draw crest' and click along the crest on the map",
                )
            params["ridge"] = list(self.drawn_crest)
        else:
            params["min_height"] = float(self.min_height.value)
        return params

    def compute(self, **params):
        return orographic_contrast(self.pr, self.elevation, **params)

    def finish(self, computed, params):
        observed = computed.pop("observed")
        self._pending = {id(observed): computed}
        return observed

    def render(self, result, params):
        extra = self._pending.pop(id(result), {})
        self.model = extra.get("model")
        self.model_contrast = extra.get("model_contrast")
        self.gradients = extra.get("gradients", {})
        self.crest = [tuple(map(float, p)) for p in extra.get("crest", [])]
        self._mean = extra.get("mean")
        self._params = params
        self._show()

    # ------------------------------------------------------------ crest drawing
    def add_crest_point(self, lon, lat):
        """Add a point to the drawn crest (what a click on the map does in drawing mode)."""
        self.drawn_crest.append((float(lon), float(lat)))
        self.map.set_overlay(self.drawn_crest)
        if len(self.drawn_crest) < 2:
            self.say("Crest point added: click at least one more.")
        elif self.crest_mode.value != "drawn":
            self.crest_mode.value = "drawn"  # recomputes
        else:
            self.refresh()

    def clear_crest(self):
        """Forget the drawn crest and go back to the crest derived from the terrain."""
        self.drawn_crest = []
        self.draw.value = False
        if self.crest_mode.value == "drawn":
            self.crest_mode.value = "terrain"
        else:
            self.map.set_overlay(self.crest or [])

    def _on_map_click(self, lon, lat, event=None):
        if self.draw.value:
            self.add_crest_point(lon, lat)

    # ------------------------------------------------------------ display

    def _show(self):
        layer = self.layer.value
        if layer == "distance":
            field = self.result["distance_km"]
            self.map.show_field(
                field,
                kind="difference",
                label="distance from crest [km], < 0 windward",
                title=f"windward (< 0) and leeward (> 0), wind from {self._params['wind_from']:g}°",
            )
            self.map.mesh.set_cmap("PuOr_r")  # sides, not wetness: a neutral purple-orange scale
        elif layer == "observed":
            self.map.show_field(
                self._mean, kind="total", label="mean annual total [mm]", title="observed mean annual total"
            )
        elif layer == "model":
            self.map.show_field(
                self.model,
                kind="total",
                label="linear model rate [mm per hour]",
                title=f"linear model, {self._params['wind_speed']:g} m/s, "
                f"{self._params['temperature_c']:g} °C, background "
                f"{self._params['p_background']:g} mm/h",
            )
        else:
            self.map.show_field(self.elevation, kind="total", label="terrain height [m]", title="terrain")
        self.map.set_overlay(self.crest)
        self.show_table(self._table())
        self.show_chart(self._chart())

    def _table(self):
        return band_table(self.result, self.model_contrast, self._params["ci"])

    def _chart(self):
        return contrast_chart(self.result, self._mean, self.model, self.elevation, self.gradients)
