"""MapFrame: an interactive map panel (ipympl canvas + cartopy axes) for the widgets.

A MapFrame shows one 2-D lat/lon field with a colour bar carrying its units, the basin
outlines, a hover readout (lon, lat, value, units of the cell under the pointer) and a
"zoom to basin" menu.  :meth:`MapFrame.show_field` redraws a new field on the same grid by
swapping the QuadMesh array and colour limits (no new figure, fast); a field on another
grid rebuilds the mesh.  :meth:`MapFrame.on_click` registers a callback receiving
``(lon, lat, event)`` for clicks inside the map (the basin drawer uses it).

The figure is made with ipympl's ``Canvas`` directly (not through pyplot), so no global
figure registry is touched and the frame works headless in tests: a notebook front-end,
Voilà or JupyterLab shows the canvas as a widget.  Every method is called on the kernel's
thread (the widgets render there), so the figure needs no lock.  The axes have fixed positions in the
figure (no automatic layout), so a lon/lat point always lands on the same pixel for a
given grid and figure size (:meth:`figure_fraction`).
"""

from __future__ import annotations

import io
import itertools

import ipywidgets as widgets
import numpy as np
from matplotlib.figure import Figure

from ..plot import maps

__all__ = ["MapFrame"]

_NUMBERS = itertools.count(1000)  # figure numbers outside pyplot's usual range
_AX_RECT = (0.10, 0.08, 0.68, 0.86)
_CAX_RECT = (0.83, 0.18, 0.03, 0.66)


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

    def __init__(self, field=None, basins=(), kind="total", figsize=(5.6, 4.2), dpi=100,
                 coastlines=True, title=None):
        self.figure = Figure(figsize=figsize, dpi=dpi)
        self.canvas = _make_canvas(self.figure)
        self.readout = widgets.Label("Point at the map to read a value.")
        self.zoom = widgets.Dropdown(options=[("whole grid", "")], value="", description="Zoom to basin",
                                     style={"description_width": "initial"},
                                     layout=widgets.Layout(width="260px"))
        self.zoom.observe(lambda change: self.zoom_to(change["new"] or None), names="value")
        self.note = widgets.HTML()
        self.ax = None
        self.cax = None
        self.mesh = None
        self.cbar = None
        self.field = None
        self.basins = []
        self.coastlines = coastlines
        self.title = title
        self.member_note = ""  # the ensemble member view shown, added to the title (BaseWidget sets it)
        self._basin_artists = []
        self._overlay = []
        self._values = None
        self._edges = None
        self._units = ""
        self._click_callbacks = []
        self.canvas.mpl_connect("motion_notify_event", self._on_move)
        self.canvas.mpl_connect("button_press_event", self._on_press)
        super().__init__(children=[self.zoom, self.canvas, self.readout, self.note])
        if field is not None:
            self.show_field(field, kind=kind)
        self.set_basins(basins)

    # ---------------------------------------------------------------- drawing
    def _build_axes(self, field):
        self.figure.clear()
        lon, lat = np.asarray(field["lon"].values), np.asarray(field["lat"].values)
        self.projection = maps.choose_projection(lon, lat)
        self.ax = self.figure.add_axes(_AX_RECT, projection=self.projection)
        self.cax = self.figure.add_axes(_CAX_RECT)
        self.mesh = self.cbar = None
        self._basin_artists = []
        self._overlay = []
        if self.coastlines:
            import warnings

            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                drawn = maps.add_coastlines(self.ax)
            if drawn is None:
                self.note.value = "<small>Coastlines: Natural Earth data is not on disk, map drawn without them.</small>" \
                    if caught else ""
        gl = self.ax.gridlines(draw_labels=True, linewidth=0.3, color="0.5", alpha=0.6)
        gl.top_labels = gl.right_labels = False
        gl.xlabel_style = gl.ylabel_style = {"size": 7}

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
        kind = kind or getattr(self.mesh, "climwidgets_kind", "total")
        field, vmin, vmax, label = maps.as_shown(field, vmin, vmax, label)
        if self._same_grid(field):
            maps.update_field(self.mesh, self.cbar, field, kind=kind, vmin=vmin, vmax=vmax, label=label)
        else:
            self._build_axes(field)
            self.mesh, self.cbar = maps.draw_field(self.ax, field, kind=kind, vmin=vmin, vmax=vmax,
                                                   cax=self.cax, label=label)
            self._edges = maps._edges(field)
            self.ax.set_extent(self._full_extent(), crs=self._pc())
            self._draw_basins()
        self.field = field
        self._values = np.asarray(field.values, dtype=float)
        self._units = field.attrs.get("units", "")
        if title is not None or self.title or self.member_note:
            text = title if title is not None else (self.title or "")
            if self.member_note:
                text = f"{text} ({self.member_note})" if text else self.member_note
            self.ax.set_title(text, fontsize=9)
        self.redraw()

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
            self._overlay = self.ax.plot(pts[:, 0], pts[:, 1], "o-", color="#ff7f00", ms=4, lw=1.2,
                                         transform=self._pc())
        self.redraw()

    def zoom_to(self, name=None, pad=0.25):
        """Zoom to a basin by name (with a margin of ``pad`` × its size), or to the whole grid."""
        if self.ax is None:
            return
        basin = next((b for b in self.basins if b.name == name), None)
        if basin is None:
            self.ax.set_extent(self._full_extent(), crs=self._pc())
        else:
            w, s, e, n = basin.bounds
            dx, dy = max(e - w, 0.05) * pad, max(n - s, 0.05) * pad
            self.ax.set_extent((w - dx, e + dx, s - dy, n + dy), crs=self._pc())
        self.redraw()

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

