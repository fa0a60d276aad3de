"""report/_provenance.py: input descriptions, cautions and parameter text."""

import hashlib

from climwidgets.compute.warming import DESIGN_DEPTH_CAUTIONS
from climwidgets.report import _provenance as prov


def test_a_small_file_gets_its_sha256(tmp_path):
    path = tmp_path / "grid.nc"
    path.write_bytes(b"precipitation" * 1000)
    rec = prov.describe_input(path, detail="pr, mm")
    # Outside reference: hashlib (stdlib) on the same bytes.
    assert rec.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert rec.size_bytes == 13_000 and rec.kind == "file"
    assert rec.summary() == f"{path}, 13.0 kB, sha256 {rec.sha256}, pr, mm"


def test_a_file_above_the_limit_gets_its_modification_time(tmp_path):
    path = tmp_path / "big.nc"
    path.write_bytes(b"x" * 100)
    rec = prov.describe_input(path, hash_limit=10)
    assert rec.sha256 is None and rec.modified.endswith("Z")
    assert "too large to checksum" in rec.summary()


def test_a_folder_and_an_object(tmp_path):
    (tmp_path / "store.zarr").mkdir()
    (tmp_path / "store.zarr" / "0.0").write_bytes(b"abc")
    folder = prov.describe_input(tmp_path / "store.zarr")
    assert folder.kind == "folder" and folder.size_bytes == 3
    assert prov.describe_input(42).kind == "object"


def test_describe_inputs_takes_one_item_a_list_or_none(tmp_path):
    assert prov.describe_inputs(None) == []
    assert len(prov.describe_inputs("not-a-file")) == 1
    assert [r.name for r in prov.describe_inputs(["a", "b"])] == ["a", "b"]


def test_human_size():
    # Hand arithmetic: decimal units, 1 kB = 1000 bytes.
    assert prov.human_size(999) == "999 bytes"
    assert prov.human_size(1_500_000) == "1.5 MB"


def test_cautions_follow_the_columns():
    assert prov.cautions_for_columns(["station", "mean_mm"]) == ()
    assert prov.cautions_for_columns(["volume_m3"]) == prov.VOLUME_CAUTIONS
    assert prov.cautions_for_columns(["return_level_mm"]) == tuple(DESIGN_DEPTH_CAUTIONS)
    both = prov.cautions_for_columns(["return_level_mm", "volume_m3"])
    assert both == tuple(DESIGN_DEPTH_CAUTIONS) + prov.VOLUME_CAUTIONS[:1]


def test_format_value():
    assert prov.format_value(0.1 + 0.2) == "0.3"
    assert prov.format_value((7, 8)) == "7, 8"
    assert prov.format_value({"months": (6, 7), "q": 0.95}) == "months = 6, 7; q = 0.95"
