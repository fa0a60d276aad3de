"""analyses/comparison.py: basin climatology per product, agreement maps, aligned products.

References: the public functions called directly on each product's own basin mean
(cw.basin_mean, cw.annual_totals, cw.seasonal_fraction, cw.compare, cw.align), which are
checked against outside sources in tests/compute; the spread by hand arithmetic.
"""

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses import comparison
from climwidgets.errors import ParameterError


def _product(res, seed, factor=1.0):
    rng = np.random.default_rng(seed)
    lat = np.arange(-5.0 + res / 2, -3.0, res)
    lon = np.arange(60.0 + res / 2, 62.0, res)
    time = xr.date_range("2001-01-01", periods=48, freq="MS")
    data = factor * rng.gamma(3.0, 25.0, size=(time.size, lat.size, lon.size))
    return xr.DataArray(
        data,
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm", "step": "month"},
    )


@pytest.fixture(scope="module")
def setup():
    products = {"fine": _product(0.5, 1), "coarse": _product(1.0, 2, factor=1.2)}
    basins = [
        cw.Basin.from_vertices([(60.0, -5.0), (61.0, -5.0), (61.0, -4.0), (60.0, -4.0)], name="sw"),
        cw.Basin.from_vertices([(60.5, -4.5), (62.0, -4.5), (62.0, -3.0), (60.5, -3.0)], name="ne"),
    ]
    table = comparison.products_table(products, basins, months=(7, 8)).compute()
    return products, basins, table


def test_each_products_numbers_come_from_its_own_basin_mean(setup):
    products, basins, table = setup
    for name, pr in products.items():
        for basin in basins:
            series = cw.basin_mean(pr, basin)
            row = table.sel(basin=basin.name, product=name)
            assert float(row["annual_mean_mm"]) == pytest.approx(float(cw.annual_totals(series).mean("year")))
            assert float(row["seasonal_share"]) == pytest.approx(float(cw.seasonal_fraction(series, (7, 8))))


def test_spread_rows_by_hand(setup):
    _, _, table = setup
    a = table["annual_mean_mm"].sel(basin="sw")
    values = np.array([float(a.sel(product="fine")), float(a.sel(product="coarse"))])
    # Hand arithmetic: range = max - min; CV = population sd / mean (numpy std, ddof=0).
    assert float(a.sel(product=comparison.SPREAD_RANGE)) == pytest.approx(values.max() - values.min())
    assert float(a.sel(product=comparison.SPREAD_CV)) == pytest.approx(values.std() / values.mean())
    assert np.isnan(float(table["trend_pvalue"].sel(basin="sw", product=comparison.SPREAD_CV)))
    assert table.attrs["period"] == "2001-2004" and table.attrs["season_months"] == (7, 8)
    assert set(table.data_vars) == set(comparison.PRODUCT_COLUMNS)


def test_agreement_maps_refuse_one_product_against_itself(setup):
    products, _, _ = setup
    aligned = comparison.aligned_products(products)
    with pytest.raises(ParameterError, match="both 'fine'"):
        comparison.agreement_maps(aligned, "fine", "fine")


def test_agreement_maps_are_compare_with_words(setup):
    products, _, _ = setup
    aligned = comparison.aligned_products(products)
    out = comparison.agreement_maps(aligned, "fine", "coarse")
    xr.testing.assert_allclose(out, cw.compare(aligned["fine"], aligned["coarse"]))
    assert out["bias"].attrs["label"] == comparison.METRICS["bias"]
    assert out["corr"].attrs["display_units"] == "no unit"


def test_aligned_products_are_cw_align(setup):
    products, _, _ = setup
    aligned = comparison.aligned_products(products)
    expected = cw.align(products)
    assert aligned.keys() == expected.keys()
    for name in aligned:
        xr.testing.assert_identical(aligned[name], expected[name])
    assert aligned["fine"].sizes["lat"] == products["coarse"].sizes["lat"]  # the coarsest grid
