"""MapFrame: an interactive map panel (ipympl canvas + cartopy axes) for the widgets.

A MapFrame shows one 2-D lat/lon field with a colour bar carrying its units, the basin
outlines, a hover readout (lon, lat, value, units of the cell under the pointer), a
"zoom to basin" menu, a colour range control and optional outline layers.
:meth:`MapFrame.show_field` redraws a new field on the same grid by swapping the QuadMesh
array and colour limits (no new figure, fast); a field on another grid rebuilds the mesh.
:meth:`MapFrame.on_click` registers a callback receiving ``(lon, lat, event)`` for clicks
inside the map (the basin drawer uses it).

The figure is made with ipympl's ``Canvas`` directly (not through pyplot), so no global
figure registry is touched and the frame works headless in tests: a notebook front-end,
Voilà or JupyterLab shows the canvas as a widget.  Every method is called on the kernel's
thread (the widgets render there), so the figure needs no lock.  The axes have fixed positions in the
figure (no automatic layout), so a lon/lat point always lands on the same pixel for a
given grid and figure size (:meth:`figure_fraction`).

Size: the map axes are about 620 px wide (figure 8.4 in at 100 dpi) and the figure's
height follows the grid's shape, so that the map fills its box; a zoom keeps that shape.

Colour range: "auto" takes the limits a widget asks for, else the 2nd–98th percentile of
the values (:func:`climwidgets.plot.maps.robust_limits`); "fixed" uses the typed limits
(in the units shown beside them) until a map in other units arrives.  A change of range
only recolours the mesh: nothing is computed again.  Diverging scales stay centred.

Context: ``outline`` (a land mask or a terrain grid, whose land/sea outline is drawn, or a
GeoJSON/shapefile path or geometries) and :meth:`MapFrame.add_layer` (coast, borders,
rivers from local GeoJSON or shapefiles) draw thin lines over the field; Natural Earth
coastlines are added when they are on disk.  Nothing is downloaded.
"""

from __future__ import annotations

import html
import io
import itertools

import ipywidgets as widgets
import numpy as np
from matplotlib.figure import Figure

from ..plot import maps

__all__ = ["MapFrame"]

_NUMBERS = itertools.count(1000)  # figure numbers outside pyplot's usual range
_WIDTH = 8.4  # figure width (in): at 100 dpi the map axes are about 620 px wide
# margins around the map axes (in): lat labels left, lon labels below, title above,
# colour bar (gap, bar, tick labels and its label) right
_LEFT, _BOTTOM, _TOP, _RIGHT = 0.72, 0.42, 0.36, 1.45
_CBAR_GAP, _CBAR_W = 0.2, 0.2
_MAP_H = (2.8, 7.5)  # bounds of the map's height (in) whatever the grid's shape


def _short(value: float) -> float:
    """A limit rounded to 4 significant digits for the typed-range boxes."""
    if not np.isfinite(value) or value == 0:
        return 0.0
    return float(f"{value:.4g}")


def _make_canvas(figure):
    from ipympl.backend_nbagg import Canvas, FigureManager

    canvas = Canvas(figure)
    FigureManager(canvas, next(_NUMBERS))
    canvas.header_visible = False
    canvas.footer_visible = False
    canvas.resizable = False  # keeps pixel positions stable (clicks, browser tests)
    canvas.toolbar_visible = "fade-in-fade-out"
    canvas.toolbar_position = "left"
    return canvas


