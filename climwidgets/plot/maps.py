"""Static maps of lat/lon fields: shared by the widgets (through ipympl) and the reports.

Everything here draws on a matplotlib Axes and returns the artists; nothing computes
science.  The pieces:

* :func:`choose_projection` picks the map projection from the grid's extent (rule below);
* :func:`draw_field` draws a field as a QuadMesh on cell edges with a colour bar that
  carries the units; :func:`update_field` swaps the numbers in place (no new figure);
* :func:`draw_basins` outlines basins with their names;
* :func:`add_coastlines` draws Natural Earth coastlines only when the shapefile is already
  on disk (never starts a download) and otherwise says so once;
* :func:`land_mask` and :func:`draw_mask_outline` draw the land/sea outline of a terrain
  grid; :func:`read_layer` and :func:`draw_lines` draw user outline layers (GeoJSON or
  shapefile: coast, borders, rivers) as thin lines, all from local files;
* :func:`map_field` puts it all on a new figure for reports.

Colour (docs/guide/widgets.rst): sequential maps for totals and shares (matplotlib's perceptually
uniform ``viridis`` for depths, ColorBrewer ``YlGnBu`` for shares), diverging ColorBrewer
``BrBG`` (brown = drier, green = wetter) for anomalies, centred on 0 (differences,
standardized anomalies) or 100 (percent of normal).

Colour range: unless limits are given, colours span the 2nd to 98th percentile of the
finite values (:data:`ROBUST_PERCENTILES`, :func:`robust_limits`), so that a few extreme
cells do not wash out the map; values beyond take the end colours.  Diverging scales stay
symmetric about their centre.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np

__all__ = [
    "KINDS",
    "choose_projection",
    "projection_rule",
    "colour_style",
    "record_limits",
    "robust_limits",
    "centred_limits",
    "ROBUST_PERCENTILES",
    "land_mask",
    "draw_mask_outline",
    "read_layer",
    "draw_lines",
    "as_shown",
    "draw_field",
    "update_field",
    "draw_basins",
    "add_coastlines",
    "natural_earth_path",
    "add_gridlines",
    "map_field",
    "field_label",
    "lonlat_to_map",
    "map_to_lonlat",
]

#: kind of field -> (colour map, centre of a diverging map or None)
KINDS = {
    "total": ("viridis", None),
    "share": ("YlGnBu", None),
    "sequential": ("viridis", None),
    "difference": ("BrBG", 0.0),
    "standardized": ("BrBG", 0.0),
    "percent": ("BrBG", 100.0),
}

projection_rule = (
    "Regional grids (both spans ≤ 40° and every latitude within ±70°) use PlateCarree, "
    "so that a click on the map is a lon/lat pair; polar caps (all latitudes beyond ±60°) "
    "use a polar stereographic view; grids spanning more than 180° of longitude use "
    "Robinson; other large regions use a Lambert conformal conic centred on the grid."
)


def _ccrs():
    import cartopy.crs as ccrs

    return ccrs


def _extent(lon, lat):
    lon = np.asarray(lon, dtype=float)
    lat = np.asarray(lat, dtype=float)
    return float(np.nanmin(lon)), float(np.nanmax(lon)), float(np.nanmin(lat)), float(np.nanmax(lat))


def choose_projection(lon, lat):
    """A cartopy projection for a grid with these centre coordinates (see ``projection_rule``)."""
    ccrs = _ccrs()
    w, e, s, n = _extent(lon, lat)
    if e - w <= 40 and n - s <= 40 and max(abs(s), abs(n)) <= 70:
        return ccrs.PlateCarree()
    if s >= 60:
        return ccrs.NorthPolarStereo(central_longitude=(w + e) / 2)
    if n <= -60:
        return ccrs.SouthPolarStereo(central_longitude=(w + e) / 2)
    if e - w > 180:
        return ccrs.Robinson()
    span = n - s
    return ccrs.LambertConformal(
        central_longitude=(w + e) / 2, central_latitude=(s + n) / 2, standard_parallels=(s + span / 6, n - span / 6)
    )


def lonlat_to_map(proj, lon, lat):
    """Projected x, y of lon/lat points (arrays) for ``proj``."""
    ccrs = _ccrs()
    pts = proj.transform_points(
        ccrs.PlateCarree(), np.atleast_1d(np.asarray(lon, float)), np.atleast_1d(np.asarray(lat, float))
    )
    return pts[..., 0], pts[..., 1]


def map_to_lonlat(proj, x, y):
    """lon, lat (floats) of one projected point."""
    ccrs = _ccrs()
    if isinstance(proj, ccrs.PlateCarree) and proj.proj4_params.get("lon_0", 0) == 0:
        return float(x), float(y)
    lon, lat = ccrs.PlateCarree().transform_point(x, y, proj)
    return float(lon), float(lat)


#: percentiles of the finite values that the colours span when no limits are given
ROBUST_PERCENTILES = (2.0, 98.0)


def robust_limits(values, kind: str = "total", percentiles=ROBUST_PERCENTILES):
    """Colour limits from the data: the given percentiles of the finite values.

    For a diverging kind the limits are made symmetric about its centre (100 for percent
    of normal, 0 for differences) with the larger of the two half-widths.

    Parameters
    ----------
    values : array-like
        The numbers drawn (NaN ignored).
    kind : str
        A key of :data:`KINDS`.
    percentiles : (float, float)
        Lower and upper percentile, default :data:`ROBUST_PERCENTILES` (2nd and 98th).

    Returns
    -------
    (float, float) or (None, None)
        ``(None, None)`` when there is no finite value.

    Examples
    --------
    >>> robust_limits(list(range(101)))
    (2.0, 98.0)
    >>> [round(v, 6) for v in robust_limits([90.0, 120.0], kind="percent")]
    [80.6, 119.4]
    """
    arr = np.asarray(values, dtype=float)
    finite = arr[np.isfinite(arr)]
    if not finite.size:
        return None, None
    lo, hi = (float(v) for v in np.percentile(finite, percentiles))
    return centred_limits(kind, lo, hi)


def centred_limits(kind: str, lo: float, hi: float):
    """``(lo, hi)``, widened to be symmetric about the centre of a diverging ``kind``.

    Parameters
    ----------
    kind : str
        A key of :data:`KINDS`; sequential kinds are returned unchanged.
    lo, hi : float

    Returns
    -------
    (float, float)

    Examples
    --------
    >>> centred_limits("percent", 80.0, 150.0)
    (50.0, 150.0)
    >>> centred_limits("total", 3.0, 7.0)
    (3.0, 7.0)
    """
    centre = KINDS.get(kind, (None, None))[1]
    if centre is None:
        return float(lo), float(hi)
    half = max(abs(hi - centre), abs(lo - centre))
    return float(centre - half), float(centre + half)


def colour_style(kind: str = "total", values=None, vmin=None, vmax=None, robust: bool = True):
    """(cmap name, vmin, vmax) for a kind of field; diverging kinds are symmetric about the centre.

    A limit not given comes from the data: the :data:`ROBUST_PERCENTILES` of the finite
    values (``robust=True``) or their minimum and maximum.
    """
    if kind not in KINDS:
        from ..errors import ParameterError

        raise ParameterError(
            f"kind={kind!r} is not known",
            source="climwidgets.plot",
            variable="kind",
            expected=f"one of {sorted(KINDS)}",
            fix="pass kind='total', 'share' or 'percent'",
        )
    cmap, centre = KINDS[kind]
    finite = (
        np.asarray(values, dtype=float)[np.isfinite(np.asarray(values, dtype=float))]
        if values is not None
        else np.array([])
    )
    if finite.size:
        data_lo, data_hi = (
            (float(v) for v in np.percentile(finite, ROBUST_PERCENTILES))
            if robust
            else (float(finite.min()), float(finite.max()))
        )
    else:
        data_lo, data_hi = 0.0, 1.0
    lo = vmin if vmin is not None else data_lo
    hi = vmax if vmax is not None else data_hi
    if centre is not None and (vmin is None or vmax is None):
        half = max(abs(hi - centre), abs(lo - centre)) or 1.0
        lo, hi = centre - half, centre + half
    if hi <= lo:
        hi = lo + (abs(lo) * 0.01 or 1.0)
    return cmap, float(lo), float(hi)


def record_limits(
    field, centre: float = 0.0, percentile: float = 98.0, floor: float = 1.0, ceiling: float | None = None
):
    """Colour limits symmetric about ``centre``, fixed over a whole record.

    The half-width is the ``percentile`` of the absolute deviations from the centre over
    every step, so that a few extreme cells do not wash out the map and every step of the
    record is drawn on the same scale; it is kept between ``floor`` and ``ceiling``.
    """
    dev = np.abs(np.asarray(field, dtype=float) - centre)
    dev = dev[np.isfinite(dev)]
    half = float(np.percentile(dev, percentile)) if dev.size else floor
    half = max(half, floor)
    if ceiling is not None:
        half = min(half, ceiling)
    return centre - half, centre + half


def field_label(field) -> str:
    """Colour-bar label: long name (or name) and units, e.g. 'seasonal share [1]'."""
    attrs = getattr(field, "attrs", {}) or {}
    name = attrs.get("long_name") or getattr(field, "name", None) or "value"
    units = attrs.get("units", "")
    return f"{name} [{units}]" if units else f"{name} [no units]"


def _edges(field):
    """Cell edges (2-D lon, lat arrays) of a rectilinear or curvilinear field."""
    from ..geo.grid import cell_bounds

    b = cell_bounds(field)
    if b.kind == "rectilinear":
        lon_e = np.append(b.lon_lower, b.lon_upper[-1])
        lat_e = np.append(b.lat_lower, b.lat_upper[-1])
        return np.meshgrid(lon_e, lat_e)
    # curvilinear: corner (j, i) of the mesh is the lower-left corner of cell (j, i)
    lonc, latc = b.lon_corners, b.lat_corners
    ny, nx = lonc.shape[:2]
    lon_e = np.empty((ny + 1, nx + 1))
    lat_e = np.empty((ny + 1, nx + 1))
    lon_e[:-1, :-1], lat_e[:-1, :-1] = lonc[..., 0], latc[..., 0]
    lon_e[:-1, -1], lat_e[:-1, -1] = lonc[:, -1, 1], latc[:, -1, 1]
    lon_e[-1, :-1], lat_e[-1, :-1] = lonc[-1, :, 3], latc[-1, :, 3]
    lon_e[-1, -1], lat_e[-1, -1] = lonc[-1, -1, 2], latc[-1, -1, 2]
    return lon_e, lat_e


def as_shown(field, vmin, vmax, label):
    """``field`` in the units it is shown in (its ``display_scale`` / ``display_units`` from
    the analyses catalogue), so map, colour bar and hover read like the table: a share
    stored as a fraction is drawn in %.  Limits given in stored units are scaled alike."""
    scale = float(field.attrs.get("display_scale", 1.0))
    units = field.attrs.get("display_units")
    if scale == 1.0 or not units:
        return field, vmin, vmax, label
    shown = (field * scale).assign_attrs({**field.attrs, "units": units, "display_scale": 1.0})
    shown.name = field.name
    if label is None:
        words = field.attrs.get("label") or field.attrs.get("long_name") or field.name or "value"
        label = f"{words} [{units}]"
    return (shown, None if vmin is None else vmin * scale, None if vmax is None else vmax * scale, label)


def draw_field(ax, field, kind: str = "total", vmin=None, vmax=None, cax=None, label=None):
    """Draw a 2-D field (dims lat/lon or y/x) as a QuadMesh with a colour bar carrying units.

    Returns ``(mesh, colorbar)``.  ``cax`` is the axes for the colour bar (default: a new
    one beside ``ax``).
    """
    import matplotlib.pyplot as plt

    ccrs = _ccrs()
    field, vmin, vmax, label = as_shown(field, vmin, vmax, label)
    values = np.asarray(field.values, dtype=float)
    cmap, lo, hi = colour_style(kind, values, vmin, vmax)
    lon_e, lat_e = _edges(field)
    mesh = ax.pcolormesh(
        lon_e,
        lat_e,
        np.ma.masked_invalid(values),
        cmap=cmap,
        vmin=lo,
        vmax=hi,
        transform=ccrs.PlateCarree(),
        shading="flat",
    )
    fig = ax.figure
    cbar = fig.colorbar(mesh, cax=cax, ax=None if cax is not None else ax, shrink=0.85)
    cbar.set_label(label or field_label(field))
    mesh.climwidgets_kind = kind
    plt.setp(cbar.ax.get_yticklabels(), fontsize=8)
    return mesh, cbar


def update_field(mesh, cbar, field, kind=None, vmin=None, vmax=None, label=None):
    """Swap the numbers of an existing QuadMesh (same grid) and rescale its colours.

    This is the fast path for widgets: no new artists, only the array and colour limits.
    """
    if hasattr(field, "attrs"):
        field, vmin, vmax, label = as_shown(field, vmin, vmax, label)
    values = np.asarray(getattr(field, "values", field), dtype=float)
    kind = kind or getattr(mesh, "climwidgets_kind", "total")
    cmap, lo, hi = colour_style(kind, values, vmin, vmax)
    mesh.set_array(np.ma.masked_invalid(values))
    mesh.set_cmap(cmap)
    mesh.set_clim(lo, hi)
    mesh.climwidgets_kind = kind
    if cbar is not None:
        cbar.set_label(label or field_label(field))
        cbar.update_normal(mesh)
    return mesh


def _rings(geometry):
    polys = getattr(geometry, "geoms", [geometry])
    for poly in polys:
        yield np.asarray(poly.exterior.coords)
        for hole in poly.interiors:
            yield np.asarray(hole.coords)


def draw_basins(ax, basins, color="#d62728", labels=True, highlight=None, linewidth=1.4):
    """Outline basins (straight lon/lat edges, RFC 7946) and write their names.

    ``highlight`` is the name of a basin to draw thicker.  A name is drawn only while its
    point lies inside the view and is clipped at the edge of the map, so that after a
    zoom no name sits outside the axes.  Returns the list of artists.
    """
    ccrs = _ccrs()
    artists = []
    for basin in basins or []:
        lw = linewidth * (2.0 if highlight is not None and basin.name == highlight else 1.0)
        for ring in _rings(basin.geometry):
            (line,) = ax.plot(ring[:, 0], ring[:, 1], color=color, lw=lw, transform=ccrs.PlateCarree())
            artists.append(line)
        if labels:
            pt = basin.geometry.representative_point()
            x, y = lonlat_to_map(ax.projection, pt.x, pt.y) if hasattr(ax, "projection") else ([pt.x], [pt.y])
            # annotation_clip: not drawn when the point is outside the view (matplotlib Annotation)
            txt = ax.annotate(
                basin.name,
                xy=(float(x[0]), float(y[0])),
                xycoords="data",
                fontsize=7,
                color="black",
                ha="center",
                va="center",
                annotation_clip=True,
                bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.7),
            )
            txt.set_clip_path(ax.patch)
            artists.append(txt)
    return artists


def add_gridlines(ax, width_px=None):
    """Lon/lat grid lines with labels on the left and bottom only, spaced for the axes width.

    About one label per 90 px (3 to 8), so that labels never run into each other.
    Returns the cartopy ``Gridliner``.
    """
    from cartopy.mpl.ticker import LatitudeLocator, LongitudeLocator

    if width_px is None:
        width_px = ax.get_position().width * ax.figure.bbox.width
    nbins = int(min(8, max(3, width_px // 90)))
    gl = ax.gridlines(draw_labels=True, linewidth=0.3, color="0.5", alpha=0.6)
    gl.top_labels = gl.right_labels = False
    gl.xlocator = LongitudeLocator(nbins=nbins)
    gl.ylocator = LatitudeLocator(nbins=nbins)
    gl.xlabel_style = gl.ylabel_style = {"size": 7}
    return gl


# ------------------------------------------------------------------ outlines and layers
_MASK_NAMES = ("land", "land_mask", "landmask", "lsm", "land_binary_mask")


def _is_mask(da) -> bool:
    return (
        da.dtype == bool
        or da.attrs.get("standard_name") == "land_binary_mask"
        or "land" in str(da.attrs.get("flag_meanings", ""))
    )


def _mask_from_source(terrain):
    """The land mask variable of the terrain's own file (a local netCDF), or None."""
    import xarray as xr

    source = Path(str(terrain.attrs.get("sources", "")))
    if source.suffix.lower() not in (".nc", ".nc4", ".netcdf") or not source.is_file():
        return None
    try:
        with xr.open_dataset(source, decode_times=False) as ds:
            name = next((v for v in ds.data_vars if ds[v].attrs.get("standard_name") == "land_binary_mask"), None)
            if name is None:
                return None
            mask = ds[name].load()
    except (OSError, ValueError):
        return None  # unreadable here: fall back on the heights
    if mask.shape != terrain.shape or any(d not in terrain.dims for d in mask.dims):
        return None
    return mask.transpose(*terrain.dims)


