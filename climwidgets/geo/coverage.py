"""Exact coverage weights: the fraction of each grid cell inside a basin.

The fraction is planar in lon/lat (docs/architecture.md): area of (cell ∩ basin) / area of cell,
both measured in degrees², the cell being its lon/lat rectangle (rectilinear) or its
lon/lat quadrilateral (curvilinear).  Multiplied by :func:`~climwidgets.geo.area.cell_area`
it gives the spherical area of the basin inside each cell.

Fast path (rectilinear, contiguous bounds):

1. restrict to the rows and columns that overlap the basin's bounding box;
2. densify the outline to segments shorter than the smallest cell, so that every segment
   lies in the 2 × 2 cells around its end points: those cells are the *boundary* cells;
3. every other cell is entirely inside or entirely outside; within a row, a run of such
   cells cannot change state, so one centre per run is tested (prepared geometry,
   ``shapely.contains_xy``);
4. only boundary cells are cut exactly: the outline is clipped to tiles of 16 × 16 cells
   (``shapely.intersection``), then each cell's covered area comes from its tile's piece by
   a vectorised Green's-theorem sum (see ``_rect_fractions``).

Curvilinear grids (and rectilinear ones with gaps between cells) give every cell in the
bounding box the inside/outside state of a corner, then correct the cells the outline
touches: a numpy pass over the cells' lon/lat extents picks the few that may meet the
outline (``_near_outline``), only those become polygons, an ``STRtree`` query with the
outline keeps the ones it really touches, and those are clipped exactly.

Results are cached by (grid token, basin token).  A basin that lies entirely outside the
grid raises :class:`~climwidgets.errors.BasinError` (rather than returning zeros, which
would turn into a silent NaN mean later).
"""

from __future__ import annotations

import functools
from typing import TYPE_CHECKING, Any

import numpy as np
import shapely
import xarray as xr

from ..errors import BasinError
from ..io.grid import canonical_names
from ..provenance import with_history
from ._cache import weights_cache
from .grid import cell_bounds, grid_token, horizontal_dims

if TYPE_CHECKING:
    from .basin import Basin

__all__ = ["coverage_weights", "coverage_block"]

_TILE = 16  # cells per side of the tiles the outline is pre-clipped to


def _wrapped_geometry(geom: Any, xmin: float, xmax: float) -> Any:
    """Add copies of the basin shifted by ±360° when the grid's cells reach past ±180°."""
    parts = [geom]
    if xmin < -180.0:
        parts.append(shapely.transform(geom, lambda xy: xy - [360.0, 0.0]))
    if xmax > 180.0:
        parts.append(shapely.transform(geom, lambda xy: xy + [360.0, 0.0]))
    return geom if len(parts) == 1 else shapely.union_all(parts)


def _overlap_range(lo: np.ndarray, hi: np.ndarray, vmin: float, vmax: float) -> tuple[int, int]:
    idx = np.nonzero((hi > vmin) & (lo < vmax))[0]
    return (0, 0) if idx.size == 0 else (int(idx[0]), int(idx[-1]) + 1)


def _exact(boxes: np.ndarray, geom: Any, box_area: np.ndarray) -> np.ndarray:
    inter = shapely.intersection(boxes, geom)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = shapely.area(inter) / box_area
    return np.where(box_area > 0, frac, 0.0)


def _boundary_cells(geom: Any, xe: np.ndarray, ye: np.ndarray) -> np.ndarray:
    """Mask of cells (rows × cols of the edges ``ye``, ``xe``) touched by the outline."""
    ny, nx = ye.size - 1, xe.size - 1
    step = 0.99 * min(np.diff(xe).min(), np.diff(ye).min())
    rings = shapely.segmentize(shapely.get_rings(shapely.get_parts(geom)), step)
    xy, ring_id = shapely.get_coordinates(rings, return_index=True)
    col = np.clip(np.searchsorted(xe, xy[:, 0], side="right") - 1, 0, nx - 1)
    row = np.clip(np.searchsorted(ye, xy[:, 1], side="right") - 1, 0, ny - 1)
    same = ring_id[1:] == ring_id[:-1]  # segments join points of the same ring only
    r0, r1, c0, c1 = row[:-1][same], row[1:][same], col[:-1][same], col[1:][same]
    mask = np.zeros((ny, nx), dtype=bool)
    mask[row, col] = True
    mask[r0, c1] = True
    mask[r1, c0] = True
    return mask


