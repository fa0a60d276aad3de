"""Drawing, naming, loading and saving basins on a map.

:class:`DrawingTools` is the toolset (buttons, name box, basin list) attached to any
:class:`~climwidgets.widgets.mapframe.MapFrame`: with "Draw" switched on, each click on
the map adds a vertex; "Close basin" (or a double-click) closes the outline and names it.
Other widgets embed the toolset on their own map and listen with
:meth:`DrawingTools.on_change`.

:class:`BasinDrawer` is the stand-alone widget: a map of a field, the toolset, and a
table of basins with their area (km², geodesic) and the area-weighted mean of the shown
field (``cw.basin_mean``).  ``drawer.basins`` is the list of ``cw.Basin``.
"""

from __future__ import annotations

import json

import ipywidgets as widgets
import pandas as pd

from ..errors import BasinError, InputError, SourceError
from ..geo.aggregate import basin_mean
from ..geo.basin import Basin, write_geojson
from .base import BaseWidget
from .mapframe import MapFrame

__all__ = ["DrawingTools", "BasinDrawer", "load_basins"]


def load_basins(path):
    """Basins from a GeoJSON file (.geojson/.json) or a shapefile (.shp), chosen by suffix."""
    text = str(path).strip()
    if not text:
        raise SourceError("no file given", source="basin file", expected="a .geojson or .shp path",
                          fix="type the path of the file to load")
    if text.lower().endswith(".shp"):
        return Basin.from_shapefile(text)
    return Basin.from_geojson(text)


class DrawingTools(widgets.VBox):
    """Draw/select/rename/delete/load/save basins on ``map_frame``.

    Parameters
    ----------
    map_frame : MapFrame
    basins : list of Basin, optional
    report : callable(text_or_error)
        Where messages go (the host widget's message line); errors are InputError objects.
    """

    def __init__(self, map_frame: MapFrame, basins=(), report=None):
        self.map = map_frame
        self.basins = list(basins or [])
        self.vertices = []
        self._listeners = []
        self._report = report or (lambda message: None)
        lay = widgets.Layout(width="auto")
        self.draw = widgets.ToggleButton(value=False, description="Draw", icon="pencil",
                                         tooltip="click on the map to add vertices", layout=lay)
        self.name = widgets.Text(value="", placeholder="name of the new basin", description="Name",
                                 layout=widgets.Layout(width="260px"))
        self.close = widgets.Button(description="Close basin", icon="check", layout=lay,
                                    tooltip="close the outline and add the basin (or double-click)")
        self.undo = widgets.Button(description="Undo vertex", icon="undo", layout=lay)
        self.cancel = widgets.Button(description="Discard outline", icon="times", layout=lay)
        self.select = widgets.Dropdown(options=[], description="Basin", layout=widgets.Layout(width="260px"))
        self.new_name = widgets.Text(value="", placeholder="new name", layout=widgets.Layout(width="150px"))
        self.rename = widgets.Button(description="Rename", layout=lay)
        self.delete = widgets.Button(description="Delete", icon="trash", layout=lay)
        self.path = widgets.Text(value="", placeholder="basins.geojson or outlines.shp", description="File",
                                 layout=widgets.Layout(width="260px"))
        self.load = widgets.Button(description="Load", icon="folder-open", layout=lay)
        self.save = widgets.Button(description="Save all as GeoJSON", icon="save", layout=lay)
        self.overwrite = widgets.Checkbox(value=False, description="replace an existing file", indent=False)
        self.upload = widgets.FileUpload(accept=".geojson,.json", multiple=False, description="Upload GeoJSON")
        self.close.on_click(lambda _: self.close_basin())
        self.undo.on_click(lambda _: self.undo_vertex())
        self.cancel.on_click(lambda _: self.discard())
        self.rename.on_click(lambda _: self.rename_basin(self.select.value, self.new_name.value))
        self.delete.on_click(lambda _: self.delete_basin(self.select.value))
        self.load.on_click(lambda _: self.load_file(self.path.value))
        self.save.on_click(lambda _: self.save_file(self.path.value, overwrite=self.overwrite.value))
        self.upload.observe(self._on_upload, names="value")
        self.map.on_click(self._on_map_click)
        super().__init__(children=[
            widgets.HTML("<b>Basins</b>: switch on <i>Draw</i>, click the corners on the map, then close."),
            widgets.HBox([self.draw, self.undo, self.cancel]), self.name, self.close,
            widgets.HBox([self.select]), widgets.HBox([self.new_name, self.rename, self.delete]),
            self.path, widgets.HBox([self.load, self.save]), self.overwrite, self.upload])
        self._sync()

    # ------------------------------------------------------------ events
    def on_change(self, callback):
        """``callback(basins)`` after any change to the list of basins."""
        self._listeners.append(callback)

    def _changed(self):
        self._sync()
        for callback in list(self._listeners):
            callback(list(self.basins))

    def _sync(self):
        names = [b.name for b in self.basins]
        keep = self.select.value if self.select.value in names else (names[-1] if names else None)
        self.select.options = names
        self.select.value = keep
        self.map.set_basins(self.basins)

    def _on_map_click(self, lon, lat, event):
        if not self.draw.value:
            return
        if getattr(event, "dblclick"):
            self.close_basin()
            return
        self.add_vertex(lon, lat)

    # ------------------------------------------------------------ actions
    def add_vertex(self, lon, lat):
        self.vertices.append((float(lon), float(lat)))
        self.map.set_overlay(self.vertices)

    def undo_vertex(self):
        if self.vertices:
            self.vertices.pop()
        self.map.set_overlay(self.vertices)

    def discard(self):
        self.vertices = []
        self.map.set_overlay([])

    def _unique(self, name):
        taken = {b.name for b in self.basins}
        name = name.strip() or f"basin {len(self.basins) + 1}"
        base, n = name, 2
        while name in taken:
            name = f"{base} ({n})"
            n += 1
        return name

    def close_basin(self, name=None):
        """Close the outline being drawn into a named Basin; returns it (None on error)."""
        name = self._unique(self.name.value if name is None else name)
        try:
            if len(self.vertices) < 3:
                raise BasinError(f"the outline has {len(self.vertices)} vertices", source=f"basin {name!r}",
                                 expected="at least 3 corners", fix="click more corners on the map")
            basin = Basin.from_vertices(self.vertices, name=name)
        except InputError as exc:
            self._report(exc)
            return None
        self.basins.append(basin)
        self.vertices = []
        self.name.value = ""
        self.map.set_overlay([])
        self._report(f"Added basin {name}.")
        self._changed()
        self.select.value = name
        return basin

    def rename_basin(self, old, new):
        new = (new or "").strip()
        if not new:
            self._report(BasinError("the new name is empty", source=f"basin {old!r}", fix="type a new name"))
            return
        for i, b in enumerate(self.basins):
            if b.name == old:
                self.basins[i] = Basin(b.geometry, name=self._unique(new))
                self.new_name.value = ""
                self._changed()
                return

    def delete_basin(self, name):
        self.basins = [b for b in self.basins if b.name != name]
        self._changed()

    def set_basins(self, basins):
        self.basins = list(basins)
        self._changed()

    def add_basins(self, basins):
        for b in basins:
            self.basins.append(Basin(b.geometry, name=self._unique(b.name)))
        self._changed()

    def load_file(self, path):
        try:
            loaded = load_basins(path)
        except InputError as exc:
            self._report(exc)
            return []
        self.add_basins(loaded)
        self._report(f"Loaded {len(loaded)} basin(s) from {path}.")
        return loaded

    def _on_upload(self, change):
        for item in change["new"] or ():
            try:
                mapping = json.loads(bytes(item["content"]).decode("utf-8"))
                self.add_basins(Basin.from_geojson(mapping))
            except (ValueError, UnicodeDecodeError) as exc:  # InputError is a ValueError
                self._report(exc if isinstance(exc, InputError) else SourceError(
                    f"not valid GeoJSON ({exc})", source=item.get("name", "upload"),
                    fix="upload a GeoJSON FeatureCollection of polygons"))

    def save_file(self, path, overwrite=False):
        path = str(path).strip()
        try:
            if not path:
                raise SourceError("no file given", source="basin file", expected="a .geojson path",
                                  fix="type where to save, e.g. out/basins.geojson")
            if not self.basins:
                raise BasinError("there are no basins to save", source=path, fix="draw or load a basin first")
            written = write_geojson(self.basins, path, overwrite=overwrite)
        except InputError as exc:
            self._report(exc)
            return None
        self._report(f"Saved {len(self.basins)} basin(s) to {written}.")
        return written


