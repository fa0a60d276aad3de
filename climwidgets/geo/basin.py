"""Basins: named polygons in lon/lat.

Edges are straight lines in lon/lat (as in GeoJSON, RFC 7946).  Every constructor goes
through the same checks, so a basin that exists is valid:

* each ring has at least 3 distinct vertices, all finite, with |lat| ≤ 90;
* a ring whose consecutive vertices jump by more than 180° of longitude is taken to cross
  the antimeridian (an edge of exactly 360°, from -180 to 180, is an edge along a parallel
  or the pole, as whole-globe and polar-cap outlines are drawn): it is unwrapped, and the
  polygon is split into parts inside [-180, 180) (a MultiPolygon).  Longitudes given in [0, 360) are moved the same way;
* a self-intersecting ring is repaired with ``shapely.make_valid`` only when the repair
  keeps ≥ 99.9 % of its area in one polygon (a tiny loop where a vertex was clicked twice);
  a figure-of-eight is rejected, since which part was meant is a guess;
* the result must have a non-zero area.

A basin read from a file remembers it (:attr:`Basin.origin`), and every error about such a
basin names the file as well as the basin.  A file that cannot be read (no permission,
nested too deeply to be GeoJSON, a shapefile without its ``.dbf``) raises a
:class:`~climwidgets.errors.SourceError` naming it, never the reader's own exception.
"""

from __future__ import annotations

import hashlib
import json
import os
import struct
from collections.abc import Callable, Iterable
from functools import cached_property
from pathlib import Path
from typing import Any

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon, mapping, shape

from ..atomic import atomic_write_file
from ..errors import BasinError, SourceError

__all__ = ["Basin", "write_geojson"]

_REPAIR_KEEP = 0.999  # share of the area a self-intersection repair must keep in one polygon


# GeoJSON needs five levels of brackets (FeatureCollection > features > polygon > ring >
# vertex), a MultiPolygon one more; json gives up at Python's recursion limit
_MAX_GEOJSON_DEPTH_WORDS = "a FeatureCollection of Polygon or MultiPolygon features (about 6 levels of brackets)"


def _err(problem: str, name: object, fix: str, expected: str | None = None) -> BasinError:
    return BasinError(problem, source=f"basin {name!r}", expected=expected, fix=fix)


def _in_file(exc: BasinError, where: object) -> BasinError:
    """``exc`` with the file (or text) the basin came from named before the basin."""
    if where is None or (exc.source and str(where) in exc.source):
        return exc
    source = f"{where}, {exc.source}" if exc.source and exc.source != "GeoJSON input" else str(where)
    return type(exc)(exc.problem, source=source, variable=exc.variable, expected=exc.expected, fix=exc.fix)


def _unreadable(path: object, exc: OSError, expected: str) -> SourceError:
    reason = exc.strerror or type(exc).__name__
    fix = (
        "give read permission on the file (e.g. chmod u+r) or copy it somewhere readable"
        if isinstance(exc, PermissionError)
        else "check the path points at a readable file"
    )
    return SourceError(f"cannot be read ({reason})", source=path, expected=expected, fix=fix)


def _parse_json(text: str, where: object) -> Any:
    try:
        return json.loads(text)
    except RecursionError:
        raise SourceError(
            "is nested too deeply to be GeoJSON (json gave up at Python's recursion limit)",
            source=where,
            expected=_MAX_GEOJSON_DEPTH_WORDS,
            fix="export the basin outlines again as GeoJSON from your GIS tool",
        ) from None
    except ValueError as exc:  # json.JSONDecodeError is a ValueError
        raise SourceError(
            f"not valid JSON ({exc})", source=where, expected="a GeoJSON file", fix="check the file is GeoJSON text"
        ) from None


def _read_json(path: Path) -> Any:
    try:
        text = path.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise SourceError(
            f"not valid JSON (not UTF-8 text: {exc.reason} at byte {exc.start})",
            source=path,
            expected="a GeoJSON file (UTF-8 text)",
            fix="check the file is GeoJSON text",
        ) from None
    except OSError as exc:
        raise _unreadable(path, exc, "a readable GeoJSON file") from None
    return _parse_json(text, path)


