"""Drawing, naming, loading and saving basins on a map.

:class:`DrawingTools` is the toolset (buttons, name box, basin list) attached to any
:class:`~climwidgets.widgets.mapframe.MapFrame`: with "Draw" switched on, each click on
the map adds a vertex; "Close basin" (or a double-click) closes the outline and names it.
Other widgets embed the toolset on their own map and listen with
:meth:`DrawingTools.on_change`.

:class:`BasinDrawer` is the stand-alone widget: a map of a field, the toolset, and a
table of basins with their area (km², the outline on the authalic sphere) and the mean of the shown
field (``cw.basin_mean``).  ``drawer.basins`` is the list of ``cw.Basin``.
"""

from __future__ import annotations

import json
from collections.abc import Callable

import ipywidgets as widgets
import xarray as xr

from ..analyses.basins import field_means, field_means_table
from ..analyses.meta import display_frame, frame
from ..errors import BasinError, InputError, SourceError
from ..geo.basin import Basin
from ..geo.basinset import BasinSet, load_basins
from .base import BaseWidget
from .mapframe import MapFrame

__all__ = ["DrawingTools", "BasinDrawer", "load_basins"]


class DrawingTools(widgets.VBox):
    """Draw/select/rename/delete/load/save basins on ``map_frame``.

    Parameters
    ----------
    map_frame : MapFrame
    basins : BasinSet (or a list of Basin, kept in a new BasinSet)
        The set the tools change; every widget holding the same set sees the changes.
    report : callable(text_or_error)
        Where messages go (the host widget's message line); errors are InputError objects.
    """

    def __init__(self, map_frame: MapFrame, basins=(), report=None):
        self.map = map_frame
        self.basin_set = basins if isinstance(basins, BasinSet) else BasinSet(basins or [])
        self.vertices: list[tuple[float, float]] = []
        self._listeners: list[Callable[..., object]] = []
        self._report = report or (lambda message: None)
        lay = widgets.Layout(width="auto")
        self.draw = widgets.ToggleButton(
            value=False, description="Draw", icon="pencil", tooltip="click on the map to add vertices", layout=lay
        )
        self.name = widgets.Text(
            value="", placeholder="name of the new basin", description="Name", layout=widgets.Layout(width="260px")
        )
        self.close = widgets.Button(
            description="Close basin",
            icon="check",
            layout=lay,
            tooltip="close the outline and add the basin (or double-click)",
        )
        self.undo = widgets.Button(description="Undo vertex", icon="undo", layout=lay)
        self.cancel = widgets.Button(description="Discard outline", icon="times", layout=lay)
        self.select = widgets.Dropdown(options=[], description="Basin", layout=widgets.Layout(width="260px"))
        self.new_name = widgets.Text(value="", placeholder="new name", layout=widgets.Layout(width="150px"))
        self.rename = widgets.Button(description="Rename", layout=lay)
        self.delete = widgets.Button(description="Delete", icon="trash", layout=lay)
        self.path = widgets.Text(
            value="",
            placeholder="basins.geojson or outlines.shp",
            description="File",
            layout=widgets.Layout(width="260px"),
        )
        self.load = widgets.Button(description="Load", icon="folder-open", layout=lay)
        self.save = widgets.Button(description="Save all as GeoJSON", icon="save", layout=lay)
        self.overwrite = widgets.Checkbox(value=False, description="replace an existing file", indent=False)
        self.upload = widgets.FileUpload(
            accept=".geojson,.json", multiple=False, description="Upload GeoJSON", layout=widgets.Layout(width="auto")
        )  # the whole label, unclipped
        self.close.on_click(lambda _: self.close_basin())
        self.undo.on_click(lambda _: self.undo_vertex())
        self.cancel.on_click(lambda _: self.discard())
        self.rename.on_click(lambda _: self.rename_basin(self.select.value, self.new_name.value))
        self.delete.on_click(lambda _: self.delete_basin(self.select.value))
        self.load.on_click(lambda _: self.load_file(self.path.value))
        self.save.on_click(lambda _: self.save_file(self.path.value, overwrite=self.overwrite.value))
        self.upload.observe(self._on_upload, names="value")
        self.map.on_click(self._on_map_click)
        super().__init__(
            children=[
                widgets.HTML("<b>Basins</b>: switch on <i>Draw</i>, click the corners on the map, then close."),
                widgets.HBox([self.draw, self.undo, self.cancel]),
                self.name,
                self.close,
                widgets.HBox([self.select]),
                widgets.HBox([self.new_name, self.rename, self.delete]),
                self.path,
                widgets.HBox([self.load, self.save]),
                self.overwrite,
                self.upload,
            ]
        )
        self._sync()

    # ------------------------------------------------------------ events
    @property
    def basins(self) -> list:
        return list(self.basin_set)

    def on_change(self, callback):
        """``callback(basins)`` after this toolset changed the basins."""
        self._listeners.append(callback)

    def _changed(self):
        self._sync()
        for callback in list(self._listeners):
            callback(list(self.basins))

    def sync(self):
        """Show the set's current basins (menu and outlines); call after the set changed."""
        self._sync()

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
        self.vertices: list[tuple[float, float]] = []
        self.map.set_overlay([])

    def _default_name(self):
        taken, n = set(self.basin_set.names), len(self.basin_set) + 1
        while f"basin {n}" in taken:
            n += 1
        return f"basin {n}"

    def close_basin(self, name=None):
        """Close the outline being drawn into a named Basin; returns it (None on error)."""
        name = (self.name.value if name is None else name).strip() or self._default_name()
        try:
            if len(self.vertices) < 3:
                raise BasinError(
                    f"the outline has {len(self.vertices)} vertices",
                    source=f"basin {name!r}",
                    expected="at least 3 corners",
                    fix="click more corners on the map",
                )
            basin = Basin.from_vertices(self.vertices, name=name)
            self.basin_set.add(basin)  # a taken name is an error: the outline stays for another try
        except InputError as exc:
            self._report(exc)
            return None
        self.vertices: list[tuple[float, float]] = []
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
        try:
            self.basin_set.rename(old, new)
        except InputError as exc:
            self._report(exc)
            return
        self.new_name.value = ""
        self._changed()

    def delete_basin(self, name):
        if name in self.basin_set:
            self.basin_set.remove(name)
        self._changed()

    def set_basins(self, basins):
        self.basin_set.replace(basins)
        self._changed()

    def add_basins(self, basins):
        self.basin_set.extend(basins)
        self._changed()

    def load_file(self, path):
        if not str(path).strip():
            self._report(
                SourceError(
                    "no file given",
                    source="basin file",
                    expected="a .geojson or .shp path",
                    fix="type the path of the file to load",
                )
            )
            return []
        try:
            loaded = load_basins(path)
            self.add_basins(loaded)
        except InputError as exc:
            self._report(exc)
            return []
        self._report(f"Loaded {len(loaded)} basin(s) from {path}.")
        return loaded

    def _on_upload(self, change):
        for item in change["new"] or ():
            try:
                mapping = json.loads(bytes(item["content"]).decode("utf-8"))
                self.add_basins(Basin.from_geojson(mapping))
            except (ValueError, UnicodeDecodeError) as exc:  # InputError is a ValueError
                self._report(
                    exc
                    if isinstance(exc, InputError)
                    else SourceError(
                        f"not valid GeoJSON ({exc})",
                        source=item.get("name", "upload"),
                        fix="upload a GeoJSON FeatureCollection of polygons",
                    )
                )

    def save_file(self, path, overwrite=False):
        path = str(path).strip()
        try:
            if not path:
                raise SourceError(
                    "no file given",
                    source="basin file",
                    expected="a .geojson path",
                    fix="type where to save, e.g. out/basins.geojson",
                )
            written = self.basin_set.to_geojson(path, overwrite=overwrite)
        except InputError as exc:
            self._report(exc)
            return None
        self._report(f"Saved {len(self.basins)} basin(s) to {written}.")
        return written


