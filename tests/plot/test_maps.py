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
    return xr.DataArray(data, dims=("lat", "lon"), coords={"lat": lat, "lon": lon}, name="total",
                        attrs={"units": units, "long_name": "annual total"})


@pytest.mark.parametrize(
    "lon, lat, expected",
    [((-30, -20), (10, 20), ccrs.PlateCarree),
     ((-179, 179), (-80, 80), ccrs.Robinson),
     ((0, 90), (62, 88), ccrs.NorthPolarStereo),
     ((0, 90), (-88, -62), ccrs.SouthPolarStereo),
     ((-120, -60), (20, 55), ccrs.LambertConformal)],
)
def test_projection_rule(lon, lat, expected):
    assert isinstance(maps.choose_projection(np.array(lon), np.array(lat)), expected)


def test_colour_styles_sequential_and_diverging():
    cmap, lo, hi = maps.colour_style("share", [0.1, 0.3])
    assert cmap == "YlGnBu" and (lo, hi) == (0.1, 0.3)
    # diverging limits are symmetric about the centre: 100 for percent of normal, 0 for differences
    cmap, lo, hi = maps.colour_style("percent", [70.0, 160.0])
    assert cmap == "BrBG" and (lo + hi) / 2 == 100.0 and hi == 160.0
    _, lo, hi = maps.colour_style("difference", [-5.0, 2.0])
    assert (lo, hi) == (-5.0, 5.0)
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
    assert mesh.get_clim() == (0.0, 38.0)
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

    share = xr.DataArray(np.array([[0.1, 0.2], [0.3, 0.4]]), dims=("lat", "lon"),
                         coords={"lat": [0.5, 1.5], "lon": [0.5, 1.5]},
                         attrs={"units": "1", "label": "seasonal share Jul-Aug", "display_units": "%",
                                "display_scale": 100.0, "display_format": ".1f"})
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