def _clean_ring(coords: Any, name: object) -> np.ndarray:
    try:
        ring = np.asarray(coords, dtype=float)
    except (TypeError, ValueError):
        raise _err(
            "vertices are not numbers",
            name,
            "give vertices as (lon, lat) pairs of numbers",
            expected="a sequence of (lon, lat) pairs",
        ) from None
    if ring.ndim != 2 or ring.shape[1] < 2:
        raise _err(
            f"vertices have shape {ring.shape}",
            name,
            "give vertices as (lon, lat) pairs",
            expected="a sequence of (lon, lat) pairs",
        )
    ring = ring[:, :2]
    if not np.all(np.isfinite(ring)):
        raise _err(
            "a vertex is NaN or infinite",
            name,
            "remove or correct the missing vertex",
            expected="finite lon/lat in degrees",
        )
    if np.any(np.abs(ring[:, 1]) > 90.0):
        bad = ring[np.abs(ring[:, 1]) > 90.0][0]
        raise _err(
            f"latitude {bad[1]:g} is beyond ±90 (vertex ({bad[0]:g}, {bad[1]:g}))",
            name,
            "check the vertex order is (lon, lat), not (lat, lon)",
            expected="|lat| ≤ 90",
        )
    if len(ring) > 1 and np.array_equal(ring[0], ring[-1]):
        ring = ring[:-1]
    distinct = np.unique(ring, axis=0)
    if len(distinct) < 3:
        raise _err(
            f"a ring has {len(distinct)} distinct vertices",
            name,
            "draw at least three corners",
            expected="at least 3 distinct vertices",
        )
    ring[:, 0] = _unwrap_lon(ring[:, 0])
    return ring


def _unwrap_lon(lon: np.ndarray) -> np.ndarray:
    """Consecutive vertices more than 180° apart cross the antimeridian, and are unwrapped;
    an edge of exactly 360° (from -180 to 180, as whole-globe and polar-cap outlines are
    drawn in GeoJSON) is a straight lon/lat edge and is kept as given."""
    step = np.diff(lon)
    full = np.isclose(np.abs(step), 360.0, rtol=0.0, atol=1e-9)
    jump = np.where((np.abs(step) > 180.0) & ~full, -360.0 * np.round(step / 360.0), 0.0)
    out: np.ndarray = lon + np.concatenate([[0.0], np.cumsum(jump)])
    return out


def _split_antimeridian(geom: Any) -> Any:
    """Cut a geometry drawn in unwrapped longitudes into parts within [-180, 180)."""
    minx, _, maxx, _ = geom.bounds
    if minx >= -180.0 and maxx <= 180.0:
        return geom
    parts: list[Any] = []
    for k in range(int(np.floor((minx + 180.0) / 360.0)), int(np.floor((maxx + 180.0) / 360.0)) + 1):
        lo = -180.0 + 360.0 * k
        piece = shapely.clip_by_rect(geom, lo, -90.0, lo + 360.0, 90.0)
        piece = shapely.make_valid(piece) if not piece.is_valid else piece
        piece = shapely.transform(piece, lambda xy: xy - np.array([360.0 * k, 0.0]))
        parts.extend(p for p in _polygons(piece) if p.area > 0)
    return shapely.union_all(parts)


def _polygons(geom: Any) -> list[Any]:
    if geom.is_empty:
        return []
    if geom.geom_type == "Polygon":
        return [geom]
    if geom.geom_type in ("MultiPolygon", "GeometryCollection"):
        return [p for g in geom.geoms for p in _polygons(g)]
    return []


def _repair(poly: Polygon, name: object) -> Polygon:
    if poly.is_valid:
        return poly
    reason = shapely.is_valid_reason(poly)
    fixed = _polygons(shapely.make_valid(poly))
    total = sum(p.area for p in fixed)
    if total > 0:
        largest = max(fixed, key=lambda p: p.area)
        if largest.area >= _REPAIR_KEEP * total:
            return largest
        share = largest.area / total
        raise _err(
            f"the outline crosses itself ({reason}) and splits into {len(fixed)} parts; the largest holds "
            f"only {share:.1%} of the area, so a repair would have to guess which part was meant",
            name,
            "redraw the outline so that its edges do not cross",
            expected=f"a simple ring (a repair must keep ≥ {_REPAIR_KEEP:.1%} of the area in one polygon)",
        )
    raise _err(
        "the outline encloses zero area (its vertices lie on one line)",
        name,
        "add a vertex off the line",
        expected="a polygon with non-zero area",
    )


