"""Basin polygons: constructors, validation, antimeridian, export (climwidgets/geo/basin.py)."""

import json

import numpy as np
import pytest
import shapefile
import shapely
from pyproj import CRS, Geod, Transformer

import climwidgets as cw
from climwidgets.errors import BasinError, SourceError
from climwidgets.geo.basin import write_geojson

SQUARE = [(-140.0, 20.0), (-139.0, 20.0), (-139.0, 21.0), (-140.0, 21.0)]


def _wgs84_strip_area(lat1, lat2, dlon_deg):
    # Ellipsoidal area between two parallels: A = Δλ·b²/2·[q(φ2) − q(φ1)],
    # q(φ) = sin φ/(1 − e² sin²φ) + (1/2e)·ln((1 + e sin φ)/(1 − e sin φ))
    # (Bagratuni 1967, as implemented in PostGIS lwspheroid.c spheroid_boundingbox_area).
    g = Geod(ellps="WGS84")
    e = np.sqrt(g.es)

    def q(phi):
        s = np.sin(np.radians(phi))
        return s / (1 - e**2 * s**2) + np.log((1 + e * s) / (1 - e * s)) / (2 * e)

    return np.radians(dlon_deg) * g.b**2 / 2 * (q(lat2) - q(lat1))


def test_from_vertices_and_geodesic_area():
    b = cw.Basin.from_vertices(SQUARE, name="square")
    assert b.name == "square" and b.bounds == (-140.0, 20.0, -139.0, 21.0)
    closed = cw.Basin.from_vertices(SQUARE + [SQUARE[0]], name="other name")
    assert closed.token == b.token  # token ignores the name and the closing vertex
    # The basin area is on the authalic sphere (R = 6 371 007.2 m, Moritz 1980, GRS80):
    # a lon/lat rectangle is R²·Δλ·(sin φ2 − sin φ1), the spherical-zone formula; pyproj.Geod on
    # that sphere with densified (straight lon/lat) edges gives the same to 1e-8.
    R = 6_371_007.2
    zone = R**2 * np.radians(1.0) * (np.sin(np.radians(21.0)) - np.sin(np.radians(20.0)))
    np.testing.assert_allclose(b.area_m2, zone, rtol=1e-12)
    import shapely

    sphere, _ = Geod(a=R, b=R).geometry_area_perimeter(shapely.segmentize(b.geometry, 0.001))
    np.testing.assert_allclose(b.area_m2, abs(sphere), rtol=1e-6)
    # and within 0.5 % of the WGS84 ellipsoidal area (Bagratuni 1967 strip formula)
    np.testing.assert_allclose(b.area_m2, _wgs84_strip_area(20.0, 21.0, 1.0), rtol=5e-3)
    moved = cw.Basin.from_vertices([(x + 0.5, y) for x, y in SQUARE])
    assert moved.token != b.token


@pytest.mark.parametrize(
    ("verts", "pattern"),
    [
        ([(-30, 0), (-29, 0)], r"basin 'bad': a ring has 2 distinct vertices.*at least 3"),
        ([(-30, 0), (-29, 0), (-30, 0), (-29, 0)], r"2 distinct vertices"),
        ([(-30, 0), (-29, np.nan), (-29, 1)], r"vertex is NaN.*Fix: remove or correct"),
        ([(-30, 0), (-29, 95), (-29, 1)], r"latitude 95 is beyond ±90.*\(lon, lat\), not \(lat, lon\)"),
        ([(-30, 0), (-29, 1), (-28, 2)], r"zero area.*on one line"),
        ([(-30, 0), (-29, 1), (-29, 0), (-30, 1)], r"crosses itself.*2 parts.*50\.0%.*redraw"),
    ],
)
def test_validation_messages(verts, pattern):
    with pytest.raises(BasinError, match=pattern):
        cw.Basin.from_vertices(verts, name="bad")


def test_tiny_self_intersection_is_repaired():
    # A double click that doubles back a hair: make_valid keeps > 99.9 % in one polygon.
    verts = [(-30, -20), (-20, -20), (-20, -10), (-30, -10), (-29.999, -9.999), (-30, -9.9995)]
    b = cw.Basin.from_vertices(verts, name="loop")
    assert b.geometry.is_valid and b.geometry.geom_type == "Polygon"
    np.testing.assert_allclose(b.geometry.area, 100.0, rtol=1e-4)


