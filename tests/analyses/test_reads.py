"""One read of the data: the basin summary widget, the summary job and the report each read
every stored chunk exactly once on their first compute (the technique of
tests/compute/test_bundle.py: count the reads through whichever reader the loader uses)."""

import json

import numpy as np

import pytest

import climwidgets as cw
from climwidgets import cache
from climwidgets.io import chunkreader, loader  # noqa: F401  (the fixture patches them)

from ..compute.test_bundle import _write, counted_reads  # noqa: F401  (a fixture)

BASINS = [
    cw.Basin.from_vertices([(0.2, 0.2), (2.6, 0.4), (1.5, 2.7)], name="first"),
    cw.Basin.from_vertices([(2.2, 1.1), (3.9, 1.0), (3.8, 2.9), (2.4, 2.8)], name="second"),
]


def _open(path):
    return cw.open_precip(path, chunks={"time": 90}, validate=False)


@pytest.fixture
def data(tmp_path):
    cache.clear()
    path = _write(tmp_path / "d.nc", years=3)
    yield path, len(_open(path).chunks[0])
    cache.clear()


def test_summary_widget_reads_each_chunk_once(data, counted_reads):  # noqa: F811
    from climwidgets.widgets.summary import BasinSummaryWidget

    path, n_chunks = data
    pr = _open(path)
    counted_reads.clear()
    w = BasinSummaryWidget(pr, BASINS, baseline=(2001, 2003), export_dir="unused")
    w.wait()
    assert w.error is None, w.message.value
    assert len(counted_reads) == n_chunks
    # a new season and a new basin read nothing more: the monthly totals are kept
    w.first.value, w.last.value = 6, 8
    w.wait()
    w.basin_set.add(cw.Basin.from_vertices([(0.5, 1.5), (1.5, 1.5), (1.0, 2.5)], name="third"))
    w.wait()
    assert list(w.result["summary"].index) == ["first", "second", "third"]
    assert len(counted_reads) == n_chunks


def test_summary_job_reads_each_chunk_once(data, counted_reads, tmp_path, monkeypatch):  # noqa: F811
    from climwidgets import jobs

    path, n_chunks = data
    monkeypatch.setattr(jobs, "_open", lambda d, var=None: _open(d))
    basins = tmp_path / "b.geojson"
    basins.write_text(json.dumps({"type": "FeatureCollection", "features": [b.to_geojson() for b in BASINS]}))
    counted_reads.clear()
    jobs.run_summary(path, basins, baseline=(2001, 2003), out_dir=tmp_path / "out", figures=False)
    assert len(counted_reads) == n_chunks


def test_report_reads_each_chunk_once(data, counted_reads):  # noqa: F811
    from climwidgets.report.content import build_report_content

    path, n_chunks = data
    pr = _open(path)
    counted_reads.clear()
    content = build_report_content(pr, BASINS, baseline=(2001, 2003), scenario_percent=5.0)
    assert len(counted_reads) == n_chunks
    assert list(content.table.index) == ["first", "second"] and content.what_if is not None


def test_bundle_with_indices_reads_each_chunk_once(data, counted_reads):  # noqa: F811
    """The ETCCDI indices ride in the same compute as the climatology (fused monthly pass,
    annual maxima) and the basin index table: still one read of every stored chunk."""
    from climwidgets.analyses import run
    from climwidgets.analyses.indices import basin_index_table, gridded_indices
    from climwidgets.compute.bundle import climatology_bundle

    path, n_chunks = data
    pr = _open(path)
    counted_reads.clear()
    names = ("PRCPTOT", "SDII", "CDD", "CWD", "R10mm", "R95pTOT", "Rx1day", "Rx5day")
    ds = climatology_bundle(pr, months=(7, 8), baseline=(2001, 2003), indices=names)
    ind = gridded_indices(
        None,
        indices=ds[[f"index_{n}" for n in names]].rename({f"index_{n}": n for n in names}).rename(index_year="year"),
    )
    table = basin_index_table(ind, BASINS, "PRCPTOT")
    bundle, table = run.compute(ds, table)
    assert len(counted_reads) == n_chunks
    # the same numbers as the indices on their own
    alone = cw.precip_indices(_open(path), names=names, base_period=None).compute()
    for n in names:
        np.testing.assert_allclose(bundle[f"index_{n}"].values, alone[n].values, rtol=1e-12, equal_nan=True)
    assert table["index_mean"].notnull().all()