def land_mask(terrain):
    """A boolean land mask (True on land) for a terrain grid or a land mask.

    In this order: ``terrain`` itself when it is a mask (boolean, or CF ``standard_name``
    ``land_binary_mask``); a mask coordinate on it (``land``, ``lsm`` …); the
    ``land_binary_mask`` variable of the file it was opened from (``attrs["sources"]``, a
    local netCDF such as the demo's ``elevation.nc``); else the cells above 0 m (the 0 m
    contour of a terrain grid is its coastline).

    Parameters
    ----------
    terrain : DataArray
        Elevation in metres (``cw.open_elevation``) or a land mask, dims (lat, lon) or (y, x).

    Returns
    -------
    DataArray of bool
        Same dims and coordinates; ``attrs["outline_source"]`` says where the mask came from.

    Examples
    --------
    >>> import xarray as xr
    >>> h = xr.DataArray([[0.0, 120.0], [0.0, 5.0]], dims=("lat", "lon"),
    ...                  coords={"lat": [0.5, 1.5], "lon": [0.5, 1.5]}, attrs={"units": "m"})
    >>> land_mask(h).values.tolist()
    [[False, True], [False, True]]
    """
    if _is_mask(terrain):
        mask, where = terrain, "land mask"
    else:
        coord = next(
            (terrain.coords[c] for c in _MASK_NAMES if c in terrain.coords and terrain.coords[c].ndim == 2), None
        )
        mask, where = (coord, f"land mask '{coord.name}'") if coord is not None else (_mask_from_source(terrain), None)
        if mask is not None and where is None:
            where = f"land mask of {Path(str(terrain.attrs['sources'])).name}"
        if mask is None:
            mask, where = terrain > 0.0, "terrain above 0 m"
    out = (mask.fillna(0) > 0.5) if mask.dtype != bool else mask.copy()
    out = out.assign_coords({c: terrain.coords[c] for c in terrain.coords if c in ("lat", "lon")})
    out.attrs = {"outline_source": where}
    return out


