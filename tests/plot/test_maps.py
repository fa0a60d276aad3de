"""Static maps: projection rule, colours, colour-bar units, fast update, coastlines on disk only."""

from __future__ import annotations

import warnings

import cartopy
import cartopy.crs as ccrs
import matplotlib
import numpy as np
import pytest
import xarray as xr
from matplotlib.figure import Figure

from climwidgets.errors import ParameterError
from climwidgets.plot import maps

matplotlib.use("Agg")


def _field(units="mm", lat0=10.0, lon0=-30.0, n=(4, 5), value=None):
    lat = lat0 + np.arange(n[0]) + 0.5
    lon = lon0 + np.arange(n[1]) + 0.5
    data = np.arange(n[0] * n[1], dtype=float).reshape(n) if value is None else np.full(n, value)
    return xr.DataArray(
        data,
        dims=("lat", "lon"),
        coords={"lat": lat, "lon": lon},
        name="total",
        attrs={"units": units, "long_name": "annual total"},
    )


@pytest.mark.parametrize(
    "lon, lat, expected",
    [
        ((-30, -20), (10, 20), ccrs.PlateCarree),
        ((-179, 179), (-80, 80), ccrs.Robinson),
        ((0, 90), (62, 88), ccrs.NorthPolarStereo),
        ((0, 90), (-88, -62), ccrs.SouthPolarStereo),
        ((-120, -60), (20, 55), ccrs.LambertConformal),
    ],
)
def test_projection_rule(lon, lat, expected):
    assert isinstance(maps.choose_projection(np.array(lon), np.array(lat)), expected)


def test_colour_styles_sequential_and_diverging():
    cmap, lo, hi = maps.colour_style("share", [0.1, 0.3], robust=False)
    assert cmap == "YlGnBu" and (lo, hi) == (0.1, 0.3)
    # diverging limits are symmetric about the centre: 100 for percent of normal, 0 for differences
    cmap, lo, hi = maps.colour_style("percent", [70.0, 160.0], robust=False)
    assert cmap == "BrBG" and (lo + hi) / 2 == 100.0 and hi == 160.0
    _, lo, hi = maps.colour_style("difference", [-5.0, 2.0], robust=False)
    assert (lo, hi) == (-5.0, 5.0)
    _, lo, hi = maps.colour_style("difference", [-5.0, 2.0], vmin=-1.0, vmax=3.0)
    assert (lo, hi) == (-1.0, 3.0)  # explicit limits are kept as given
    # matplotlib's BrBG is ColorBrewer's BrBG: darkest brown (84, 48, 5), darkest green (0, 60, 48)
    # (ColorBrewer 2.0, Brewer & Harrower, 11-class BrBG; values from memory)
    brbg = matplotlib.colormaps["BrBG"]
    assert np.allclose(np.array(brbg(0.0)[:3]) * 255, (84, 48, 5), atol=1)
    assert np.allclose(np.array(brbg(1.0)[:3]) * 255, (0, 60, 48), atol=1)
    with pytest.raises(ParameterError, match="kind='rainbow' is not known"):
        maps.colour_style("rainbow", [1.0])


def test_draw_field_colour_bar_has_units_and_update_is_in_place():
    field = _field()
    fig = Figure()
    ax = fig.add_subplot(1, 1, 1, projection=ccrs.PlateCarree())
    mesh, cbar = maps.draw_field(ax, field, kind="total")
    assert cbar.ax.get_ylabel() == "annual total [mm]"
    assert np.allclose(mesh.get_array().reshape(4, 5), field.values)
    new = field * 2
    new.attrs = {"units": "mm", "long_name": "doubled"}
    out = maps.update_field(mesh, cbar, new)
    assert out is mesh and len(ax.collections) == 1
    assert np.allclose(mesh.get_array().reshape(4, 5), new.values)
    # robust limits by default: the 2nd and 98th percentiles (numpy.percentile, linear method)
    assert mesh.get_clim() == pytest.approx(tuple(np.percentile(new.values, [2, 98])))
    assert cbar.ax.get_ylabel() == "doubled [mm]"


