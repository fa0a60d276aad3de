"""Tests of the batch jobs (climwidgets/jobs.py) that the CLI and the headless demo run.

The demo is generated once per session at size="test" (0.25° grid).  The jobs only
orchestrate public functions, so their outputs are checked (1) against the same public
functions called directly, (2) against outside references: pyproj's geodesic basin area,
the acre-foot definition, scipy.stats.genextreme quantiles of the demo's true GEV
parameters, and (3) against a synthetic file whose totals are known by hand.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import scipy.stats
import xarray as xr

import climwidgets as cw
from climwidgets import demo, jobs
from climwidgets.errors import BasinError, InputError, ParameterError, SourceError
from climwidgets.report.tables import read_csv, read_metadata

MONTHS, BASELINE = (7, 8), (1991, 2020)


@pytest.fixture(scope="module")
def pr(demo_files):
    return cw.open_precip(demo_files["daily"], chunks=None)  # in memory: the direct checks read it often


@pytest.fixture(scope="module")
def basins(demo_files):
    return cw.Basin.from_geojson(demo_files["basins"])


@pytest.fixture(scope="module")
def summary(demo_files, tmp_path_factory):
    out = tmp_path_factory.mktemp("summary")
    messages = []
    result = jobs.run_summary(
        demo_files["daily"], demo_files["basins"], MONTHS, BASELINE, out, progress=messages.append
    )
    return result, messages


def _csv(path):
    return read_csv(path, index_col=0)


# ------------------------------------------------------------------ summary
def test_summary_writes_three_files_and_reports_progress(summary):
    result, messages = summary
    assert list(result.paths) == ["csv", "netcdf", "report"]
    assert all(p.is_file() and p.stat().st_size > 0 for p in result.paths.values())
    assert any("one pass" in m for m in messages) and any("100 %" in m for m in messages)
    html = result.paths["report"].read_text(encoding="utf-8")
    for b in demo.BASINS:
        assert b["name"] in html
    assert "Cautions" in html and result.cautions  # volumes carry the planning-level cautions


def test_summary_csv_agrees_with_basin_summary(summary, pr, basins):
    result, _ = summary
    table = _csv(result.paths["csv"])
    direct = cw.basin_summary(pr, basins, months=MONTHS, baseline=BASELINE)
    assert list(table.columns) == list(direct.columns)
    assert all(
        c.endswith(("_km2", "_mm", "_1", "_m3", "_acre_ft", "_years", "_year", "_normal")) for c in table.columns
    )  # units in the column names
    pd.testing.assert_frame_equal(table.astype(float), direct.astype(float), rtol=1e-9, check_names=False)
    meta = read_metadata(result.paths["csv"])  # the settings travel in the metadata file beside it
    assert meta["tool"].startswith("climwidgets") and any("sha256" in i for i in meta["inputs_in_words"])
    assert meta["parameters_in_words"]["baseline"] == "1991, 2020"
    assert meta["cautions"]


def test_summary_areas_and_volumes_against_outside_references(summary, basins):
    import pyproj

    table = _csv(summary[0].paths["csv"])
    geod = pyproj.Geod(ellps="WGS84")
    for b in basins:
        # pyproj geodesic area on WGS84; the grid's area is on the authalic sphere with edges
        # snapped to grid cells by coverage, so agreement within 1 % is expected
        area, _ = geod.geometry_area_perimeter(b.geometry)
        assert table.loc[b.name, "area_km2"] == pytest.approx(abs(area) / 1e6, rel=0.01)
        # acre-foot = 43 560 ft³ with the international foot 0.3048 m (definition)
        m3 = table.loc[b.name, "annual_mean_mm"] / 1000 * table.loc[b.name, "area_km2"] * 1e6
        assert table.loc[b.name, "volume_per_year_m3"] == pytest.approx(m3, rel=1e-9)
        assert table.loc[b.name, "volume_per_year_acre_ft"] == pytest.approx(m3 / (43560 * 0.3048**3), rel=1e-9)
    # the invented scenario puts the strongest summer share in the south (demo_grids/README.md)
    assert table["seasonal_share_1"].idxmax() == "Mirrowaith"


def test_summary_netcdf_holds_share_map_and_normals(summary, pr):
    with xr.open_dataset(summary[0].paths["netcdf"]) as ds:
        share = cw.seasonal_fraction(pr, months=MONTHS).drop_vars("n_years", errors="ignore")
        np.testing.assert_allclose(ds["seasonal_share"].values, share.values, rtol=1e-12)
        np.testing.assert_allclose(ds["normals"].values, cw.normals(pr, baseline=BASELINE).values, rtol=1e-12)
        assert ds["seasonal_share"].attrs["units"] == "1" and ds["normals"].attrs["units"] == "mm"
        assert ds.attrs["Conventions"].startswith("CF") and "open_precip" in ds.attrs["history"]


def test_summary_on_synthetic_file_with_hand_totals(tmp_path):
    # 2 mm/day in July-August, 1 mm/day otherwise, 1991-1993 (1992 a leap year):
    # annual totals 62*2 + 303 = 427, 428, 427 mm; seasonal share 124 / mean annual total.
    time = pd.date_range("1991-01-01", "1993-12-31", freq="D")
    lat, lon = np.array([10.25, 10.75]), np.array([-160.75, -160.25])
    values = np.where(time.month.isin([7, 8]), 2.0, 1.0)[:, None, None] * np.ones((1, 2, 2))
    da = xr.DataArray(
        values,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": lat, "lon": lon},
        name="pr",
        attrs={"units": "mm", "standard_name": "lwe_thickness_of_precipitation_amount"},
    )
    da.to_dataset().to_netcdf(tmp_path / "synthetic.nc")
    gj = {
        "type": "FeatureCollection",
        "features": [
            {
                "type": "Feature",
                "properties": {"name": "square"},
                "geometry": {
                    "type": "Polygon",
                    "coordinates": [[[-161, 10], [-160, 10], [-160, 11], [-161, 11], [-161, 10]]],
                },
            }
        ],
    }
    (tmp_path / "b.geojson").write_text(json.dumps(gj))
    result = jobs.run_summary(
        tmp_path / "synthetic.nc", tmp_path / "b.geojson", (7, 8), (1991, 1993), tmp_path / "out", figures=False
    )
    row = _csv(result.paths["csv"]).loc["square"]
    mean = (427 + 428 + 427) / 3
    assert row["annual_mean_mm"] == pytest.approx(mean, rel=1e-12)
    assert row["normal_annual_mm"] == pytest.approx(mean, rel=1e-12)
    assert row["seasonal_share_1"] == pytest.approx(124 / mean, rel=1e-12)
    assert row["latest_year"] == 1993 and row["latest_year_mm"] == pytest.approx(427, rel=1e-12)
    assert row["n_years"] == 3


def test_existing_outputs_are_refused_before_any_data_is_read(summary, tmp_path):
    out = summary[0].paths["csv"].parent
    before = {p: p.stat().st_mtime_ns for p in out.iterdir()}
    # the data path does not exist: the output check must come first
    with pytest.raises(FileExistsError) as err:
        jobs.run_summary(tmp_path / "missing.nc", tmp_path / "missing.geojson", out_dir=out)
    assert isinstance(err.value, InputError)
    assert "basin_summary.csv" in str(err.value) and "overwrite" in str(err.value)
    assert {p: p.stat().st_mtime_ns for p in out.iterdir()} == before


@pytest.mark.parametrize(
    "kwargs, words",
    [
        ({"months": (7, 13)}, ["months", "13"]),
        ({"months": (8, 7)}, ["consecutive"]),
        ({"baseline": (2020, 1991)}, ["baseline", "ends before it starts"]),
        ({"year_start": 0}, ["year_start"]),
    ],
)
def test_bad_parameters_raise_input_errors(demo_files, tmp_path, kwargs, words):
    args = dict(months=MONTHS, baseline=BASELINE, out_dir=tmp_path / "o")
    args.update(kwargs)
    with pytest.raises(ParameterError) as err:
        jobs.run_summary(demo_files["daily"], demo_files["basins"], **args)
    for w in words:
        assert w in str(err.value)
    assert not (tmp_path / "o").exists()  # nothing created for a refused job


# ------------------------------------------------------------------ basins
def test_load_basins_from_geojson_shapefile_and_errors(demo_files, tmp_path):
    import shapefile  # pyshp, a dependency

    names = [b.name for b in jobs.load_basins(demo_files["basins"])]
    assert names == [b["name"] for b in demo.BASINS]
    with shapefile.Writer(str(tmp_path / "outline"), shapeType=shapefile.POLYGON) as w:
        w.field("name", "C")
        w.poly([[[-147.9, 35.6], [-147.9, 36.2], [-147.5, 36.2], [-147.5, 35.6], [-147.9, 35.6]]])
        w.record("drawn")
    assert [b.name for b in jobs.load_basins(tmp_path / "outline.shp")] == ["drawn"]
    with pytest.raises(SourceError, match="not found"):
        jobs.load_basins(tmp_path / "nothing.geojson")
    with pytest.raises(BasinError, match="not a basin outline file"):
        jobs.load_basins(demo_files["daily"])
    (tmp_path / "bad.geojson").write_text("name,lon,lat\n")
    with pytest.raises(SourceError, match="not valid JSON"):
        jobs.load_basins(tmp_path / "bad.geojson")


# ------------------------------------------------------------------ extremes
@pytest.fixture(scope="module")
def extremes(demo_files, tmp_path_factory):
    out = tmp_path_factory.mktemp("extremes")
    return jobs.run_extremes(
        demo_files["daily"],
        demo_files["basins"],
        duration_days=1,
        periods=(2, 10, 100),
        ci=0.9,
        n_boot=100,
        out_dir=out,
    )


def test_extremes_files_agree_with_return_levels(extremes, pr, basins):
    fit = dict(periods=(2, 10, 100), ci=0.9, n_boot=100, seed=0)
    with xr.open_dataset(extremes.paths["netcdf"]) as ds:
        direct = cw.return_levels(cw.annual_maxima(pr, duration_days=1), **fit).compute()
        for v in ("estimate", "lower", "upper"):
            np.testing.assert_allclose(ds[v].values, direct[v].values, rtol=1e-9)
        assert list(ds["period"].values) == [2, 10, 100]
        assert "Planning-level" in ds.attrs["cautions"]
    table = _csv(extremes.paths["csv"])
    b = basins[0]
    areal = cw.return_levels(cw.annual_maxima(cw.basin_mean(pr, b).compute()), **fit)
    rows = table.loc[[b.name]].set_index("return_period_years")
    np.testing.assert_allclose(rows["areal_estimate_mm"].values, areal["estimate"].values, rtol=1e-9)
    np.testing.assert_allclose(rows["areal_lower_mm"].values, areal["lower"].values, rtol=1e-9)
    assert (rows["areal_lower_mm"] <= rows["areal_estimate_mm"]).all()
    assert (rows["areal_estimate_mm"] <= rows["areal_upper_mm"]).all()
    cautions = read_metadata(extremes.paths["csv"])["cautions"]
    for caution in cw.DESIGN_DEPTH_CAUTIONS:
        assert caution in cautions
    assert extremes.cautions == tuple(cw.DESIGN_DEPTH_CAUTIONS)


def test_extremes_against_the_demo_true_gev(extremes, demo_files):
    # True 10-year depths from the demo's GEV parameters with scipy.stats.genextreme
    # (c equals Hosking's k, the demo's convention).  The demo's annual maxima are one
    # 40-year sample per cell, so the fitted levels scatter around the truth; the 90 %
    # intervals should cover it in most cells (the cells' samples are correlated, so the
    # share is a noisy statistic and the bound is loose).
    with xr.open_dataset(demo_files["gev"]) as g, xr.open_dataset(extremes.paths["netcdf"]) as rl:
        true = scipy.stats.genextreme.ppf(0.9, c=g["shape"].values, loc=g["loc"].values, scale=g["scale"].values)
        e = rl.sel(period=10)
        covered = ((e["lower"].values <= true) & (true <= e["upper"].values)).mean()
        assert covered >= 0.6
        assert np.median(e["estimate"].values / true) == pytest.approx(1.0, abs=0.1)


def test_extremes_refuses_monthly_data(demo_files, tmp_path):
    with pytest.raises(InputError, match="daily or hourly"):
        jobs.run_extremes(demo_files["monthly"], out_dir=tmp_path, n_boot=100)
    with pytest.raises(ParameterError, match="return periods"):
        jobs.run_extremes(demo_files["daily"], periods=(1,), out_dir=tmp_path)
    with pytest.raises(ParameterError, match="n_boot=10"):
        jobs.run_extremes(demo_files["daily"], n_boot=10, out_dir=tmp_path)


# ------------------------------------------------------------------ compare
@pytest.fixture(scope="module")
def comparison(demo_files, tmp_path_factory):
    out = tmp_path_factory.mktemp("compare")
    data = [f"fine={demo_files['monthly']}", f"coarse={demo_files['coarse_monthly']}"]
    return jobs.run_compare(data, demo_files["basins"], months=MONTHS, out_dir=out)


def test_compare_files_agree_with_compare_and_basin_table(comparison, demo_files, basins):
    products = {
        "fine": cw.open_precip(demo_files["monthly"], chunks=None),
        "coarse": cw.open_precip(demo_files["coarse_monthly"], chunks=None),
    }
    aligned = cw.align(products)
    direct = cw.compare(aligned["fine"], aligned["coarse"]).compute()
    with xr.open_dataset(comparison.paths["netcdf"]) as ds:
        assert list(ds["product"].values) == ["coarse"] and ds.attrs["reference"] == "fine"
        for v in ("bias", "ratio", "rmse", "corr", "kge", "nse"):
            np.testing.assert_allclose(ds[v].sel(product="coarse").values, direct[v].values, rtol=1e-9, equal_nan=True)
    table = read_csv(comparison.paths["csv"], index_col=[0, 1])
    expected = cw.products_basin_table(products, basins, months=MONTHS)
    np.testing.assert_allclose(table.values, expected.values, rtol=1e-9, equal_nan=True)
    assert list(table.index) == list(expected.index)


def test_compare_product_names(demo_files, tmp_path):
    with pytest.raises(ParameterError, match="at least two"):
        jobs.run_compare([demo_files["monthly"]], out_dir=tmp_path)
    with pytest.raises(ParameterError, match="names repeat"):
        jobs.run_compare([demo_files["monthly"], demo_files["monthly"]], out_dir=tmp_path)
    assert list(jobs._product_names([f"a={demo_files['monthly']}", demo_files["coarse_monthly"]])) == [
        "a",
        "pr_coarse_monthly_noleap",
    ]


# ------------------------------------------------------------------ all outputs or none
def _small_inputs(folder):
    time = pd.date_range("1991-01-01", "1993-12-31", freq="D")
    da = xr.DataArray(
        np.ones((time.size, 2, 2)),
        dims=("time", "lat", "lon"),
        name="pr",
        coords={"time": time, "lat": [10.25, 10.75], "lon": [-160.75, -160.25]},
        attrs={"units": "mm", "standard_name": "lwe_thickness_of_precipitation_amount"},
    )
    da.to_dataset().to_netcdf(folder / "small.nc")
    gj = {
        "type": "FeatureCollection",
        "features": [
            {
                "type": "Feature",
                "properties": {"name": "square"},
                "geometry": {
                    "type": "Polygon",
                    "coordinates": [[[-161, 10], [-160, 10], [-160, 11], [-161, 11], [-161, 10]]],
                },
            }
        ],
    }
    (folder / "b.geojson").write_text(json.dumps(gj))
    return folder / "small.nc", folder / "b.geojson"


def _files(folder):
    return {p.name: p.read_bytes() for p in folder.iterdir()} if folder.exists() else {}


def _run_small(data, basins, out, **kw):
    return jobs.run_summary(data, basins, (7, 8), (1991, 1993), out, figures=False, **kw)


@pytest.mark.parametrize("failing", ["report", "netcdf"])
def test_a_job_failing_mid_way_leaves_no_partial_set_and_the_next_run_needs_no_overwrite(
    tmp_path, monkeypatch, failing
):
    from climwidgets.report import html, netcdf

    data, basins = _small_inputs(tmp_path)
    out = tmp_path / "out"

    def boom(*args, **kwargs):
        raise RuntimeError(f"the {failing} could not be made")

    with monkeypatch.context() as m:
        m.setattr(html, "write_report", boom) if failing == "report" else m.setattr(netcdf, "_write_dataset", boom)
        with pytest.raises(RuntimeError):
            _run_small(data, basins, out)
    assert _files(out) == {}  # neither the CSV nor its metadata nor the NetCDF: no partial set
    result = _run_small(data, basins, out)  # and so no --overwrite needed now
    assert sorted(_files(out)) == [
        "basin_report.html",
        "basin_summary.csv",
        "basin_summary.csv-metadata.json",
        "seasonal_share_normals.nc",
    ]
    assert all(p.is_file() for p in result.paths.values())


def test_a_failed_overwrite_leaves_the_previous_set_intact(tmp_path, monkeypatch):
    from climwidgets.report import html

    data, basins = _small_inputs(tmp_path)
    out = tmp_path / "out"
    _run_small(data, basins, out)
    before = _files(out)

    def half_then_fail(content, path, **kwargs):  # the report fails after the CSV and NetCDF are written
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(html, "write_report", half_then_fail)
    with pytest.raises(OSError) as info:
        _run_small(data, basins, out, overwrite=True)
    assert info.value.errno == 28 and isinstance(info.value, InputError)  # an OutputError: exit 2 in the CLI
    assert "disk is full" in str(info.value) and ".cw-stage" not in str(info.value)
    assert _files(out) == before  # every file of the previous set, byte for byte


def test_leftovers_of_a_killed_run_are_cleaned_and_other_files_kept(tmp_path):
    import subprocess
    import sys

    from climwidgets.atomic import _host

    data, basins = _small_inputs(tmp_path)
    out = tmp_path / "out"
    out.mkdir()
    dead = int(
        subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True).stdout
    )
    stage = out / f".cw-stage.{_host()}-{dead}.k9.part"  # a run killed while writing its set
    stage.mkdir()
    (stage / "basin_summary.csv").write_text("half")
    part = out / f".seasonal_share_normals.nc.{_host()}-{dead}.q1.part"  # a killed single write
    part.write_bytes(b"\x89HDF")
    users = [out / ".basin_summary.csv.backup", out / "notes.part", out / ".cw-stage-mine"]
    for p in users:
        p.write_text("the user's")
    _run_small(data, basins, out)
    assert not stage.exists() and not part.exists()
    assert all(p.read_text() == "the user's" for p in users)


def test_an_output_folder_that_takes_no_files_is_refused_before_the_data_are_read(tmp_path):
    from climwidgets.atomic import OutputError

    for where in ("/proc", "/proc/out"):
        with pytest.raises(OutputError) as info:
            jobs.run_summary(tmp_path / "missing.nc", tmp_path / "missing.geojson", out_dir=where)
        text = str(info.value)
        assert "/proc" in text and "does not accept new files" in text and "--out" in text
        assert "Errno" not in text


# ------------------------------------------------------------------ scenario
def _daily_runs(folder):
    """Two members' daily runs on a 2x2 grid; the future is the past times 1.1 and 0.9."""
    lat, lon = np.array([10.25, 10.75]), np.array([-160.75, -160.25])
    out = []
    for first, factors, name in ((1981, [1.0, 1.0], "hist.nc"), (2041, [1.1, 0.9], "future.nc")):
        time = pd.date_range(f"{first}-01-01", f"{first + 11}-12-31", freq="D")
        base = np.random.default_rng(5).gamma(0.6, 8.0, size=(time.size, 2, 2))  # the same weather
        da = xr.DataArray(
            base[None] * np.array(factors)[:, None, None, None],
            dims=("member", "time", "lat", "lon"),
            coords={"member": ["a", "b"], "time": time, "lat": lat, "lon": lon},
            name="pr",
            attrs={"units": "mm", "standard_name": "lwe_thickness_of_precipitation_amount"},
        )
        da.to_dataset().to_netcdf(folder / name)
        out.append(folder / name)
    _, basins = _small_inputs(folder)
    return out[0], out[1], basins


