"""MapFrame: fast redraw in place, hover readout, zoom to basin, clicks to lon/lat."""

from __future__ import annotations

import numpy as np
import pytest

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
    assert np.isclose(lo, 3 * float(field.min())) and np.isclose(hi, 3 * float(field.max()))


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
