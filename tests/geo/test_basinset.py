"""geo/basinset.py: an ordered set of uniquely named basins that tells listeners of changes.

(Widgets sharing a set are tested in tests/widgets/test_shared_basins.py.)
"""

import json

import numpy as np
import pytest
import xarray as xr

from climwidgets.errors import BasinError, ParameterError, SourceError
from climwidgets.geo.basin import Basin
from climwidgets.geo.basinset import BasinSet, as_basin_list, load_basins, whole_grid_basin


def _square(name, x0=10.0):
    return Basin.from_vertices([(x0, 0.0), (x0 + 1, 0.0), (x0 + 1, 1.0), (x0, 1.0)], name=name)


def test_add_remove_rename_and_the_events_listeners_hear():
    s = BasinSet([_square("a")])
    events = []
    listener = lambda event, details: events.append((event, details))  # noqa: E731
    s.observe(listener)
    s.observe(listener)  # observing twice still calls once
    b = s.add(_square("b", 11.0))
    s.rename("a", "upper")
    s.remove(b)
    assert s.names == ["upper"] and len(s) == 1 and "upper" in s and "a" not in s
    assert [e for e, _ in events] == ["add", "rename", "remove"]
    assert events[1][1] == ("a", "upper") and events[0][1] == [b]
    s.unobserve(listener)
    s.add(_square("c", 12.0))
    assert len(events) == 3


def test_renamed_basin_keeps_its_outline_and_place():
    s = BasinSet([_square("a"), _square("b", 11.0)])
    before = s["a"].area_m2
    s.rename("a", "  first ")  # names are trimmed
    assert s.names == ["first", "b"] and s[0].area_m2 == before
    assert s.rename("b", "b") is s["b"]  # same name: nothing changes


@pytest.mark.parametrize(
    "action",
    [
        lambda s: s.add(_square("a", 12.0)),
        lambda s: s.rename("b", "a"),
        lambda s: s.rename("b", "   "),
        lambda s: s.remove("missing"),
        lambda s: BasinSet([_square("x"), _square("x", 11.0)]),
    ],
)
def test_taken_empty_or_missing_names_are_refused(action):
    s = BasinSet([_square("a"), _square("b", 11.0)])
    with pytest.raises(BasinError):
        action(s)
    assert s.names == ["a", "b"]


def test_extend_is_all_or_none():
    s = BasinSet([_square("a")])
    with pytest.raises(BasinError, match="'a'"):
        s.extend([_square("new", 11.0), _square("a", 12.0)])
    assert s.names == ["a"]
    s.extend({"x": _square("new", 11.0)})
    assert s.names == ["a", "new"]


def test_replace_and_non_basins():
    s = BasinSet([_square("a")])
    events = []
    s.observe(lambda e, d: events.append(e))
    s.replace([_square("p"), _square("q", 11.0)])
    assert s.names == ["p", "q"] and events == ["replace"]
    with pytest.raises(ParameterError):
        s.add("not a basin")
    with pytest.raises(ParameterError):
        BasinSet([1, 2])


def test_geojson_round_trip(tmp_path):
    s = BasinSet([_square("north fork"), _square("south fork", 11.0)])
    mapping = s.to_geojson()
    assert mapping["type"] == "FeatureCollection"
    assert [f["properties"]["name"] for f in mapping["features"]] == s.names
    path = s.to_geojson(tmp_path / "basins.geojson")
    json.loads(path.read_text())  # valid JSON (Python's json module)
    again = BasinSet.from_file(path)
    assert again.names == s.names
    assert [b.token for b in again] == [b.token for b in s]
    assert BasinSet.from_geojson(mapping).names == s.names
    with pytest.raises(BasinError, match="no basins to save"):
        BasinSet().to_geojson(tmp_path / "empty.geojson")


def test_as_basin_list_and_load_basins_refusals(tmp_path):
    assert [b.name for b in as_basin_list(BasinSet([_square("a")]), "f")] == ["a"]
    with pytest.raises(ParameterError, match="non-empty"):
        as_basin_list([], "f")
    with pytest.raises(ParameterError, match="repeat"):
        as_basin_list([_square("a"), _square("a", 11.0)], "f")
    with pytest.raises(SourceError, match="not found"):
        load_basins(tmp_path / "absent.geojson")
    with pytest.raises(SourceError, match="not a regular file"):
        load_basins(tmp_path)
    (tmp_path / "notes.txt").write_text("hello")
    with pytest.raises(BasinError, match="not a basin outline file"):
        load_basins(tmp_path / "notes.txt")


def test_whole_grid_basin_spans_the_outer_cell_edges():
    grid = xr.DataArray(np.zeros((2, 3)), dims=("lat", "lon"), coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]})
    basin = whole_grid_basin(grid)
    # Hand arithmetic: 1-degree cells centred at 10.5..12.5 and 0.5..1.5 span lon 10..13, lat 0..2.
    assert basin.name == "whole grid"
    assert np.allclose(basin.geometry.bounds, (10.0, 0.0, 13.0, 2.0))