class HostsDrawingTools:
    """Mixin for widgets that embed :class:`DrawingTools` as ``self.tools``."""

    @property
    def basins(self):
        """The basins drawn or loaded, as a list of :class:`climwidgets.Basin`."""
        return list(self.tools.basins)

    def _report(self, message):
        if isinstance(message, Exception):
            self._show_error(message)
        else:
            self.say(message)


class BasinDrawer(HostsDrawingTools, BaseWidget):
    """Draw basins on a map of ``field`` and tabulate their area and mean of the field.

    Parameters
    ----------
    field : DataArray (lat, lon) or (y, x)
        What the map shows (for example an annual normal); the table gives its
        area-weighted basin mean.
    basins : list of Basin, optional
    kind : colour style of the map ('total', 'share', 'percent', ...)

    Attributes
    ----------
    basins : list of Basin
    result : DataFrame, index basin name, columns ``area_km2`` and ``mean`` (field units)
    """

    title = "Basins"
    export_stem = "basins"

    def __init__(self, field, basins=(), kind="total", export_dir="out"):
        self.field = field
        frame = MapFrame(field, kind=kind)
        self.tools = DrawingTools(frame, basins, report=self._report)
        super().__init__(map_frame=frame, export_dir=export_dir, chart=False)
        self.tools.on_change(lambda _: self.refresh())
        self.refresh()


    def build_controls(self):
        return [self.tools]

    def parameters(self):
        return {"basins": list(self.tools.basins)}

    def compute(self, basins):
        return {b.name: basin_mean(self.field, b) for b in basins}

    def finish(self, computed, params):
        units = self.field.attrs.get("units", "")
        rows = [{"basin": b.name, "area_km2": b.area_m2 / 1e6, f"mean [{units}]": float(computed[b.name])}
                for b in params["basins"]]
        return pd.DataFrame(rows, columns=["basin", "area_km2", f"mean [{units}]"]).set_index("basin")

    def render(self, result, params):
        self.show_table(result)