def _mask_lines(mask):
    """The 0.5 contour of a 0/1 mask on its cell centres, as lon/lat polylines."""
    import contourpy

    z = np.asarray(mask.values, dtype=float)
    lon, lat = np.asarray(mask["lon"].values, float), np.asarray(mask["lat"].values, float)
    if lon.ndim == 1:
        lon, lat = np.meshgrid(lon, lat)
    if z.shape != lon.shape:  # (lon, lat) order
        z = z.T
    gen = contourpy.contour_generator(lon, lat, z, line_type=contourpy.LineType.Separate)
    return [np.asarray(line) for line in gen.lines(0.5) if len(line) > 1]


def _joined(lines):
    """Polylines joined into one (x, y) pair with NaN breaks: one artist for many lines."""
    if not lines:
        return np.array([]), np.array([])
    parts = []
    for line in lines:
        parts.append(np.asarray(line, dtype=float)[:, :2])
        parts.append(np.full((1, 2), np.nan))
    xy = np.vstack(parts[:-1])
    return xy[:, 0], xy[:, 1]


def draw_mask_outline(ax, mask, color="0.15", linewidth=0.7, label=None):
    """Draw the outline of a land mask (its 0.5 contour) as thin lines; returns the artists."""
    ccrs = _ccrs()
    x, y = _joined(_mask_lines(mask))
    if not x.size:
        return []
    (line,) = ax.plot(
        x,
        y,
        color=color,
        lw=linewidth,
        transform=ccrs.PlateCarree(),
        label=label or mask.attrs.get("outline_source") or "land/sea outline",
    )
    return [line]