def _rect_fractions(
    pieces: np.ndarray, piece_of_cell: np.ndarray, x0: np.ndarray, y0: np.ndarray, x1: np.ndarray, y1: np.ndarray
) -> np.ndarray:
    """Covered fraction of rectangles [x0, x1] × [y0, y1] by polygonal ``pieces[piece_of_cell]``.

    Exact and vectorised: clamping a closed curve onto a rectangle (x → clip(x, x0, x1),
    y → clip(y, y0, y1)) keeps its winding number at every interior point of the rectangle
    (the straight homotopy to the clamped curve never crosses the interior), so the area of
    polygon ∩ rectangle is ∮ x dy along the clamped boundary (Green's theorem).  Each edge
    is first split where it crosses the rectangle's four lines, so that every clamped piece
    is straight and the shoelace sum is exact.
    """
    parts, part_piece = shapely.get_parts(pieces, return_index=True)
    keep = shapely.get_type_id(parts) == 3  # polygons only (drop touching lines/points)
    parts, part_piece = shapely.orient_polygons(parts[keep]), part_piece[keep]
    rings, ring_part = shapely.get_rings(parts, return_index=True)
    xy, ring_id = shapely.get_coordinates(rings, return_index=True)
    same = ring_id[1:] == ring_id[:-1]
    ax, ay, bx, by = xy[:-1, 0][same], xy[:-1, 1][same], xy[1:, 0][same], xy[1:, 1][same]
    edge_piece = part_piece[ring_part[ring_id[:-1][same]]]
    # Pair every cell with every edge of its piece (ragged expansion, all in numpy).
    counts = np.bincount(edge_piece, minlength=pieces.size)
    first = np.concatenate([[0], np.cumsum(counts)[:-1]])
    n_pairs = counts[piece_of_cell]
    cell = np.repeat(np.arange(piece_of_cell.size), n_pairs)
    pair_start = np.concatenate([[0], np.cumsum(n_pairs)[:-1]])
    edge = np.arange(n_pairs.sum()) - np.repeat(pair_start - first[piece_of_cell], n_pairs)
    ax, ay, bx, by = ax[edge], ay[edge], bx[edge], by[edge]
    cx0, cy0, cx1, cy1 = x0[cell], y0[cell], x1[cell], y1[cell]
    dx, dy = bx - ax, by - ay
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.stack([(cx0 - ax) / dx, (cx1 - ax) / dx, (cy0 - ay) / dy, (cy1 - ay) / dy], axis=1)
    t = np.clip(np.nan_to_num(t, nan=0.0, posinf=0.0, neginf=0.0), 0.0, 1.0)
    t = np.sort(np.concatenate([np.zeros((t.shape[0], 1)), t, np.ones((t.shape[0], 1))], axis=1), axis=1)
    px = np.clip(ax[:, None] + t * dx[:, None], cx0[:, None], cx1[:, None]) - cx0[:, None]
    py = np.clip(ay[:, None] + t * dy[:, None], cy0[:, None], cy1[:, None])
    contrib = (0.5 * (px[:, 1:] + px[:, :-1]) * np.diff(py, axis=1)).sum(axis=1)
    area = np.bincount(cell, weights=contrib, minlength=piece_of_cell.size)
    fraction: np.ndarray = area / ((x1 - x0) * (y1 - y0))
    return fraction