def test_antimeridian_is_split():
    b = cw.Basin.from_vertices([(179.0, -10), (-179.0, -10), (-179.0, -8), (179.0, -8)], name="dateline")
    g = b.geometry
    assert g.geom_type == "MultiPolygon" and len(g.geoms) == 2
    assert b.bounds[0] == -180.0 and b.bounds[2] == 180.0
    np.testing.assert_allclose(g.area, 4.0)
    # Same basin given in 0..360 longitudes
    b360 = cw.Basin.from_vertices([(179.0, -10), (181.0, -10), (181.0, -8), (179.0, -8)])
    assert b360.token == b.token
    # The geodesic area is that of the 2° × 2° box, on whichever side of 180° it lies.
    ref = cw.Basin.from_vertices([(-30.0, -10), (-28.0, -10), (-28.0, -8), (-30.0, -8)])
    np.testing.assert_allclose(b.area_m2, ref.area_m2, rtol=1e-9)


def test_geojson_feature_collection_with_holes(tmp_path):
    fc = {
        "type": "FeatureCollection",
        "features": [
            {
                "type": "Feature",
                "properties": {"name": "upper"},
                "geometry": {
                    "type": "Polygon",
                    "coordinates": [
                        [[-140, 20], [-136, 20], [-136, 24], [-140, 24], [-140, 20]],
                        [[-139, 21], [-138, 21], [-138, 22], [-139, 22], [-139, 21]],
                    ],
                },
            },
            {
                "type": "Feature",
                "properties": {"label": "x"},
                "geometry": {
                    "type": "MultiPolygon",
                    "coordinates": [
                        [[[-130, 20], [-129, 20], [-129, 21], [-130, 20]]],
                        [[[-128, 20], [-127, 20], [-127, 21], [-128, 20]]],
                    ],
                },
            },
        ],
    }
    path = tmp_path / "basins.geojson"
    path.write_text(json.dumps(fc))
    basins = cw.Basin.from_geojson(path)
    assert [b.name for b in basins] == ["upper", "basin 2"]
    assert basins[0].geometry.area == 15.0 and len(basins[0].geometry.interiors) == 1
    assert basins[1].geometry.geom_type == "MultiPolygon"
    single = cw.Basin.from_geojson(fc["features"][0])
    assert len(single) == 1 and single[0].token == basins[0].token
    bare = cw.Basin.from_geojson(fc["features"][0]["geometry"])
    assert bare[0].token == basins[0].token


def test_geojson_errors(tmp_path):
    with pytest.raises(SourceError, match="file not found"):
        cw.Basin.from_geojson(tmp_path / "none.geojson")
    with pytest.raises(BasinError, match="'LineString' is not a polygon"):
        cw.Basin.from_geojson(
            {"type": "Feature", "properties": {}, "geometry": {"type": "LineString", "coordinates": [[0, 0], [1, 1]]}}
        )
    with pytest.raises(BasinError, match="'Point' is not supported"):
        cw.Basin.from_geojson({"type": "Point", "coordinates": [0, 0]})
    with pytest.raises(BasinError, match="holds no features"):
        cw.Basin.from_geojson({"type": "FeatureCollection", "features": []})


def test_wkt_and_geojson_round_trip(tmp_path):
    b = cw.Basin.from_wkt("POLYGON((-140 20, -136 20, -136 24, -140 24, -140 20))", name="w")
    feat = b.to_geojson()
    assert feat["properties"] == {"name": "w"} and feat["geometry"]["type"] == "Polygon"
    json.dumps(feat)
    out = write_geojson([b, cw.Basin.from_vertices(SQUARE, name="sq")], tmp_path / "out.geojson")
    back = cw.Basin.from_geojson(out)
    assert [x.name for x in back] == ["w", "sq"] and back[0].token == b.token
    with pytest.raises(FileExistsError, match="already exists.*overwrite=True"):  # OutputExistsError
        write_geojson([b], out)
    write_geojson([b], out, overwrite=True)
    assert len(cw.Basin.from_geojson(out)) == 1
    assert not [p for p in tmp_path.iterdir() if p.name.endswith((".tmp", ".part"))]
    with pytest.raises(BasinError, match="could not read WKT"):
        cw.Basin.from_wkt("POLYGON((1 2, 3", name="w")


def _write_shp(path, rings_list, names, prj_wkt=None):
    with shapefile.Writer(str(path), shapeType=shapefile.POLYGON) as w:
        w.field("NAME", "C")
        for rings, name in zip(rings_list, names):
            w.poly(rings)
            w.record(name)
    if prj_wkt:
        path.with_suffix(".prj").write_text(prj_wkt)


def test_shapefile_lonlat(tmp_path):
    ring = [list(p) for p in SQUARE[::-1]] + [list(SQUARE[-1])]  # clockwise outer ring for ESRI
    _write_shp(tmp_path / "b.shp", [[ring]], ["first"])
    (b,) = cw.Basin.from_shapefile(tmp_path / "b.shp")
    assert b.name == "first" and b.geometry.area == 1.0


