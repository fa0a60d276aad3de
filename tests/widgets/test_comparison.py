"""ComparisonWidget: each control gives the numbers of the public compute functions.

References are the public functions called directly with the same parameters
(cw.align, cw.compare, cw.products_basin_table), which are checked against published
formulas in tests/compute.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses.comparison import METRICS, agreement_maps
from ._data import check_every_export

pytest.importorskip("ipympl")


def _product(res, calendar="standard", factor=1.0, seed=0, years=(2001, 2006)):
    rng = np.random.default_rng(seed)
    lat = np.arange(-5.0 + res / 2, -3.0, res)
    lon = np.arange(60.0 + res / 2, 62.0, res)
    time = xr.date_range(
        f"{years[0]}-01-01",
        periods=12 * (years[1] - years[0] + 1),
        freq="MS",
        calendar=calendar,
        use_cftime=calendar != "standard",
    )
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
    products = {
        "fine": _product(0.5, seed=1),
        "coarse": _product(1.0, "noleap", 1.1, seed=2),
        "third": _product(0.5, seed=3, factor=0.9),
    }
    basins = [
        cw.Basin.from_vertices([(60.0, -5.0), (61.0, -5.0), (61.0, -4.0), (60.0, -4.0)], name="south-west"),
        cw.Basin.from_vertices([(61.0, -4.0), (62.0, -4.0), (62.0, -3.0), (61.0, -3.0)], name="north-east"),
    ]
    w = cw.ComparisonWidget(products, basins=basins, export_dir="unused")
    w.wait()
    return products, basins, w


def test_default_pair_and_basin_table(setup):
    products, basins, w = setup
    assert w.error is None
    aligned = cw.align(products)
    xr.testing.assert_allclose(w.result, cw.compare(aligned["fine"], aligned["coarse"]))
    expected = cw.products_basin_table(products, basins)
    pd.testing.assert_frame_equal(w.basin_table, expected)
    assert w.table.columns[0] == "mean annual total [mm]"
    assert w.table.columns[1] == "seasonal share Jul-Aug [fraction]"


def test_swapping_products_recomputes(setup):
    products, basins, w = setup
    w.reference.value = "third"
    w.wait()
    aligned = cw.align(products)
    xr.testing.assert_allclose(w.result, cw.compare(aligned["third"], aligned["coarse"]))
    assert w.domain_mean("bias") == pytest.approx(float(w.result["bias"].mean()))
    w.reference.value = "fine"
    w.wait()


@pytest.mark.parametrize(
    "metric, kind, units",
    [("bias", "difference", "mm per year"), ("kge", "sequential", "no unit"), ("rmse", "sequential", "mm per month")],
)
def test_metric_redraws_without_recomputing(setup, metric, kind, units):
    products, basins, w = setup
    gen = w._gen
    w.metric.value = metric
    assert w._gen == gen
    shown = np.asarray(w.map.mesh.get_array()).reshape(w.result[metric].shape)
    np.testing.assert_allclose(shown, w.result[metric].values)
    assert w.map.mesh.climwidgets_kind == kind
    words = METRICS[metric]
    assert w.map.cbar.ax.get_ylabel() == f"{words} [{units}]"
    if kind == "difference":  # diverging map centred on zero
        lo, hi = w.map.mesh.get_clim()
        assert lo == pytest.approx(-hi)


def test_choosing_the_other_product_as_reference_swaps_the_two(setup):
    """A product is never compared with itself: the controls swap reference and other."""
    products, basins, w = setup
    assert (w.reference.value, w.other.value) == ("fine", "coarse")
    w.other.value = "fine"
    w.wait()
    assert (w.reference.value, w.other.value) == ("coarse", "fine")
    assert w.error is None
    aligned = cw.align(products)
    xr.testing.assert_allclose(w.result, cw.compare(aligned["coarse"], aligned["fine"]))
    w.reference.value = "fine"
    w.wait()
    assert (w.reference.value, w.other.value) == ("fine", "coarse")


def test_same_product_twice_is_refused_by_the_analysis(setup):
    products, basins, w = setup
    with pytest.raises(cw.InputError, match="two different products"):
        agreement_maps(cw.align(products), "fine", "fine")


def test_needs_two_products():
    with pytest.raises(cw.InputError, match="at least two products"):
        cw.ComparisonWidget({"only": _product(1.0)})


def test_a_basin_joining_the_set_computes_only_its_own_rows(setup, monkeypatch):
    """Adding a basin computes the table for that basin alone; renaming computes nothing.

    Reference: ``cw.products_basin_table`` over all basins at once (rows are per basin, so
    the merged table must equal the full one)."""
    from climwidgets.widgets import comparison as module

    products, basins, _ = setup
    shared = cw.BasinSet(basins)
    w = cw.ComparisonWidget(products, basins=shared, export_dir="unused")
    w.wait()
    calls = []
    original = module.products_table

    def counting(datasets, bs, **kw):
        calls.append([b.name for b in bs])
        return original(datasets, bs, **kw)

    monkeypatch.setattr(module, "products_table", counting)
    third = cw.Basin.from_vertices([(60.2, -4.8), (61.8, -4.6), (61.0, -3.2)], name="middle")
    shared.add(third)
    w.wait()
    assert calls == [["middle"]]
    full = cw.products_basin_table(products, basins + [third])
    pd.testing.assert_frame_equal(w.basin_table, full, check_like=False, rtol=1e-12)
    shared.rename("middle", "centre")
    w.wait()
    assert calls == [["middle"]]  # nothing computed for a new name
    assert list(dict.fromkeys(w.basin_table.index.get_level_values("basin"))) == ["south-west", "north-east", "centre"]
    shared.remove("south-west")
    w.wait()
    assert calls == [["middle"]]
    assert "south-west" not in w.basin_table.index.get_level_values("basin")


def test_every_export_reaches_the_browser(setup):
    """Each button gives a download link whose bytes are the result (CSV read by plain pandas)."""
    w = setup[-1]
    got = check_every_export(w)
    assert set(got) == {b.description for b in w.exports.children}


def test_basin_and_product_names_cannot_become_spreadsheet_formulas():
    """Issue 21: basin and product names reach the CSV as text, never as live formulas
    (payloads from OWASP "CSV Injection")."""
    import io

    import pandas as pd

    products = {"=HYPERLINK(1)": _product(0.5, seed=1), "+1-1": _product(1.0, seed=2)}
    basins = [
        cw.Basin.from_vertices([(60.0, -5.0), (61.0, -5.0), (61.0, -4.0), (60.0, -4.0)], name="@SUM(1+1)"),
        cw.Basin.from_vertices([(61.0, -4.0), (62.0, -4.0), (62.0, -3.0), (61.0, -3.0)], name="-2+3"),
    ]
    w = cw.ComparisonWidget(products, basins=basins, export_dir="unused")
    w.wait()
    got = check_every_export(w)
    csv = next(v for k, v in got["Table as CSV"].items() if k.endswith(".csv"))
    back = pd.read_csv(io.BytesIO(csv), dtype=str, keep_default_na=False)
    texts = list(back.columns) + [v for c in back.columns for v in back[c]]
    assert not [
        t
        for t in texts
        if t.startswith(("=", "+", "@", "\t", "\r"))
        or (t.startswith("-") and not t[1:].replace(".", "", 1).replace("e-", "", 1).isdigit())
    ]
    assert any(t in ("'@SUM(1+1)", "'-2+3") for t in texts)