def test_field_label_without_units_says_so():
    field = _field()
    field.attrs = {}
    assert maps.field_label(field) == "total [no units]"


def test_cell_edges_follow_bounds():
    lon_e, lat_e = maps._edges(_field())
    assert lon_e.shape == (5, 6) and lon_e[0, 0] == -30.0 and lat_e[-1, 0] == 14.0


def test_no_coastline_data_means_a_note_once_and_no_download(tmp_path, monkeypatch):
    monkeypatch.setitem(cartopy.config, "data_dir", tmp_path / "empty")
    monkeypatch.setitem(cartopy.config, "pre_existing_data_dir", tmp_path / "empty2")
    monkeypatch.setitem(maps._NOTED, "coastlines", False)

    def no_download(*args, **kwargs):
        raise AssertionError("a download was attempted")

    monkeypatch.setattr(cartopy.io.Downloader, "path", no_download)
    fig = Figure()
    ax = fig.add_subplot(1, 1, 1, projection=ccrs.PlateCarree())
    with pytest.warns(UserWarning, match="not on disk"):
        assert maps.add_coastlines(ax) is None
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert maps.add_coastlines(ax) is None  # said once only


def test_coastlines_drawn_from_a_shapefile_on_disk(tmp_path, monkeypatch):
    shapefile = pytest.importorskip("shapefile")
    folder = tmp_path / "shapefiles" / "natural_earth" / "physical"
    folder.mkdir(parents=True)
    with shapefile.Writer(str(folder / "ne_50m_coastline"), shapeType=shapefile.POLYLINE) as w:
        w.field("name", "C")
        w.line([[[-29.0, 11.0], [-27.0, 12.0]]])
        w.record("invented coast")
    monkeypatch.setitem(cartopy.config, "data_dir", tmp_path / "nothing")
    monkeypatch.setitem(cartopy.config, "pre_existing_data_dir", tmp_path)
    assert maps.natural_earth_path() == folder / "ne_50m_coastline.shp"
    fig = Figure()
    ax = fig.add_subplot(1, 1, 1, projection=ccrs.PlateCarree())
    assert maps.add_coastlines(ax) is not None


def test_map_field_with_basins_renders(tmp_path, monkeypatch):
    from climwidgets.geo.basin import Basin

    monkeypatch.setitem(maps._NOTED, "coastlines", True)
    basin = Basin.from_vertices([(-29.5, 10.5), (-27.5, 10.5), (-28.0, 12.5)], name="Upper & <Lower>")
    fig, ax, mesh = maps.map_field(_field(), basins=[basin], title="test", coastlines=False)
    assert any(t.get_text() == "Upper & <Lower>" for t in ax.texts)
    fig.savefig(tmp_path / "map.png")
    assert (tmp_path / "map.png").stat().st_size > 1000


def test_lonlat_round_trip_in_a_conic_projection():
    proj = maps.choose_projection(np.array([-120, -60]), np.array([20, 55]))
    x, y = maps.lonlat_to_map(proj, -100.0, 40.0)
    assert np.allclose(maps.map_to_lonlat(proj, x[0], y[0]), (-100.0, 40.0))


def test_a_share_is_drawn_in_the_units_of_the_tables():
    """A field carrying the catalogue's display attributes (a fraction shown ×100 in %) is drawn,
    labelled and limited in those units, like every table (analyses.meta)."""
    import numpy as np
    import xarray as xr
    from matplotlib.figure import Figure

    from climwidgets.plot.maps import as_shown, draw_field

    share = xr.DataArray(
        np.array([[0.1, 0.2], [0.3, 0.4]]),
        dims=("lat", "lon"),
        coords={"lat": [0.5, 1.5], "lon": [0.5, 1.5]},
        attrs={
            "units": "1",
            "label": "seasonal share Jul-Aug",
            "display_units": "%",
            "display_scale": 100.0,
            "display_format": ".1f",
        },
    )
    shown, vmin, vmax, label = as_shown(share, 0.0, None, None)
    np.testing.assert_allclose(shown.values, 100 * share.values)
    assert (vmin, vmax, label) == (0.0, None, "seasonal share Jul-Aug [%]")
    assert share.attrs["display_scale"] == 100.0  # the input is not modified
    import cartopy.crs as ccrs

    ax = Figure().add_subplot(1, 1, 1, projection=ccrs.PlateCarree())
    mesh, cbar = draw_field(ax, share, kind="share", vmin=0.0)
    np.testing.assert_allclose(np.asarray(mesh.get_array()).ravel(), [10, 20, 30, 40])
    assert cbar.ax.get_ylabel() == "seasonal share Jul-Aug [%]"
    assert as_shown(shown, None, None, "x")[0] is shown  # already shown: unchanged