def test_shapefile_projected_is_reprojected(tmp_path):
    # A square drawn in lon/lat, stored in UTM zone 5N (EPSG:32605) with an ESRI .prj;
    # pyproj is the outside reference for the transform.
    utm = CRS.from_epsg(32605)
    to_utm = Transformer.from_crs(4326, utm, always_xy=True)
    dense = shapely.segmentize(shapely.Polygon(SQUARE[::-1]), 0.01)
    xy = np.column_stack(to_utm.transform(*np.asarray(dense.exterior.coords).T))
    _write_shp(tmp_path / "p.shp", [[xy.tolist()]], ["projected"], utm.to_wkt("WKT1_ESRI"))
    (b,) = cw.Basin.from_shapefile(tmp_path / "p.shp", name_field="NAME")
    np.testing.assert_allclose(b.bounds, (-140.0, 20.0, -139.0, 21.0), atol=1e-6)
    ref = cw.Basin.from_vertices(SQUARE)
    np.testing.assert_allclose(b.area_m2, ref.area_m2, rtol=1e-6)
    with pytest.raises(BasinError, match="no field 'ID'"):
        cw.Basin.from_shapefile(tmp_path / "p.shp", name_field="ID")
    with pytest.raises(SourceError, match="file not found"):
        cw.Basin.from_shapefile(tmp_path / "missing.shp")


# ---- outlines with 360-degree edges (whole globe, polar caps)


def test_whole_globe_outline_has_the_authalic_sphere_area():
    from climwidgets.geo.area import AUTHALIC_RADIUS_M

    globe = cw.Basin.from_vertices([(-180, -90), (180, -90), (180, 90), (-180, 90)], name="globe")
    # WGS84 surface area 510 065 621.7 km² (from memory; = 4π R_q² with the authalic
    # radius 6 371 007.18 m of Snyder 1987, USGS PP 1395, eq. 3-13); the suite's sphere uses
    # R rounded to 6 371 007.2 m, 6e-9 larger in area
    assert globe.area_m2 == pytest.approx(510_065_621.7e6, rel=1e-8)
    assert globe.area_m2 == pytest.approx(4 * np.pi * AUTHALIC_RADIUS_M**2, rel=1e-7)


@pytest.mark.parametrize(
    "ring",
    [
        [(-180, 60), (180, 60), (180, 90), (-180, 90)],
        [(-180, 60), (-90, 60), (0, 60), (90, 60), (180, 60), (180, 90), (-180, 90)],
    ],
)
def test_polar_cap_outline_matches_pyproj_geod(ring):
    from pyproj import Geod

    from climwidgets.geo.area import AUTHALIC_RADIUS_M as R

    cap = cw.Basin.from_vertices(ring, name="cap")
    # Basin areas are on the authalic sphere (the one area of every table). Outside check:
    # pyproj.Geod on that sphere, polygon area of the 60°N parallel densified to 0.01°,
    # and the spherical-cap formula 2πR²(1 − sin 60°).
    lons = np.arange(-180.0, 180.0, 0.01)
    area, _ = Geod(a=R, b=R).polygon_area_perimeter(lons, np.full(lons.size, 60.0))
    assert cap.area_m2 == pytest.approx(abs(area), rel=1e-7)
    assert cap.area_m2 == pytest.approx(2 * np.pi * R**2 * (1 - np.sin(np.radians(60.0))), rel=1e-12)


def test_area_of_an_ordinary_outline_still_matches_pyproj_geod():
    from pyproj import Geod

    from climwidgets.geo.area import AUTHALIC_RADIUS_M as R

    b = cw.Basin.from_vertices([(10, 10), (12, 10.5), (11.5, 12), (9.8, 11.7)])
    area, _ = Geod(a=R, b=R).geometry_area_perimeter(shapely.segmentize(b.geometry, 0.001))
    assert b.area_m2 == pytest.approx(abs(area), rel=1e-6)


# ---------------------------------------------------------------- files that cannot be read
def _square_feature(name="upper"):
    ring = [list(v) for v in SQUARE] + [list(SQUARE[0])]
    return {"type": "Feature", "properties": {"name": name}, "geometry": {"type": "Polygon", "coordinates": [ring]}}


