"""The "Ensemble member" menu of every widget (climwidgets/widgets/members.py, base.py).

Each widget is given a small three-member ensemble.  References, per widget:

* a member chosen gives the numbers of the same widget given that member alone;
* "ensemble mean" of a quantity linear in the data (annual normal, mean annual total,
  difference from normal, a basin mean) gives the numbers of the widget given
  ``pr.mean("member")``;
* "ensemble mean" and "spread between members" of a statistic that is not linear (a
  seasonal share, a return level, an ETCCDI index) are numpy's mean and peak-to-peak
  (highest minus lowest) of the per-member numbers, each member computed alone with the
  public function.
"""

from __future__ import annotations

import io
import json

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw

from ._data import basins, check_every_export, download_links, monthly_pr

pytest.importorskip("ipympl")

MEMBERS = ["m1", "m2", "m3"]


def _stack(runs):
    out = xr.concat(runs, dim="member").assign_coords(member=MEMBERS)
    out.attrs, out.name = dict(runs[0].attrs), runs[0].name
    return out


@pytest.fixture(scope="module")
def monthly():
    # different weather per member, and a different level, so shares and totals differ
    with xr.set_options(keep_attrs=True):  # the units stay through the scaling (xarray 2025.1 drops them)
        return _stack([f * monthly_pr(seed=s) for s, f in ((0, 1.0), (1, 0.8), (2, 1.25))])


def _alone(pr, member):
    return pr.sel(member=member, drop=True).assign_attrs(pr.attrs)


def _mean(pr):
    return pr.mean("member").assign_attrs(pr.attrs)


def _choose(w, choice):
    w.member.value = choice
    w.wait()
    assert w.error is None, w.message.value


def _exports_carry(w, tag):
    """Every export button works on the member view, and every file name carries ``tag``."""
    exported = check_every_export(w)
    names = [n for files in exported.values() for n in files]
    assert names and all(tag in n for n in names), names


def _frames_close(a, b, rtol=1e-9):
    assert list(a.columns) == list(b.columns) and list(a.index) == list(b.index)
    np.testing.assert_allclose(
        a.select_dtypes("number").to_numpy(float), b.select_dtypes("number").to_numpy(float), rtol=rtol, equal_nan=True
    )


def test_no_member_dimension_no_menu(tmp_path):
    w = cw.SeasonalShareWidget(monthly_pr(), basins(), export_dir=tmp_path)
    w.wait()
    assert w.member is None and w.member_choice is None
    assert "member" not in w.export_tag() and "Ensemble member" not in w.table_html.value


def test_two_member_dimensions_are_refused_plainly(monthly, tmp_path):
    from climwidgets.errors import ParameterError

    both = monthly.expand_dims(model=["x", "y"])
    with pytest.raises(ParameterError, match="several member-like dimensions"):
        cw.SeasonalShareWidget(both, basins(), export_dir=tmp_path)