class HostsDrawingTools:
    """Mixin for widgets that embed :class:`DrawingTools` as ``self.tools`` on their basin set."""

    def _make_tools(self, frame, basins):
        """The drawing tools on ``frame``, working on this widget's (shared) basin set."""
        self.use_basins(basins)
        self.tools = DrawingTools(frame, self.basin_set, report=self._report)
        return self.tools

    def _report(self, message):
        if isinstance(message, Exception):
            self._show_error(message, invalidates=False)  # a refused outline leaves the results valid
        else:
            self.say(message)


class BasinDrawer(HostsDrawingTools, BaseWidget):
    """Draw basins on a map of ``field`` and tabulate their area and mean of the field.

    Parameters
    ----------
    field : DataArray (lat, lon) or (y, x)
        What the map shows (for example an annual normal); the table gives its
        area-weighted basin mean.
    basins : list of Basin or a shared cw.BasinSet, optional
    kind : colour style of the map ('total', 'share', 'percent', ...)

    Attributes
    ----------
    basins : list of Basin
    result : DataFrame, index basin name, columns ``area_km2`` and ``mean`` (field units)

    A field with a member dimension gets the "Ensemble member" menu: the map and the basin
    means are those of the chosen member, the ensemble mean or the spread between members
    (basin means per member first, then the view; the same as the view first for a mean).
    """

    title = "Basins"
    export_stem = "basins"
    member_state = ("_rows",)

    def __init__(self, field, basins=(), kind="total", export_dir="out"):
        from .members import DEFAULT_CHOICE, find_member_dim, reduce_members

        self.field = field
        self._rows = {}
        self._kind = kind
        dim = find_member_dim(field)
        shown = field if dim is None else reduce_members(field, DEFAULT_CHOICE, dim)
        frame = MapFrame(shown, kind=kind)
        self._make_tools(frame, basins)
        super().__init__(map_frame=frame, export_dir=export_dir, chart=False)
        self.refresh()

    def member_source(self):
        return self.field

    def basins_changed(self, event, details):
        self.tools.sync()
        self.refresh()

    def build_controls(self):
        return [self.tools]

    def parameters(self):
        return {"basins": self.basins}

    def compute(self, basins):
        # only basins not seen before are computed; the others keep their numbers
        new = [b for b in basins if (b.token, b.name) not in self._rows]
        means = field_means(self.field, new)["mean"] if new else None
        return means if self.member is None else {"means": means, "field": self.field}

    def finish(self, computed, params):
        if self.member is not None:
            self._shown = computed["field"]
            computed = computed["means"]
        basins = params["basins"]
        if computed is not None:
            for b in basins:
                if b.name in computed["basin"].values:
                    self._rows[(b.token, b.name)] = float(computed.sel(basin=b.name))
        units = self.field.attrs.get("units", "")
        means = xr.DataArray(
            [self._rows[(b.token, b.name)] for b in basins],
            dims="basin",
            coords={"basin": [b.name for b in basins]},
            attrs={"units": units},
        )
        out = frame(field_means_table(basins, means), columns=["area_km2", "mean"])
        out = out.rename(columns={"mean": f"mean [{units}]"})
        columns = dict(out.attrs.get("columns") or {})
        if "mean" in columns:  # the renamed column keeps its description (units menu, CSV metadata)
            columns[f"mean [{units}]"] = columns.pop("mean")
        out.attrs = {**out.attrs, "columns": columns}
        return out

    def render(self, result, params):
        if self.member is not None:
            self.map.show_field(self._shown, kind=self._kind)
        self.show_table(display_frame(result))  # headings in words with units
