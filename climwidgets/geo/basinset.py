"""BasinSet: the ordered, observable collection of basins that widgets share, and the one
basin loader.

Widgets given the same :class:`BasinSet` always show the same basins: a basin drawn or
loaded in one joins the set, and every widget watching it hears of the change.  Names
are unique within a set; adding or renaming to a name already taken is an error, not a
silent "(2)".  Listeners are called on the thread that changed the set, with an event
``("add" | "remove" | "rename" | "replace", details)``.
"""

from __future__ import annotations

import os
import threading
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import BasinError, ParameterError, SourceError
from .basin import Basin, write_geojson

#: A listener: called as ``callback(event, details)`` after every change of a BasinSet.
Listener = Callable[[str, Any], object]

__all__ = ["BasinSet", "as_basin_list", "load_basins", "whole_grid_basin"]


class BasinSet:
    """An ordered set of :class:`cw.Basin` with unique names that tells listeners of changes.

    Parameters
    ----------
    basins : iterable of Basin, optional
        The first members: a Basin, a list or dict of Basins, or another BasinSet; their
        names must be unique.

    Raises
    ------
    climwidgets.errors.ParameterError
        Members that are not Basin objects.
    climwidgets.errors.BasinError
        An empty or repeated name.

    Examples
    --------
    Widgets given one set (``cw.SeasonalShareWidget(pr, basins=shared)`` and
    ``cw.BasinSummaryWidget(pr, basins=shared)``) show the same basins: they observe it.

    >>> import climwidgets as cw
    >>> upper = cw.Basin.from_vertices([(10, 0), (11, 0), (11, 1), (10, 1)], name="north fork")
    >>> lower = cw.Basin.from_vertices([(11, 0), (12, 0), (12, 1), (11, 1)], name="south fork")
    >>> shared = cw.BasinSet([upper])
    >>> events = []
    >>> shared.observe(lambda event, details: events.append(event))
    >>> _ = shared.add(lower)
    >>> _ = shared.rename("south fork", "lower reach")
    >>> _ = shared.remove("north fork")
    >>> shared, events
    (BasinSet(['lower reach']), ['add', 'rename', 'remove'])
    >>> taken = cw.Basin.from_vertices([(10, 0), (11, 0), (11, 1)], name="lower reach")
    >>> shared.add(taken)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
        ...
    climwidgets.errors.BasinError: BasinSet, variable 'name': a basin named 'lower reach' is already in the set...
    """

    def __init__(self, basins: Any = ()) -> None:
        self._basins: list[Basin] = []
        self._listeners: list[Listener] = []
        self._lock = threading.RLock()
        for b in _basins_of(basins, "BasinSet"):
            self._check_new_name(b.name)
            self._basins.append(b)

    # ------------------------------------------------------------ reading
    @property
    def names(self) -> list[str]:
        return [b.name for b in self._basins]

    def __iter__(self) -> Iterator[Basin]:
        return iter(list(self._basins))

    def __len__(self) -> int:
        return len(self._basins)

    def __contains__(self, name: object) -> bool:
        return (name.name if isinstance(name, Basin) else name) in self.names

    def __getitem__(self, key: int | str) -> Basin:
        if isinstance(key, int):
            return self._basins[key]
        for b in self._basins:
            if b.name == key:
                return b
        raise KeyError(key)

    def __repr__(self) -> str:
        return f"BasinSet({self.names!r})"

    # ------------------------------------------------------------ changing
    def _check_new_name(self, name: object) -> None:
        if not isinstance(name, str) or not name.strip():
            raise BasinError(
                "the basin name is empty",
                source="BasinSet",
                variable="name",
                expected="a non-empty name",
                fix="give the basin a name",
            )
        if name in self.names:
            raise BasinError(
                f"a basin named {name!r} is already in the set",
                source="BasinSet",
                variable="name",
                expected="a name not yet used",
                fix="choose another name, or remove or rename the existing basin first",
            )

    def add(self, basin: Basin) -> Basin:
        """Append ``basin``; raises BasinError when its name is taken."""
        if not isinstance(basin, Basin):
            raise ParameterError(
                f"got {type(basin).__name__}",
                source="BasinSet.add",
                variable="basin",
                expected="a cw.Basin",
                fix="build it with cw.Basin.from_vertices or from_geojson",
            )
        with self._lock:
            self._check_new_name(basin.name)
            self._basins.append(basin)
        self._notify("add", [basin])
        return basin

    def extend(self, basins: Any) -> list[Basin]:
        """Add several basins at once (all or none: a taken name adds nothing)."""
        new = _basins_of(basins, "BasinSet.extend")
        with self._lock:
            seen = set(self.names)
            for b in new:
                if b.name in seen:
                    raise BasinError(
                        f"a basin named {b.name!r} is already in the set",
                        source="BasinSet",
                        variable="name",
                        expected="names not yet used",
                        fix="rename the basins in the file, or remove the existing ones first",
                    )
                seen.add(b.name)
            self._basins.extend(new)
        if new:
            self._notify("add", new)
        return new

    def remove(self, name: str | Basin) -> Basin:
        """Remove the basin called ``name`` (or that Basin); KeyError-free: BasinError if absent."""
        name = name.name if isinstance(name, Basin) else name
        with self._lock:
            basin = self._find(name)
            self._basins.remove(basin)
        self._notify("remove", [basin])
        return basin

    def rename(self, old: str, new: str) -> Basin:
        """Give the basin ``old`` the name ``new`` (same outline); BasinError if ``new`` is taken."""
        new = (new or "").strip()
        with self._lock:
            basin = self._find(old)
            if new == old:
                return basin
            self._check_new_name(new)
            renamed = basin.renamed(new)
            self._basins[self._basins.index(basin)] = renamed
        self._notify("rename", (old, new))
        return renamed

    def replace(self, basins: Any) -> None:
        """Make the set hold exactly ``basins`` (unique names)."""
        new = BasinSet(basins)._basins
        with self._lock:
            self._basins = new
        self._notify("replace", list(new))

    def _find(self, name: str) -> Basin:
        for b in self._basins:
            if b.name == name:
                return b
        raise BasinError(
            f"no basin named {name!r} in the set",
            source="BasinSet",
            variable="name",
            expected=f"one of {self.names}",
            fix="pick a name from BasinSet.names",
        )

    # ------------------------------------------------------------ listeners
    def observe(self, callback: Listener) -> None:
        """Call ``callback(event, details)`` after every change."""
        with self._lock:
            if callback not in self._listeners:
                self._listeners.append(callback)

    def unobserve(self, callback: Listener) -> None:
        with self._lock:
            if callback in self._listeners:
                self._listeners.remove(callback)

    def _notify(self, event: str, details: Any) -> None:
        with self._lock:
            listeners = list(self._listeners)
        for callback in listeners:
            callback(event, details)

    # ------------------------------------------------------------ GeoJSON
    @classmethod
    def from_geojson(cls, path_or_mapping: Any) -> "BasinSet":
        """A set of the polygons of a GeoJSON file or mapping (see :meth:`cw.Basin.from_geojson`)."""
        return cls(Basin.from_geojson(path_or_mapping))

    @classmethod
    def from_file(cls, path: str | os.PathLike[str]) -> "BasinSet":
        """A set from a GeoJSON file or a shapefile (:func:`load_basins`)."""
        return cls(load_basins(path))

    def to_geojson(self, path: str | os.PathLike[str] | None = None, overwrite: bool = False) -> dict[str, Any] | Path:
        """A GeoJSON FeatureCollection mapping, or with ``path`` the written file (atomic)."""
        if path is not None:
            if not self._basins:
                raise BasinError("there are no basins to save", source=str(path), fix="draw or load a basin first")
            return write_geojson(list(self._basins), path, overwrite=overwrite)
        return {"type": "FeatureCollection", "features": [b.to_geojson() for b in self._basins]}


