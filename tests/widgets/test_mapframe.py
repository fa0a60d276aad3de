"""MapFrame: fast redraw in place, hover readout, zoom to basin, clicks to lon/lat, size,
colour range control, outline and layers."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from climwidgets.widgets.mapframe import MapFrame

from ._data import basins, click, monthly_pr


@pytest.fixture
def field():
    f = monthly_pr().isel(time=0, drop=True)
    f.attrs = {"units": "mm", "long_name": "January total"}
    return f


def test_same_grid_redraw_updates_the_mesh_in_place(field):
    frame = MapFrame(field, kind="total")
    mesh, cbar = frame.mesh, frame.cbar
    frame.show_field(field * 3, kind="total")
    assert frame.mesh is mesh and frame.cbar is cbar
    assert np.allclose(frame.mesh.get_array().reshape(field.shape), 3 * field.values)
    lo, hi = frame.mesh.get_clim()
    # robust limits: 2nd and 98th percentiles of the values (reference: numpy.percentile)
    assert (lo, hi) == pytest.approx(tuple(np.percentile(3 * field.values, [2, 98])))


def test_other_grid_rebuilds(field):
    frame = MapFrame(field)
    mesh = frame.mesh
    frame.show_field(field.isel(lat=slice(0, 3)))
    assert frame.mesh is not mesh and frame.mesh.get_array().size == 3 * field.sizes["lon"]


def test_hover_readout_shows_lon_lat_value_units(field):
    frame = MapFrame(field)
    lon, lat = float(field.lon[2]), float(field.lat[4])
    click(frame, lon, lat, name="motion_notify_event")
    expected = float(field.sel(lon=lon, lat=lat))
    assert f"lon {lon:.3f}, lat {lat:.3f}" in frame.readout.value
    assert f"{expected:.4g} mm" in frame.readout.value
    assert frame.value_at(lon, lat)[0] == pytest.approx(expected)
    assert np.isnan(frame.value_at(50.0, 50.0)[0])


def test_click_reaches_callbacks_as_lon_lat(field):
    frame = MapFrame(field)
    got = []
    frame.on_click(lambda lon, lat, event: got.append((lon, lat)))
    click(frame, -28.9, 11.7)
    assert np.allclose(got, [(-28.9, 11.7)], atol=1e-6)


def test_zoom_menu_lists_basins_and_zooms(field):
    frame = MapFrame(field, basins=basins())
    assert [v for _, v in frame.zoom.options] == ["", "South", "North"]
    frame.zoom.value = "South"
    w, e, s, n = frame.ax.get_extent()
    bw, bs, be, bn = basins()[0].bounds
    assert w < bw and e > be and e - w < 3.0
    frame.zoom.value = ""
    assert frame.ax.get_extent()[0] == pytest.approx(-30.5)


def test_png_bytes(field):
    assert MapFrame(field).png_bytes()[:4] == b"\x89PNG"


def test_the_map_is_at_least_560_px_wide_at_the_default_size(field):
    frame = MapFrame(field, basins=basins())
    frame.figure.canvas.draw()
    assert frame.map_width_px >= 560
    frame.zoom.value = "North"  # a zoom keeps the map's width: the view takes the box's shape
    assert frame.map_width_px >= 560
    # a tall grid too (a strip 2 degrees wide, 5 high)
    tall = field.isel(lon=slice(0, 4)).interp(lat=np.linspace(10.25, 15.25, 11))
    assert MapFrame(tall).map_width_px >= 560 * 0.75  # the height is bounded: near 560, never 330


def test_basin_names_outside_the_view_are_not_drawn(field):
    frame = MapFrame(field, basins=basins())
    frame.figure.canvas.draw()
    renderer = frame.figure.canvas.get_renderer()
    labels = {t.get_text(): t for t in frame.ax.texts}
    assert all(t._check_xy(renderer) for t in labels.values())
    frame.zoom.value = "South"
    frame.figure.canvas.draw()
    assert labels["South"]._check_xy(renderer) and not labels["North"]._check_xy(renderer)
    assert labels["South"].get_clip_path() is not None  # clipped at the map's edge


def test_colour_range_override_recolours_without_computing(field):
    """Typed limits recolour the mesh in place; a widget's computation is not started."""
    from climwidgets.widgets.summary import BasinSummaryWidget

    from ._data import monthly_pr

    w = BasinSummaryWidget(monthly_pr(), basins(), baseline=(2001, 2010), export_dir="unused")
    w.wait()
    frame, gen, array = w.map, w._gen, np.asarray(w.map.mesh.get_array()).copy()
    assert frame.range_mode.value == "auto" and frame.range_min.disabled
    frame.range_mode.value = "fixed"
    frame.range_min.value = 500.0
    frame.range_max.value = 900.0
    assert frame.mesh.get_clim() == (500.0, 900.0)
    assert w._gen == gen  # no new computation
    np.testing.assert_array_equal(np.asarray(frame.mesh.get_array()), array)
    assert "mm" in frame.range_units.value
    frame.range_max.value = 400.0  # below the lower limit: said, not drawn
    assert frame.mesh.get_clim() == (500.0, 900.0) and "above the lower" in frame.range_units.value
    frame.range_mode.value = "auto"
    values = np.asarray(frame.field.values, dtype=float)
    values = values[np.isfinite(values)]
    if frame._requested == (None, None):
        assert frame.mesh.get_clim() == pytest.approx(tuple(np.percentile(values, [2, 98])))
    assert w._gen == gen
    # the widget's hook for outline layers draws on its map, without computing either
    river = {"type": "LineString", "coordinates": [[-30.0, 11.0], [-28.0, 12.0]]}
    assert w.add_layer(river, label="river") is w and w.map.layers[-1]["label"] == "river"
    np.testing.assert_allclose(w.map._context_artists[-1].get_xydata(), river["coordinates"])
    assert w._gen == gen