def _build(polygons_rings: Iterable[Any], name: object) -> Any:
    """Validated (Multi)Polygon from [[exterior, hole, ...], ...] coordinate lists."""
    parts = []
    for rings in polygons_rings:
        if not rings:
            continue
        ext = _clean_ring(rings[0], name)
        holes = []
        for h in rings[1:]:
            h = _clean_ring(h, name)
            h[:, 0] += 360.0 * np.round((ext[:, 0].mean() - h[:, 0].mean()) / 360.0)  # same frame as exterior
            holes.append(h)
        poly = _repair(Polygon(ext, holes), name)
        if poly.area <= 0.0:
            raise _err(
                "the outline encloses zero area (all vertices on one line)",
                name,
                "add a vertex off the line",
                expected="a polygon with non-zero area",
            )
        parts.append(poly)
    if not parts:
        raise _err("no polygon given", name, "give at least one ring of (lon, lat) vertices")
    geom = parts[0] if len(parts) == 1 else shapely.union_all(parts)
    geom = _split_antimeridian(geom)
    geom = shapely.normalize(shapely.make_valid(geom) if not geom.is_valid else geom)
    polys = _polygons(geom)
    if not polys or sum(p.area for p in polys) <= 0.0:
        raise _err(
            "the outline encloses zero area",
            name,
            "draw a polygon with an interior",
            expected="a polygon with non-zero area",
        )
    return polys[0] if len(polys) == 1 else MultiPolygon(polys)


def _rings_from_geometry(geom: dict[str, Any], name: object) -> list[Any]:
    kind = geom.get("type") if isinstance(geom, dict) else None
    if kind in ("Polygon", "MultiPolygon"):
        coords = geom.get("coordinates")
        depth = "rings" if kind == "Polygon" else "polygons, each a list of rings"
        if not isinstance(coords, (list, tuple)) or not all(isinstance(c, (list, tuple)) for c in coords):
            got = "no coordinates" if coords is None else f"coordinates that are not a list of {depth}"
            raise _err(
                f"the {kind} has {got}",
                name,
                "export the basin outlines again as GeoJSON",
                expected=f"'coordinates': a list of {depth} of (lon, lat) vertices",
            )
        return [coords] if kind == "Polygon" else list(coords)
    raise _err(
        f"geometry type {kind!r} is not a polygon",
        name,
        "give a Polygon or MultiPolygon (points and lines have no area)",
        expected="Polygon, MultiPolygon, Feature or FeatureCollection",
    )