class MapFrame(widgets.VBox):
    """Interactive map of a lat/lon field.

    Parameters
    ----------
    field : DataArray with dims (lat, lon) or (y, x), optional
        The first field to show; its extent chooses the projection
        (:data:`climwidgets.plot.maps.projection_rule`).
    basins : list of Basin
    kind : {'total', 'share', 'difference', 'percent', 'standardized'}
        Colour style (sequential or diverging brown-green, see :mod:`climwidgets.plot.maps`).
    figsize : (width, height) in inches, dpi : int
    coastlines : bool
        Draw Natural Earth coastlines when the data is on disk (never downloads).
    """

    def __init__(
        self,
        field=None,
        basins=(),
        kind="total",
        figsize=None,
        dpi=100,
        coastlines=True,
        title=None,
        outline=None,
        layers=(),
    ):
        self._figsize = figsize
        self.figure = Figure(figsize=figsize or (_WIDTH, 6.0), dpi=dpi)
        self.canvas = _make_canvas(self.figure)
        self.readout = widgets.Label("Point at the map to read a value.")
        self.zoom = widgets.Dropdown(
            options=[("whole grid", "")],
            value="",
            description="Zoom to basin",
            style={"description_width": "initial"},
            layout=widgets.Layout(width="260px"),
        )
        self.zoom.observe(lambda change: self.zoom_to(change["new"] or None), names="value")
        self.range_mode = widgets.ToggleButtons(
            options=[("auto", "auto"), ("fixed", "fixed")],
            value="auto",
            tooltips=["from the data: 2nd to 98th percentile (or the view's own scale)", "the limits typed beside"],
            style={"button_width": "52px"},
            layout=widgets.Layout(width="auto"),
        )
        box = widgets.Layout(width="150px")
        self.range_min = widgets.FloatText(
            description="from", disabled=True, layout=box, style={"description_width": "initial"}
        )
        self.range_max = widgets.FloatText(
            description="to", disabled=True, layout=box, style={"description_width": "initial"}
        )
        self.range_units = widgets.HTML()
        self.range_mode.observe(self._range_mode_changed, names="value")
        self.range_min.observe(self._range_typed, names="value")
        self.range_max.observe(self._range_typed, names="value")
        self.range_row = widgets.HBox(
            [widgets.Label("Colour range"), self.range_mode, self.range_min, self.range_max, self.range_units],
            layout=widgets.Layout(align_items="center", flex_flow="row wrap"),
        )
        self.note = widgets.HTML()
        self.legend = widgets.HTML()
        self.ax = None
        self.cax = None
        self.mesh = None
        self.cbar = None
        self.field = None
        self.basins = []
        self.coastlines = coastlines
        self.title = title
        self.member_note = ""  # the ensemble member view shown, added to the title (BaseWidget sets it)
        self.outline = None
        self.layers = []
        self._basin_artists = []
        self._context_artists = []
        self._overlay = []
        self._values = None
        self._edges = None
        self._units = ""
        self._kind = kind
        self._requested = (None, None)
        self._fixed_units = None
        self._quiet = False
        self._click_callbacks = []
        self.canvas.mpl_connect("motion_notify_event", self._on_move)
        self.canvas.mpl_connect("button_press_event", self._on_press)
        super().__init__(children=[self.zoom, self.canvas, self.range_row, self.readout, self.legend, self.note])
        if outline is not None:
            self.set_outline(outline)
        for layer in layers or ():
            if isinstance(layer, dict):
                self.add_layer(**layer)
            elif isinstance(layer, (tuple, list)) and len(layer) == 2 and isinstance(layer[1], str):
                self.add_layer(layer[0], label=layer[1])
            else:
                self.add_layer(layer)
        if field is not None:
            self.show_field(field, kind=kind)
        self.set_basins(basins)

    # ---------------------------------------------------------------- drawing
    def _map_aspect(self, field):
        """Height / width of the whole grid as drawn in its projection."""
        lon_e, lat_e = maps._edges(field)
        edge = np.concatenate(
            [
                np.c_[lon_e[0], lat_e[0]],
                np.c_[lon_e[-1], lat_e[-1]],
                np.c_[lon_e[:, 0], lat_e[:, 0]],
                np.c_[lon_e[:, -1], lat_e[:, -1]],
            ]
        )
        x, y = maps.lonlat_to_map(self.projection, edge[:, 0], edge[:, 1])
        ok = np.isfinite(x) & np.isfinite(y)
        dx, dy = np.ptp(x[ok]), np.ptp(y[ok])
        return float(dy / dx) if dx > 0 and dy > 0 else 0.75

    def _layout(self, field):
        """Size the figure for the grid's shape; return the axes and colour-bar rectangles."""
        width = self._figsize[0] if self._figsize else _WIDTH
        map_w = width - _LEFT - _RIGHT
        if self._figsize:
            height = self._figsize[1]
            map_h = height - _BOTTOM - _TOP
        else:
            map_h = float(np.clip(map_w * self._map_aspect(field), *_MAP_H))
            height = map_h + _BOTTOM + _TOP
            if tuple(self.figure.get_size_inches()) != (width, height):
                self.figure.set_size_inches(width, height, forward=True)
        ax_rect = (_LEFT / width, _BOTTOM / height, map_w / width, map_h / height)
        bar_h = 0.8 * map_h
        cax_rect = (
            (_LEFT + map_w + _CBAR_GAP) / width,
            (_BOTTOM + 0.1 * map_h) / height,
            _CBAR_W / width,
            bar_h / height,
        )
        return ax_rect, cax_rect

    def _build_axes(self, field):
        self.figure.clear()
        lon, lat = np.asarray(field["lon"].values), np.asarray(field["lat"].values)
        self.projection = maps.choose_projection(lon, lat)
        ax_rect, cax_rect = self._layout(field)
        self.ax = self.figure.add_axes(ax_rect, projection=self.projection)
        self.cax = self.figure.add_axes(cax_rect)
        self.mesh = self.cbar = None
        self._basin_artists = []
        self._context_artists = []
        self._overlay = []
        if self.coastlines:
            import warnings

            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                drawn = maps.add_coastlines(self.ax)
            if drawn is None:
                self.note.value = (
                    "<small>Coastlines: Natural Earth data is not on disk, map drawn without them.</small>"
                    if caught
                    else ""
                )
        maps.add_gridlines(self.ax, width_px=ax_rect[2] * self.figure.bbox.width)

    @property
    def map_width_px(self) -> float:
        """Width of the drawn map in pixels (after its aspect-ratio adjustment)."""
        if self.ax is None:
            return 0.0
        self.ax.apply_aspect()
        return float(self.ax.get_position().width * self.figure.bbox.width)

    def _same_grid(self, field):
        if self.field is None or self.mesh is None:
            return False
        for c in ("lat", "lon"):
            a, b = self.field[c].values, field[c].values
            if a.shape != b.shape or not np.allclose(a, b):
                return False
        return True

    def show_field(self, field, kind=None, vmin=None, vmax=None, label=None, title=None):
        """Show ``field``; on the same grid only the numbers and colour limits change.

        A spread between ensemble members (``attrs["ensemble_member"]``, see
        ``analyses.ensemble.member_view``) is never negative: it is drawn on the sequential
        scale from zero, whatever the style of the number itself.
        """
        from ..analyses.meta import MEMBER_VIEWS

        if field.attrs.get("ensemble_member") == MEMBER_VIEWS["spread"]["label"]:
            kind, vmin, vmax = "total", 0.0, None
        kind = kind or getattr(self.mesh, "climwidgets_kind", None) or self._kind
        field, vmin, vmax, label = maps.as_shown(field, vmin, vmax, label)
        self._kind = kind
        self._requested = (vmin, vmax)
        units = field.attrs.get("units", "")
        if self.range_mode.value == "fixed" and units != self._fixed_units:
            # a typed range belongs to its units: a map in other units starts on auto again
            self._set_quietly(self.range_mode, "auto")
            self.range_min.disabled = self.range_max.disabled = True
        if self.range_mode.value == "fixed":
            vmin, vmax = self._typed_limits()
        if self._same_grid(field):
            maps.update_field(self.mesh, self.cbar, field, kind=kind, vmin=vmin, vmax=vmax, label=label)
        else:
            self._build_axes(field)
            self.mesh, self.cbar = maps.draw_field(
                self.ax, field, kind=kind, vmin=vmin, vmax=vmax, cax=self.cax, label=label
            )
            self._edges = maps._edges(field)
            self._draw_basins()
            self._draw_context()
            self.zoom_to(self.zoom.value or None)  # the whole grid, or a basin chosen before
        self.field = field
        self._values = np.asarray(field.values, dtype=float)
        self._units = units
        self._sync_range()
        if title is not None or self.title or self.member_note:
            text = title if title is not None else (self.title or "")
            if self.member_note:
                text = f"{text} ({self.member_note})" if text else self.member_note
            self.ax.set_title(text, fontsize=9)
        self.redraw()

    # ---------------------------------------------------------------- colour range
    def _set_quietly(self, control, value):
        self._quiet = True
        try:
            control.value = value
        finally:
            self._quiet = False

    def _shown_units(self):
        return "(fraction)" if self._units == "1" else (self._units or "no units")

    def _typed_limits(self):
        lo, hi = maps.centred_limits(self._kind, float(self.range_min.value), float(self.range_max.value))
        return lo, hi

    def _sync_range(self):
        """Show the limits drawn in the boxes and the units beside them."""
        if self.mesh is None:
            return
        lo, hi = self.mesh.get_clim()
        self._set_quietly(self.range_min, _short(lo))
        self._set_quietly(self.range_max, _short(hi))
        how = (
            "typed"
            if self.range_mode.value == "fixed"
            else "the scale of this view"
            if self._requested != (None, None)
            else "2nd–98th percentile of the map"
        )
        self.range_units.value = (
            f"<span style='margin-left:6px'>{html.escape(self._shown_units())}</span>"
            f" <small style='color:#555'>({how})</small>"
        )

    def _range_mode_changed(self, change):
        if self._quiet:
            return
        fixed = change["new"] == "fixed"
        self.range_min.disabled = self.range_max.disabled = not fixed
        if fixed:
            self._fixed_units = self._units
        self.apply_range()

    def _range_typed(self, change):
        if not self._quiet and self.range_mode.value == "fixed":
            self.apply_range()

    def set_range(self, vmin=None, vmax=None):
        """Fix the colour range to ``vmin``–``vmax`` (units shown), or back to auto with no arguments."""
        if vmin is None and vmax is None:
            self.range_mode.value = "auto"
            return
        self._set_quietly(self.range_min, float(vmin if vmin is not None else self.range_min.value))
        self._set_quietly(self.range_max, float(vmax if vmax is not None else self.range_max.value))
        if self.range_mode.value == "fixed":
            self.apply_range()
        else:
            self.range_mode.value = "fixed"

    def apply_range(self):
        """Recolour the shown mesh with the current range setting (no recomputation)."""
        if self.mesh is None or self._values is None:
            return
        if self.range_mode.value == "fixed":
            lo, hi = self._typed_limits()
            if not (np.isfinite(lo) and np.isfinite(hi)) or hi <= lo:
                self.range_units.value = (
                    "<span style='color:#b00'>The upper limit must be above the lower "
                    "one: type two different numbers.</span>"
                )
                return
        else:
            _, lo, hi = maps.colour_style(self._kind, self._values, *self._requested)
        self.mesh.set_clim(lo, hi)
        if self.cbar is not None:
            self.cbar.update_normal(self.mesh)
        self._sync_range()
        self.redraw()

    # ---------------------------------------------------------------- context lines
    def set_outline(self, outline):
        """Draw a land/sea outline: a land mask or terrain DataArray, or a GeoJSON/shapefile
        path or geometries (see :func:`climwidgets.plot.maps.read_layer`); None removes it."""
        import xarray as xr

        if outline is None:
            self.outline = None
        elif isinstance(outline, xr.DataArray):
            mask = maps.land_mask(outline)
            self.outline = {"mask": mask, "label": f"land/sea ({mask.attrs['outline_source']})"}
        else:
            self.outline = {"geoms": maps.read_layer(outline), "label": "outline"}
        if self.ax is not None:
            self._draw_context()
            self.redraw()

    def add_layer(self, source, label=None, color=None, linewidth=0.6, linestyle=None):
        """Add an outline layer (coast, borders, rivers) drawn as thin lines over the field.

        ``source`` is a GeoJSON file or shapefile path, a GeoJSON mapping or shapely
        geometries in lon/lat (:func:`climwidgets.plot.maps.read_layer`; a missing or
        unreadable file raises a :class:`climwidgets.errors.SourceError` naming it).
        Returns the layer's label.
        """
        geoms = maps.read_layer(source)
        from pathlib import Path

        if label is None:
            label = Path(source).stem if isinstance(source, (str, Path)) else f"layer {len(self.layers) + 1}"
        style_color, style_ls = maps.LAYER_STYLES[len(self.layers) % len(maps.LAYER_STYLES)]
        self.layers.append(
            {
                "geoms": geoms,
                "label": str(label),
                "color": color or style_color,
                "linewidth": float(linewidth),
                "linestyle": linestyle or style_ls,
            }
        )
        if self.ax is not None:
            self._draw_context()
            self.redraw()
        return str(label)

    def _draw_context(self):
        for artist in self._context_artists:
            artist.remove()
        self._context_artists = []
        entries = []
        w, e, s, n = self._full_extent()
        mx, my = 0.5 * (e - w), 0.5 * (n - s)
        bounds = (w - mx, s - my, e + mx, n + my)
        if self.outline is not None:
            if "mask" in self.outline:
                drawn = maps.draw_mask_outline(self.ax, self.outline["mask"], label=self.outline["label"])
            else:
                drawn = maps.draw_lines(
                    self.ax,
                    self.outline["geoms"],
                    color="0.15",
                    linewidth=0.7,
                    label=self.outline["label"],
                    bounds=bounds,
                )
            self._context_artists += drawn
            entries.append(("0.15", "-", self.outline["label"], bool(drawn)))
        for layer in self.layers:
            drawn = maps.draw_lines(
                self.ax,
                layer["geoms"],
                color=layer["color"],
                linewidth=layer["linewidth"],
                linestyle=layer["linestyle"],
                label=layer["label"],
                bounds=bounds,
            )
            self._context_artists += drawn
            entries.append((layer["color"], layer["linestyle"], layer["label"], bool(drawn)))
        self.legend.value = self._legend_html(entries)

    @staticmethod
    def _legend_html(entries):
        if not entries:
            return ""
        from matplotlib.colors import to_hex

        parts = []
        for color, ls, label, drawn in entries:
            border = "dashed" if ls in ("--", "-.") else "solid"
            swatch = (
                f"<span style='display:inline-block;width:18px;border-top:2px {border} {to_hex(color)};"
                "vertical-align:middle;margin-right:4px'></span>"
            )
            note = "" if drawn else " <i>(nothing inside the map)</i>"
            parts.append(f"{swatch}{html.escape(label)}{note}")
        return "<small>Lines: " + " &nbsp; ".join(parts) + "</small>"

    def _pc(self):
        import cartopy.crs as ccrs

        return ccrs.PlateCarree()

    def _full_extent(self):
        lon_e, lat_e = self._edges
        return (float(lon_e.min()), float(lon_e.max()), float(lat_e.min()), float(lat_e.max()))

    def set_basins(self, basins, highlight=None):
        """Replace the basin outlines (and the zoom menu)."""
        self.basins = list(basins or [])
        self._highlight = highlight
        if self.ax is not None:
            self._draw_basins()
        names = [b.name for b in self.basins]
        current = self.zoom.value if self.zoom.value in names else ""
        self.zoom.options = [("whole grid", "")] + [(n, n) for n in names]
        self.zoom.value = current
        self.redraw()

    def _draw_basins(self):
        for artist in self._basin_artists:
            artist.remove()
        self._basin_artists = maps.draw_basins(self.ax, self.basins, highlight=getattr(self, "_highlight", None))

    def set_overlay(self, lonlat, closed=False):
        """Draw (or clear with an empty list) the outline being drawn: vertices and edges."""
        for artist in self._overlay:
            artist.remove()
        self._overlay = []
        if self.ax is not None and len(lonlat):
            pts = np.asarray(lonlat, dtype=float)
            if closed:
                pts = np.vstack([pts, pts[:1]])
            self._overlay = self.ax.plot(
                pts[:, 0], pts[:, 1], "o-", color="#ff7f00", ms=4, lw=1.2, transform=self._pc()
            )
        self.redraw()

    def zoom_to(self, name=None, pad=0.25):
        """Zoom to a basin by name (with a margin of ``pad`` × its size), or to the whole grid."""
        if self.ax is None:
            return
        basin = next((b for b in self.basins if b.name == name), None)
        if basin is None:
            self.ax.set_extent(self._fit_box(self._full_extent()), crs=self._pc())
        else:
            w, s, e, n = basin.bounds
            dx, dy = max(e - w, 0.05) * pad, max(n - s, 0.05) * pad
            self.ax.set_extent(self._fit_box((w - dx, e + dx, s - dy, n + dy)), crs=self._pc())
        self.redraw()

    def _fit_box(self, extent):
        """``extent`` widened to the shape of the axes box, so that the map fills it (PlateCarree)."""
        import cartopy.crs as ccrs

        if not isinstance(self.projection, ccrs.PlateCarree):
            return extent
        w, e, s, n = extent
        pos = self.ax.get_position(original=True)
        ratio = (pos.height * self.figure.bbox.height) / (pos.width * self.figure.bbox.width)
        if e <= w or n <= s:
            return extent
        if (n - s) / (e - w) < ratio:
            half = 0.5 * ratio * (e - w)
            mid = 0.5 * (s + n)
            s, n = max(mid - half, -90.0), min(mid + half, 90.0)
        else:
            half = 0.5 * (n - s) / ratio
            mid = 0.5 * (w + e)
            w, e = mid - half, mid + half
        return (w, e, s, n)

    def redraw(self):
        """Ask the front-end for a new image (cheap; drawing happens when it asks)."""
        self.canvas.draw_idle()

    # ---------------------------------------------------------------- reading
    def value_at(self, lon, lat):
        """(value, row, column) of the displayed cell containing lon/lat, or (nan, None, None)."""
        if self._values is None:
            return np.nan, None, None
        lon_e, lat_e = self._edges
        if lon_e.ndim == 2 and np.allclose(lon_e, lon_e[:1]) and np.allclose(lat_e, lat_e[:, :1]):
            i = np.searchsorted(lon_e[0], lon) - 1
            j = np.searchsorted(lat_e[:, 0], lat) - 1
            if 0 <= j < self._values.shape[0] and 0 <= i < self._values.shape[1]:
                return float(self._values[j, i]), int(j), int(i)
            return np.nan, None, None
        # curvilinear: the nearest centre, if the point lies within the grid's outline
        clon = 0.25 * (lon_e[:-1, :-1] + lon_e[1:, :-1] + lon_e[:-1, 1:] + lon_e[1:, 1:])
        clat = 0.25 * (lat_e[:-1, :-1] + lat_e[1:, :-1] + lat_e[:-1, 1:] + lat_e[1:, 1:])
        d = (clon - lon) ** 2 + (clat - lat) ** 2
        j, i = np.unravel_index(np.argmin(d), d.shape)
        return float(self._values[j, i]), int(j), int(i)

    def _event_lonlat(self, event):
        if self.ax is None or event.inaxes is not self.ax or event.xdata is None:
            return None
        return maps.map_to_lonlat(self.projection, event.xdata, event.ydata)

    def _on_move(self, event):
        ll = self._event_lonlat(event)
        if ll is None:
            return
        value, _, _ = self.value_at(*ll)
        units = "(fraction)" if self._units == "1" else self._units  # CF's "1" reads oddly on screen
        fmt = (self.field.attrs.get("display_format") if self.field is not None else None) or ".4g"
        shown = "no data" if not np.isfinite(value) else f"{format(value, fmt)} {units}".strip()
        self.readout.value = f"lon {ll[0]:.3f}, lat {ll[1]:.3f}: {shown}"

    def on_click(self, callback, remove=False):
        """Register ``callback(lon, lat, event)`` for mouse presses inside the map."""
        if remove:
            self._click_callbacks.remove(callback)
        else:
            self._click_callbacks.append(callback)

    def _on_press(self, event):
        ll = self._event_lonlat(event)
        toolbar = getattr(self.canvas, "toolbar", None)
        if ll is None or (toolbar is not None and getattr(toolbar, "mode", "")):
            return  # pan/zoom mode owns the mouse
        for callback in list(self._click_callbacks):
            callback(ll[0], ll[1], event)

    def figure_fraction(self, lon, lat):
        """(x, y) of a lon/lat point as fractions of the figure, from the bottom-left.

        Used to click on a given place from outside (browser tests, scripted demos).
        """
        self.figure.canvas.draw()  # settles the axes' aspect-ratio adjustment
        x, y = maps.lonlat_to_map(self.projection, lon, lat)
        px, py = self.ax.transData.transform((float(x[0]), float(y[0])))
        w, h = self.figure.bbox.width, self.figure.bbox.height
        return px / w, py / h

    def png_bytes(self, dpi=150):
        """The current map as PNG bytes."""
        buf = io.BytesIO()
        self.figure.savefig(buf, format="png", dpi=dpi)
        return buf.getvalue()
