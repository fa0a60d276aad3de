"""analyses.meta unit systems: SI / US customary applied at display time from the catalogue.

The factors are checked against the definitions (from memory): the inch is exactly 25.4 mm
and the foot exactly 0.3048 m (international yard and pound agreement, 1959; NIST Special
Publication 811 (2008), Appendix B.8), so the acre-foot (43 560 ft² × 1 ft) is
1 233.481 837 547 52 m³ and the square statute mile (5 280 ft)² is 2.589 988 110 336 km².
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets.analyses.meta import (
    KM2_PER_MI2,
    describe,
    display_frame,
    field_in_units,
    frame,
    people_frame,
    shown_in_units,
    to_units,
    unit_attrs,
    unit_system,
)
from climwidgets.errors import ParameterError

# the definitions, written out (international yard and pound agreement 1959; NIST SP 811, from memory)
INCH_M = 0.0254
FOOT_M = 12 * INCH_M
ACRE_FOOT_M3 = 43_560 * FOOT_M**3
MILE_M = 5_280 * FOOT_M


def _v(values):
    return xr.DataArray(np.array(values, dtype=float), dims="basin", coords={"basin": ["North", "South"]})


@pytest.fixture
def ds():
    mm, km2 = np.array([254.0, 1234.5]), np.array([100.0, 2589.988110336])
    m3 = mm / 1000 * km2 * 1e6
    return xr.Dataset(
        {
            "area_km2": describe(_v(km2), "area_km2"),
            "annual_mean_mm": describe(_v(mm), "annual_mean_mm"),
            "n_years": describe(_v([30, 29]), "n_years"),
            "seasonal_share_1": describe(_v([0.3, 0.45]), "seasonal_share_1"),
            "volume_per_year_m3": describe(_v(m3), "volume_per_year_m3"),
            "volume_per_year_acre_ft": describe(_v(m3 / ACRE_FOOT_M3), "volume_per_year_acre_ft"),
            "latest_year_percent_of_normal": describe(_v([95.0, 110.0]), "latest_year_percent_of_normal"),
            "seasonal_volume_per_year_m3": describe(_v(m3 / 3), "seasonal_volume_per_year_m3"),
        }
    )


def test_factors_are_the_definitions():
    mm = unit_attrs({"units": "mm", "display_units": "mm", "display_scale": 1.0, "display_format": ",.0f"}, "US")
    assert mm["display_units"] == "in" and mm["display_scale"] == pytest.approx(0.001 / INCH_M, rel=1e-15)
    m3 = unit_attrs({"units": "m3", "display_units": "million m³", "display_scale": 1e-6}, "US")
    assert m3["display_units"] == "acre-ft"
    assert 1 / m3["display_scale"] == pytest.approx(1233.48183754752, rel=1e-15)
    assert 1 / m3["display_scale"] == pytest.approx(ACRE_FOOT_M3, rel=1e-15)
    km2 = unit_attrs({"units": "km2", "display_units": "km²", "display_scale": 1.0}, "US")
    assert km2["display_units"] == "mi²" and KM2_PER_MI2 == pytest.approx(2.589988110336, rel=1e-15)
    assert 1 / km2["display_scale"] == pytest.approx(MILE_M**2 / 1e6, rel=1e-15)
    # rates keep their time unit; a per-decade scale stays
    rate = unit_attrs({"units": "mm/yr", "display_units": "mm per decade", "display_scale": 10.0}, "US")
    assert rate["display_units"] == "in per decade" and rate["display_scale"] == pytest.approx(10 / 25.4)
    # percentages, fractions, counts and years are not converted
    for units in ("%", "1", "d", "yr", "acre-ft", "in"):
        a = {"units": units, "display_units": units, "display_scale": 1.0}
        assert unit_attrs(a, "US")["display_scale"] == 1.0, units


def test_unit_system_words_and_errors():
    assert unit_system("si") == "SI" and unit_system("US customary") == "US" and unit_system("us") == "US"
    with pytest.raises(ParameterError, match="'SI'.*'US'"):
        unit_system("imperial")


def test_us_table_equals_the_si_table_converted(ds):
    si = frame(ds, display=True)
    us = frame(ds, display=True, units="US")
    assert "volume per year [million m³]" in si.columns  # SI volumes for people in million m³
    np.testing.assert_allclose(us["area [mi²]"], si["area [km²]"] * 1e6 / MILE_M**2, rtol=1e-14)
    np.testing.assert_allclose(us["mean annual total [in]"], si["mean annual total [mm]"] / 25.4, rtol=1e-14)
    np.testing.assert_allclose(
        us["volume per year [acre-ft]"], si["volume per year [million m³]"] * 1e6 / ACRE_FOOT_M3, rtol=1e-12
    )
    np.testing.assert_allclose(
        us["season's volume per year [acre-ft]"],
        si["season's volume per year [million m³]"] * 1e6 / ACRE_FOOT_M3,
        rtol=1e-12,
    )
    for col in ("seasonal share [%]", "complete years", "latest year, percent of normal [%]"):
        np.testing.assert_array_equal(us[col], si[col])
    assert list(us.columns).count("volume per year [acre-ft]") == 1  # the m³ twin is not shown twice
    # the widgets' path: a shown SI table re-expressed gives the same numbers and headings
    again = shown_in_units(si, "US")
    assert list(again.columns) == list(us.columns)
    np.testing.assert_allclose(again.to_numpy(dtype=float), us.to_numpy(dtype=float), rtol=1e-13)
    # and a stored table through display_frame
    via = display_frame(frame(ds), units="US")
    np.testing.assert_allclose(via.to_numpy(dtype=float), us.to_numpy(dtype=float), rtol=1e-13)


def test_files_keep_si_numbers_unless_us_is_chosen(ds):
    si = frame(ds)
    assert list(si.columns) == list(ds.data_vars)  # stored numbers, variable names
    us = frame(ds, units="US")
    assert {"area_mi2", "annual_mean_in", "volume_per_year_acre_ft", "seasonal_volume_per_year_acre_ft"} <= set(
        us.columns
    )
    assert "volume_per_year_m3" not in us.columns and "annual_mean_mm" not in us.columns
    np.testing.assert_allclose(us["annual_mean_in"], si["annual_mean_mm"] / 25.4, rtol=1e-15)
    np.testing.assert_allclose(
        us["seasonal_volume_per_year_acre_ft"], si["seasonal_volume_per_year_m3"] / ACRE_FOOT_M3, rtol=1e-15
    )
    cols = us.attrs["columns"]
    assert cols["annual_mean_in"]["values_in"] == "in" and cols["area_mi2"]["values_in"] == "mi2"
    assert cols["seasonal_share_1"]["values_in"] == "1"
    # a US file shown again reads like the US display
    np.testing.assert_allclose(
        display_frame(us)["mean annual total [in]"],
        frame(ds, display=True, units="US")["mean annual total [in]"],
        rtol=1e-15,
    )
    np.testing.assert_allclose(to_units(si, "US")["area_mi2"], us["area_mi2"])


def test_people_see_rounded_volumes_and_no_scientific_notation(ds):
    for units in ("SI", "US"):
        shown = people_frame(frame(ds), units=units)
        cells = [str(c) for c in shown.to_numpy().ravel()]
        assert not [c for c in cells if re.search(r"\de[+-]?\d", c)], cells
    si = people_frame(frame(ds))
    # 1234.5 mm over 2589.988110336 km² = 3 197 340 km²·mm = 3 197.34 million m³ (hand-computed)
    assert si.loc["South", "volume per year [million m³]"] == "3,197.34"
    us = people_frame(frame(ds), units="US")
    acre_ft = 1234.5e-3 * 2589.988110336e6 / ACRE_FOOT_M3  # = 2 592 123.7... acre-ft
    assert us.loc["South", "volume per year [acre-ft]"] == f"{acre_ft:,.0f}" and "," in f"{acre_ft:,.0f}"
    assert us.loc["North", "mean annual total [in]"] == "10.0"  # 254 mm = 10 in
    assert us.loc["South", "area [mi²]"] == "1,000.0"


def test_a_map_field_is_drawn_in_the_chosen_units():
    from climwidgets.plot.maps import as_shown

    field = xr.DataArray(
        np.full((2, 2), 508.0),
        dims=("lat", "lon"),
        coords={"lat": [0, 1], "lon": [0, 1]},
        attrs={"units": "mm", "long_name": "annual normal"},
    )
    same, label = field_in_units(field, "SI", "annual normal [mm]")
    assert same is field and label == "annual normal [mm]"
    us, label = field_in_units(field, "US", "annual normal [mm]")
    assert label == "annual normal [in]" and float(field.values[0, 0]) == 508.0  # the input is not changed
    shown, vmin, _, label = as_shown(us, 0.0, None, None)
    assert float(shown.values[0, 0]) == pytest.approx(20.0) and shown.attrs["units"] == "in"
    assert label == "annual normal [in]" and vmin == 0.0


def test_csv_metadata_names_the_units(ds, tmp_path):
    from climwidgets.report.tables import read_metadata, to_csv

    si_path = to_csv(frame(ds), tmp_path / "si.csv")
    us_path = to_csv(frame(ds, units="US"), tmp_path / "us.csv")
    si, us = read_metadata(si_path), read_metadata(us_path)
    assert si["units"]["annual_mean_mm"] == "mm" and si["units"]["volume_per_year_m3"] == "m3"
    assert si["unit_system"].startswith("SI")
    assert us["units"]["annual_mean_in"] == "in" and us["units"]["volume_per_year_acre_ft"] == "acre-ft"
    assert us["units"]["area_mi2"] == "mi2" and us["unit_system"].startswith("US customary")
    assert "columns" not in us["parameters"]  # the columns' attributes are not a setting
    back = pd.read_csv(us_path)  # a plain read
    np.testing.assert_allclose(back["annual_mean_in"], [10.0, 1234.5 / 25.4])
    # a table as shown (the widgets' CSV) names its display units
    shown = to_csv(frame(ds, display=True, units="US"), tmp_path / "shown.csv")
    assert read_metadata(shown)["units"]["mean annual total [in]"] == "in"


def test_a_map_label_naming_other_units_keeps_the_field_in_si():
    field = xr.DataArray(
        np.ones((2, 2)), dims=("lat", "lon"), coords={"lat": [0, 1], "lon": [0, 1]}, attrs={"units": "mm"}
    )
    same, label = field_in_units(field, "US", "model rate [mm per hour]")
    assert same is field and label == "model rate [mm per hour]"