class Basin:
    """A named polygon or multipolygon (holes allowed) in lon/lat degrees.

    Build with :meth:`from_vertices`, :meth:`from_geojson`, :meth:`from_shapefile` or
    :meth:`from_wkt`; the constructor takes an already valid shapely geometry.

    Parameters
    ----------
    geometry
        A valid, non-empty shapely Polygon or MultiPolygon in lon/lat degrees within
        [-180, 180) (the ``from_*`` constructors check, repair and split outlines first).
    name
        The basin's name, shown in tables and exports.

    Attributes
    ----------
    name : str
        The basin's name.
    geometry : shapely.Polygon or shapely.MultiPolygon
        The outline in lon/lat degrees.
    bounds : tuple of float
        (min lon, min lat, max lon, max lat).
    area_m2 : float
        The area on the authalic sphere (m²), the one basin area every table uses.
    token : str
        A hash of the geometry (equal outlines, equal tokens).
    origin : str or None
        The file the basin was read from (None when drawn or built in code).

    Raises
    ------
    climwidgets.errors.BasinError
        A geometry that is empty, not a polygon, or not valid; from the constructors, an
        outline that fails the checks of the module notes.

    References
    ----------
    Butler, H. et al. (2016). The GeoJSON Format. RFC 7946, Internet Engineering Task
    Force. https://doi.org/10.17487/RFC7946

    Examples
    --------
    >>> import climwidgets as cw
    >>> basin = cw.Basin.from_vertices([(10.0, 0.0), (11.0, 0.0), (11.0, 1.0), (10.0, 1.0)],
    ...                                name="north fork")
    >>> basin
    Basin('north fork', Polygon, lon 10..11, lat 0..1)
    >>> round(basin.area_m2 / 1e6, 1)  # km²: R² (pi / 180) sin(1°) with R = 6 371 007.2 m
    12363.7
    >>> cw.Basin.from_vertices([(179.5, 0.0), (-179.5, 0.0), (-179.5, 1.0), (179.5, 1.0)],
    ...                        name="date line")  # split at the antimeridian
    Basin('date line', MultiPolygon, lon -180..180, lat 0..1)
    >>> cw.Basin.from_wkt("POLYGON((10 0, 11 0, 11 1, 10 1, 10 0))").token == basin.token
    True
    """

    def __init__(self, geometry: Any, name: str = "basin") -> None:
        if geometry is None or geometry.is_empty or geometry.geom_type not in ("Polygon", "MultiPolygon"):
            raise _err("geometry is empty or not a polygon", name, "use one of the Basin.from_* constructors")
        if not geometry.is_valid:
            raise _err(
                f"geometry is not valid ({shapely.is_valid_reason(geometry)})",
                name,
                "build it with Basin.from_wkt or Basin.from_geojson, which check and repair outlines",
            )
        self._geometry = geometry
        self._name = str(name)
        self._origin: str | None = None  # the file it was read from, if any

    # ---------------------------------------------------------------- constructors
    @classmethod
    def from_vertices(cls, vertices: Any, name: str = "basin") -> "Basin":
        """A basin from one ring of (lon, lat) vertices (closing vertex optional).

        Parameters
        ----------
        vertices
            A sequence of (lon, lat) pairs in degrees.
        name
            The basin's name.

        Returns
        -------
        Basin
            The checked basin (see the module notes).

        Raises
        ------
        climwidgets.errors.BasinError
            Fewer than 3 distinct vertices, non-finite values, |lat| > 90, a ring that
            crosses itself beyond repair, or zero area.
        """
        return cls(_build([[vertices]], name), name)

    @classmethod
    def _from_rings(cls, rings: Iterable[Any], name: str) -> "Basin":
        return cls(_build(rings, name), name)

    @classmethod
    def from_geojson(cls, path_or_mapping: Any, name_property: str = "name") -> list["Basin"]:
        """Basins from a GeoJSON file, JSON text or mapping: one Basin per feature.

        A bare Polygon/MultiPolygon gives a one-element list.  Names come from
        ``properties[name_property]``, else "basin 1", "basin 2", …

        Parameters
        ----------
        path_or_mapping
            A path to a GeoJSON file, GeoJSON text, or a mapping (FeatureCollection,
            Feature, Polygon or MultiPolygon).
        name_property
            The feature property that holds each basin's name.

        Returns
        -------
        list of Basin
            One basin per feature, in file order.

        Raises
        ------
        climwidgets.errors.SourceError
            A file that does not exist, is not a regular file, cannot be read, is not JSON
            or is nested too deeply.
        climwidgets.errors.BasinError
            A GeoJSON type other than polygons, no features, or an outline that fails the
            checks; the message names the file.
        """
        obj, stem = path_or_mapping, "basin"
        where: str | Path | None = None
        if isinstance(obj, (str, os.PathLike)):
            text = str(obj)
            if text.lstrip().startswith("{"):
                where = "GeoJSON text"
                obj = _parse_json(text, where)
            else:
                path = Path(obj)
                if not path.exists():
                    raise SourceError("file not found", source=path, expected="a GeoJSON file", fix="check the path")
                if not path.is_file():
                    raise SourceError(
                        "is not a regular file (a folder, pipe or device)",
                        source=path,
                        expected="a GeoJSON file",
                        fix="give the path of the .geojson file itself",
                    )
                where = path
                obj = _read_json(path)
        try:
            basins = cls._from_mapping(obj, stem, name_property)
        except BasinError as exc:
            raise _in_file(exc, where) from None
        for b in basins:
            b._origin = None if where is None or where == "GeoJSON text" else str(where)
        return basins

    @classmethod
    def _from_mapping(cls, obj: Any, stem: str, name_property: str) -> list["Basin"]:
        if not isinstance(obj, dict):
            raise BasinError(
                f"got {type(obj).__name__}",
                source="GeoJSON input",
                expected="a GeoJSON mapping, file path or JSON text",
                fix="pass the path to a .geojson file",
            )
        kind = obj.get("type")
        if kind in ("Polygon", "MultiPolygon"):
            return [cls._from_rings(_rings_from_geometry(obj, stem), stem)]
        features = obj.get("features") if kind == "FeatureCollection" else [obj] if kind == "Feature" else None
        if features is None:
            raise BasinError(
                f"GeoJSON type {kind!r} is not supported",
                source="GeoJSON input",
                expected="Polygon, MultiPolygon, Feature or FeatureCollection",
                fix="wrap the polygons in a FeatureCollection",
            )
        if not isinstance(features, list):
            raise BasinError(
                f"'features' is a {type(features).__name__}, not a list",
                source="GeoJSON input",
                expected="a FeatureCollection whose 'features' is a list of Feature objects",
                fix="export the basin outlines again as GeoJSON",
            )
        if not features:
            raise BasinError(
                "the FeatureCollection holds no features",
                source="GeoJSON input",
                expected="at least one polygon feature",
                fix="add a basin outline",
            )
        basins = []
        for i, feat in enumerate(features):
            if not isinstance(feat, dict):
                raise BasinError(
                    f"feature {i + 1} is not a Feature object (got {type(feat).__name__})",
                    source="GeoJSON input",
                    expected='{"type": "Feature", "geometry": ..., "properties": ...}',
                    fix="export the basin outlines again as GeoJSON",
                )
            props = feat.get("properties")
            props = props if isinstance(props, dict) else {}
            name = props.get(name_property)
            name = f"basin {i + 1}" if name in (None, "") else str(name)
            if not feat.get("geometry"):
                raise _err("feature has no geometry", name, "give the feature a Polygon geometry")
            basins.append(cls._from_rings(_rings_from_geometry(feat["geometry"], name), name))
        return basins

    @classmethod
    def from_wkt(cls, text: str, name: str = "basin") -> "Basin":
        """A basin from WKT text (POLYGON or MULTIPOLYGON, lon/lat order).

        Parameters
        ----------
        text
            WKT text, e.g. ``"POLYGON((10 0, 11 0, 11 1, 10 1, 10 0))"``.
        name
            The basin's name.

        Returns
        -------
        Basin
            The checked basin.

        Raises
        ------
        climwidgets.errors.BasinError
            Text that is not WKT, a geometry that is not a polygon, or an outline that
            fails the checks.
        """
        try:
            geom = shapely.from_wkt(text)
        except (shapely.errors.GEOSException, TypeError) as exc:
            raise _err(
                f"could not read WKT ({exc})",
                name,
                "give POLYGON((lon lat, ...)) text",
                expected="WKT POLYGON or MULTIPOLYGON",
            ) from None
        return cls._from_rings(_rings_from_geometry(mapping(geom), name), name)

    @classmethod
    def from_shapefile(cls, path: str | os.PathLike[str], name_field: str | None = None) -> list["Basin"]:
        """Basins from an ESRI shapefile (read with pyshp), one per polygon record.

        When a ``.prj`` file names a CRS other than WGS84 lon/lat, the outlines are
        densified in that CRS (so that straight projected edges stay faithful) and
        transformed to lon/lat with pyproj.  Names come from ``name_field``, else from a
        field called "name" (any case), else "<file stem> 1", …

        Parameters
        ----------
        path
            The shapefile (``.shp``, or any of its parts' paths: the suffix is replaced).
        name_field
            The attribute field that holds the basins' names.

        Returns
        -------
        list of Basin
            One basin per polygon record.

        Raises
        ------
        climwidgets.errors.SourceError
            A missing or unreadable shapefile or projection file.
        climwidgets.errors.BasinError
            An unknown ``name_field``, records that are not polygons, no records, or an
            outline that fails the checks.
        """
        import shapefile  # pyshp

        path = Path(path)
        shp = path.with_suffix(".shp")
        if not shp.exists():
            raise SourceError(
                "file not found", source=shp, expected="a .shp file with its .shx and .dbf", fix="check the path"
            )
        if not shp.is_file():
            raise SourceError(
                "is not a regular file (a folder, pipe or device)",
                source=shp,
                expected="a .shp file",
                fix="give the path of the .shp file itself",
            )
        dbf = next((shp.with_suffix(x) for x in (".dbf", ".DBF", ".Dbf") if shp.with_suffix(x).is_file()), None)
        if dbf is None:
            raise SourceError(
                f"the shapefile has no {shp.stem}.dbf beside it (the table of names and attributes)",
                source=shp,
                expected="a .shp file with its .shx and .dbf",
                fix=f"copy {shp.stem}.dbf (and {shp.stem}.shx, {shp.stem}.prj) into the same folder, "
                "or save the outlines as GeoJSON",
            )
        try:
            reader = shapefile.Reader(str(shp))
        except shapefile.ShapefileException as exc:
            raise SourceError(
                f"cannot read the shapefile ({exc})",
                source=shp,
                expected="a .shp with its .shx and .dbf",
                fix="copy all parts of the shapefile",
            ) from None
        except OSError as exc:
            raise _unreadable(shp, exc, "a readable .shp file with its .shx and .dbf") from None
        try:
            with reader:
                basins = cls._from_reader(reader, shp, name_field)
        except BasinError as exc:
            raise _in_file(exc, shp) from None
        except (shapefile.ShapefileException, struct.error, OSError, UnicodeDecodeError) as exc:
            raise SourceError(
                f"cannot read the shapefile ({' '.join(str(exc).split())})",
                source=shp,
                expected="a .shp with its .shx and .dbf, all from one export",
                fix="copy all parts of the shapefile again, or save the outlines as GeoJSON",
            ) from None
        for b in basins:
            b._origin = str(shp)
        return basins

    @classmethod
    def _from_reader(cls, reader: Any, shp: Path, name_field: str | None) -> list["Basin"]:
        fields = [f[0] for f in reader.fields[1:]]
        if name_field is not None and name_field not in fields:
            raise BasinError(
                f"no field {name_field!r}",
                source=shp,
                expected=f"one of {fields}",
                fix="pass name_field= one of the listed fields",
            )
        if name_field is None:
            name_field = next((f for f in fields if f.lower() == "name"), None)
        transform = _prj_transform(shp.with_suffix(".prj"))
        basins = []
        for i, rec in enumerate(reader.iterShapeRecords()):
            name = str(rec.record[name_field]) if name_field else f"{shp.stem} {i + 1}"
            geo = rec.shape.__geo_interface__
            if geo.get("type") not in ("Polygon", "MultiPolygon"):
                raise _err(
                    f"shape type {geo.get('type')!r} is not a polygon",
                    name,
                    "save the outlines as a polygon layer",
                    expected="Polygon records",
                )
            if transform is not None:
                geo = mapping(transform(shape(geo)))
            basins.append(cls._from_rings(_rings_from_geometry(geo, name), name))
        if not basins:
            raise BasinError(
                "the shapefile holds no records", source=shp, expected="at least one polygon", fix="add a basin outline"
            )
        return basins

    # ---------------------------------------------------------------- properties
    @property
    def name(self) -> str:
        return self._name

    @property
    def origin(self) -> str | None:
        """The file the basin was read from (None when drawn or built in code)."""
        return self._origin

    @property
    def where(self) -> str:
        """How error messages name the basin: ``"FILE, basin 'NAME'"`` or ``"basin 'NAME'"``."""
        return f"{self._origin}, basin {self._name!r}" if self._origin else f"basin {self._name!r}"

    def renamed(self, name: str) -> "Basin":
        """The same outline (and file of origin) under another name."""
        out = Basin(self._geometry, name=name)
        out._origin = self._origin
        return out

    @property
    def geometry(self) -> Any:
        """The shapely (Multi)Polygon in lon/lat degrees, within [-180, 180)."""
        return self._geometry

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        """(min lon, min lat, max lon, max lat)."""
        return tuple(self._geometry.bounds)

    @cached_property
    def area_m2(self) -> float:
        """Area of the outline (m²) on the sphere of the authalic radius 6 371 007.2 m, edges
        straight in lon/lat: the one basin area every table, volume and export uses.

        Exact for the polygon as drawn (Green's theorem on the sphere, see
        :func:`climwidgets.geo.area.lonlat_polygon_area`); it differs from the ellipsoidal
        area by about 0.1-0.5 % depending on latitude.
        """
        from .area import lonlat_polygon_area

        return float(lonlat_polygon_area(self._geometry))

    @cached_property
    def token(self) -> str:
        """Hash of the geometry (not the name): equal outlines, equal tokens."""
        return hashlib.blake2b(shapely.to_wkb(self._geometry), digest_size=16).hexdigest()

    def to_geojson(self) -> dict[str, Any]:
        """A GeoJSON Feature mapping with the name in ``properties``."""
        geom = json.loads(json.dumps(mapping(self._geometry)))  # tuples -> lists
        return {"type": "Feature", "properties": {"name": self._name}, "geometry": geom}

    def __repr__(self) -> str:
        w, s, e, n = self.bounds
        return f"Basin({self._name!r}, {self._geometry.geom_type}, lon {w:g}..{e:g}, lat {s:g}..{n:g})"