def test_robust_limits_are_the_2nd_and_98th_percentiles():
    """Reference: numpy.percentile (linear interpolation, numpy's default method)."""
    rng = np.random.default_rng(3)
    values = rng.gamma(2.0, 30.0, size=(40, 50))
    values[0, :5] = [5000.0, 8000.0, np.nan, -900.0, np.nan]  # a few wild cells and gaps
    finite = values[np.isfinite(values)]
    lo, hi = maps.robust_limits(values)
    assert (lo, hi) == pytest.approx(tuple(np.percentile(finite, [2.0, 98.0])))
    assert maps.colour_style("total", values)[1:] == pytest.approx((lo, hi))
    # hand check: 0..100 -> 2 and 98
    assert maps.robust_limits(np.arange(101.0)) == (2.0, 98.0)
    # diverging: the larger half-width about the centre (100 % of normal)
    pct = 100.0 + 40.0 * rng.standard_normal(500)
    p2, p98 = np.percentile(pct, [2.0, 98.0])
    half = max(100.0 - p2, p98 - 100.0)
    assert maps.robust_limits(pct, kind="percent") == pytest.approx((100.0 - half, 100.0 + half))
    assert maps.robust_limits([np.nan]) == (None, None)


def test_centred_limits_keep_diverging_scales_centred():
    assert maps.centred_limits("percent", 80.0, 150.0) == (50.0, 150.0)
    assert maps.centred_limits("difference", -1.0, 4.0) == (-4.0, 4.0)
    assert maps.centred_limits("share", 10.0, 40.0) == (10.0, 40.0)


def _square_geojson(path, w=-29.0, s=11.0, e=-28.0, n=12.0):
    import json

    ring = [[w, s], [e, s], [e, n], [w, n], [w, s]]
    path.write_text(
        json.dumps(
            {
                "type": "FeatureCollection",
                "features": [
                    {
                        "type": "Feature",
                        "properties": {"name": "square"},
                        "geometry": {"type": "Polygon", "coordinates": [ring]},
                    },
                    {"type": "Feature", "properties": {}, "geometry": {"type": "Point", "coordinates": [w, s]}},
                ],
            }
        )
    )
    return np.array(ring)


def test_a_square_layer_is_a_line_along_its_edges(tmp_path):
    ring = _square_geojson(tmp_path / "square.geojson")
    geoms = maps.read_layer(tmp_path / "square.geojson")
    assert [g.geom_type for g in geoms] == ["Polygon"]  # the point is left out
    ax = Figure().add_subplot(1, 1, 1, projection=ccrs.PlateCarree())
    (line,) = maps.draw_lines(ax, geoms, label="square")
    np.testing.assert_allclose(line.get_xydata(), ring)
    assert line.get_label() == "square"
    # a layer reaching far outside the map is cut to the given bounds
    (cut,) = maps.draw_lines(ax, geoms, bounds=(-28.5, 10.0, -20.0, 13.0))
    xy = cut.get_xydata()
    assert np.nanmin(xy[:, 0]) == pytest.approx(-28.5) and np.nanmax(xy[:, 0]) == pytest.approx(-28.0)
    assert maps.draw_lines(ax, geoms, bounds=(0.0, 0.0, 1.0, 1.0)) == []