def _basins_of(basins: Any, func: str) -> list[Basin]:
    if isinstance(basins, Basin):
        return [basins]
    if isinstance(basins, BasinSet):
        return list(basins)
    if isinstance(basins, dict):
        basins = list(basins.values())
    try:
        out = list(basins or [])
    except TypeError:
        out = None
    if out is None or not all(isinstance(b, Basin) for b in out):
        raise ParameterError(
            f"basins must be Basin objects (got {type(basins).__name__})",
            source=func,
            variable="basins",
            expected="a Basin, a list of Basin or a cw.BasinSet",
            fix="build them with cw.Basin.from_vertices / from_geojson / from_shapefile",
        )
    return out


def as_basin_list(basins: Any, func: str) -> list[Basin]:
    """A non-empty list of uniquely named basins from a Basin, a list, a dict or a BasinSet.

    Parameters
    ----------
    basins
        A Basin, a list or dict of Basins, or a BasinSet.
    func
        The calling function's name, for error messages.

    Returns
    -------
    list of Basin
        The basins, in order (a dict's values in its order).

    Raises
    ------
    climwidgets.errors.ParameterError
        Members that are not Basins, none at all, or repeated names.

    Examples
    --------
    >>> import climwidgets as cw
    >>> upper = cw.Basin.from_vertices([(10, 0), (11, 0), (11, 1), (10, 1)], name="north fork")
    >>> lower = cw.Basin.from_vertices([(11, 0), (12, 0), (12, 1), (11, 1)], name="south fork")
    >>> from climwidgets.geo.basinset import as_basin_list
    >>> [b.name for b in as_basin_list({"a": upper, "b": lower}, "example")]
    ['north fork', 'south fork']
    """
    out = _basins_of(basins, func)
    if not out:
        raise ParameterError(
            "basins must be a Basin or a non-empty list of Basin objects",
            source=func,
            variable="basins",
            expected="Basin objects",
            fix="build them with cw.Basin.from_vertices / from_geojson / from_shapefile",
        )
    names = [b.name for b in out]
    if len(set(names)) != len(names):
        raise ParameterError(
            f"basin names repeat: {names}",
            source=func,
            variable="basins",
            expected="one name per basin",
            fix="give every basin its own name",
        )
    return out