def test_geojson_nested_100000_levels_is_a_source_error(tmp_path):
    path = tmp_path / "deep.geojson"
    path.write_text("[" * 100_000 + "]" * 100_000)
    with pytest.raises(SourceError, match="nested too deeply") as info:
        cw.load_basins(path)
    assert str(path) in str(info.value) and "Fix: " in str(info.value) and info.value.__cause__ is None
    with pytest.raises(SourceError, match="nested too deeply"):  # the same as JSON text
        cw.Basin.from_geojson('{"a": ' + "[" * 100_000 + "]" * 100_000 + "}")


def test_shapefile_without_dbf_is_a_source_error(tmp_path):
    with shapefile.Writer(str(tmp_path / "outline"), shapeType=shapefile.POLYGON) as w:
        w.field("name", "C")
        w.poly([[list(v) for v in SQUARE] + [list(SQUARE[0])]])
        w.record("upper")
    (tmp_path / "outline.dbf").unlink()
    with pytest.raises(SourceError) as info:
        cw.load_basins(tmp_path / "outline.shp")
    text = str(info.value)
    assert "outline.shp" in text and "outline.dbf" in text and "Fix: " in text


def test_unreadable_geojson_through_the_api_is_a_source_error(tmp_path, monkeypatch):
    # tests run as root, where chmod does not stop reads: the refusal is simulated
    path = tmp_path / "basins.geojson"
    path.write_text(json.dumps(_square_feature()))
    original = type(path).read_text

    def refused(self, *args, **kwargs):
        if self.name == "basins.geojson":
            raise PermissionError(13, "Permission denied", str(self))
        return original(self, *args, **kwargs)

    monkeypatch.setattr(type(path), "read_text", refused)
    for load in (cw.load_basins, cw.Basin.from_geojson, cw.BasinSet.from_file):
        with pytest.raises(SourceError) as info:
            load(path)
        assert str(path) in str(info.value) and "Permission denied" in str(info.value)
        assert "permission" in info.value.fix


def test_a_pipe_given_as_basin_file_is_refused_without_blocking(tmp_path):
    import os

    fifo = tmp_path / "basins.geojson"
    os.mkfifo(fifo)  # opening it for reading would wait for a writer forever
    with pytest.raises(SourceError, match="not a regular file"):
        cw.load_basins(fifo)
    with pytest.raises(SourceError, match="not a regular file"):
        cw.Basin.from_geojson(fifo)


@pytest.mark.parametrize(
    "obj, words",
    [
        ({"type": "FeatureCollection", "features": [1]}, ["feature 1 is not a Feature"]),
        ({"type": "FeatureCollection", "features": {"a": 1}}, ["'features' is a dict"]),
        (
            {"type": "Feature", "properties": {"name": "flat"}, "geometry": {"type": "Polygon"}},
            ["basin 'flat'", "no coordinates"],
        ),
        (
            {"type": "Feature", "properties": [], "geometry": {"type": "Polygon", "coordinates": 5}},
            ["basin 'basin 1'", "not a list of rings"],
        ),
        ({"type": "MultiPolygon", "coordinates": [1, 2]}, ["not a list of polygons"]),
        (
            {
                "type": "Feature",
                "properties": {"name": "line"},
                "geometry": {"type": "Polygon", "coordinates": [[[-140, 20], [-139, 20], [-138, 20], [-140, 20]]]},
            },
            ["basin 'line'", "zero area"],
        ),
    ],
)
def test_basin_errors_name_the_file_and_the_basin(tmp_path, obj, words):
    path = tmp_path / "outlines.geojson"
    path.write_text(json.dumps(obj))
    with pytest.raises(BasinError) as info:
        cw.load_basins(path)
    text = str(info.value)
    assert text.startswith(str(path)), text
    for w in words:
        assert w in text
    assert "Fix: " in text


def test_a_basin_outside_the_grid_is_named_with_its_file(tmp_path):
    import pandas as pd
    import xarray as xr

    path = tmp_path / "outlines.geojson"
    path.write_text(json.dumps({"type": "FeatureCollection", "features": [_square_feature("far")]}))
    (basin,) = cw.load_basins(path)
    assert basin.origin == str(path) and basin.renamed("other").origin == str(path)
    pr = xr.DataArray(
        np.ones((2, 2, 2)),
        dims=("time", "lat", "lon"),
        coords={"time": pd.date_range("2001-01-01", periods=2), "lat": [-30.25, -29.75], "lon": [10.25, 10.75]},
        attrs={"units": "mm", "step": "day"},
        name="pr",
    )
    with pytest.raises(BasinError) as info:
        cw.basin_mean(pr, basin)
    assert f"{path}, basin 'far'" in str(info.value) and "outside the grid" in str(info.value)
    drawn = cw.Basin.from_vertices(SQUARE, name="drawn")
    assert drawn.origin is None and drawn.where == "basin 'drawn'"
