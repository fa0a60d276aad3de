"""Basin anomalies and the table at one step (analyses.anomalies).

The anomaly of a basin is the public anomaly function (cw.anomaly, cw.spi — checked
against outside sources in tests/compute) applied to the basin's area-weighted mean
precipitation, so the references here are those functions called on cw.basin_mean.  The
ranks are checked against scipy.stats.rankdata (the "min" method counts ties as the
driest place they share), the driest and wettest against numpy.
"""

import numpy as np
import pandas as pd
import pytest
import scipy.stats
import xarray as xr

import climwidgets as cw
from climwidgets.analyses.anomalies import (
    anomaly_field,
    anomaly_ranking,
    anomaly_series,
    basin_anomalies,
    decimal_time,
    step_labels,
)
from climwidgets.analyses.meta import frame


def _pr(years=(2001, 2012), seed=4):
    rng = np.random.default_rng(seed)
    time = pd.date_range(f"{years[0]}-01-01", f"{years[1]}-12-01", freq="MS")
    lat = np.arange(10.125, 11.0, 0.25)
    lon = np.arange(-30.125, -28.9, 0.25)
    data = rng.gamma(2.0, 30.0, size=(time.size, lat.size, lon.size))
    return xr.DataArray(
        data,
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm", "step": "month"},
    )


BASE = (2002, 2011)
WEST = cw.Basin.from_vertices([(-30.2, 10.0), (-29.5, 10.0), (-29.5, 10.7), (-30.2, 10.7)], name="west")
EAST = cw.Basin.from_vertices([(-29.6, 10.2), (-28.9, 10.2), (-28.9, 10.9), (-29.6, 10.9)], name="east")


@pytest.mark.parametrize("kind,period", [("percent", "month"), ("absolute", "year"), ("standardized", "water_year")])
def test_basin_anomalies_are_anomalies_of_the_basin_means(kind, period):
    pr = _pr()
    ds = basin_anomalies(pr, [WEST, EAST], kind=kind, period=period, baseline=BASE).compute()
    for basin in (WEST, EAST):
        expected = cw.anomaly(cw.basin_mean(pr, basin), baseline=BASE, kind=kind, period=period)
        np.testing.assert_allclose(ds["anomaly"].sel(basin=basin.name).values, expected.values, rtol=1e-12)
    assert ds["anomaly"].attrs["units"] == {"percent": "%", "absolute": "mm", "standardized": "1"}[kind]


def test_seasonal_and_spi_series():
    pr = _pr()
    ds = basin_anomalies(pr, [WEST], kind="percent", period="season", months=(11, 12, 1), baseline=BASE)
    expected = cw.anomaly(cw.basin_mean(pr, WEST), baseline=BASE, kind="percent", period="season", months=(11, 12, 1))
    np.testing.assert_allclose(ds["anomaly"].sel(basin="west").values, expected.values, rtol=1e-12)
    ds = basin_anomalies(pr, [WEST], kind="spi", scale=6, baseline=BASE).compute()
    spi = cw.spi(cw.basin_mean(pr, WEST), scale=6, baseline=BASE)
    np.testing.assert_allclose(ds["anomaly"].sel(basin="west").values, spi.values, rtol=1e-12)
    assert list(ds["spi_class"].sel(basin="west").values) == list(cw.spi_category(spi).values)


def test_the_field_is_the_public_function_with_display_words():
    pr = _pr()
    field = anomaly_field(pr, kind="percent", period="month", baseline=BASE)
    xr.testing.assert_allclose(field, cw.anomaly(pr, baseline=BASE, kind="percent", period="month"))
    assert field.attrs["display_units"] == "%" and "percent of normal" in field.attrs["label"]
    spi = anomaly_field(pr, kind="spi", scale=3, baseline=BASE)
    xr.testing.assert_allclose(spi, cw.spi(pr, scale=3, baseline=BASE))
    assert spi.attrs["label"] == "SPI, 3-month"


def test_ranking_at_a_step_counts_from_the_driest():
    pr = _pr()
    series = basin_anomalies(pr, [WEST, EAST], kind="percent", period="month", baseline=BASE).compute()
    step = "2010-07"
    table = anomaly_ranking(series, step)
    labels = step_labels(series["anomaly"])
    i = labels.index(step)
    for name in ("west", "east"):
        values = series["anomaly"].sel(basin=name).values
        valid = values[np.isfinite(values)]
        # scipy's "min" rank: ties share the driest place (outside reference for the count)
        expected_rank = scipy.stats.rankdata(valid, method="min")[list(valid).index(values[i])]
        row = table.sel(basin=name)
        assert int(row["rank_from_driest"]) == expected_rank
        assert int(row["steps_in_record"]) == valid.size
        assert float(row["driest_in_record"]) == pytest.approx(valid.min())
        assert float(row["wettest_in_record"]) == pytest.approx(valid.max())
        assert float(row["anomaly_at_step"]) == pytest.approx(values[i])
    shown = frame(table, display=True)
    assert list(shown.columns)[:2] == ["2010-07 [%]", "rank (1 = driest)"]


def test_ranking_of_spi_names_the_class_and_the_scale():
    pr = _pr()
    series = basin_anomalies(pr, [WEST], kind="spi", scale=3, baseline=BASE).compute()
    table = anomaly_ranking(series, "2009-05")
    spi = cw.spi(cw.basin_mean(pr, WEST), scale=3, baseline=BASE)
    assert str(table["spi_class"].sel(basin="west").item()) == str(cw.spi_category(spi).sel(time="2009-05-01").item())
    shown = frame(table, display=True)
    assert "2009-05 [standard deviations]" in shown.columns and "SPI class" in shown.columns


def test_a_missing_step_has_no_rank():
    pr = _pr()
    series = anomaly_series(
        cw.basin_mean(pr, WEST).expand_dims(basin=["west"]), kind="percent", period="month", baseline=BASE
    ).compute()
    series["anomaly"][0, 5] = np.nan
    table = anomaly_ranking(series, step_labels(series["anomaly"])[5])
    assert np.isnan(float(table["rank_from_driest"].sel(basin="west")))


def test_an_unknown_step_is_a_clear_error():
    pr = _pr()
    series = basin_anomalies(pr, [WEST], kind="percent", period="year", baseline=BASE)
    with pytest.raises(cw.ParameterError, match="1990"):
        anomaly_ranking(series, "1990")


def test_step_labels_and_decimal_time():
    pr = _pr((2001, 2002))
    assert step_labels(pr)[:2] == ["2001-01", "2001-02"]
    np.testing.assert_allclose(decimal_time(pr)[:2], [2001.0, 2001 + 1 / 12])
    years = xr.DataArray([1.0, 2.0], dims="year", coords={"year": [2001, 2002]})
    assert step_labels(years) == ["2001", "2002"]