def test_seasonal_share(monthly, tmp_path):
    w = cw.SeasonalShareWidget(monthly, basins(), export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    assert w.controls.children[0] is w.member
    assert w.member.description == "Ensemble member"
    assert [v for _, v in w.member.options] == MEMBERS + ["mean", "spread"]
    assert w.member.value == "mean"  # the first view
    # the share is not linear: per member first (cw.seasonal_fraction of each member alone)
    shares = np.stack([cw.seasonal_fraction(_alone(monthly, m), months=(7, 8)).values for m in MEMBERS])
    np.testing.assert_allclose(w.result["share"].values, shares.mean(axis=0), rtol=1e-9)
    per_basin = np.stack(
        [
            [float(cw.seasonal_fraction(cw.basin_mean(_alone(monthly, m), b), months=(7, 8))) for b in basins()]
            for m in MEMBERS
        ]
    )
    np.testing.assert_allclose(w.result["basin_share"].values, per_basin.mean(axis=0), rtol=1e-9)
    assert "seasonal share, ensemble mean [%]" in w.table.columns
    assert "ensemble mean" in w.map.ax.get_title() and "Ensemble member" in w.table_html.value

    _choose(w, "spread")  # highest minus lowest member, numpy's peak-to-peak
    np.testing.assert_allclose(w.result["share"].values, np.ptp(shares, axis=0), rtol=1e-9)
    np.testing.assert_allclose(w.result["basin_share"].values, np.ptp(per_basin, axis=0), rtol=1e-9)
    assert "spread between members" in w.map.ax.get_title()

    _choose(w, "m2")
    alone = cw.SeasonalShareWidget(_alone(monthly, "m2"), basins(), export_dir=tmp_path)
    alone.wait()
    xr.testing.assert_allclose(w.result["share"], alone.result["share"])
    _frames_close(w.table, alone.table)

    # another season, then back to the mean: the mean's numbers follow the season
    w.first.value, w.last.value = 11, 3
    w.wait()
    _choose(w, "mean")
    shares = np.stack([cw.seasonal_fraction(_alone(monthly, m), months=(11, 12, 1, 2, 3)).values for m in MEMBERS])
    np.testing.assert_allclose(w.result["share"].values, shares.mean(axis=0), rtol=1e-9)


def test_exports_name_the_choice(monthly, tmp_path):
    w = cw.SeasonalShareWidget(monthly, basins(), export_dir=tmp_path)
    w.wait()
    w.save_copies = False
    _choose(w, "m3")
    assert "member-m3" in w.export_name(None, "csv")
    w.exports.children[0].click()  # Table as CSV
    links = download_links(w)
    name = next(n for n in links if n.endswith(".csv"))
    assert "member-m3" in name
    meta = json.loads(links[name + "-metadata.json"])
    assert meta["parameters"]["ensemble_member"] == "ensemble member m3"
    _choose(w, "spread")
    w.exports.children[0].click()
    links = download_links(w)
    name = next(n for n in links if n.endswith(".csv"))
    assert "ensemble-spread" in name
    meta = json.loads(links[name + "-metadata.json"])
    assert meta["parameters"]["ensemble_member"].startswith("spread between members of 3 members")
    table = pd.read_csv(io.BytesIO(links[name]))
    assert len(table) == 2


def test_basin_summary_mean_is_the_summary_of_the_mean_for_linear_numbers(monthly, tmp_path):
    w = cw.BasinSummaryWidget(monthly, basins(), baseline=(2001, 2012), export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    of_mean = cw.BasinSummaryWidget(_mean(monthly), basins(), baseline=(2001, 2012), export_dir=tmp_path)
    of_mean.wait()
    # annual normals, mean totals and volumes are linear in the data: both orders agree
    xr.testing.assert_allclose(w.result["normal_map"], of_mean.result["normal_map"])
    for col in ("annual_mean_mm", "normal_annual_mm", "volume_per_year_m3"):
        np.testing.assert_allclose(w.result["summary"][col], of_mean.result["summary"][col], rtol=1e-9)
    _choose(w, "m1")
    alone = cw.BasinSummaryWidget(_alone(monthly, "m1"), basins(), baseline=(2001, 2012), export_dir=tmp_path)
    alone.wait()
    _frames_close(w.table, alone.table)
    pd.testing.assert_frame_equal(w.result["scenario"], alone.result["scenario"], check_like=True)
    _exports_carry(w, "member-m1")


def test_anomaly(monthly, tmp_path):
    w = cw.AnomalyWidget(monthly, basins(), baseline=(2002, 2011), export_dir=tmp_path)
    w.wait()
    w.kind.value = "absolute"  # difference from normal: linear in the data
    w.wait()
    assert w.error is None, w.message.value
    of_mean = cw.AnomalyWidget(_mean(monthly), basins(), baseline=(2002, 2011), export_dir=tmp_path)
    of_mean.kind.value = "absolute"
    of_mean.wait()
    np.testing.assert_allclose(w.result.values, of_mean.result.values, rtol=1e-9, atol=1e-9)
    np.testing.assert_allclose(w.basin_series.to_numpy(), of_mean.basin_series.to_numpy(), rtol=1e-9, atol=1e-9)
    w.kind.value = "spi"
    w.wait()
    _choose(w, "m3")
    alone = cw.AnomalyWidget(_alone(monthly, "m3"), basins(), baseline=(2002, 2011), export_dir=tmp_path)
    alone.kind.value = "spi"
    alone.wait()
    np.testing.assert_allclose(w.result.values, alone.result.values, rtol=1e-9, equal_nan=True)
    pd.testing.assert_frame_equal(w.table, alone.table)
    assert "SPI class" in w.table.columns
    _choose(w, "mean")  # SPI classes belong to one member's SPI: not shown for a summary
    assert "SPI class" not in w.table.columns
    _choose(w, "spread")  # a spread is never negative: sequential colours from zero, not centred on 0
    assert w.map.mesh.climwidgets_kind == "total" and w.map.mesh.get_clim()[0] == 0.0
    _exports_carry(w, "ensemble-spread")


def test_basin_drawer(monthly, tmp_path):
    field = monthly.mean("time").assign_attrs(units="mm")
    w = cw.BasinDrawer(field, basins(), export_dir=tmp_path)
    w.wait()
    assert w.error is None and w.member is not None
    of_mean = cw.BasinDrawer(field.mean("member").assign_attrs(units="mm"), basins(), export_dir=tmp_path)
    of_mean.wait()
    pd.testing.assert_frame_equal(w.table, of_mean.table)
    _choose(w, "spread")
    means = np.stack([[float(cw.basin_mean(field.sel(member=m), b)) for b in basins()] for m in MEMBERS])
    np.testing.assert_allclose(w.table["mean [mm]"], np.ptp(means, axis=0), rtol=1e-9)
    np.testing.assert_allclose(w.map.field.values, np.ptp(field.values, axis=0), rtol=1e-12)
    _exports_carry(w, "ensemble-spread")


def _daily_ens():
    from .test_extremes import _pr

    return _stack([_pr(years=(2001, 2010), seed=s) for s in (2, 3, 4)])


BASIN = cw.Basin.from_vertices([(40.0, 20.0), (40.5, 20.0), (40.5, 20.5), (40.0, 20.5)], name="upper")


def test_extremes(tmp_path):
    pr = _daily_ens()
    w = cw.ExtremesWidget(pr, basins=[BASIN], n_boot=50, export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    from climwidgets.widgets.extremes import PERIODS

    # return levels are not linear: each member's levels (cw.return_levels), then numpy's mean
    levels = np.stack(
        [
            cw.return_levels(
                cw.annual_maxima(_alone(pr, m), year_start=1, duration_days=1), periods=PERIODS, ci=0.9, n_boot=50
            )["estimate"].values
            for m in MEMBERS
        ]
    )
    np.testing.assert_allclose(w.levels["estimate"].values, levels.mean(axis=0), rtol=1e-9)
    _choose(w, "m2")
    alone = cw.ExtremesWidget(_alone(pr, "m2"), basins=[BASIN], n_boot=50, export_dir=tmp_path)
    alone.wait()
    xr.testing.assert_allclose(w.levels, alone.levels)
    _frames_close(w.table, alone.table)
    w.delta_t.value = 2.0  # the warming what-if redraws the member's depths
    alone.delta_t.value = 2.0
    _frames_close(w.table, alone.table)
    assert "member-m2" in w.export_name("basin_return_levels", "csv")
    # a basin joining later, on the ensemble mean: the kept basin series stay per member
    w.delta_t.value = 0.0
    _choose(w, "mean")
    lower = cw.Basin.from_vertices([(40.0, 20.25), (40.75, 20.25), (40.75, 20.75), (40.0, 20.75)], name="lower")
    w.basin_set.add(lower)
    w.wait()
    both = cw.ExtremesWidget(pr, basins=[BASIN, lower], n_boot=50, export_dir=tmp_path)
    both.wait()
    _frames_close(w.table, both.table)
    _exports_carry(w, "ensemble-mean")


def test_indices(tmp_path):
    from ..analyses.test_indices import BOX, _daily

    pr = _stack([_daily(years=(1991, 1996), seed=s) for s in (1, 2, 3)])
    w = cw.IndicesWidget(pr, basins=[BOX], export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    from climwidgets.analyses.indices import gridded_indices, index_map

    per = np.stack(
        [
            index_map(gridded_indices(_alone(pr, m), base_period=None, thresholds=(25,)), "PRCPTOT").values
            for m in MEMBERS
        ]
    )
    np.testing.assert_allclose(w.result["map"].values, per.mean(axis=0), rtol=1e-9)
    _choose(w, "spread")
    np.testing.assert_allclose(w.result["map"].values, np.ptp(per, axis=0), rtol=1e-9)
    _choose(w, "m1")
    alone = cw.IndicesWidget(_alone(pr, "m1"), basins=[BOX], export_dir=tmp_path)
    alone.wait()
    np.testing.assert_allclose(w.result["map"].values, alone.result["map"].values, rtol=1e-9)
    _frames_close(w.table, alone.table)
    # the indices CSV holds the stored names (report.indices_section), not the shown table:
    # only the file names are checked here
    w.save_copies = False
    for button in w.exports.children:
        button.click()
        assert w.error is None, w.message.value
        assert all("member-m1" in n for n in download_links(w)), button.description


def test_orographic(tmp_path):
    from .test_orographic import _scene

    runs, elev = zip(*[_scene(seed=s) for s in (4, 5, 6)])
    pr = _stack(list(runs))
    w = cw.OrographicContrastWidget(pr, elev[0], n_boot=50, export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    of_mean = cw.OrographicContrastWidget(_mean(pr), elev[0], n_boot=50, export_dir=tmp_path)
    of_mean.wait()
    # the mean annual total and the band means are linear in the data
    xr.testing.assert_allclose(w._mean, of_mean._mean)
    for var in ("windward_mean", "leeward_mean"):
        np.testing.assert_allclose(w.result[var].values, of_mean.result[var].values, rtol=1e-9)
    _choose(w, "m3")
    alone = cw.OrographicContrastWidget(_alone(pr, "m3"), elev[0], n_boot=50, export_dir=tmp_path)
    alone.wait()
    xr.testing.assert_allclose(w.result, alone.result)
    _frames_close(w.table, alone.table)
    _exports_carry(w, "member-m3")


def test_comparison(tmp_path):
    from .test_comparison import _product

    ens = _stack([_product(1.0, seed=s, factor=f) for s, f in ((2, 1.1), (5, 0.9), (6, 1.0))])
    gauge = _product(0.5, seed=1)
    w = cw.ComparisonWidget({"gauge": gauge, "model": ens}, export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    assert w.member is not None
    _choose(w, "m2")
    alone = cw.ComparisonWidget({"gauge": gauge, "model": _alone(ens, "m2")}, export_dir=tmp_path)
    alone.wait()
    xr.testing.assert_allclose(w.result, alone.result)
    _frames_close(w.basin_table, alone.basin_table)
    _exports_carry(w, "member-m2")
    _choose(w, "mean")
    tables = [
        cw.products_basin_table(
            {"gauge": gauge, "model": _alone(ens, m)}, [cw.geo.basinset.whole_grid_basin(alone._aligned["gauge"])]
        )
        for m in MEMBERS
    ]
    np.testing.assert_allclose(
        w.basin_table["annual_mean_mm"].to_numpy(),
        np.mean([t["annual_mean_mm"].to_numpy() for t in tables], axis=0),
        rtol=1e-9,
    )


@pytest.fixture(scope="module")
def demo_ensemble(tmp_path_factory):
    from climwidgets import demo

    # the same folder as the session's demo_files fixture, so the demo is generated once
    paths = demo.generate(tmp_path_factory.getbasetemp() / "cw_demo_test", quiet=True, size="test")
    return paths | demo.generate_ensemble(paths["monthly"].parent, quiet=True, size="test")


def test_demo_ensemble_file_through_the_summary_and_every_export(demo_ensemble, tmp_path):
    from climwidgets.demo_ensemble import MEMBERS

    pr = cw.open_precip(demo_ensemble["ensemble_historical"])
    w = cw.BasinSummaryWidget(pr, cw.load_basins(demo_ensemble["basins"]), baseline=(1981, 2010), export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    assert [v for _, v in w.member.options] == list(MEMBERS) + ["mean", "spread"]
    exported = check_every_export(w)
    names = [n for files in exported.values() for n in files]
    assert names and all("ensemble-mean" in n for n in names)
    html_report = next(v for files in exported.values() for n, v in files.items() if n.endswith(".html"))
    assert b"Basin precipitation summary (ensemble mean)" in html_report
    csv = exported["Table as CSV"]
    meta = json.loads(next(v for n, v in csv.items() if n.endswith("-metadata.json")))
    assert meta["parameters"]["ensemble_member"].startswith("ensemble mean of 4 members")
    # the member bias of the recipe: m1 is 10 % wetter than the demo, m2 8 % drier (normals are linear)
    _choose(w, "m1")
    wet = w.result["summary"]["normal_annual_mm"]
    _choose(w, "m2")
    np.testing.assert_allclose(wet / w.result["summary"]["normal_annual_mm"], 1.10 / 0.92, rtol=1e-5)