def test_a_shapefile_layer_of_lines(tmp_path):
    shapefile = pytest.importorskip("shapefile")
    with shapefile.Writer(str(tmp_path / "river"), shapeType=shapefile.POLYLINE) as w:
        w.field("name", "C")
        w.line([[[-29.0, 11.0], [-28.5, 11.5], [-28.0, 11.6]]])
        w.record("invented river")
    (geom,) = maps.read_layer(tmp_path / "river.shp")
    np.testing.assert_allclose(np.asarray(geom.coords), [[-29.0, 11.0], [-28.5, 11.5], [-28.0, 11.6]])


def test_a_missing_or_wrong_layer_file_is_a_clear_error(tmp_path):
    from climwidgets.errors import InputError

    missing = tmp_path / "coast.geojson"
    with pytest.raises(InputError, match="coast.geojson.*file not found"):
        maps.read_layer(missing)
    (tmp_path / "coast.txt").write_text("x")
    with pytest.raises(InputError, match="coast.txt.*extension"):
        maps.read_layer(tmp_path / "coast.txt")
    (tmp_path / "points.geojson").write_text('{"type": "Point", "coordinates": [0, 0]}')
    with pytest.raises(InputError, match="no line or polygon"):
        maps.read_layer(tmp_path / "points.geojson")


def test_land_mask_outline_follows_the_coast():
    """A 2 x 2 block of land cells in a sea of 6 x 6 cells (1 degree): the 0.5 contour on the
    centres lies on the block's cell edges (hand-computed: half-way between land and sea centres)."""
    height = np.zeros((6, 6))
    height[2:4, 1:3] = 300.0
    terrain = xr.DataArray(
        height,
        dims=("lat", "lon"),
        coords={"lat": 10.5 + np.arange(6), "lon": -30.5 + np.arange(6)},
        attrs={"units": "m"},
    )
    mask = maps.land_mask(terrain)
    assert mask.dtype == bool and int(mask.sum()) == 4 and mask.attrs["outline_source"] == "terrain above 0 m"
    ax = Figure().add_subplot(1, 1, 1, projection=ccrs.PlateCarree())
    (line,) = maps.draw_mask_outline(ax, mask)
    xy = line.get_xydata()
    xy = xy[np.isfinite(xy[:, 0])]
    # land centres lon -29.5, -28.5 and lat 12.5, 13.5: edges at lon -30, -28 and lat 12, 14
    assert xy[:, 0].min() == pytest.approx(-30.0) and xy[:, 0].max() == pytest.approx(-28.0)
    assert xy[:, 1].min() == pytest.approx(12.0) and xy[:, 1].max() == pytest.approx(14.0)
    # a mask given as such (CF land_binary_mask, 0/1) is used as it is
    flags = xr.DataArray(
        (height > 0).astype("int8"),
        dims=terrain.dims,
        coords=terrain.coords,
        attrs={"standard_name": "land_binary_mask"},
    )
    assert (maps.land_mask(flags).values == mask.values).all()


def test_land_mask_of_the_demo_file_is_its_mask_variable(tmp_path):
    """The demo terrain file carries a land mask (climwidgets.demo); opened with
    cw.open_elevation only the heights remain, and the outline uses the file's own mask."""
    import climwidgets as cw

    lat = np.array([35.0, 35.5])
    lon = np.array([-148.0, -147.5, -147.0])
    ds = xr.Dataset(
        {
            "elevation": (("lat", "lon"), np.array([[0.0, 10.0, 0.0], [0.0, 0.0, 0.0]]), {"units": "m"}),
            "land": (
                ("lat", "lon"),
                np.array([[0, 1, 1], [0, 0, 0]], dtype="int8"),
                {"standard_name": "land_binary_mask"},
            ),
        },
        coords={"lat": ("lat", lat, {"units": "degrees_north"}), "lon": ("lon", lon, {"units": "degrees_east"})},
    )
    path = tmp_path / "terrain.nc"
    ds.to_netcdf(path)
    elevation = cw.open_elevation(path, var="elevation")
    mask = maps.land_mask(elevation)
    assert mask.values.tolist() == [[False, True, True], [False, False, False]]  # the file's mask, not height > 0
    assert mask.attrs["outline_source"] == "land mask of terrain.nc"
