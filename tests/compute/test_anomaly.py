"""Anomalies and tercile categories (climwidgets/compute/anomaly.py).

References: percent of normal = 100 x / normal and standardized anomaly = (x - mean) / sd
with the sample sd (ddof=1) are the usual definitions (common practice); normals after
WMO-No. 1203 (2017) (80 % of baseline years); tercile boundaries with numpy's "linear"
quantile method, which secondary sources citing WMO-No. 1203 §4.5 identify with its
guidance (R type 7).  The expected values below are computed with plain numpy.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets import ParameterError
from climwidgets.compute.anomaly import anomaly, tercile_category

YEARS = 32  # 1991-2022: a 1991-2020 baseline plus two later years


@pytest.fixture(scope="module")
def mon():
    rng = np.random.default_rng(7)
    t = pd.date_range("1991-01-01", periods=12 * YEARS, freq="MS")
    vals = rng.gamma(2.0, 30.0, (t.size, 2))
    return xr.DataArray(
        vals,
        dims=("time", "lon"),
        coords={"time": t, "lon": [0.0, 1.0]},
        attrs={"units": "mm", "step": "month"},
        name="pr",
    )


def table(mon):
    """(year, month, lon) numpy view of the monthly fixture."""
    return mon.values.reshape(YEARS, 12, 2)


def test_monthly_anomalies_match_numpy(mon):
    v = table(mon)
    base = v[:30]
    mean, sd = base.mean(axis=0), base.std(axis=0, ddof=1)
    exp = {"absolute": v - mean, "percent": 100 * v / mean, "standardized": (v - mean) / sd}
    for kind, units in (("absolute", "mm"), ("percent", "%"), ("standardized", "1")):
        a = anomaly(mon, kind=kind)
        assert a.dims == ("time", "lon") and a.attrs["units"] == units
        np.testing.assert_allclose(a.values.reshape(YEARS, 12, 2), exp[kind], rtol=1e-10)
    assert anomaly(mon, kind="standardized").attrs["sd_ddof"] == 1


def test_season_year_and_water_year(mon):
    v = table(mon)
    # Dec-Feb measured against the Dec-Nov year, labelled by the year it ends (docs/architecture.md):
    # Dec 1991 + Jan/Feb 1992 -> 1992, ..., Dec 2021 + Jan/Feb 2022 -> 2022
    djf = v[:-1, 11] + v[1:, 0] + v[1:, 1]
    labels = np.arange(1992, 1991 + YEARS)
    a = anomaly(mon, baseline=(1992, 2021), kind="absolute", period="season", months=(12, 1, 2))
    assert a.year.values.tolist() == labels.tolist()
    np.testing.assert_allclose(a.values, djf - djf[:30].mean(axis=0), rtol=1e-10)
    # water year Oct-Sep labelled by its end year
    wy = v[:-1, 9:].sum(axis=1) + v[1:, :9].sum(axis=1)
    p = anomaly(mon, baseline=(1992, 2021), kind="percent", period="water_year")
    np.testing.assert_allclose(p.values, 100 * wy / wy[:30].mean(axis=0), rtol=1e-10)
    assert p.attrs["year_start"] == 10
    y = anomaly(mon, kind="standardized", period="year")
    ann = v.sum(axis=1)
    np.testing.assert_allclose(y.values, (ann - ann[:30].mean(0)) / ann[:30].std(0, ddof=1), rtol=1e-10)


def test_completeness_rule_applies(mon):
    gappy = mon.copy()
    gappy[0 : 12 * 7 : 12, 0] = np.nan  # 7 Januaries missing in cell 0 -> 23 of 30
    a = anomaly(gappy, kind="absolute")
    jan = a.sel(time=a.time.dt.month == 1)
    assert np.isnan(jan[:, 0]).all() and not np.isnan(jan[:, 1]).any()
    assert not np.isnan(a.sel(time="2000-07-01")).any()


def test_tercile_category_matches_numpy_quantiles(mon):
    v = table(mon)
    lower, upper = np.quantile(v[:30], [1 / 3, 2 / 3], axis=0, method="linear")
    exp = np.where(v < lower, -1.0, np.where(v > upper, 1.0, 0.0))
    cat = tercile_category(mon)
    np.testing.assert_array_equal(cat.values.reshape(YEARS, 12, 2), exp)
    counts = [(cat.sel(time=slice("1991", "2020")) == k).sum().item() for k in (-1, 0, 1)]
    assert counts == [240, 240, 240]  # 30 values per month and cell split 10/10/10
    # a value exactly on a boundary counts as near normal
    edge = mon.copy()
    edge[-1, 0] = np.quantile(edge.values[11:360:12, 0], 2 / 3, method="linear")
    assert tercile_category(edge)[-1, 0] == 0


def test_dask_same_numbers(mon):
    lazy_in = mon.chunk({"time": 100})
    for f, kw in (
        (anomaly, {"kind": "standardized"}),
        (anomaly, {"period": "season", "months": (7, 8)}),
        (tercile_category, {}),
        (tercile_category, {"period": "year"}),
    ):
        lazy = f(lazy_in, **kw)
        assert lazy.chunks is not None
        xr.testing.assert_allclose(lazy.compute().drop_attrs(), f(mon, **kw).drop_attrs())


def test_bad_parameters(mon):
    with pytest.raises(ParameterError, match="kind='ratio'.*Expected: 'absolute'"):
        anomaly(mon, kind="ratio")
    with pytest.raises(ParameterError, match="period='decade'"):
        anomaly(mon, period="decade")
    with pytest.raises(ParameterError, match="period='season' needs months"):
        anomaly(mon, period="season")
    with pytest.raises(ParameterError, match="lies outside the data"):
        anomaly(mon, baseline=(1961, 1990))
    with pytest.raises(ParameterError, match="outside 1..12"):
        tercile_category(mon, period="season", months=(0, 1))


def test_record_starting_in_march_1991_has_1991_2020_anomalies(mon):
    """WMO-No. 1203 (2017): a normal needs 80 % of the baseline years (24 of 30), judged
    month by month, so 29 Januaries (1992-2020) are enough; SPI already accepted this."""
    late = mon.isel(time=slice(2, None))  # March 1991 onwards
    a = anomaly(late, kind="absolute")
    jan = late.sel(time=late.time.dt.month == 1)
    base = jan.sel(time=slice("1992", "2020"))
    expected = jan - base.mean("time")
    np.testing.assert_allclose(a.sel(time=jan.time).values, expected.values, rtol=1e-12)
    yearly = anomaly(late, kind="percent", period="year")  # 1991 missing: 29 of 30 years
    totals = late.resample(time="YS").sum().sel(time=slice("1992", "2020"))
    np.testing.assert_allclose(
        yearly.sel(year=2021).values,
        100 * late.sel(time="2021").sum("time").values / totals.mean("time").values,
        rtol=1e-12,
    )
    cats = tercile_category(late)
    assert np.isfinite(cats.sel(time="1991-03")).all()