def _prj_transform(prj: Path) -> Callable[[Any], Any] | None:
    """A shapely transform to WGS84 lon/lat for the .prj's CRS, or None when not needed."""
    if not prj.is_file():
        return None
    from pyproj import CRS, Transformer
    from pyproj.exceptions import CRSError

    try:
        crs = CRS.from_wkt(prj.read_text(encoding="utf-8", errors="replace"))
    except CRSError as exc:
        raise SourceError(
            f"cannot read the projection ({exc})",
            source=prj,
            expected="ESRI/OGC WKT",
            fix="re-export the shapefile with its .prj, or delete a broken .prj if the data is lon/lat",
        ) from None
    target = CRS.from_epsg(4326)
    if crs.equals(target, ignore_axis_order=True) or (
        crs.is_geographic and crs.ellipsoid == target.ellipsoid and not crs.is_projected and crs.datum == target.datum
    ):
        return None
    tr = Transformer.from_crs(crs, target, always_xy=True)
    # Densify in the source units: 1/200 of the outline's extent per segment.
    step_fn: Callable[[Any], float] = lambda g: max(g.bounds[2] - g.bounds[0], g.bounds[3] - g.bounds[1]) / 200.0 or 1.0

    def transform(geom: Any) -> Any:
        dense = shapely.segmentize(geom, max_segment_length=step_fn(geom))
        return shapely.transform(dense, lambda xy: np.column_stack(tr.transform(xy[:, 0], xy[:, 1])))

    return transform


