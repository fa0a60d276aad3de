"""Precipitation units: parse a units string and say how to turn it into mm per time step.

A units string is read as a product of powers of mass, length and time units with an
optional numeric scale ("kg m-2 s-1", "kg/m^2/s", "mm d-1", "mm/day", "1e-3 m", "in/day").
Two kinds are precipitation-like:

* a depth (amount per step): length, or mass per area (1 kg m-2 of water is 1 mm with the
  conventional water density of 1000 kg m-3);
* a rate: depth per time, multiplied by the true length of each time step in the file's
  calendar to give the depth that fell in the step.

A monthly rate ("mm/month") is a depth per step only when the data are monthly.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ..errors import UnitsError

if TYPE_CHECKING:
    import xarray as xr

# metres per unit of length
_LENGTH = {
    "m": 1.0,
    "meter": 1.0,
    "meters": 1.0,
    "metre": 1.0,
    "metres": 1.0,
    "mm": 1e-3,
    "millimeter": 1e-3,
    "millimeters": 1e-3,
    "millimetre": 1e-3,
    "millimetres": 1e-3,
    "cm": 1e-2,
    "centimeter": 1e-2,
    "centimeters": 1e-2,
    "centimetre": 1e-2,
    "centimetres": 1e-2,
    "km": 1e3,
    "in": 0.0254,
    "inch": 0.0254,
    "inches": 0.0254,  # international inch, exactly 25.4 mm
    "ft": 0.3048,
    "foot": 0.3048,
    "feet": 0.3048,  # international foot
}
# kilograms per unit of mass
_MASS = {"kg": 1.0, "kilogram": 1.0, "kilograms": 1.0, "g": 1e-3, "gram": 1e-3, "grams": 1e-3}
# seconds per unit of time; "month" has no fixed length and is handled separately
_TIME = {
    "s": 1.0,
    "sec": 1.0,
    "second": 1.0,
    "seconds": 1.0,
    "min": 60.0,
    "minute": 60.0,
    "minutes": 60.0,
    "h": 3600.0,
    "hr": 3600.0,
    "hour": 3600.0,
    "hours": 3600.0,
    "d": 86400.0,
    "day": 86400.0,
    "days": 86400.0,
    "month": None,
    "months": None,
    "mon": None,
}
WATER_DENSITY = 1000.0  # kg m-3, the convention behind "1 kg m-2 = 1 mm"
# SI prefixes (SI Brochure, 9th edition, 2019, table 7); symbols are case-sensitive:
# "Mm" is the megametre, "mm" the millimetre. "u" stands for micro as in UDUNITS.
_SI_PREFIX = {
    "Y": 1e24,
    "Z": 1e21,
    "E": 1e18,
    "P": 1e15,
    "T": 1e12,
    "G": 1e9,
    "M": 1e6,
    "k": 1e3,
    "h": 1e2,
    "da": 1e1,
    "d": 1e-1,
    "c": 1e-2,
    "m": 1e-3,
    "u": 1e-6,
    "µ": 1e-6,
    "n": 1e-9,
    "p": 1e-12,
    "f": 1e-15,
    "a": 1e-18,
    "z": 1e-21,
    "y": 1e-24,
}
# symbols that take a prefix, with their kind and factor to m, kg or s
_PREFIXABLE = {"m": ("length", 1.0), "g": ("mass", 1e-3), "s": ("time", 1.0)}
# symbols, matched exactly (case matters); every other entry is a word, matched in any case
_SYMBOLS = {"m", "mm", "cm", "km", "in", "ft", "kg", "g", "s", "min", "h", "hr", "d", "mon"}

_TOKEN = re.compile(r"^([A-Za-zµ]+)(-?\d+)?$")


def _lookup(name: str, text: object, source: object, variable: object, fix: str) -> tuple[str, float | None]:
    """``(kind, factor)`` of one unit name: kind is length, mass or time."""
    tables = (("length", _LENGTH), ("mass", _MASS), ("time", _TIME))
    for kind, table in tables:
        if name in table and (name in _SYMBOLS or name.lower() == name):
            return kind, table[name]
    low = name.lower()
    if len(name) >= 3 and low not in _SYMBOLS:  # words in any case: "Millimeters", "DAY"
        for kind, table in tables:
            if low in table:
                return kind, table[low]
    base = name[-1]
    prefix = name[:-1]
    if base in _PREFIXABLE and 1 <= len(prefix) <= 2:
        kind, factor = _PREFIXABLE[base]
        if prefix in _SI_PREFIX:
            return kind, _SI_PREFIX[prefix] * factor
        raise UnitsError(
            f"has units '{text}'; '{prefix}' in '{name}' is not an SI prefix (prefixes are "
            "case-sensitive: k is kilo, M is mega, m is milli)",
            source=source,
            variable=variable,
            expected="a precipitation depth or rate unit such as mm, kg m-2 s-1 or mm/day",
            fix=fix,
        )
    hint = ""
    if name != low and any(low in table for _, table in tables):
        hint = f" (unit symbols are case-sensitive; write '{low}' if that is meant)"
    raise UnitsError(
        f"has units '{text}'; '{name}' is not a unit of mass, length or time{hint}",
        source=source,
        variable=variable,
        expected="a precipitation depth or rate unit",
        fix=fix,
    )


@dataclass(frozen=True)
class UnitInfo:
    """What a units string means for precipitation.

    ``kind`` is "depth" (per step) or "rate"; ``to_mm`` converts one unit of depth to mm,
    or one unit of rate to mm per second (or mm per month when ``per_month``).

    Parameters
    ----------
    text : str
        The units string as written in the file.
    kind : {"depth", "rate"}
        A depth per step, or a depth per unit of time.
    to_mm : float
        Factor to mm (depth) or mm per second (rate).
    per_month : bool, default False
        A rate per calendar month (only meaningful for monthly data).

    Examples
    --------
    >>> UnitInfo("mm", "depth", 1.0).describe()
    'depth per step; x 1 to mm'
    """

    text: str
    kind: str
    to_mm: float
    per_month: bool = False

    def describe(self) -> str:
        if self.kind == "depth":
            return f"depth per step; x {self.to_mm:g} to mm"
        if self.per_month:
            return f"rate per month; x {self.to_mm:g} to mm per month (monthly data only)"
        return f"rate; x {self.to_mm:g} to mm/s, then x step length in seconds"


def _normalise(text: str) -> str:
    # case is kept: SI prefix symbols differ by case ("Mm" megametre, "mm" millimetre)
    t = text.strip()
    t = t.replace("**", "").replace("^", "").replace("·", " ").replace("*", " ")
    t = re.sub(r"(?<=[A-Za-z0-9])\.(?=[A-Za-z])", " ", t)  # "kg.m-2.s-1"
    t = re.sub(r"(?i)\bper ", "/ ", t)
    return re.sub(r"\s+", " ", t)


def parse_units(text: object, *, source: object = None, variable: object = None) -> UnitInfo:
    """Read a units string as a precipitation depth or rate, or raise :class:`UnitsError`.

    Parameters
    ----------
    text : str
        A UDUNITS-style string ("kg m-2 s-1", "mm/day", "in", "m") in any common spelling.
    source, variable : optional
        Named in the error message.

    Returns
    -------
    UnitInfo

    Raises
    ------
    UnitsError
        For a missing, unknown or non-precipitation unit (a length per area, a temperature).

    References
    ----------
    CF Conventions 1.11, section 3.1 "Units" (UDUNITS syntax). A mass of water per area
    is a depth through the density of water, 1000 kg m-3 (1 kg m-2 = 1 mm).

    Examples
    --------
    >>> u = parse_units("kg m-2 s-1")
    >>> u.kind, u.to_mm
    ('rate', 1.0)
    >>> round(parse_units("in/day").to_mm * 86400, 6)
    25.4
    """
    fix = (
        "set the variable's 'units' attribute to one of: kg m-2 s-1, kg m-2, mm, mm/day, "
        "mm/h, m, m/s, cm, in, in/day (or pass the data through xarray and set attrs['units'])"
    )
    if text is None or str(text).strip() == "":
        raise UnitsError(
            "has no units attribute, so its depth per time step cannot be known",
            source=source,
            variable=variable,
            expected="a precipitation depth or rate unit",
            fix=fix,
        )
    t = _normalise(str(text))
    scale, mass, length, time = 1.0, 0, 0, 0
    per_month = False
    denominator = False
    for part in re.split(r"(/)|\s+", t):
        if not part:
            continue
        if part == "/":
            denominator = True
            continue
        sign = -1 if denominator else 1
        try:
            scale *= float(part) ** sign
            denominator = False
            continue
        except ValueError:
            pass
        m = _TOKEN.match(part)
        if not m:
            raise UnitsError(
                f"has units '{text}', which are not understood",
                source=source,
                variable=variable,
                expected="a precipitation depth or rate unit",
                fix=fix,
            )
        name, power = m.group(1), int(m.group(2) or 1) * sign
        # "m2" with no sign means squared metres; a trailing number is the power
        kind, factor = _lookup(name, text, source, variable, fix)
        if kind == "length":
            assert factor is not None  # only month (a time unit) has no fixed factor
            scale *= float(factor) ** power
            length += power
        elif kind == "mass":
            assert factor is not None
            scale *= float(factor) ** power
            mass += power
        else:
            if factor is None:
                if power != -1:
                    raise UnitsError(
                        f"has units '{text}' with a month power other than -1",
                        source=source,
                        variable=variable,
                        fix=fix,
                    )
                per_month = True
            else:
                scale *= factor**power
            time += power
        denominator = False  # "a/b c" is (a/b)·c, as in UDUNITS
    if mass == 1 and length == -2:
        to_mm = scale / WATER_DENSITY * 1000.0  # kg m-2 -> m of water -> mm
    elif mass == 0 and length == 1:
        to_mm = scale * 1000.0
    else:
        raise UnitsError(
            f"has units '{text}', which are not a precipitation depth or rate",
            source=source,
            variable=variable,
            expected="length (mm, m, in), mass per area (kg m-2), or either per time",
            fix=fix,
        )
    if time == 0:
        return UnitInfo(str(text), "depth", to_mm)
    if time == -1:
        return UnitInfo(str(text), "rate", to_mm, per_month=per_month)
    raise UnitsError(
        f"has units '{text}' with time to the power {time}",
        source=source,
        variable=variable,
        expected="a depth or a depth per time",
        fix=fix,
    )


def length_to_metres(text: object, *, source: object = None, variable: object = None) -> float:
    """Factor from a length unit (m, km, ft, …) to metres, for elevation grids.

    Parameters
    ----------
    text : str
        The elevation variable's units; None or "" mean metres.
    source, variable : optional
        Named in the error message.

    Returns
    -------
    float

    Raises
    ------
    UnitsError
        When the units are not a length.

    Examples
    --------
    >>> length_to_metres("ft")
    0.3048
    """
    t = _normalise(str(text or "")).lower()
    if t in ("metre", "meter", "m", "metres", "meters", "m above sea level", "m asl"):
        return 1.0
    if t in _LENGTH:
        return _LENGTH[t]
    raise UnitsError(
        f"has units '{text}', not a length",
        source=source,
        variable=variable,
        expected="m, km or ft",
        fix="set the elevation variable's 'units' attribute to 'm' or 'ft'",
    )


def step_factor(
    units: UnitInfo, time: xr.DataArray, step: str, *, source: object = None, variable: object = None
) -> tuple[float | xr.DataArray, str]:
    """``(factor, description)``: what turns values in ``units`` into mm per time step.

    A depth needs only its length factor; a rate is multiplied by the length of each step
    in seconds in the time axis's own calendar (``factor`` is then a DataArray on time);
    per-month units are depths per step for monthly data only.

    Parameters
    ----------
    units : UnitInfo
        From :func:`parse_units`.
    time : xarray.DataArray
        Decoded time stamps (for the length of each step).
    step : str
        The step name (``timeaxis.infer_step``).
    source, variable : optional
        Named in the error message.

    Returns
    -------
    tuple
        ``(factor, description)``; ``factor`` is a float or a DataArray on time.

    Raises
    ------
    UnitsError
        For per-month units on data that are not monthly.

    Examples
    --------
    >>> import pandas as pd, xarray as xr
    >>> t = xr.DataArray(pd.date_range("2001-01-01", periods=2), dims="time")
    >>> factor, how = step_factor(parse_units("mm/h"), t, "day")
    >>> factor.values
    array([24., 24.])
    """
    from . import timeaxis

    if units.kind == "depth":
        return units.to_mm, f"depth in '{units.text}' x {units.to_mm:g} -> mm"
    if units.per_month:
        if step != "month":
            raise UnitsError(
                f"has per-month units '{units.text}' but {step} steps",
                source=source,
                variable=variable,
                expected="monthly data for per-month units",
                fix="set the units to the actual rate (for example mm/day)",
            )
        return units.to_mm, f"monthly depth in '{units.text}' x {units.to_mm:g} -> mm"
    seconds = timeaxis.step_seconds(time, step)
    how = (
        "x days in each month of the file's calendar x 86400 s"
        if step == "month"
        else f"x {timeaxis.STEP_SECONDS[step]:g} s per {step}"
    )
    return seconds * units.to_mm, f"rate in '{units.text}' x {units.to_mm:g} -> mm/s, {how}"