def test_scenario_job_writes_signals_depths_and_report_together(tmp_path, monkeypatch):
    from climwidgets.analyses.scenario import basin_depth_signals
    from climwidgets.compute.scenario import SCENARIO_CAUTIONS
    from climwidgets.report import scenario_section

    hist, fut, basins = _daily_runs(tmp_path)
    out = tmp_path / "out"

    def boom(*args, **kwargs):
        raise RuntimeError("the report could not be made")

    with monkeypatch.context() as m:
        m.setattr(scenario_section, "write_scenario_report", boom)
        with pytest.raises(RuntimeError):
            jobs.run_scenario(hist, fut, basins, out_dir=out)
    assert _files(out) == {}  # staged: no CSV without its report
    result = jobs.run_scenario(hist, fut, basins, out_dir=out)
    assert sorted(_files(out)) == [
        "scenario_basin_signals.csv",
        "scenario_basin_signals.csv-metadata.json",
        "scenario_design_depths.csv",
        "scenario_design_depths.csv-metadata.json",
        "scenario_report.html",
    ]
    depths = read_csv(result.paths["depths_csv"], index_col=[0, 1])
    # a future that is the past times 1.1 and 0.9: every areal return level changes by that
    # factor (L-moment GEV fits are scale-equivariant, Hosking 1990)
    np.testing.assert_allclose(depths["depth_change_1_lower"].values, -0.1, rtol=1e-6)
    np.testing.assert_allclose(depths["depth_change_1_upper"].values, 0.1, rtol=1e-6)
    ref = basin_depth_signals(
        cw.open_precip(hist), cw.open_precip(fut), cw.load_basins(basins), periods=(10, 100)
    ).compute()
    np.testing.assert_allclose(
        depths["historical_depth_mm_mean"].values,
        ref["historical_depth_mm_mean"].transpose("basin", "return_period").values.ravel(),
        rtol=1e-9,
    )
    page = result.paths["report"].read_text(encoding="utf-8")
    assert "Change in design depths" in page and "hist.nc" in page and "future.nc" in page
    assert page.index(SCENARIO_CAUTIONS[0][:30]) < page.index("<table")
    assert set(SCENARIO_CAUTIONS) <= set(result.cautions)
    with pytest.raises(InputError, match="already exist"):
        jobs.run_scenario(hist, fut, basins, out_dir=out)
    with pytest.raises(ParameterError, match="observations"):
        jobs.run_scenario(hist, fut, basins, out_dir=tmp_path / "other", method="monthly_ratio")
