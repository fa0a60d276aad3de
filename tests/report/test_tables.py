"""CSV export: plain table + metadata file, units kept in column names, cautions, formula guard, atomic writes."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import climwidgets as cw
from climwidgets.errors import InputError, ParameterError
from climwidgets.report import tables as tmod
from climwidgets.report._provenance import describe_input
from climwidgets.report.tables import csv_files, metadata_path, read_csv, read_metadata, to_csv


def _summary():
    t = pd.DataFrame(
        {
            "basin": ["Upper Fern", "Lower Fern"],
            "area_km2": [120.5, 88.25],
            "annual_mean_mm": [1450.0, 980.5],
            "seasonal_share_1": [0.31, 0.27],
            "volume_per_year_m3": [1.747e8, 8.653e7],
        }
    ).set_index("basin")
    t.attrs.update(months=[7, 8], baseline=[1991, 2020], note="planning-level figures from gridded data")
    return t


def _header(path):
    """The metadata as the old '# ' lines, to keep the checks readable."""
    meta = read_metadata(path)
    lines = [meta["tool"] + ": " + meta["title"], "written: " + meta["written"]]
    lines += ["input: " + i for i in meta["inputs_in_words"]]
    lines += [f"parameter: {k} = {v}" for k, v in meta["parameters_in_words"].items()]
    lines += ["note: " + n for n in meta["notes"]] + ["caution: " + c for c in meta["cautions"]]
    return ["# " + line for line in lines]


def test_header_then_table_round_trips(tmp_path):
    grid = tmp_path / "grid.nc"
    grid.write_bytes(b"abc")
    path = to_csv(_summary(), tmp_path / "summary.csv", provenance={"inputs": [grid], "parameters": {"year_start": 10}})
    head = _header(path)
    assert head[0].startswith(f"# climwidgets {cw.__version__}")
    assert head[1].startswith("# written: ")
    # SHA-256 of the three bytes "abc": the FIPS 180-2 example message (NIST), value from memory
    assert any("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" in h for h in head)
    assert "# parameter: months = 7, 8" in head and "# parameter: baseline = 1991, 2020" in head
    assert "# parameter: year_start = 10" in head
    assert any(h.startswith("# note: planning-level") for h in head)
    back = pd.read_csv(path, index_col="basin")  # a plain pandas read
    assert list(back.columns) == ["area_km2", "annual_mean_mm", "seasonal_share_1", "volume_per_year_m3"]
    pd.testing.assert_frame_equal(back, _summary(), check_exact=True)


def test_volumes_and_design_depths_get_cautions_plain_tables_do_not(tmp_path):
    head = _header(to_csv(_summary(), tmp_path / "a.csv"))
    cautions = [h for h in head if h.startswith("# caution:")]
    assert cautions and any("jurisdiction" in c for c in cautions)
    depths = pd.DataFrame({"period_years": [10, 100], "estimate_mm": [120.0, 210.0]})
    head = _header(to_csv(depths, tmp_path / "b.csv"))
    assert sum(h.startswith("# caution:") for h in head) == len(cw.DESIGN_DEPTH_CAUTIONS)
    plain = pd.DataFrame({"month": [1, 2], "normal_mm": [80.0, 70.0]})
    head = _header(to_csv(plain, tmp_path / "c.csv"))
    assert not any(h.startswith("# caution:") for h in head)
    assert (tmp_path / "c.csv").read_text().splitlines()[0] == "month,normal_mm"  # RangeIndex not written


def test_text_cannot_break_the_header_or_run_as_a_formula(tmp_path):
    t = pd.DataFrame({"basin": ["=HYPERLINK(1)", "a\n# b"], "annual_mean_mm": [1.0, 2.0]}).set_index("basin")
    path = to_csv(t, tmp_path / "x.csv", provenance={"notes": ["line one\nline two"]})
    head = _header(path)
    assert "# note: line one line two" in head
    back = read_csv(path, index_col="basin")
    assert list(back.index) == ["'=HYPERLINK(1)", "a\n# b"]  # '#' inside a cell is kept


def test_refuses_overwrite_and_failed_write_leaves_old_file(tmp_path, monkeypatch):
    path = tmp_path / "s.csv"
    path.write_text("old")
    with pytest.raises(FileExistsError) as info:
        to_csv(_summary(), path)
    assert isinstance(info.value, InputError) and "overwrite=True" in str(info.value)
    assert path.read_text() == "old"

    def boom(self, *a, **k):
        raise OSError("disk full (simulated)")

    monkeypatch.setattr(tmod.Path, "write_bytes", boom)
    with pytest.raises(OSError, match="simulated"):
        to_csv(_summary(), path, overwrite=True)
    monkeypatch.undo()
    assert path.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["s.csv"]
    to_csv(_summary(), path, overwrite=True)
    assert read_csv(path).shape == (2, 5)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.csv", "s.csv-metadata.json"]


def test_bad_arguments(tmp_path):
    with pytest.raises(ParameterError, match="DataFrame"):
        to_csv(np.zeros(3), tmp_path / "x.csv")
    with pytest.raises(ParameterError, match="unknown keys"):
        to_csv(_summary(), tmp_path / "x.csv", provenance={"input": "typo"})
    assert list(tmp_path.iterdir()) == []


def test_plain_pandas_reads_it_and_every_setting_is_in_the_metadata(tmp_path):
    path = to_csv(_summary(), tmp_path / "s.csv", provenance={"parameters": {"year_start": 10, "how": "ratio"}})
    back = pd.read_csv(path)  # no skiprows, no comment handling
    assert list(back.columns) == ["basin", "area_km2", "annual_mean_mm", "seasonal_share_1", "volume_per_year_m3"]
    meta = read_metadata(path)
    assert metadata_path(path).name == "s.csv-metadata.json"  # W3C CSVW: append -metadata.json
    assert meta["url"] == "s.csv" and meta["index"] == ["basin"]
    assert meta["parameters"] == {"months": [7, 8], "baseline": [1991, 2020], "year_start": 10, "how": "ratio"}
    assert meta["tool"] == f"climwidgets {cw.__version__}"
    # the bytes a widget hands to the browser are the bytes on disk
    files = csv_files(_summary(), "s.csv", provenance={"parameters": {"year_start": 10, "how": "ratio"}})
    assert files["s.csv"] == path.read_bytes()


# Payloads from OWASP "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): cells
# starting with = + - @ tab or carriage return are run as formulas by spreadsheets.
_PAYLOADS = ['=HYPERLINK("http://x","y")', "+1-1", "@SUM(1+1)", "-2+3", "\t=1", "\r=1"]


def test_formula_guard_on_every_cell_index_level_and_header(tmp_path):
    n = len(_PAYLOADS)
    idx = pd.MultiIndex.from_arrays([_PAYLOADS, _PAYLOADS[::-1]], names=["=name", "@product"])
    t = pd.DataFrame({"+title": _PAYLOADS, "depth_mm": range(n)}, index=idx)
    path = to_csv(t, tmp_path / "x.csv")
    back = pd.read_csv(path, keep_default_na=False, dtype=str)
    texts = list(back.columns) + [v for col in back.columns for v in back[col] if col != "depth_mm"]
    assert len(texts) == 4 + 3 * n
    for text in texts:
        assert not text.startswith(("=", "+", "-", "@", "\t", "\r")), text
    assert list(back["'=name"]) == ["'" + p for p in _PAYLOADS]
    assert list(back["'@product"]) == ["'" + p for p in _PAYLOADS[::-1]]
    assert list(back["depth_mm"]) == [str(i) for i in range(n)]  # numbers untouched
    assert list(t.index.get_level_values(0)) == _PAYLOADS  # the caller's table is not modified


def test_several_header_rows_are_refused(tmp_path):
    t = pd.DataFrame([[1, 2]], columns=pd.MultiIndex.from_tuples([("a", "x"), ("a", "y")]))
    with pytest.raises(ParameterError, match="header rows"):
        to_csv(t, tmp_path / "x.csv")


def test_large_files_are_described_by_size_and_time(tmp_path):
    big = tmp_path / "big.nc"
    big.write_bytes(b"x" * 2048)
    rec = describe_input(big, hash_limit=1024)
    assert rec.sha256 is None and rec.size_bytes == 2048 and rec.modified.endswith("Z")
    assert "too large to checksum" in rec.summary()
