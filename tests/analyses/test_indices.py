"""Index maps and basin index tables (climwidgets/analyses/indices.py).

The indices themselves are checked against xclim in tests/compute/test_indices.py; here
the basin table's mean and trend are checked against numpy and scipy.stats (Sen slope:
``scipy.stats.theilslopes``, Sen 1968; Mann-Kendall p: the two-sided test of Kendall's tau
without ties, ``scipy.stats.kendalltau``), and the basin mean against the cell-area formula.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from scipy import stats

import climwidgets as cw
from climwidgets.analyses.indices import (
    basin_index_table,
    gridded_indices,
    index_map,
    index_table,
    index_trend_map,
)
from climwidgets.analyses.meta import index_meta
from climwidgets.errors import ParameterError

BOX = cw.Basin.from_vertices([(10.0, 40.0), (11.0, 40.0), (11.0, 41.0), (10.0, 41.0)], name="box")


def _daily(years=(1991, 2010), seed=1, dask=False):
    time = pd.date_range(f"{years[0]}-01-01", f"{years[1]}-12-31", freq="D")
    lat = np.arange(39.75, 41.5, 0.5)
    lon = np.arange(9.75, 11.5, 0.5)
    rng = np.random.default_rng(seed)
    wet = rng.random((time.size, lat.size, lon.size)) < 0.35
    # wetter towards the end of the record, so the trend is not zero
    grow = 1.0 + 0.02 * (time.year.values - years[0])[:, None, None]
    data = np.where(wet, rng.gamma(0.8, 9.0, wet.shape) * grow, 0.0)
    pr = xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "day", "standard_name": "lwe_thickness_of_precipitation_amount"},
        name="pr",
    )
    return pr.chunk({"time": 365}) if dask else pr


def _cell_weights(lat):
    r = np.radians(lat)
    return np.sin(r + np.radians(0.25)) - np.sin(r - np.radians(0.25))


def test_maps_and_basin_table_against_numpy_and_scipy():
    pr = _daily()
    ind = gridded_indices(pr, names=("PRCPTOT", "CDD", "R95pTOT"), base_period=(1991, 2000), thresholds=(25,))
    assert set(ind.data_vars) == {"PRCPTOT", "CDD", "R95pTOT", "R25mm"}
    assert ind["CDD"].attrs["units"] == "d" and ind["R25mm"].attrs["label"].startswith("R25mm")
    m = index_map(ind, "PRCPTOT", period=(2001, 2010))
    np.testing.assert_allclose(m.values, ind["PRCPTOT"].sel(year=slice(2001, 2010)).mean("year").values)
    assert m.attrs["years"] == "2001-2010"
    tm = index_trend_map(ind, "PRCPTOT", period=(1991, 2010))
    cell = ind["PRCPTOT"].sel(lat=40.25, lon=10.25).values
    sen = stats.theilslopes(cell, np.arange(1991, 2011))  # scipy.stats: Sen (1968)
    np.testing.assert_allclose(float(tm["slope_per_decade"].sel(lat=40.25, lon=10.25)), 10 * sen.slope, rtol=1e-10)
    assert tm["pvalue"].attrs["units"] == "1" and 0 <= float(tm["pvalue"].max()) <= 1

    table = basin_index_table(ind, [BOX], "PRCPTOT", period=(1991, 2010)).compute()
    # the box covers the 2 x 2 cells centred at 40.25/40.75 N, 10.25/10.75 E, whole
    sub = ind["PRCPTOT"].sel(lat=[40.25, 40.75], lon=[10.25, 10.75])
    w = xr.DataArray(_cell_weights(sub.lat.values), dims="lat", coords={"lat": sub.lat})
    series = ((sub * w).sum(("lat", "lon")) / (2 * w.sum())).values
    np.testing.assert_allclose(table["index_per_year"].sel(basin="box").values, series, rtol=1e-10)
    np.testing.assert_allclose(float(table["index_mean"].sel(basin="box")), series.mean(), rtol=1e-10)
    years = np.arange(1991, 2011)
    sen = stats.theilslopes(series, years)
    np.testing.assert_allclose(float(table["index_slope"].sel(basin="box")), sen.slope, rtol=1e-10)
    tau = stats.kendalltau(years, series)  # no ties: the same two-sided test up to continuity correction
    assert abs(float(table["index_pvalue"].sel(basin="box")) - tau.pvalue) < 0.02
    assert int(table["n_index_years"].sel(basin="box")) == 20

    shown = index_table(table, display=True)
    assert list(shown.columns) == [
        "area [km²]",
        "PRCPTOT mean [mm]",
        "PRCPTOT Sen slope [mm per decade]",
        "Mann-Kendall p",
        "years",
    ]
    np.testing.assert_allclose(shown.iloc[0, 2], 10 * sen.slope, rtol=1e-10)  # shown per decade
    stored = index_table(table)
    assert list(stored.columns) == ["area_km2", "index_mean", "index_slope", "index_pvalue", "n_index_years"]


def test_lazy_on_dask_and_equal_to_numpy():
    eager = gridded_indices(_daily(), names=("SDII", "Rx5day"))
    lazy = gridded_indices(_daily(dask=True), names=("SDII", "Rx5day"))
    assert lazy["SDII"].chunks is not None
    table = basin_index_table(lazy, [BOX], "Rx5day")
    assert table["index_mean"].chunks is not None
    xr.testing.assert_allclose(lazy.compute(), eager)


def test_catalogue_covers_every_index_and_thresholds():
    for name in cw.compute.indices.INDEX_NAMES:
        meta = index_meta(name)
        assert meta.label.startswith(name) and meta.units and meta.display_format
    assert index_meta("R50mm").units == "d"
    with pytest.raises(KeyError):
        index_meta("TXx")


def test_bad_period_and_name_are_clear():
    ind = gridded_indices(_daily(years=(1991, 1995)), names=("PRCPTOT",))
    with pytest.raises(ParameterError, match="not within"):
        index_map(ind, "PRCPTOT", period=(1980, 1990))
    with pytest.raises(ParameterError, match="was not computed"):
        basin_index_table(ind, [BOX], "CDD")