def test_fixed_range_stays_centred_and_ends_with_other_units(field):
    pct = field / float(field.mean()) * 100.0
    pct.attrs = {"units": "%", "long_name": "percent of normal"}
    frame = MapFrame(pct, kind="percent")
    lo, hi = frame.mesh.get_clim()
    assert lo + hi == pytest.approx(200.0)
    frame.set_range(80.0, 150.0)  # kept centred on 100 %: 50 to 150
    assert frame.mesh.get_clim() == (50.0, 150.0)
    assert (frame.range_min.value, frame.range_max.value) == (50.0, 150.0)
    # same units: the typed range stays (attrs kept explicitly: xarray 2025.1 drops them in arithmetic)
    frame.show_field((pct * 1.1).assign_attrs(pct.attrs), kind="percent")
    assert frame.mesh.get_clim() == (50.0, 150.0)
    frame.show_field(field, kind="total")  # other units: back to auto
    assert frame.range_mode.value == "auto" and frame.range_min.disabled
    # explicit limits from a widget (e.g. a record-wide scale) are kept in auto mode
    frame.show_field(field, kind="total", vmin=10.0, vmax=90.0)
    assert frame.mesh.get_clim() == (10.0, 90.0)


def test_land_outline_and_layers_are_lines_at_their_coordinates(field, tmp_path):
    import json

    height = xr.zeros_like(field)
    height[1:4, 2:5] = 250.0  # land on 3 x 3 cells
    ring = [[-29.5, 10.5], [-28.5, 10.5], [-28.5, 11.5], [-29.5, 11.5], [-29.5, 10.5]]
    path = tmp_path / "coast.geojson"
    path.write_text(
        json.dumps({"type": "Feature", "properties": {}, "geometry": {"type": "Polygon", "coordinates": [ring]}})
    )
    frame = MapFrame(field, outline=height, layers=[(path, "coast")])
    outline, coast = frame._context_artists
    xy = outline.get_xydata()
    xy = xy[np.isfinite(xy[:, 0])]
    lon_e = (float(field.lon[2]) - 0.25, float(field.lon[4]) + 0.25)
    lat_e = (float(field.lat[1]) - 0.25, float(field.lat[3]) + 0.25)
    assert (xy[:, 0].min(), xy[:, 0].max()) == pytest.approx(lon_e)
    assert (xy[:, 1].min(), xy[:, 1].max()) == pytest.approx(lat_e)
    np.testing.assert_allclose(coast.get_xydata(), ring)  # the square's edges
    assert coast.get_label() == "coast" and "coast" in frame.legend.value and "land/sea" in frame.legend.value
    frame.show_field(field.isel(lat=slice(0, 5)))  # a new grid: the lines are drawn again
    assert len(frame._context_artists) == 2 and all(a.axes is frame.ax for a in frame._context_artists)
    assert frame.add_layer([{"type": "LineString", "coordinates": [[-30, 11], [-28, 12]]}]) == "layer 2"
    assert len(frame._context_artists) == 3


def test_a_missing_layer_file_is_a_clear_error(field, tmp_path):
    from climwidgets.errors import InputError

    frame = MapFrame(field)
    with pytest.raises(InputError, match=r"rivers\.shp: file not found"):
        frame.add_layer(tmp_path / "rivers.shp")
    assert frame.layers == []


def test_a_zoom_chosen_before_the_first_map_is_kept(field):
    frame = MapFrame(basins=basins())
    frame.zoom.value = "South"
    frame.show_field(field)
    w, e, s, n = frame.ax.get_extent()
    assert e - w < 3.0 and n - s < 2.5  # the whole grid is 4 x 3 degrees