def _layer_error(problem, source, fix="check the path"):
    from ..errors import SourceError

    return SourceError(
        problem,
        source=source,
        fix=fix,
        expected="a GeoJSON (.geojson, .json) or shapefile (.shp) of lines or polygons in lon/lat",
    )


def _geoms_of(obj):
    """Shapely geometries from a GeoJSON mapping, a Basin, a shapely geometry or a list of them."""
    from shapely.geometry import shape
    from shapely.geometry.base import BaseGeometry

    if obj is None:
        return []
    if isinstance(obj, BaseGeometry):
        return [obj]
    if hasattr(obj, "geometry") and isinstance(obj.geometry, BaseGeometry):  # a Basin
        return [obj.geometry]
    if isinstance(obj, dict):
        kind = obj.get("type")
        if kind == "FeatureCollection":
            return [g for f in obj.get("features", []) for g in _geoms_of(f)]
        if kind == "Feature":
            return _geoms_of(obj.get("geometry"))
        if kind == "GeometryCollection":
            return [g for sub in obj.get("geometries", []) for g in _geoms_of(sub)]
        return [shape(obj)]
    if isinstance(obj, (list, tuple)):
        return [g for item in obj for g in _geoms_of(item)]
    raise TypeError(type(obj).__name__)


def _read_shapefile_lines(shp):
    import shapefile  # pyshp
    from shapely.geometry import shape

    from ..geo.basin import _prj_transform

    try:
        with shapefile.Reader(str(shp)) as reader:
            geoms = [shape(s.__geo_interface__) for s in reader.iterShapes() if s.points]
    except (shapefile.ShapefileException, OSError, ValueError) as exc:
        raise _layer_error(
            f"cannot read the shapefile ({' '.join(str(exc).split())})",
            shp,
            fix="copy all parts of the shapefile (.shp, .shx, .prj) or save it as GeoJSON",
        ) from None
    transform = _prj_transform(shp.with_suffix(".prj"))
    return [transform(g) for g in geoms] if transform is not None else geoms


