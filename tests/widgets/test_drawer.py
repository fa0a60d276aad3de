"""BasinDrawer: draw by clicks, close and name, edit, load/save GeoJSON, table numbers."""

from __future__ import annotations

import json

import numpy as np
import pytest

from climwidgets.geo.aggregate import basin_mean
from climwidgets.geo.basin import Basin
from climwidgets.widgets.drawer import BasinDrawer

from ._data import basins, click, monthly_pr


@pytest.fixture
def field():
    f = monthly_pr().mean("time")
    f.attrs = {"units": "mm", "long_name": "mean monthly total"}
    return f


def _draw(drawer, corners, name):
    drawer.tools.draw.value = True
    for lon, lat in corners:
        click(drawer.map, lon, lat)
    drawer.tools.name.value = name
    drawer.tools.close.click()
    drawer.wait()


def test_draw_by_clicks_adds_a_named_basin_with_its_row(field):
    drawer = BasinDrawer(field)
    corners = [(-29.8, 10.4), (-28.2, 10.4), (-28.2, 11.9), (-29.8, 11.9)]
    _draw(drawer, corners, "Upper Fork")
    assert [b.name for b in drawer.basins] == ["Upper Fork"]
    basin = drawer.basins[0]
    ref = Basin.from_vertices(corners)
    assert basin.geometry.equals_exact(ref.geometry, 1e-6)
    row = drawer.result.loc["Upper Fork"]
    assert row["mean [mm]"] == pytest.approx(float(basin_mean(field, basin)))
    assert row["area_km2"] == pytest.approx(ref.area_m2 / 1e6)
    assert "Upper Fork" in drawer.table_html.value
    assert drawer.map.zoom.options[-1] == ("Upper Fork", "Upper Fork")


def test_clicks_without_draw_mode_add_nothing_and_double_click_closes(field):
    drawer = BasinDrawer(field)
    click(drawer.map, -29.0, 11.0)
    assert drawer.tools.vertices == []
    drawer.tools.draw.value = True
    for lon, lat in [(-29.8, 10.4), (-28.2, 10.4), (-29.0, 11.5)]:
        click(drawer.map, lon, lat)
    click(drawer.map, -29.0, 11.5, dblclick=True)
    drawer.wait()
    assert [b.name for b in drawer.basins] == ["basin 1"]


def test_invalid_outline_shows_the_basin_error(field):
    drawer = BasinDrawer(field)
    drawer.tools.vertices = [(-29.0, 11.0), (-28.0, 11.0)]
    drawer.tools.close.click()
    assert "at least 3 corners" in drawer.message.value
    drawer.tools.vertices = [(-29.0, 11.0), (-28.0, 11.0), (-27.0, 11.0)]  # no area
    drawer.tools.close.click()
    assert drawer.basins == [] and "basin" in drawer.message.value.lower()
    assert "Traceback" not in drawer.message.value


def test_rename_delete_and_unique_names(field):
    drawer = BasinDrawer(field, basins=basins())
    drawer.tools.select.value = "South"
    drawer.tools.new_name.value = "North"
    drawer.tools.rename.click()  # a taken name is a clear error, not a silent "(2)"
    assert [b.name for b in drawer.basins] == ["South", "North"]
    assert "already in the set" in drawer.message.value
    drawer.tools.new_name.value = "Lower"
    drawer.tools.rename.click()
    assert [b.name for b in drawer.basins] == ["Lower", "North"]
    drawer.tools.select.value = "North"
    drawer.tools.delete.click()
    drawer.wait()
    assert [b.name for b in drawer.basins] == ["Lower"]
    assert list(drawer.result.index) == ["Lower"]


def test_save_and_load_geojson(tmp_path, field):
    drawer = BasinDrawer(field, basins=basins())
    path = tmp_path / "basins.geojson"
    drawer.tools.path.value = str(path)
    drawer.tools.save.click()
    data = json.loads(path.read_text())
    assert [f["properties"]["name"] for f in data["features"]] == ["South", "North"]
    drawer.tools.save.click()  # refuses to overwrite unless asked
    assert "exists" in drawer.message.value
    drawer.tools.overwrite.value = True
    drawer.tools.save.click()
    assert "Saved 2 basin(s)" in drawer.message.value
    other = BasinDrawer(field)
    other.tools.path.value = str(path)
    other.tools.load.click()
    other.wait()
    assert [b.name for b in other.basins] == ["South", "North"]
    assert np.allclose(other.result["area_km2"], drawer.wait()["area_km2"])
    other.tools.path.value = str(tmp_path / "missing.geojson")
    other.tools.load.click()
    assert "file not found" in other.message.value


def test_upload_geojson(field):
    drawer = BasinDrawer(field)
    text = json.dumps({"type": "FeatureCollection", "features": [b.to_geojson() for b in basins()]})
    drawer.tools._on_upload({"new": ({"name": "b.geojson", "content": memoryview(text.encode())},)})
    drawer.wait()
    assert [b.name for b in drawer.basins] == ["South", "North"]


def test_units_menu_converts_the_drawers_mean_and_map():
    """The drawer's field mean and its map follow the Units menu (1 in = 25.4 mm, from memory)."""
    import numpy as np
    import xarray as xr

    import climwidgets as cw

    field = xr.DataArray(
        np.full((4, 5), 508.0),
        dims=("lat", "lon"),
        coords={"lat": np.arange(10.125, 11.0, 0.25), "lon": np.arange(-150.125, -148.9, 0.25)},
        attrs={"units": "mm", "long_name": "annual total"},
    )
    box = cw.Basin.from_vertices([(-150.2, 10.0), (-149.0, 10.0), (-149.0, 11.0), (-150.2, 11.0)], name="box")
    d = cw.BasinDrawer(field, [box], export_dir="unused")
    d.wait()
    assert d.table.loc["box", "mean [mm]"] == 508.0
    d.units.value = "US"
    assert d.table.loc["box", "mean [in]"] == 20.0 and "area [mi²]" in d.table.columns
    assert d.map.cbar.ax.get_ylabel().endswith("[in]")