def _fast_rectilinear(geom: Any, ylo: np.ndarray, yhi: np.ndarray, xlo: np.ndarray, xhi: np.ndarray) -> np.ndarray:
    xe = np.append(xlo, xhi[-1])
    ye = np.append(ylo, yhi[-1])
    boundary = _boundary_cells(geom, xe, ye)
    ny, nx = boundary.shape
    # Runs of non-boundary cells along each row share one inside/outside state: test the
    # centre of each run's first cell and spread it (boundary cells are overwritten below).
    starts = ~boundary
    starts[:, 1:] &= boundary[:, :-1]
    run_id = np.cumsum(starts.ravel(), dtype=np.int32) - 1
    sr, sc = np.nonzero(starts)
    inside = shapely.contains_xy(geom, 0.5 * (xlo[sc] + xhi[sc]), 0.5 * (ylo[sr] + yhi[sr]))
    weights = np.append(inside, False).astype(float)[run_id].reshape(ny, nx)
    br, bc = np.nonzero(boundary)
    if br.size:
        # Clip the outline to tiles of cells first, so each cell is cut against the few
        # edges of a small local piece instead of the whole outline.
        stride = nx // _TILE + 1
        tiles, tile_of_cell = np.unique((br // _TILE) * stride + bc // _TILE, return_inverse=True)
        t_r, t_c = tiles // stride, tiles % stride
        r_hi, c_hi = np.minimum((t_r + 1) * _TILE, ny) - 1, np.minimum((t_c + 1) * _TILE, nx) - 1
        tile_boxes = shapely.box(xlo[t_c * _TILE], ylo[t_r * _TILE], xhi[c_hi], yhi[r_hi])
        pieces = shapely.intersection(tile_boxes, geom)
        weights[br, bc] = _rect_fractions(pieces, tile_of_cell.ravel(), xlo[bc], ylo[br], xhi[bc], yhi[br])
    return weights


def _general(geom: Any, lon_corners: np.ndarray, lat_corners: np.ndarray) -> np.ndarray:
    """Cells as quadrilaterals: those the outline touches are clipped exactly, the rest are
    wholly inside or outside and take the state of their first corner."""
    shape = lon_corners.shape[:-1]
    coords = np.stack([lon_corners, lat_corners], axis=-1).reshape(-1, lon_corners.shape[-1], 2)
    # A cell whose closure misses the outline lies on one side of it; its corner too.
    weights: np.ndarray = shapely.contains_xy(geom, coords[:, 0, 0], coords[:, 0, 1]).astype(float)
    # Shapely polygons (and the tree over them) only for the few cells near the outline:
    # building one per bounding-box cell was most of the cost on large grids.
    (x0, x1), (y0, y1) = _corner_range(lon_corners), _corner_range(lat_corners)
    near = np.flatnonzero(_near_outline(geom, x0.ravel(), x1.ravel(), y0.ravel(), y1.ravel()))
    if near.size == 0:
        return weights.reshape(shape)
    cells = shapely.polygons(coords[near])
    edges = shapely.get_parts(shapely.boundary(shapely.get_parts(geom)))  # rings as lines
    edges = shapely.segmentize(edges, _long_edge(x1 - x0, y1 - y0))
    _, hit = shapely.STRtree(cells).query(edges, predicate="intersects")
    hit = np.unique(hit)
    if hit.size:
        clip = cells[hit]
        hit = near[hit]
        bad = ~shapely.is_valid(clip)
        if bad.any():  # twisted quadrilaterals (corner order) are made valid before clipping
            clip[bad] = shapely.make_valid(clip[bad])
        weights[hit] = _exact(clip, geom, shapely.area(clip))
    return weights.reshape(shape)


def _near_outline(geom: Any, x0: np.ndarray, x1: np.ndarray, y0: np.ndarray, y1: np.ndarray) -> np.ndarray:
    """Cells (lon extents ``x0..x1``, lat extents ``y0..y1``) whose extent may meet the outline.

    A superset of the cells the outline touches, found without building any geometry: the
    plane is cut into square bins a little wider than the widest cell, so a cell's extent
    spans at most 2 × 2 bins; the outline, split into pieces half a bin long, marks the
    (at most 2 × 2) bins each piece spans.  A point shared by a cell and the outline lies in
    a bin that both span, so every touched cell sees a marked bin.
    """
    ox, oy, ex, ey = x0.min(), y0.min(), x1.max(), y1.max()
    # The floor on the size caps the bin count (a block of tiny cells spread over the globe).
    size = max(1.01 * max((x1 - x0).max(), (y1 - y0).max()), max(ex - ox, ey - oy) / 4096, 1e-9)
    nbx, nby = int((ex - ox) / size) + 1, int((ey - oy) / size) + 1

    # clamping keeps every bin a point inside the cells' extent falls in
    def bins(x: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        bx = np.clip(np.floor((x - ox) / size), 0, nbx - 1).astype(np.intp)
        return np.clip(np.floor((y - oy) / size), 0, nby - 1).astype(np.intp), bx

    # Outline pieces far from the cells would only add points: cut them off one bin out.
    rings = shapely.get_rings(shapely.get_parts(geom))
    lines = shapely.get_parts(shapely.clip_by_rect(rings, ox - size, oy - size, ex + size, ey + size))
    xy, line_id = shapely.get_coordinates(shapely.segmentize(lines, 0.5 * size), return_index=True)
    by, bx = bins(xy[:, 0], xy[:, 1])
    same = line_id[1:] == line_id[:-1]  # segments join points of the same line only
    marked: np.ndarray = np.zeros((nby, nbx), dtype=bool)
    for r in (by[:-1][same], by[1:][same]):
        for c in (bx[:-1][same], bx[1:][same]):
            marked[r, c] = True
    r0, c0 = bins(x0, y0)
    r1, c1 = bins(x1, y1)
    near: np.ndarray = marked[r0, c0] | marked[r0, c1] | marked[r1, c0] | marked[r1, c1]
    return near


def _long_edge(width: np.ndarray, height: np.ndarray) -> float:
    """Split outline edges longer than ~50 cells so tree queries stay local."""
    span: float = width.mean() + height.mean()
    return max(50.0 * span, 1e-6)


def _corner_range(c: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Smallest and largest value over the last (corner) axis.

    Taken corner by corner: numpy reduces along a short last axis several times slower,
    which showed on million-cell grids.
    """
    corners = [c[..., k] for k in range(c.shape[-1])]
    return functools.reduce(np.minimum, corners), functools.reduce(np.maximum, corners)


def _compute_block(basin: Basin, bounds: Any) -> tuple[tuple[int, int, int, int], np.ndarray]:
    # bounds: a GridBounds whose fields for its kind are set (Any: mypy cannot see which)
    geom = basin.geometry
    if bounds.kind == "rectilinear":
        xmin, xmax = bounds.lon_lower.min(), bounds.lon_upper.max()
    else:
        xmin, xmax = bounds.lon_corners.min(), bounds.lon_corners.max()
    geom = _wrapped_geometry(geom, xmin, xmax)
    shapely.prepare(geom)
    gx0, gy0, gx1, gy1 = geom.bounds
    if bounds.kind == "rectilinear":
        j0, j1 = _overlap_range(bounds.lat_lower, bounds.lat_upper, gy0, gy1)
        i0, i1 = _overlap_range(bounds.lon_lower, bounds.lon_upper, gx0, gx1)
        if j1 == j0 or i1 == i0:
            return (0, 0, 0, 0), np.zeros((0, 0))
        ylo, yhi = bounds.lat_lower[j0:j1], bounds.lat_upper[j0:j1]
        xlo, xhi = bounds.lon_lower[i0:i1], bounds.lon_upper[i0:i1]
        flip = ylo.size > 1 and ylo[0] > ylo[-1]  # descending latitude
        if flip:
            ylo, yhi = ylo[::-1], yhi[::-1]
        contiguous = (
            np.all(np.diff(xlo) > 0)
            and np.allclose(xlo[1:], xhi[:-1], rtol=0, atol=1e-9)
            and np.all(np.diff(ylo) > 0)
            and np.allclose(ylo[1:], yhi[:-1], rtol=0, atol=1e-9)
            and np.all(xhi > xlo)
            and np.all(yhi > ylo)
        )
        if contiguous:
            block = _fast_rectilinear(geom, ylo, yhi, xlo, xhi)
        else:
            lon_c = np.stack(np.broadcast_arrays(xlo[None, :], xhi[None, :], xhi[None, :], xlo[None, :]), -1)
            lat_c = np.stack(np.broadcast_arrays(ylo[:, None], ylo[:, None], yhi[:, None], yhi[:, None]), -1)
            lon_c, lat_c = np.broadcast_arrays(lon_c, lat_c)
            block = _general(geom, lon_c, lat_c)
        if flip:
            block = block[::-1]
    else:
        lon_c, lat_c = bounds.lon_corners, bounds.lat_corners
        (x0, x1), (y0, y1) = _corner_range(lon_c), _corner_range(lat_c)
        near = (x1 > gx0) & (x0 < gx1) & (y1 > gy0) & (y0 < gy1)
        rows, cols = np.nonzero(near.any(axis=1))[0], np.nonzero(near.any(axis=0))[0]
        if rows.size == 0:
            return (0, 0, 0, 0), np.zeros((0, 0))
        j0, j1, i0, i1 = rows[0], rows[-1] + 1, cols[0], cols[-1] + 1
        block = _general(geom, lon_c[j0:j1, i0:i1], lat_c[j0:j1, i0:i1])
    return (int(j0), int(j1), int(i0), int(i1)), np.clip(block, 0.0, 1.0)


def coverage_block(basin: Basin, grid: xr.DataArray | xr.Dataset) -> tuple[tuple[int, int, int, int], np.ndarray]:
    """Coverage weights restricted to the basin's bounding box.

    Parameters
    ----------
    basin
        A :class:`~climwidgets.geo.basin.Basin`.
    grid
        A DataArray or Dataset on a rectilinear or curvilinear lat/lon grid (house names
        lat/lon; see :func:`coverage_weights` for CF names).

    Returns
    -------
    tuple
        ``((j0, j1, i0, i1), block)``: rows ``j0:j1`` and columns ``i0:i1`` of the grid's
        horizontal dims, and the read-only numpy block of fractions.  Cached by (grid
        token, basin token).

    Raises
    ------
    climwidgets.errors.BasinError
        When the basin does not overlap the grid.
    climwidgets.errors.GridError
        When the grid's cell bounds cannot be found.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> from climwidgets.geo.coverage import coverage_block
    >>> grid = xr.DataArray(np.zeros((3, 4)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5, 2.5], "lon": [10.5, 11.5, 12.5, 13.5]})
    >>> basin = cw.Basin.from_vertices([(10.5, 0.0), (12.0, 0.0), (12.0, 1.5), (10.5, 1.5)],
    ...                                name="north fork")  # 1.5 x 1.5 degrees from a corner
    >>> (j0, j1, i0, i1), block = coverage_block(basin, grid)
    >>> (j0, j1, i0, i1), block
    ((0, 2, 0, 2), array([[0.5 , 1.  ],
           [0.25, 0.5 ]]))
    """
    key = (grid_token(grid), basin.token)
    hit: tuple[tuple[int, int, int, int], np.ndarray] | None = weights_cache.get(key)
    if hit is not None:
        return hit
    (j0, j1, i0, i1), block = _compute_block(basin, cell_bounds(grid))
    if block.size == 0 or not np.any(block > 0):
        w, s, e, n = basin.bounds
        raise BasinError(
            f"lies entirely outside the grid (basin lon {w:g}..{e:g}, lat {s:g}..{n:g})",
            source=basin.where,  # names the file the basin came from, if any
            expected="a basin that overlaps at least one grid cell",
            fix="check the basin's coordinates are (lon, lat) in degrees and that the data covers the basin",
        )
    block.setflags(write=False)
    weights_cache.put(key, ((j0, j1, i0, i1), block))
    return (j0, j1, i0, i1), block


def coverage_weights(basin: Basin, grid: xr.DataArray | xr.Dataset) -> xr.DataArray:
    """Fraction (0–1) of each grid cell covered by ``basin``, planar in lon/lat.

    CF-named grids (``latitude``/``longitude``) are read under the house names lat/lon.

    Parameters
    ----------
    basin
        A :class:`~climwidgets.geo.basin.Basin`.
    grid
        A DataArray or Dataset on a rectilinear or curvilinear lat/lon grid; its bounds
        are read or inferred (:func:`climwidgets.geo.grid.cell_bounds`).

    Returns
    -------
    xarray.DataArray
        ``coverage`` on the grid's (lat, lon) or (y, x) dims with ``units="1"``, the basin
        name in attrs and a history line.

    Raises
    ------
    climwidgets.errors.BasinError
        When the basin does not overlap the grid.
    climwidgets.errors.GridError
        When the grid has no usable lat/lon coordinates or bounds.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> grid = xr.DataArray(np.zeros((3, 4)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5, 2.5], "lon": [10.5, 11.5, 12.5, 13.5]})
    >>> basin = cw.Basin.from_vertices([(10.5, 0.0), (12.0, 0.0), (12.0, 1.5), (10.5, 1.5)],
    ...                                name="north fork")  # 1.5 x 1.5 degrees from a corner
    >>> cw.coverage_weights(basin, grid).values  # half cells, a quarter cell
    array([[0.5 , 1.  , 0.  , 0.  ],
           [0.25, 0.5 , 0.  , 0.  ],
           [0.  , 0.  , 0.  , 0.  ]])
    """
    grid = canonical_names(grid)
    dims = horizontal_dims(grid)
    (j0, j1, i0, i1), block = coverage_block(basin, grid)
    full = np.zeros((grid.sizes[dims[0]], grid.sizes[dims[1]]))
    full[j0:j1, i0:i1] = block
    coords = {k: v.variable for k, v in grid.coords.items() if set(v.dims) <= set(dims)}
    out = xr.DataArray(full, dims=dims, coords=coords, name="coverage")
    out.attrs.update(
        units="1",
        long_name=f"fraction of cell inside basin {basin.name}",
        basin=basin.name,
        method="exact planar intersection of the cell's lon/lat polygon with the basin",
    )
    return with_history(out, "coverage_weights", basin=basin.name)