def read_layer(source):
    """Lines of an outline layer (coast, borders, rivers) as shapely geometries in lon/lat.

    Parameters
    ----------
    source : path, GeoJSON mapping, shapely geometry, Basin, or a list of geometries
        A GeoJSON file (.geojson, .json; lon/lat by RFC 7946) or an ESRI shapefile (.shp,
        transformed to lon/lat when its ``.prj`` names another CRS).  Nothing is downloaded.

    Returns
    -------
    list of shapely geometries (lines or polygons; points are left out)

    Raises
    ------
    SourceError
        The file does not exist, cannot be read, is of another kind, or holds no line or polygon.

    Examples
    --------
    >>> from shapely.geometry import LineString
    >>> [g.geom_type for g in read_layer(LineString([(0, 0), (1, 1)]))]
    ['LineString']
    """
    if isinstance(source, (str, Path)):
        path = Path(source).expanduser()
        if not path.exists():
            raise _layer_error("file not found", path, fix="check the path of the outline layer file")
        if not path.is_file():
            raise _layer_error("is not a regular file", path, fix="give the path of the file itself")
        suffix = path.suffix.lower()
        if suffix in (".geojson", ".json"):
            from ..geo.basin import _read_json

            try:
                geoms = _geoms_of(_read_json(path))
            except (TypeError, ValueError, AttributeError, KeyError) as exc:
                raise _layer_error(
                    f"is not GeoJSON geometry ({exc})", path, fix="save the layer as a GeoJSON FeatureCollection"
                ) from None
        elif suffix == ".shp":
            geoms = _read_shapefile_lines(path)
        else:
            raise _layer_error(
                f"has the extension {path.suffix or '(none)'!r}",
                path,
                fix="save the layer as GeoJSON or as a shapefile",
            )
        where = path
    else:
        try:
            geoms = _geoms_of(source)
        except (TypeError, ValueError, AttributeError, KeyError) as exc:
            raise _layer_error(
                f"is not a geometry ({exc})",
                f"outline layer {type(source).__name__}",
                fix="pass a file path, a GeoJSON mapping or shapely geometries",
            ) from None
        where = f"outline layer {type(source).__name__}"
    geoms = [g for g in geoms if g is not None and not g.is_empty and g.geom_type not in ("Point", "MultiPoint")]
    if not geoms:
        raise _layer_error("holds no line or polygon", where, fix="give a layer of lines (rivers, borders) or polygons")
    return geoms


