"""OrographicContrastWidget: each control gives the numbers of the public compute functions.

References are the public functions called directly with the same parameters
(cw.annual_totals, cw.crest_from_elevation, cw.rain_shadow, cw.elevation_gradient,
cw.linear_orographic_precip), checked against outside sources (pyproj geodesics, Smith &
Barstad 2004) in tests/compute.  The synthetic range has a known answer of its own: a
north-south ridge with rain rising on its west side, so with a westerly wind the leeward
/ windward ratio is below 1 and with an easterly wind above 1.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from ._data import check_every_export

pytest.importorskip("ipympl")

N_BOOT = 100


def _scene(seed=4):
    rng = np.random.default_rng(seed)
    lat = np.arange(20.05, 21.0, 0.1)
    lon = np.arange(-100.95, -98.6, 0.1)
    ridge_lon = lon[11]  # on a cell centre, so the highest cell is 1500 m
    z = 1500.0 * np.exp(-(((lon - ridge_lon) / 0.25) ** 2))[None, :] * np.ones((lat.size, 1))
    elev = xr.DataArray(z, coords={"lat": lat, "lon": lon}, dims=("lat", "lon"), name="elevation", attrs={"units": "m"})
    # wetter up the west (windward) slope, drier east of the ridge
    pattern = 60.0 + 0.05 * z + np.where(lon[None, :] > ridge_lon, -25.0, 0.0)
    time = pd.date_range("2001-01-01", "2006-12-01", freq="MS")
    data = pattern[None] * rng.gamma(8.0, 1 / 8.0, size=(time.size, 1, 1))
    pr = xr.DataArray(
        data,
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm", "step": "month"},
    )
    return pr, elev


@pytest.fixture(scope="module")
def setup():
    pr, elev = _scene()
    w = cw.OrographicContrastWidget(pr, elev, n_boot=N_BOOT, export_dir="unused")
    w.wait()
    return pr, elev, w


def _observed(pr, elev, wind_from=270.0, band_km=(0, 25, 50), ridge=None, ci=0.9):
    ridge = ridge if ridge is not None else cw.crest_from_elevation(elev, wind_from, min_height=150.0)
    return cw.rain_shadow(
        cw.annual_totals(pr), wind_from=wind_from, ridge=ridge, band_km=band_km, n_boot=N_BOOT, ci=ci
    ), ridge


def test_default_contrast_model_and_gradients(setup):
    pr, elev, w = setup
    assert w.error is None
    assert w.min_height.value == 150.0  # a tenth of the highest cell, 1500 m
    expected, ridge = _observed(pr, elev)
    xr.testing.assert_allclose(w.result, expected)
    assert w.crest == [tuple(p) for p in ridge]
    assert (w.result["ratio"] < 1).all()  # the lee is drier
    # the view's model carries a 2 mm/h background and delays of 1000 s (analyses.orographic)
    model = cw.linear_orographic_precip(
        elev, wind_speed=10.0, wind_from=270.0, temperature_c=10.0, p_background=2.0, tau_c=1000.0, tau_f=1000.0
    )
    xr.testing.assert_allclose(w.model, model)
    model_rs = cw.rain_shadow(model, wind_from=270.0, ridge=ridge, band_km=(0, 25, 50))
    xr.testing.assert_allclose(w.model_contrast, model_rs)
    np.testing.assert_allclose(w.table["linear model leeward / windward"], model_rs["ratio"].values)
    np.testing.assert_allclose(w.table["leeward / windward"], expected["ratio"].values)
    np.testing.assert_allclose(w.table["lower 90%"], expected["ratio_lower"].values)
    mean = cw.annual_totals(pr).mean("year", keep_attrs=True)
    for side in ("windward", "leeward"):
        g = cw.elevation_gradient(mean, elev, mask=elev > 0, side=side, distance_km=expected["distance_km"])
        xr.testing.assert_allclose(w.gradients[side], g)
    assert float(w.gradients["windward"]["slope"]) > 0  # rain rises up the slope
    # the page opens on the precipitation itself, the observed mean annual total
    assert w.layer.value == "observed"
    np.testing.assert_allclose(
        np.asarray(w.map.mesh.get_array()).reshape(elev.shape), mean.transpose("lat", "lon").values
    )


def test_wind_direction_flips_the_sides(setup):
    pr, elev, w = setup
    w.wind_from.value = 90.0
    w.wait()
    expected, _ = _observed(pr, elev, wind_from=90.0)
    xr.testing.assert_allclose(w.result, expected)
    assert (w.result["ratio"] > 1).all()  # the wet west slope is now the lee
    w.wind_from.value = 270.0
    w.wait()


def test_bands_level_and_model_controls(setup):
    pr, elev, w = setup
    w.bands.value = "0, 30"
    w.level.value = 0.8
    w.wind_speed.value = 15.0
    w.temperature.value = 5.0
    w.wait()
    expected, ridge = _observed(pr, elev, band_km=(0, 30), ci=0.8)
    xr.testing.assert_allclose(w.result, expected)
    assert list(w.table.index) == ["0-30"] and "lower 80%" in w.table.columns
    model = cw.linear_orographic_precip(
        elev, wind_speed=15.0, wind_from=270.0, temperature_c=5.0, p_background=2.0, tau_c=1000.0, tau_f=1000.0
    )
    xr.testing.assert_allclose(w.model, model)
    w.bands.value = "0, 25, 50"
    w.level.value = 0.9
    w.wind_speed.value = 10.0
    w.temperature.value = 10.0
    w.wait()


def test_background_and_delay_reach_the_model_and_the_note_is_shown(setup):
    pr, elev, w = setup
    assert "not a climatology" in w.model_note.value and w.model_note in w.children
    assert w.children.index(w.model_note) == w.children.index(w.table_html) + 1
    w.background.value = 10.0  # a heavy background outweighs the lee's descent
    w.delay.value = 1500.0
    w.wait()
    model = cw.linear_orographic_precip(
        elev, wind_speed=10.0, wind_from=270.0, temperature_c=10.0, p_background=10.0, tau_c=1500.0, tau_f=1500.0
    )
    xr.testing.assert_allclose(w.model, model)
    ratio = w.table["linear model leeward / windward"]
    assert (ratio > 0).all() and (ratio < 1).all()  # a rain shadow, no longer an empty lee
    w.background.value = 0.0
    w.wait()
    assert (w.table["linear model leeward / windward"] == 0).all()  # the orographic part alone
    w.background.value = 2.0
    w.delay.value = 1000.0
    w.wait()


def test_bad_bands_are_a_message(setup):
    pr, elev, w = setup
    before = w.result
    w.bands.value = "50, 10"
    assert isinstance(w.error, cw.InputError)
    assert "increasing distances" in w.message.value
    assert w.result is before
    w.bands.value = "0, 25, 50"
    w.wait()
    assert w.error is None


def test_drawn_crest_and_layers(setup):
    pr, elev, w = setup
    w.draw.value = True
    w._on_map_click(-99.75, 20.0)  # what a click on the map does in drawing mode
    assert w.crest_mode.value == "terrain" and "one more" in w.message.value
    w._on_map_click(-99.85, 21.0)
    w.wait()
    assert w.crest_mode.value == "drawn"
    ridge = [(-99.75, 20.0), (-99.85, 21.0)]
    expected, _ = _observed(pr, elev, ridge=ridge)
    xr.testing.assert_allclose(w.result, expected)
    gen = w._gen
    w.layer.value = "model"
    assert w._gen == gen
    np.testing.assert_allclose(np.asarray(w.map.mesh.get_array()).reshape(elev.shape), w.model.values)
    w.clear_crest()
    w.wait()
    assert w.crest_mode.value == "terrain" and w.drawn_crest == []


def test_every_export_reaches_the_browser(setup):
    """Each button gives a download link whose bytes are the result (CSV read by plain pandas)."""
    w = setup[-1]
    got = check_every_export(w)
    assert set(got) == {b.description for b in w.exports.children}


def test_typed_wind_direction_sets_the_slider_and_computes_once(setup):
    pr, elev, w = setup
    w.wait()
    gen = w._gen
    w.wind_from_box.value = 263.0  # to the degree, which a drag on the short track cannot hit
    assert w.wind_from.value == 263.0 and w._gen == gen + 1
    w.wait()
    expected, _ = _observed(pr, elev, wind_from=263.0)
    xr.testing.assert_allclose(w.result, expected)
    w.wind_from.value = 270.0  # the slider rewrites the box, still one computation
    assert w.wind_from_box.value == 270.0 and w._gen == gen + 2
    w.wait()
