"""Static maps of lat/lon fields: shared by the widgets (through ipympl) and the reports.

Everything here draws on a matplotlib Axes and returns the artists; nothing computes
science.  The pieces:

* :func:`choose_projection` picks the map projection from the grid's extent (rule below);
* :func:`draw_field` draws a field as a QuadMesh on cell edges with a colour bar that
  carries the units; :func:`update_field` swaps the numbers in place (no new figure);
* :func:`draw_basins` outlines basins with their names;
* :func:`add_coastlines` draws Natural Earth coastlines only when the shapefile is already
  on disk (never starts a download) and otherwise says so once;
* :func:`map_field` puts it all on a new figure for reports.

Colour (docs/guide/widgets.rst): sequential maps for totals and shares (matplotlib's perceptually
uniform ``viridis`` for depths, ColorBrewer ``YlGnBu`` for shares), diverging ColorBrewer
``BrBG`` (brown = drier, green = wetter) for anomalies, centred on 0 (differences,
standardized anomalies) or 100 (percent of normal).
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
    "as_shown",
    "draw_field",
    "update_field",
    "draw_basins",
    "add_coastlines",
    "natural_earth_path",
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
    return ccrs.LambertConformal(central_longitude=(w + e) / 2, central_latitude=(s + n) / 2,
                                 standard_parallels=(s + span / 6, n - span / 6))


def lonlat_to_map(proj, lon, lat):
    """Projected x, y of lon/lat points (arrays) for ``proj``."""
    ccrs = _ccrs()
    pts = proj.transform_points(ccrs.PlateCarree(), np.atleast_1d(np.asarray(lon, float)),
                                np.atleast_1d(np.asarray(lat, float)))
    return pts[..., 0], pts[..., 1]


def map_to_lonlat(proj, x, y):
    """lon, lat (floats) of one projected point."""
    ccrs = _ccrs()
    if isinstance(proj, ccrs.PlateCarree) and proj.proj4_params.get("lon_0", 0) == 0:
        return float(x), float(y)
    lon, lat = ccrs.PlateCarree().transform_point(x, y, proj)
    return float(lon), float(lat)


def colour_style(kind: str = "total", values=None, vmin=None, vmax=None):
    """(cmap name, vmin, vmax) for a kind of field; diverging kinds are symmetric about the centre."""
    if kind not in KINDS:
        from ..errors import ParameterError

        raise ParameterError(f"kind={kind!r} is not known", source="climwidgets.plot", variable="kind",
                             expected=f"one of {sorted(KINDS)}", fix="pass kind='total', 'share' or 'percent'")
    cmap, centre = KINDS[kind]
    finite = np.asarray(values, dtype=float)[np.isfinite(np.asarray(values, dtype=float))] \
        if values is not None else np.array([])
    lo = vmin if vmin is not None else (float(finite.min()) if finite.size else 0.0)
    hi = vmax if vmax is not None else (float(finite.max()) if finite.size else 1.0)
    if centre is not None and (vmin is None or vmax is None):
        half = max(abs(hi - centre), abs(lo - centre)) or 1.0
        lo, hi = centre - half, centre + half
    if hi <= lo:
        hi = lo + (abs(lo) * 0.01 or 1.0)
    return cmap, lo, hi


def record_limits(field, centre: float = 0.0, percentile: float = 98.0, floor: float = 1.0,
                  ceiling: float | None = None):
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
    mesh = ax.pcolormesh(lon_e, lat_e, np.ma.masked_invalid(values), cmap=cmap, vmin=lo, vmax=hi,
                         transform=ccrs.PlateCarree(), shading="flat")
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

    ``highlight`` is the name of a basin to draw thicker.  Returns the list of artists.
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
            txt = ax.text(pt.x, pt.y, basin.name, fontsize=7, color="black", ha="center", va="center",
                          transform=ccrs.PlateCarree(),
                          bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.7))
            artists.append(txt)
    return artists


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
            warnings.warn("Natural Earth coastlines are not on disk: maps show the grid without coastlines.",
                          UserWarning, stacklevel=2)
        return None
    from cartopy.io.shapereader import Reader

    ccrs = _ccrs()
    geoms = list(Reader(str(path)).geometries())
    return ax.add_geometries(geoms, ccrs.PlateCarree(), facecolor="none", edgecolor="0.2", linewidth=0.6)


def map_field(field, basins=None, kind="total", title=None, ax=None, figsize=(6.4, 4.8), vmin=None,
              vmax=None, coastlines=True):
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
    gl = ax.gridlines(draw_labels=True, linewidth=0.3, color="0.5", alpha=0.6)
    gl.top_labels = gl.right_labels = False
    if title:
        ax.set_title(title, fontsize=10)
    return fig, ax, mesh


def _padded(field):
    lon_e, lat_e = _edges(field)
    return (float(lon_e.min()), float(lon_e.max()), float(lat_e.min()), float(lat_e.max()))