def _layer_lines(geoms, bounds=None):
    """Lon/lat polylines of geometries (polygon outlines, lines), cut to ``bounds`` if given."""
    import shapely

    lines = []
    for geom in geoms:
        edge = geom.boundary if geom.geom_type in ("Polygon", "MultiPolygon") else geom
        if bounds is not None:
            w, s, e, n = bounds
            gw, gs, ge, gn = edge.bounds
            if ge < w or gw > e or gn < s or gs > n:
                continue
            if gw < w or ge > e or gs < s or gn > n:  # cut what reaches far outside: fast for large layers
                edge = shapely.clip_by_rect(edge, w, s, e, n)
        for part in getattr(edge, "geoms", [edge]):
            if part.geom_type == "LineString" and not part.is_empty:
                lines.append(np.asarray(part.coords))
            elif part.geom_type == "LinearRing":
                lines.append(np.asarray(part.coords))
    return lines


#: line styles of successive outline layers: (colour, line style)
LAYER_STYLES = [("#1f78b4", "-"), ("0.35", "--"), ("#6a3d9a", "-"), ("#b15928", "-."), ("0.2", ":")]


def draw_lines(ax, geoms, color="0.2", linewidth=0.6, linestyle="-", label=None, bounds=None):
    """Draw geometries (lines, polygon outlines) in lon/lat as thin lines: one artist per call.

    ``bounds`` (west, south, east, north) cuts away what lies far outside the map.
    Returns the list of artists (empty when nothing falls inside ``bounds``).
    """
    ccrs = _ccrs()
    x, y = _joined(_layer_lines(geoms, bounds))
    if not x.size:
        return []
    (line,) = ax.plot(x, y, color=color, lw=linewidth, ls=linestyle, transform=ccrs.PlateCarree(), label=label)
    return [line]