def load_basins(source: Any) -> list[Basin]:
    """Basins from a GeoJSON file (.geojson/.json) or an ESRI shapefile (.shp), or Basin
    objects (a Basin, a list or a BasinSet) passed through.

    Parameters
    ----------
    source : str, path-like, Basin, list of Basin or BasinSet
        The basin outline file, or basins already built.

    Returns
    -------
    list of Basin
        In file order; each remembers the file it came from (:attr:`Basin.origin`).

    Raises
    ------
    climwidgets.errors.SourceError
        When the file is missing, not a regular file (a folder, pipe or device: refused
        without reading, so a pipe cannot block), unreadable, not JSON, nested too deeply,
        or a shapefile without its ``.dbf``.
    climwidgets.errors.BasinError
        When ``source`` is not a path or basins, the file is not a basin outline file, or an
        outline is not a usable polygon; the message names the file and the basin.

    Examples
    --------
    >>> import os, tempfile
    >>> import climwidgets as cw
    >>> basin = cw.Basin.from_vertices([(10, 0), (11, 0), (11, 1), (10, 1)], name="north fork")
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     path = cw.BasinSet([basin]).to_geojson(os.path.join(folder, "basins.geojson"))
    ...     cw.load_basins(path)
    [Basin('north fork', Polygon, lon 10..11, lat 0..1)]
    """
    if isinstance(source, (Basin, BasinSet)) or (
        isinstance(source, (list, tuple)) and source and all(isinstance(b, Basin) for b in source)
    ):
        return _basins_of(source, "load_basins")
    if not isinstance(source, (str, os.PathLike)) or not str(source).strip():
        raise BasinError(
            f"got {type(source).__name__} {source!r}",
            source="basins",
            expected="a GeoJSON or shapefile path",
            fix="pass the path of the basin outline file",
        )
    path = Path(str(source).strip())
    suffix = path.suffix.lower()
    if suffix in (".shp", ".shx", ".dbf"):
        return Basin.from_shapefile(path)
    if not path.exists():
        raise SourceError(
            "basin file not found",
            source=path,
            expected="a GeoJSON (.geojson, .json) or shapefile (.shp)",
            fix="check the basin file path",
        )
    if not path.is_file():  # a folder, FIFO or device: never opened (a FIFO would block)
        raise SourceError(
            "is not a regular file (a folder, pipe or device)",
            source=path,
            expected="a GeoJSON (.geojson, .json) or shapefile (.shp) file",
            fix="give the path of the basin outline file itself",
        )
    if suffix not in (".geojson", ".json"):
        try:
            with open(path, "rb") as f:
                head = f.read(64).lstrip()
        except OSError as exc:
            from .basin import _unreadable

            raise _unreadable(path, exc, "a readable GeoJSON or shapefile") from None
        if not head.startswith(b"{"):
            raise BasinError(
                "is not a basin outline file",
                source=path,
                expected="GeoJSON (.geojson, .json) or an ESRI shapefile (.shp)",
                fix="save the basin outlines as GeoJSON or a shapefile",
            )
    return Basin.from_geojson(path)


def whole_grid_basin(field: Any, name: str = "whole grid") -> Basin | None:
    """A basin covering a rectilinear grid's cells, for area-weighted domain means.

    Parameters
    ----------
    field
        A DataArray or Dataset on a lat/lon grid (bounds read or inferred, see
        :func:`climwidgets.geo.grid.cell_bounds`).
    name
        The basin's name.

    Returns
    -------
    Basin or None
        The rectangle from the grid's outer cell edges; None for curvilinear grids.

    Raises
    ------
    climwidgets.errors.GridError
        A field without usable lat/lon coordinates.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.geo.basinset import whole_grid_basin
    >>> grid = xr.DataArray(np.zeros((2, 3)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]})
    >>> whole_grid_basin(grid)
    Basin('whole grid', Polygon, lon 10..13, lat 0..2)
    """
    from .grid import cell_bounds

    b = cell_bounds(field)
    if (
        b.kind != "rectilinear"
        or b.lon_lower is None
        or b.lon_upper is None
        or b.lat_lower is None
        or b.lat_upper is None
    ):
        return None
    w, e = float(np.min(b.lon_lower)), float(np.max(b.lon_upper))
    s, n = float(np.min(b.lat_lower)), float(np.max(b.lat_upper))
    return Basin.from_vertices([(w, s), (e, s), (e, n), (w, n)], name=name)
