"""Tests of the invented demo scenario (climwidgets/demo.py).

The files are generated once per session on the coarse "test" size (the same scenario
on a 0.25° grid) and read back with plain xarray: the loader is not used here.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest
import scipy.stats
import shapely
import xarray as xr
from shapely.geometry import shape
from shapely.geometry.polygon import orient

from climwidgets import demo
from climwidgets.errors import InputError, ParameterError

# "test" (0.25°) keeps this file fast; CLIMWIDGETS_DEMO_SIZE=full checks the real grids
SIZE = os.environ.get("CLIMWIDGETS_DEMO_SIZE", "test")
NOLEAP_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


@pytest.fixture(scope="module")
def paths(tmp_path_factory):
    return demo.generate(tmp_path_factory.mktemp("demo"), quiet=True, size=SIZE)


@pytest.fixture(scope="module")
def ds(paths):
    out = {k: xr.open_dataset(p) for k, p in paths.items() if p.suffix == ".nc"}
    yield out
    for d in out.values():
        d.close()


@pytest.fixture(scope="module")
def annual(ds):
    """Mean annual total (mm) per cell from the monthly file."""
    pr = ds["monthly"]["pr"]
    return pr.groupby("time.year").sum().mean("year")


@pytest.fixture(scope="module")
def basins(paths):
    gj = json.loads(paths["basins"].read_text())
    return {f["properties"]["name"]: f for f in gj["features"]}


def _in_basin(feature, grid):
    lon2, lat2 = np.meshgrid(grid.lon.values, grid.lat.values)
    inside = shapely.contains_xy(shape(feature["geometry"]), lon2, lat2)
    return xr.DataArray(inside, dims=("lat", "lon"), coords={"lat": grid.lat, "lon": grid.lon})


def _basin_mean(field, feature):
    mask = _in_basin(feature, field)
    assert int(mask.sum()) >= 2, f"{feature['properties']['name']} covers too few cells"
    return float(field.where(mask).mean())


def _by_side(basins, side):
    return next(f for f in basins.values() if f["properties"]["side"] == side)


def _area_mean(field):
    w = np.cos(np.deg2rad(field.lat))
    return field.weighted(w).mean(("lat", "lon"))


# ----------------------------------------------------------------------------- files
def test_returns_every_file(paths):
    assert set(paths) == {"daily", "monthly", "coarse_monthly", "elevation", "gev", "basins", "scenario"}
    assert all(isinstance(p, Path) and p.is_file() for p in paths.values())


def test_daily_file_is_cf(ds):
    d = ds["daily"]
    pr = d["pr"]
    assert pr.dims == ("time", "lat", "lon") and pr.dtype == np.float32
    assert pr.attrs["units"] == "kg m-2 s-1"
    assert pr.attrs["standard_name"] == "precipitation_flux"
    assert pr.attrs["cell_methods"] == "time: mean"
    # on disk: time-chunked spatial tiles, zlib compressed
    chunks = pr.encoding["chunksizes"]
    assert chunks[0] < d.sizes["time"] and (chunks[1] < d.sizes["lat"] or chunks[2] < d.sizes["lon"])
    assert pr.encoding["zlib"] is True
    assert d.time.encoding["calendar"] == "standard"
    assert str(d.time.values[0])[:10] == "1981-01-01" and str(d.time.values[-1])[:10] == "2020-12-31"
    assert d.sizes["time"] == 14610  # 40 years, 10 of them leap years
    for name in ("time", "lat", "lon"):
        bnds = d[d[name].attrs["bounds"]]
        assert bnds.shape == (d.sizes[name], 2)
    np.testing.assert_allclose(d.lat_bnds[:, 1] - d.lat_bnds[:, 0], demo.SIZES[SIZE].res)
    assert (np.diff(d.lat) > 0).all() and (d.lon >= -180).all() and (d.lon < 180).all()


@pytest.mark.parametrize("key", ["daily", "monthly", "coarse_monthly", "elevation", "gev"])
def test_global_attributes_say_invented(ds, key):
    attrs = ds[key].attrs
    assert attrs["Conventions"] == "CF-1.10"
    for name in ("title", "source", "history"):
        assert "invented" in attrs[name].lower() or "synthetic" in attrs[name].lower(), name


def test_monthly_and_elevation_attributes(ds):
    pr = ds["monthly"]["pr"]
    assert pr.attrs["units"] == "mm"
    assert pr.attrs["standard_name"] == "lwe_thickness_of_precipitation_amount"
    assert pr.attrs["cell_methods"] == "time: sum"
    assert ds["monthly"].sizes["time"] == 480
    elev = ds["elevation"]["elevation"]
    assert elev.attrs["standard_name"] == "surface_altitude" and elev.attrs["units"] == "m"


def test_no_nan_except_crest_rows_without_land(ds):
    for key in ("daily", "monthly", "coarse_monthly", "gev"):
        for name, var in ds[key].data_vars.items():
            if var.dtype.kind == "f":
                assert not var.isnull().any(), f"{key}:{name}"
    e = ds["elevation"]
    assert not e.elevation.isnull().any()
    # crest_lon is NaN, by design, exactly in the rows that hold no land
    np.testing.assert_array_equal(e.crest_lon.isnull().values, (e.land.sum("lon") == 0).values)


def test_sea_is_zero_elevation_and_still_wet(ds):
    e = ds["elevation"]
    land = e.land.astype(bool)
    assert (e.elevation.where(~land) == 0).sum() == (~land).sum()
    assert (e.elevation.where(land) > 0).sum() == land.sum()
    assert 0.05 < float(land.mean()) < 0.5
    annual = ds["monthly"]["pr"].groupby("time.year").sum()
    assert float(annual.where(~land).min()) > 100.0  # the sea still gets rain
    assert (ds["daily"]["pr"] >= 0).all()


# ------------------------------------------------------------------- consistency
def test_daily_totals_match_monthly_file(ds):
    # Rates × 86400 s is the day's depth in mm (1 kg m-2 of water = 1 mm).
    daily_mm = ds["daily"]["pr"].astype("float64") * 86400.0
    by_year_daily = daily_mm.groupby("time.year").sum()
    by_year_monthly = ds["monthly"]["pr"].astype("float64").groupby("time.year").sum()
    np.testing.assert_allclose(by_year_daily, by_year_monthly, rtol=2e-6, atol=1e-3)
    by_month = daily_mm.sel(time=slice("1995-01-01", "1995-12-31")).resample(time="MS").sum()
    np.testing.assert_allclose(by_month, ds["monthly"]["pr"].sel(time="1995"), rtol=2e-6, atol=1e-4)


def test_determinism(tmp_path, ds):
    again = demo.generate(tmp_path, quiet=True, size=SIZE)
    for key in ("daily", "coarse_monthly", "gev"):
        with xr.open_dataset(again[key]) as d2:
            xr.testing.assert_identical(d2.load(), ds[key].load())


def test_existing_files_are_kept_unless_forced(paths):
    before = paths["daily"].stat().st_mtime_ns
    assert demo.generate(paths["daily"].parent, quiet=True, size=SIZE) == paths
    assert paths["daily"].stat().st_mtime_ns == before


# ------------------------------------------------------------------------ scenario
def test_windward_basin_wetter_than_lee_basin(annual, basins):
    windward = _basin_mean(annual, _by_side(basins, "windward"))
    lee = _basin_mean(annual, _by_side(basins, "leeward"))
    assert windward > 1.5 * lee


def test_precipitation_rises_with_elevation_on_windward_side(ds, annual):
    e = ds["elevation"]
    west = (e.land == 1) & (e.lon < e.crest_lon)
    h = e.elevation.where(west).values.ravel()
    p = annual.where(west).values.ravel()
    ok = np.isfinite(h) & np.isfinite(p)
    assert ok.sum() >= 10
    # Spearman's rank correlation (scipy.stats) between elevation and annual total
    assert scipy.stats.spearmanr(h[ok], p[ok]).statistic > 0.8
    # rain shadow: east of the crest, land cells are drier than the windward mean
    east = (e.land == 1) & (e.lon > e.crest_lon + 0.1)
    assert float(annual.where(east).mean()) < 0.6 * float(annual.where(west).mean())


def test_summer_share_grows_north_to_south(ds, basins):
    pr = ds["monthly"]["pr"]
    ja = pr.where(pr.time.dt.month.isin([7, 8])).groupby("time.year").sum().sum("year")
    share = ja / pr.groupby("time.year").sum().sum("year")
    south = _basin_mean(share, _by_side(basins, "south"))
    # the southern basin has the largest share of all, twice that of the windward basin
    # further north (the lee basin's share is raised by its rain shadow on winter storms)
    others = [_basin_mean(share, f) for f in basins.values() if f["properties"]["side"] != "south"]
    assert south > max(others)
    assert south > 2 * _basin_mean(share, _by_side(basins, "windward"))
    land = ds["elevation"].land == 1
    rows = share.where(land).mean("lon").dropna("lat")
    assert float(rows.isel(lat=0)) > 2 * float(rows.isel(lat=-1))  # southern vs northern land row


def test_notable_years_stand_out(ds, paths):
    meta = json.loads(paths["scenario"].read_text())
    domain = _area_mean(ds["monthly"]["pr"].groupby("time.year").sum())
    pct = 100 * domain / domain.mean()
    for year, factor in demo.NOTABLE_YEARS.items():
        recorded = meta["notable_years"][str(year)]["domain_total_percent_of_mean"]
        assert float(pct.sel(year=year)) == pytest.approx(recorded, abs=0.1)
        assert (recorded > 120) if factor > 1 else (recorded < 80)
    assert "notable_years" in ds["daily"].attrs


# ----------------------------------------------------------------------- coarse product
def test_coarse_product_has_documented_bias(ds, paths):
    c = ds["coarse_monthly"]
    assert c.time.encoding["calendar"] == "noleap"
    assert c.sizes["time"] == 480 and c.pr.attrs["units"] == "kg m-2 s-1"
    np.testing.assert_allclose(c.lat_bnds[:, 1] - c.lat_bnds[:, 0], demo.SIZES[SIZE].coarse_res)
    # noleap month lengths: a February is 28 days long, also in 1984 and 2000
    ndays = xr.DataArray(NOLEAP_DAYS[c.time.dt.month.values - 1], dims="time", coords={"time": c.time})
    coarse_mm = c.pr.astype("float64") * 86400.0 * ndays
    truth = ds["monthly"]["pr"].astype("float64")
    factor = xr.DataArray(
        [demo.COARSE_BIAS[m] for m in truth.time.dt.month.values], dims="time", coords={"time": truth.time}
    )
    t_dom = _area_mean(truth).values
    c_dom = _area_mean(coarse_mm).values
    expected = float((_area_mean(truth * factor).values).sum() / t_dom.sum())
    ratio = float(c_dom.sum() / t_dom.sum())
    # same domain on both grids, conservative averaging: only the edge smoothing may move it
    assert ratio == pytest.approx(expected, rel=0.005)
    meta = json.loads(paths["scenario"].read_text())
    assert 100 * (ratio - 1) == pytest.approx(meta["coarse_annual_mean_bias_percent"], abs=0.05)
    months = truth.time.dt.month.values
    winter = np.isin(months, (11, 12, 1, 2, 3))
    summer = np.isin(months, (6, 7, 8))
    assert c_dom[winter].sum() / t_dom[winter].sum() == pytest.approx(1.08, rel=0.005)
    assert c_dom[summer].sum() / t_dom[summer].sum() == pytest.approx(0.95, rel=0.005)
    feb84 = (months == 2) & (truth.time.dt.year.values == 1984)
    assert c_dom[feb84].sum() / t_dom[feb84].sum() == pytest.approx(1.08, rel=0.01)


# ------------------------------------------------------------------------- extremes
def test_inserted_storm_is_each_years_largest_day(ds):
    g = ds["gev"]
    daily_mm = ds["daily"]["pr"].astype("float64") * 86400.0
    amax = daily_mm.groupby("time.year").max()
    np.testing.assert_allclose(amax.values, g.annual_max.values, rtol=1e-6)
    storm = daily_mm.sel(time=g.storm_date.values)
    np.testing.assert_allclose(storm.values, g.annual_max.values, rtol=1e-6)
    assert (g.storm_date.dt.month.isin([11, 12, 1, 2, 3])).all()


def test_annual_maxima_follow_the_recorded_gev(ds):
    g = ds["gev"]
    k = demo.GEV_SHAPE
    assert (g["shape"] == k).all()
    assert float(g["scale"].min()) > 0 and float(g["loc"].max()) > 1.5 * float(g["loc"].min())
    # Each cell's 40 maxima are independent draws of GEV(loc, scale, k); cells are
    # correlated within a year (one storm), years are independent.  So the fraction of
    # cells below the GEV quantile x_q, taken year by year, averages q with a standard
    # error measured from its spread across years.  scipy.stats.genextreme's c has the
    # same sign as Hosking's k (scipy docs; Hosking 1990).
    z = (g.annual_max - g["loc"]) / g["scale"]
    for q in (0.05, 0.25, 0.5, 0.75, 0.95):
        below = (z <= scipy.stats.genextreme.ppf(q, c=k)).mean(("lat", "lon")).values
        se = below.std(ddof=1) / np.sqrt(below.size)
        assert abs(below.mean() - q) < 4 * se + 0.01, q


# ------------------------------------------------------------------------------ basins
def test_committed_basins_match_generated(paths):
    committed = Path(demo.__file__).resolve().parent.parent / "demo_grids" / "basins.geojson"
    assert json.loads(committed.read_text()) == json.loads(paths["basins"].read_text())


def test_basins_are_valid_polygons_on_the_island(basins, ds):
    assert len(basins) >= 3
    assert {"windward", "crest", "leeward", "south"} <= {f["properties"]["side"] for f in basins.values()}
    e = ds["elevation"]
    for name, f in basins.items():
        poly = shape(f["geometry"])
        assert poly.is_valid and poly.area > 0, name
        assert orient(poly, 1.0).exterior.coords[:] == poly.exterior.coords[:], name  # RFC 7946 right-hand
        lon, lat = np.array(poly.exterior.coords).T
        assert demo._terrain(lat, lon)[1].diagonal().all(), name  # every vertex on land
        assert bool(e.land.where(_in_basin(f, e)).fillna(1).all()), name
    crest = _by_side(basins, "crest")
    lons = np.array(shape(crest["geometry"]).exterior.coords)[:, 0]
    rows = e.crest_lon.sel(lat=slice(*shape(crest["geometry"]).bounds[1::2]))
    assert lons.min() < float(rows.min()) and lons.max() > float(rows.max())


# ------------------------------------------------------------------------ interface
def test_bad_size_is_an_input_error(tmp_path):
    with pytest.raises(ParameterError) as err:
        demo.generate(tmp_path, size="huge")
    assert isinstance(err.value, InputError)
    msg = str(err.value)
    assert "size" in msg and "'full'" in msg and "Fix:" in msg


def test_main_prints_paths(paths, capsys):
    assert demo.main(["--dir", str(paths["daily"].parent), "--size", SIZE, "--quiet"]) == 0
    out = capsys.readouterr().out.splitlines()
    assert dict(line.split("\t") for line in out) == {k: str(p) for k, p in paths.items()}


def test_default_directory_in_checkout():
    assert demo.default_directory() == Path(demo.__file__).resolve().parent.parent / "demo_grids" / "generated"
