"""Unit factors checked against pint (a general-purpose units library on PyPI)."""

import re

import pint
import pytest

from climwidgets.errors import UnitsError
from climwidgets.io.units import length_to_metres, parse_units

ureg = pint.UnitRegistry()
# 1 kg m-2 of liquid water is 1 mm: water density 1000 kg m-3 by convention.
WATER = ureg.Quantity(1000.0, "kg/m**3")

# our spelling -> (kind, pint expression of one unit)
DEPTHS = {
    "mm": "mm",
    "millimeters": "mm",
    "cm": "cm",
    "m": "m",
    "meters": "m",
    "in": "inch",
    "inches": "inch",
    "kg m-2": "kg/m**2",
    "kg/m2": "kg/m**2",
    "kg m^-2": "kg/m**2",
    "1e-3 m": "1e-3*m",
}
RATES = {
    "kg m-2 s-1": "kg/m**2/s",
    "kg/m2/s": "kg/m**2/s",
    "kg m^-2 s^-1": "kg/m**2/s",
    "kg.m-2.s-1": "kg/m**2/s",
    "kg m-2 d-1": "kg/m**2/day",
    "kg m-2 day-1": "kg/m**2/day",
    "mm/s": "mm/s",
    "mm s-1": "mm/s",
    "mm/h": "mm/hour",
    "mm h-1": "mm/hour",
    "mm hr-1": "mm/hour",
    "mm/hr": "mm/hour",
    "mm/day": "mm/day",
    "mm d-1": "mm/day",
    "mm day-1": "mm/day",
    "mm/d": "mm/day",
    "millimeters per day": "mm/day",
    "m/s": "m/s",
    "m s-1": "m/s",
    "m/day": "m/day",
    "m d-1": "m/day",
    "in/day": "inch/day",
    "in d-1": "inch/day",
    "cm/day": "cm/day",
}


def _pint_mm(expr: str) -> float:
    q = ureg.Quantity(1.0, expr) if not expr.startswith("1e") else 1e-3 * ureg.m
    if q.check("[mass]/[length]**2") or q.check("[mass]/[length]**2/[time]"):
        q = q / WATER
    if q.check("[length]"):
        return q.to("mm").magnitude
    return q.to("mm/s").magnitude


@pytest.mark.parametrize("text,expr", DEPTHS.items())
def test_depth_factors_match_pint(text, expr):
    info = parse_units(text)
    assert info.kind == "depth"
    assert info.to_mm == pytest.approx(_pint_mm(expr), rel=1e-12)


@pytest.mark.parametrize("text,expr", RATES.items())
def test_rate_factors_match_pint(text, expr):
    info = parse_units(text)
    assert info.kind == "rate"
    assert info.to_mm == pytest.approx(_pint_mm(expr), rel=1e-12)


def test_flux_times_day_is_86400_mm():
    # kg m-2 s-1 to mm/day is x 86 400 (1 kg m-2 of water = 1 mm; 86 400 s per day, SI Brochure).
    assert parse_units("kg m-2 s-1").to_mm * 86400 == pytest.approx(86400.0, rel=1e-15)


def test_inch_is_exactly_25_4_mm():
    # International inch = 25.4 mm exactly (USGS SIR 2006-5305 conversion table).
    assert parse_units("in").to_mm == 25.4


def test_cf_canonical_units_of_precipitation_standard_names_parse():
    # Canonical units from the CF standard name table (from memory): fluxes kg m-2 s-1,
    # amounts kg m-2, lwe thickness m, lwe rate m s-1.
    canonical = {
        "precipitation_flux": "kg m-2 s-1",
        "precipitation_amount": "kg m-2",
        "lwe_thickness_of_precipitation_amount": "m",
        "lwe_precipitation_rate": "m s-1",
    }
    kinds = {name: parse_units(u).kind for name, u in canonical.items()}
    assert kinds == {
        "precipitation_flux": "rate",
        "precipitation_amount": "depth",
        "lwe_thickness_of_precipitation_amount": "depth",
        "lwe_precipitation_rate": "rate",
    }


def test_per_month_is_flagged():
    info = parse_units("mm/month")
    assert info.per_month and info.to_mm == 1.0


@pytest.mark.parametrize("bad", ["K", "degC", "furlongs", "kg m-2 s-2", "1", "m2"])
def test_unknown_or_wrong_kind_units_are_rejected(bad):
    with pytest.raises(UnitsError) as err:
        parse_units(bad, source="f.nc", variable="pr")
    msg = str(err.value)
    assert "f.nc" in msg and "pr" in msg and bad in msg and "Fix:" in msg


def test_missing_units_message():
    with pytest.raises(UnitsError, match="has no units attribute"):
        parse_units(None, source="f.nc", variable="pr")


def test_elevation_length_units():
    assert length_to_metres("m") == 1.0
    assert length_to_metres("ft") == pytest.approx(ureg.Quantity(1, "ft").to("m").magnitude, rel=1e-15)
    with pytest.raises(UnitsError):
        length_to_metres("kg")


# SI prefixes are case-sensitive (SI Brochure, 9th edition, 2019, section 3 and table 7):
# M is mega (1e6), m is milli (1e-3); checked against pint, which follows the same table.
@pytest.mark.parametrize(
    "text,expr",
    {"Mm/day": "megametre/day", "um/s": "micrometre/second", "dam": "decametre", "Gg m-2": "gigagram/metre**2"}.items(),
)
def test_si_prefixes_are_case_sensitive_and_match_pint(text, expr):
    assert parse_units(text).to_mm == pytest.approx(_pint_mm(expr), rel=1e-12)


def test_megametre_is_not_millimetre():
    assert parse_units("Mm/day").to_mm == pytest.approx(1e9 * parse_units("mm/day").to_mm, rel=1e-12)


def test_words_are_read_in_any_case():
    assert parse_units("Millimeters per Day").to_mm == parse_units("mm/day").to_mm


@pytest.mark.parametrize(
    "bad,says",
    [
        ("Kg m-2 s-1", "'K' in 'Kg' is not an SI prefix"),
        ("Qm", "'Q' in 'Qm' is not an SI prefix"),
        ("MM/DAY", "case-sensitive; write 'mm'"),
    ],
)
def test_unknown_prefix_or_wrong_case_is_refused(bad, says):
    with pytest.raises(UnitsError, match=re.escape(says)) as err:
        parse_units(bad, source="f.nc", variable="pr")
    assert "f.nc" in str(err.value)
