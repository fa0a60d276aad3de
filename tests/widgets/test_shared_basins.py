"""Widgets sharing one cw.BasinSet show the same basins: adds (by API and by drawing clicks),
removes and renames reach every widget holding the set."""

from __future__ import annotations

import pytest

import climwidgets as cw
from climwidgets.errors import BasinError
from climwidgets.widgets.seasonal import SeasonalShareWidget
from climwidgets.widgets.summary import BasinSummaryWidget

from ._data import basins, click, monthly_pr

TRIANGLE = [(-29.9, 10.4), (-28.4, 10.4), (-29.0, 11.3)]


@pytest.fixture(scope="module")
def pr():
    return monthly_pr()


def _shown(w):
    return list(w.table.index) if w.table is not None else []


def test_basin_set_basics(tmp_path):
    shared = cw.BasinSet(basins())
    assert shared.names == ["South", "North"] and len(shared) == 2 and "North" in shared
    assert [b.name for b in shared] == shared.names
    with pytest.raises(BasinError, match="already in the set"):
        shared.add(cw.Basin.from_vertices(TRIANGLE, name="North"))
    with pytest.raises(BasinError, match="already in the set"):
        shared.rename("South", "North")
    events = []
    shared.observe(lambda event, details: events.append(event))
    shared.rename("South", "Lower")
    shared.remove("North")
    assert shared.names == ["Lower"] and events == ["rename", "remove"]
    path = shared.to_geojson(tmp_path / "b.geojson")
    again = cw.BasinSet.from_geojson(path)
    assert again.names == ["Lower"] and again["Lower"].token == shared["Lower"].token
    assert shared.to_geojson()["features"][0]["properties"]["name"] == "Lower"


def test_two_widgets_share_one_set(pr, tmp_path):
    shared = cw.BasinSet(basins())
    seasonal = SeasonalShareWidget(pr, basins=shared, export_dir=tmp_path)
    summary = BasinSummaryWidget(pr, basins=shared, baseline=(2001, 2010), export_dir=tmp_path)
    seasonal.wait(), summary.wait()
    assert _shown(seasonal) == _shown(summary) == ["South", "North"]

    # added through the API: both widgets show it
    shared.add(cw.Basin.from_vertices([(-30.0, 12.0), (-28.0, 12.0), (-29.0, 12.9)], name="Top"))
    seasonal.wait(), summary.wait()
    assert _shown(seasonal) == _shown(summary) == ["South", "North", "Top"]

    # drawn by clicks in the summary widget: joins the set, the seasonal widget shows it too
    tools = summary.tools
    tools.draw.value = True
    for lon, lat in TRIANGLE:
        click(summary.map, lon, lat)
    tools.name.value = "Drawn"
    tools.close.click()
    seasonal.wait(), summary.wait()
    assert shared.names[-1] == "Drawn"
    assert _shown(seasonal) == _shown(summary) == ["South", "North", "Top", "Drawn"]
    assert seasonal.tools.select.options == tuple(shared.names)

    # removed and renamed in the seasonal widget's tools: the summary follows
    seasonal.tools.delete_basin("Top")
    seasonal.tools.rename_basin("South", "Lower")
    seasonal.wait(), summary.wait()
    assert _shown(seasonal) == _shown(summary) == ["Lower", "North", "Drawn"]
    # same numbers for the same basin in both tables (one analysis behind both)
    a = seasonal.table.loc["Drawn", "seasonal share [%]"]
    b = summary.table.loc["Drawn", "seasonal share [%]"]
    assert a == pytest.approx(b, rel=1e-12)


def test_a_list_is_private_to_its_widget(pr, tmp_path):
    one = SeasonalShareWidget(pr, basins=basins(), export_dir=tmp_path)
    two = SeasonalShareWidget(pr, basins=basins(), export_dir=tmp_path)
    one.basin_set.remove("North")
    one.wait(), two.wait()
    assert _shown(one) == ["South"] and _shown(two) == ["South", "North"]