def write_geojson(basins: Basin | Iterable[Basin], path: str | os.PathLike[str], overwrite: bool = False) -> Path:
    """Write basins to a GeoJSON FeatureCollection, atomically (temp file, then rename).

    Parameters
    ----------
    basins
        A Basin or a sequence of Basins.
    path
        The file to write.
    overwrite
        False (default): refuse to replace an existing file.

    Returns
    -------
    pathlib.Path
        The path written.

    Raises
    ------
    climwidgets.atomic.OutputExistsError
        When the file exists and ``overwrite`` is False.
    OSError
        When the disk refuses the write (see :func:`climwidgets.atomic.atomic_write_file`).

    References
    ----------
    Butler, H. et al. (2016). The GeoJSON Format. RFC 7946, Internet Engineering Task
    Force. https://doi.org/10.17487/RFC7946

    Examples
    --------
    >>> import os, tempfile
    >>> import climwidgets as cw
    >>> from climwidgets.geo.basin import write_geojson
    >>> basin = cw.Basin.from_vertices([(10, 0), (11, 0), (11, 1), (10, 1)], name="north fork")
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     path = write_geojson([basin], os.path.join(folder, "basins.geojson"))
    ...     [b.name for b in cw.Basin.from_geojson(path)]
    ['north fork']
    """
    basins = [basins] if isinstance(basins, Basin) else list(basins)
    data = {"type": "FeatureCollection", "features": [b.to_geojson() for b in basins]}
    return atomic_write_file(path, lambda fh: json.dump(data, fh), mode="w", overwrite=overwrite, what="write_geojson")
