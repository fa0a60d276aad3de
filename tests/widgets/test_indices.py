"""IndicesWidget: each control gives the numbers of the public functions.

References are cw.precip_indices (checked against xclim in tests/compute/test_indices.py)
and the analyses of climwidgets.analyses.indices (checked against numpy and scipy.stats in
tests/analyses/test_indices.py), called directly with the same parameters.
"""

import numpy as np
import pytest

import climwidgets as cw
from climwidgets.analyses.indices import basin_index_table, gridded_indices, index_map
from climwidgets.errors import ParameterError

from ..analyses.test_indices import BOX, _daily

pytest.importorskip("ipympl")


@pytest.fixture(scope="module")
def setup():
    pr = _daily(years=(1991, 2002))
    w = cw.IndicesWidget(pr, basins=[BOX], export_dir="unused")
    w.wait()
    assert w.error is None, w.message.value
    return pr, w


def test_first_view_is_prcptot_over_the_record(setup):
    pr, w = setup
    ref = gridded_indices(pr, base_period=None, thresholds=(25,))
    np.testing.assert_allclose(w.result["map"].values, index_map(ref, "PRCPTOT").values)
    table = basin_index_table(ref, [BOX], "PRCPTOT").compute()
    np.testing.assert_allclose(w.table.iloc[0, 1], float(table["index_mean"].sel(basin="box")))
    assert "PRCPTOT mean [mm]" in w.table.columns
    assert w.chart.value  # the chart was drawn


def test_index_period_and_threshold(setup, tmp_path):
    pr, w = setup
    with w.quiet():
        w.index.value = "CDD"
        w.first.value = 1995
    w.refresh()
    w.wait()
    ref = gridded_indices(pr, base_period=None, thresholds=(25,))
    np.testing.assert_allclose(w.result["map"].values, index_map(ref, "CDD", (1995, 2002)).values)
    assert "CDD mean [days]" in w.table.columns
    w.threshold.value = 40
    w.wait()
    assert w.error is None, w.message.value
    assert "R40mm" in [v for _, v in w.index.options] and w.index.value == "CDD"
    w.index.value = "R40mm"
    w.wait()
    ref40 = cw.precip_indices(pr, names=("R40mm",), base_period=None)
    np.testing.assert_allclose(w.result["map"].values, ref40["R40mm"].sel(year=slice(1995, 2002)).mean("year"))
    w.layer.value = "slope"
    w.wait()
    from climwidgets.analyses.indices import index_trend_map

    ref_tr = index_trend_map(gridded_indices(pr, base_period=None, thresholds=(40,)), "R40mm", (1995, 2002))
    np.testing.assert_allclose(w.result["map"].values, ref_tr["slope_per_decade"].values)
    w.layer.value = "mean"
    w.wait()
    w.export_dir = tmp_path
    path = w.export(w._write_csv, "csv")
    assert "index_mean" in path.read_text()


def test_bad_years_and_data_are_clear(setup):
    pr, w = setup
    w.first.value = 2002
    w.wait()
    w.last.value = 1996
    w.wait()
    assert "after the last year" in w.message.value
    w.last.value = 2002
    w.wait()
    assert w.error is None
    monthly = pr.resample(time="MS").sum().assign_attrs(units="mm", step="month")
    with pytest.raises(ParameterError, match="daily"):
        cw.IndicesWidget(monthly)