# ------------------------------------------------------------------ coastlines
_NOTED = {"coastlines": False}


def natural_earth_path(resolution="50m", category="physical", name="coastline"):
    """Path of a Natural Earth shapefile already on disk, or None.

    Looks where cartopy would put or find it (``cartopy.config['data_dir']`` and
    ``['pre_existing_data_dir']``, layout ``shapefiles/natural_earth/<category>/``); never
    asks cartopy's downloader, which would start a download.
    """
    import cartopy

    rel = Path("shapefiles") / "natural_earth" / category / f"ne_{resolution}_{name}.shp"
    for key in ("pre_existing_data_dir", "data_dir"):
        base = cartopy.config.get(key)
        if base and (Path(base) / rel).is_file():
            return Path(base) / rel
    return None


def add_coastlines(ax, resolution="50m", note=True):
    """Draw coastlines from Natural Earth data on disk; return the artist or None.

    When the data is absent the map stays without coastlines and a one-line note is
    issued once per session (a ``UserWarning``), never a download.
    """
    path = natural_earth_path(resolution) or natural_earth_path("110m")
    if path is None:
        if note and not _NOTED["coastlines"]:
            _NOTED["coastlines"] = True
            warnings.warn(
                "Natural Earth coastlines are not on disk: maps show the grid without coastlines.",
                UserWarning,
                stacklevel=2,
            )
        return None
    from cartopy.io.shapereader import Reader

    ccrs = _ccrs()
    geoms = list(Reader(str(path)).geometries())
    return ax.add_geometries(geoms, ccrs.PlateCarree(), facecolor="none", edgecolor="0.2", linewidth=0.6)


def map_field(
    field, basins=None, kind="total", title=None, ax=None, figsize=(6.4, 4.8), vmin=None, vmax=None, coastlines=True
):
    """A complete static map for reports: field, colour bar, basins, coastlines if on disk.

    Returns ``(figure, ax, mesh)``.  With ``ax=None`` a new figure is made (not shown).
    """
    from matplotlib.figure import Figure

    lon, lat = field["lon"].values, field["lat"].values
    if ax is None:
        fig = Figure(figsize=figsize)
        ax = fig.add_subplot(1, 1, 1, projection=choose_projection(lon, lat))
    fig = ax.figure
    mesh, _ = draw_field(ax, field, kind=kind, vmin=vmin, vmax=vmax)
    ax.set_extent(_padded(field), crs=_ccrs().PlateCarree())
    if basins:
        draw_basins(ax, basins)
    if coastlines:
        add_coastlines(ax)
    add_gridlines(ax)
    if title:
        ax.set_title(title, fontsize=10)
    return fig, ax, mesh


def _padded(field):
    lon_e, lat_e = _edges(field)
    return (float(lon_e.min()), float(lon_e.max()), float(lat_e.min()), float(lat_e.max()))
