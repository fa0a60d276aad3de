"""What every result variable means on screen: label, units, display format, description.

This is the one place where the words and units of a user-facing number are written
down.  An analysis attaches them to its variables with :func:`describe`; the widgets,
the CSV and NetCDF exports, the HTML report and the command line read them back with
:func:`frame` (a table for people or for files) and :func:`column_heading`, so a column
is called and formatted the same way everywhere.

Attributes set on a described variable (all strings unless noted):

``label``           plain words, lower case, no units ("seasonal share")
``units``           CF units of the stored numbers ("1", "mm", "m3", "km2", "%")
``display_units``   units the number is shown in ("%", "million m³")
``display_scale``   float: shown value = stored value × scale (a fraction 0.3 shows as 30 %)
``display_format``  a format spec for the shown value (",.0f", ".1f", ".3g")
``description``     one sentence saying what the number is and how it was made
``values_in``       (tables only, in ``table.attrs["columns"]``) the units of the numbers
                    as they stand in that table, so a CSV's metadata can name them
``unit_system``     (tables and shown fields) "SI" or "US" when a unit system was applied

Unit systems
------------
Everything is computed and stored in SI units (mm, m³, km²).  A user may choose to see
numbers in US customary units instead; the choice is applied at display time from the
stored units, here and nowhere else (:data:`UNIT_SYSTEMS`, :func:`unit_attrs`):

======================  =====================================  ==========================
stored units            SI shown as                            US customary shown as
======================  =====================================  ==========================
``mm`` (and ``mm/yr``,  mm (the catalogue's format)            in, one decimal more than
``mm d-1`` ...)                                                the mm format (1 in = 25.4 mm)
``m3``                  million m³, two decimals               acre-ft, whole numbers with
                                                               thousands separators
``km2``                 km²                                    mi² (1 mi² = 2.589988110336 km²)
``%``, ``1``, counts    unchanged                              unchanged
======================  =====================================  ==========================

The factors are exact by definition: the inch is 25.4 mm and the foot 0.3048 m (the
international yard and pound agreement of 1959; NIST SP 811, Appendix B), so the acre-foot
is 43 560 ft³ = 1 233.481 837 547 52 m³ (:data:`climwidgets.geo.aggregate.ACRE_FOOT_M3`)
and the statute mile 1 609.344 m.

* Tables for people: ``frame(ds, display=True, units="US")``,
  ``display_frame(table, units="US")``, ``people_frame(table, units="US")``; a table already
  shown in SI is re-expressed by :func:`shown_in_units` (the widgets' units menu).
* Tables for files: ``frame(ds, units="US")`` and :func:`to_units` give the numbers
  converted (not display-scaled) under names whose unit suffix says so
  (``annual_mean_mm`` becomes ``annual_mean_in``, ``area_km2`` ``area_mi2``; a volume in m³
  whose acre-foot twin is in the table is left out, the twin holds it).  In SI the files
  keep the stored numbers.  Either way ``values_in`` names each column's units, and the CSV
  metadata (:func:`climwidgets.report.tables.metadata`) lists them.
* Maps: :func:`field_in_units` sets ``display_scale`` / ``display_units`` on a field, which
  :func:`climwidgets.plot.maps.as_shown` then draws, colour bar and hover alike.
"""

from __future__ import annotations

from collections.abc import Callable, Hashable, Sequence
from typing import Any

import re
from dataclasses import dataclass

import numpy as np
import pandas as pd
import xarray as xr

from ..compute.depth_units import MM_PER_INCH
from ..errors import ParameterError
from ..geo.aggregate import ACRE_FOOT_M3

__all__ = [
    "Meta",
    "CATALOGUE",
    "INDEX_CATALOGUE",
    "ENSEMBLE_STATS",
    "MEMBER_VIEWS",
    "ensemble_attrs",
    "member_view_attrs",
    "member_view_words",
    "index_meta",
    "describe",
    "frame",
    "display_frame",
    "people_frame",
    "column_heading",
    "format_cell",
    "table_variables",
    "UNIT_SYSTEMS",
    "KM2_PER_MI2",
    "unit_system",
    "unit_attrs",
    "to_units",
    "shown_in_units",
    "field_in_units",
]


@dataclass(frozen=True)
class Meta:
    """How one result variable is named and shown (see the module docstring).

    Parameters
    ----------
    label : str
        Plain words, lower case, no units.
    units : str
        CF units of the stored numbers.
    description : str
        One sentence on what the number is.
    display_units : str, optional
        Units the number is shown in; default ``units``.
    display_scale : float
        Shown value = stored value × scale.
    display_format : str
        Format spec of the shown value.

    Examples
    --------
    >>> CATALOGUE["seasonal_share_1"].display_units, CATALOGUE["seasonal_share_1"].display_scale
    ('%', 100.0)
    """

    label: str
    units: str
    description: str
    display_units: str | None = None
    display_scale: float = 1.0
    display_format: str = ".4g"

    def attrs(self) -> dict[str, Any]:
        return {
            "label": self.label,
            "units": self.units,
            "description": self.description,
            "display_units": self.units if self.display_units is None else self.display_units,
            "display_scale": float(self.display_scale),
            "display_format": self.display_format,
        }


_AREA = (
    "area of the basin outline on the sphere of the authalic radius 6 371 007.2 m "
    "(edges straight in lon/lat); every table, volume and export uses this one area"
)

#: The suite's result variables by name.  An analysis may override any field per call
#: (for example a label that names the confidence level) through :func:`describe`.
CATALOGUE: dict[str, Meta] = {
    # basin table
    "area_km2": Meta("area", "km2", _AREA, "km²", 1.0, ",.1f"),
    "annual_mean_mm": Meta(
        "mean annual total", "mm", "mean of the basin's annual totals over the complete years", "mm", 1.0, ",.0f"
    ),
    "n_years": Meta("complete years", "1", "number of complete years behind the annual mean", "", 1.0, ".0f"),
    "seasonal_share_1": Meta(
        "seasonal share",
        "1",
        "share of the annual total that falls in the season (ratio of the basin's seasonal and annual sums)",
        "%",
        100.0,
        ".1f",
    ),
    "normal_annual_mm": Meta(
        "annual normal", "mm", "sum of the basin's 12 monthly normals over the baseline", "mm", 1.0, ",.0f"
    ),
    "volume_per_year_m3": Meta(
        "volume per year", "m3", "annual mean depth times the basin area", "million m³", 1e-6, ",.2f"
    ),
    "volume_per_year_acre_ft": Meta(
        "volume per year",
        "acre-ft",
        "annual mean depth times the basin area, in acre-feet (international foot)",
        "acre-ft",
        1.0,
        ",.0f",
    ),
    "latest_year": Meta("latest year", "1", "the last complete year of the record", "", 1.0, ".0f"),
    "latest_year_mm": Meta("latest year total", "mm", "total of the latest complete year", "mm", 1.0, ",.0f"),
    "latest_year_percent_of_normal": Meta(
        "latest year, percent of normal", "%", "latest year's total against the annual normal", "%", 1.0, ".0f"
    ),
    "data_coverage_1": Meta(
        "area with data",
        "1",
        "smallest share of the basin's weighted area with data in any month of the record (1 = complete)",
        "%",
        100.0,
        ".0f",
    ),
    # seasonal share per basin
    "share_slope": Meta(
        "Sen slope of the seasonal share",
        "1/yr",
        "Sen slope of the basin's per-year share",
        "% points per decade",
        1000.0,
        ".2f",
    ),
    "share_pvalue": Meta("Mann-Kendall p", "1", "two-sided Mann-Kendall p-value of the per-year share", "", 1.0, ".2f"),
    "n_share_years": Meta("years", "1", "years with a seasonal share", "", 1.0, ".0f"),
    # what-if
    "season": Meta("season", "", "the season whose precipitation is changed", "", 1.0, ""),
    "percent": Meta("change", "%", "change applied to the season's precipitation", "%", 1.0, ".1f"),
    "n_seasons": Meta("seasons used", "1", "complete seasons behind the mean", "", 1.0, ".0f"),
    "seasonal_volume_per_year_m3": Meta(
        "season's volume per year", "m3", "mean seasonal depth times the basin area", "million m³", 1e-6, ",.2f"
    ),
    "delta_volume_per_year_m3": Meta(
        "change in volume per year", "m3", "the season's volume times the change", "million m³", 1e-6, ",.2f"
    ),
    "delta_volume_per_year_acre_ft": Meta(
        "change in volume per year", "acre-ft", "the change in acre-feet", "acre-ft", 1.0, ",.0f"
    ),
    # areal design depths
    "return_period": Meta("return period", "yr", "average recurrence interval", "years", 1.0, "g"),
    "point_at_site_mm": Meta(
        "point depth, at-site", "mm", "basin mean of each cell's own GEV return level (L-moments)", "mm", 1.0, ".1f"
    ),
    "point_at_site_lower_mm": Meta(
        "at-site lower", "mm", "basin mean of the cells' lower interval ends", "mm", 1.0, ".1f"
    ),
    "point_at_site_upper_mm": Meta(
        "at-site upper", "mm", "basin mean of the cells' upper interval ends", "mm", 1.0, ".1f"
    ),
    "point_regional_mm": Meta(
        "point depth, regional",
        "mm",
        "basin mean of index (mean annual maximum) x the basin's regional growth curve",
        "mm",
        1.0,
        ".1f",
    ),
    "point_regional_lower_mm": Meta(
        "regional lower", "mm", "basin mean of the regional lower interval ends", "mm", 1.0, ".1f"
    ),
    "point_regional_upper_mm": Meta(
        "regional upper", "mm", "basin mean of the regional upper interval ends", "mm", 1.0, ".1f"
    ),
    "heterogeneity_h1": Meta(
        "heterogeneity H1",
        "1",
        "Hosking-Wallis H from the L-CV: < 1 acceptably homogeneous, >= 2 heterogeneous",
        "",
        1.0,
        ".2f",
    ),
    "discordant_cells": Meta("discordant cells", "1", "cells whose D_i exceeds the critical value", "", 1.0, ".0f"),
    "region_cells": Meta(
        "cells in region", "1", "cells pooled in the basin's region (at least half covered)", "", 1.0, ".0f"
    ),
    "areal_estimate_mm": Meta("areal depth", "mm", "return level of the basin-mean annual maxima", "mm", 1.0, ".1f"),
    "areal_lower_mm": Meta("lower", "mm", "lower end of the bootstrap interval", "mm", 1.0, ".1f"),
    "areal_upper_mm": Meta("upper", "mm", "upper end of the bootstrap interval", "mm", 1.0, ".1f"),
    "warming_factor": Meta("warming factor", "1", "(1 + rate) ** warming applied to the depths", "", 1.0, ".3f"),
    # where a step stands in each basin's record (analyses.anomalies; label and units set per call)
    "anomaly_at_step": Meta("anomaly", "", "the basin's anomaly at the step shown", None, 1.0, ".2f"),
    "rank_from_driest": Meta(
        "rank (1 = driest)", "1", "place of the step among the record's steps, counted from the driest", "", 1.0, ".0f"
    ),
    "steps_in_record": Meta("steps in record", "1", "steps of the record with a value", "", 1.0, ".0f"),
    "driest_in_record": Meta("driest in record", "", "lowest anomaly of the record", None, 1.0, ".2f"),
    "wettest_in_record": Meta("wettest in record", "", "highest anomaly of the record", None, 1.0, ".2f"),
    "spi_class": Meta("SPI class", "", "class of the SPI value (WMO 2012, SPI User Guide, Table 1)", "", 1.0, ""),
    # windward / leeward bands
    "windward_mean": Meta(
        "windward mean", "mm/yr", "mean annual total of the windward cells of the band", "mm per year", 1.0, ",.0f"
    ),
    "leeward_mean": Meta(
        "leeward mean", "mm/yr", "mean annual total of the leeward cells of the band", "mm per year", 1.0, ",.0f"
    ),
    "ratio": Meta("leeward / windward", "1", "leeward mean over windward mean", "", 1.0, ".3f"),
    "ratio_lower": Meta("lower", "1", "lower end of the bootstrap interval of the ratio", "", 1.0, ".3f"),
    "ratio_upper": Meta("upper", "1", "upper end of the bootstrap interval of the ratio", "", 1.0, ".3f"),
    "model_ratio": Meta(
        "linear model leeward / windward",
        "1",
        "the same ratio for the linear orographic model (Smith and Barstad 2004)",
        "",
        1.0,
        ".3f",
    ),
    # products
    "seasonal_share": Meta(
        "seasonal share", "1", "share of the annual total falling in the season (ratio of sums)", "fraction", 1.0, ".3f"
    ),
    "normal_mm": Meta("annual normal", "mm", "sum of the 12 monthly normals over the baseline", "mm", 1.0, ",.0f"),
    "trend_mm_per_year": Meta("Sen slope", "mm/yr", "Sen slope of the annual totals", "mm per year", 1.0, ".2f"),
    "trend_pvalue": Meta(
        "Mann-Kendall p-value", "1", "two-sided Mann-Kendall p-value of the annual totals", "", 1.0, ".2f"
    ),
    # depth-duration-frequency tables (units "mm" or "in", set per call)
    "duration": Meta("duration", "", "duration of the running total", "", 1.0, ""),
    "ddf_estimate": Meta(
        "depth",
        "",
        "GEV (L-moment) return level of the annual maxima of running totals, "
        "raised where needed so depths never fall with duration",
        None,
        1.0,
        ".1f",
    ),
    "ddf_lower": Meta("lower", "", "lower end of the bootstrap interval", None, 1.0, ".1f"),
    "ddf_upper": Meta("upper", "", "upper end of the bootstrap interval", None, 1.0, ".1f"),
    # precipitation indices per basin (labels name the index per call)
    "index_mean": Meta(
        "mean", "", "mean over the period's years of the basin mean of the per-cell index", None, 1.0, ".4g"
    ),
    "index_slope": Meta("Sen slope", "", "Sen slope of the basin's per-year index, per decade", None, 10.0, ",.2f"),
    "index_pvalue": Meta(
        "Mann-Kendall p", "1", "two-sided Mann-Kendall p-value of the basin's per-year index", "", 1.0, ".2f"
    ),
    "n_index_years": Meta("years", "1", "years with a value behind the mean and the trend", "", 1.0, ".0f"),
    # climate-change signals per basin (analyses.scenario)
    "share_change_1": Meta(
        "change in seasonal share",
        "1",
        "future minus historical seasonal share of the basin (ratio of sums over each period)",
        "% points",
        100.0,
        "+.1f",
    ),
    "normal_change_1": Meta(
        "change in annual normal",
        "1",
        "future over historical annual normal of the basin, minus one",
        "%",
        100.0,
        "+.1f",
    ),
    "historical_depth_mm": Meta(
        "areal design depth, historical",
        "mm",
        "return level of the basin-mean annual maxima of the historical run",
        "mm",
        1.0,
        ".1f",
    ),
    "future_depth_mm": Meta(
        "areal design depth, future",
        "mm",
        "return level of the basin-mean annual maxima of the future run",
        "mm",
        1.0,
        ".1f",
    ),
    "depth_change_1": Meta(
        "change in design depth",
        "1",
        "future over historical areal design depth of the basin, minus one",
        "%",
        100.0,
        "+.1f",
    ),
    "agreement_1": Meta(
        "members agreeing",
        "1",
        "share of members whose change has the sign of the ensemble-median change",
        "%",
        100.0,
        ".0f",
    ),
}


#: ETCCDI precipitation indices (Karl, Nicholls & Ghazi 1999; Zhang et al. 2011), shown under their
#: short names.  ``R<nn>mm`` for any threshold is made by :func:`index_meta`.
INDEX_CATALOGUE: dict[str, Meta] = {
    "PRCPTOT": Meta(
        "PRCPTOT, total on wet days", "mm", "sum of daily precipitation on wet days (at least 1 mm)", "mm", 1.0, ",.0f"
    ),
    "SDII": Meta(
        "SDII, mean wet-day intensity",
        "mm d-1",
        "PRCPTOT divided by the number of wet days (at least 1 mm)",
        "mm per wet day",
        1.0,
        ".1f",
    ),
    "CDD": Meta(
        "CDD, longest dry spell",
        "d",
        "longest run of days with less than 1 mm, cut at the year boundary (each part counts in its own year)",
        "days",
        1.0,
        ".0f",
    ),
    "CWD": Meta(
        "CWD, longest wet spell",
        "d",
        "longest run of days with at least 1 mm, cut at the year boundary (each part counts in its own year)",
        "days",
        1.0,
        ".0f",
    ),
    "R10mm": Meta("R10mm, days with at least 10 mm", "d", "count of days with 10 mm or more", "days", 1.0, ".1f"),
    "R20mm": Meta("R20mm, days with at least 20 mm", "d", "count of days with 20 mm or more", "days", 1.0, ".1f"),
    "R95p": Meta(
        "R95p, total on very wet days",
        "mm",
        "precipitation on wet days above the 95th percentile of the base period's wet days",
        "mm",
        1.0,
        ",.0f",
    ),
    "R99p": Meta(
        "R99p, total on extremely wet days",
        "mm",
        "precipitation on wet days above the 99th percentile of the base period's wet days",
        "mm",
        1.0,
        ",.0f",
    ),
    "R95pTOT": Meta("R95pTOT, share from very wet days", "%", "100 × R95p / PRCPTOT", "%", 1.0, ".1f"),
    "R99pTOT": Meta("R99pTOT, share from extremely wet days", "%", "100 × R99p / PRCPTOT", "%", 1.0, ".1f"),
    "Rx1day": Meta("Rx1day, wettest day", "mm", "largest daily depth of the year", "mm", 1.0, ".1f"),
    "Rx5day": Meta(
        "Rx5day, wettest 5 days",
        "mm",
        "largest sum over 5 consecutive days; a window belongs to the year of its last day",
        "mm",
        1.0,
        ".1f",
    ),
}


def index_meta(name: str) -> Meta:
    """The display attributes of an ETCCDI index, ``R<nn>mm`` for any threshold included.

    Parameters
    ----------
    name : str
        An ETCCDI index name ("Rx1day", "SDII", "R20mm", "R35mm", ...).

    Returns
    -------
    Meta

    References
    ----------
    Zhang, X. et al. (2011) Indices for monitoring changes in extremes based on daily
    temperature and precipitation data. WIREs Clim. Change 2, 851-870. doi:10.1002/wcc.147

    Examples
    --------
    >>> index_meta("R20mm").label
    'R20mm, days with at least 20 mm'
    """
    import re

    if name in INDEX_CATALOGUE:
        return INDEX_CATALOGUE[name]
    m = re.fullmatch(r"R(\d+(?:\.\d+)?)mm", name)
    if m is None:
        raise KeyError(f"{name!r} is not an ETCCDI precipitation index")
    nn = float(m.group(1))
    return Meta(
        f"{name}, days with at least {nn:g} mm", "d", f"count of days with {nn:g} mm or more", "days", 1.0, ".1f"
    )


#: How each ensemble figure of a basin table is named: the column's own label followed by
#: these words (``analyses.ensemble.ensemble_basin_table``).  The units and the display
#: format stay those of the column.
ENSEMBLE_STATS: dict[str, str] = {
    "mean": "ensemble mean",
    "median": "ensemble median",
    "min": "lowest member",
    "max": "highest member",
    "lower_quartile": "ensemble lower percentile",
    "upper_quartile": "ensemble upper percentile",
    "std": "ensemble standard deviation",
}

#: The two summaries a member menu offers besides the members themselves
#: (``analyses.ensemble.member_view``): the words shown, the tag of export file names and
#: what the number is.  Both keep the units of the number they summarise (the spread is a
#: difference of two members, so a share in % becomes a spread in % points).
MEMBER_VIEWS: dict[str, dict[str, str]] = {
    "mean": {
        "label": "ensemble mean",
        "tag": "ensemble-mean",
        "description": "mean over the members (a member without a value is left out)",
    },
    "spread": {
        "label": "spread between members",
        "tag": "ensemble-spread",
        "description": "highest minus lowest member (a member without a value is left out)",
    },
}


def member_view_words(choice: str, n_members: int | None = None) -> dict[str, str]:
    """Menu words, file-name tag and description of one member view.

    ``choice`` is ``"mean"``, ``"spread"`` or a member label; ``n_members`` adds the
    ensemble size to the description of the summaries.

    Parameters
    ----------
    choice : str
        "mean", "spread" or a member label.
    n_members : int, optional
        The ensemble size.

    Returns
    -------
    dict
        ``label``, ``tag`` (for file names) and ``description``.

    Examples
    --------
    >>> member_view_words("mean", 5)["tag"]
    'ensemble-mean'
    """
    if isinstance(choice, str) and choice in MEMBER_VIEWS:
        words = dict(MEMBER_VIEWS[choice])
        if n_members is not None:
            words["description"] = f"{words['label']} of {n_members} members: {words['description']}"
        return words
    safe = "".join(c if c.isalnum() or c in "-." else "-" for c in str(choice)).strip("-") or "member"
    return {"label": f"member {choice}", "tag": f"member-{safe}", "description": f"ensemble member {choice}"}


def member_view_attrs(attrs: dict[str, Any], choice: str, n_members: int | None = None) -> dict[str, Any]:
    """The attributes of a variable seen as one member view (see :data:`MEMBER_VIEWS`).

    Every view records itself in ``ensemble_member``.  A summary also names itself in the
    label of a described variable ("seasonal share, ensemble mean") or in its
    ``long_name``; a member keeps its label (the numbers are that member's own).

    Parameters
    ----------
    attrs : dict
        The variable's attributes.
    choice : str
        "mean", "spread" or a member label.
    n_members : int, optional
        The ensemble size, for the description.

    Returns
    -------
    dict

    Examples
    --------
    >>> member_view_attrs({"label": "seasonal share", "units": "1"}, "spread", 5)["label"]
    'seasonal share, spread between members'
    """
    words = member_view_words(choice, n_members)
    out = dict(attrs)
    out["ensemble_member"] = words["label"]
    if isinstance(choice, str) and choice in MEMBER_VIEWS:
        if "label" in out:
            out["label"] = f"{out['label']}, {words['label']}"
            out["description"] = f"{MEMBER_VIEWS[choice]['description']}, of: {out.get('description', '')}"
        elif "long_name" in out:
            out["long_name"] = f"{out['long_name']}, {words['label']}"
    return out


def ensemble_attrs(attrs: dict[str, Any], stat: str, words: str | None = None) -> dict[str, Any]:
    """The display attributes of one ensemble figure of a described column.

    Parameters
    ----------
    attrs : dict
        The described column's attributes.
    stat : str
        The ensemble statistic ("mean", "min", "max", ...).
    words : str, optional
        Words for the statistic; default those of ``stat``.

    Returns
    -------
    dict

    Examples
    --------
    >>> ensemble_attrs({"label": "seasonal share", "units": "1"}, "mean")["label"]
    'seasonal share, ensemble mean'
    """
    words = ENSEMBLE_STATS[stat] if words is None else words
    out = dict(attrs)
    out["label"] = f"{attrs.get('label', '')}, {words}"
    out["description"] = f"{words} over the members of: {attrs.get('description', '')}"
    return out


def describe(da: xr.DataArray, name: str, **overrides: Any) -> xr.DataArray:
    """``da`` named ``name`` with the display attributes of :data:`CATALOGUE` (and overrides).

    Parameters
    ----------
    da : xarray.DataArray
    name : str
        A key of :data:`CATALOGUE` (the variable's name).
    **overrides
        Attributes to set instead of the catalogue's (``label``, ``units`` ...).

    Returns
    -------
    xarray.DataArray
        A new object named ``name``; ``da`` is not changed.

    Examples
    --------
    >>> import xarray as xr
    >>> share = describe(xr.DataArray([0.3, 0.45], dims="basin", coords={"basin": ["a", "b"]}), "seasonal_share_1")
    >>> share.name, share.attrs["display_units"]
    ('seasonal_share_1', '%')
    """
    meta = CATALOGUE.get(name)
    attrs = (
        meta.attrs()
        if meta is not None
        else {
            "label": name.replace("_", " "),
            "units": "",
            "description": "",
            "display_units": "",
            "display_scale": 1.0,
            "display_format": ".4g",
        }
    )
    attrs.update(overrides)
    if "units" in overrides and "display_units" not in overrides and meta is not None and meta.units == "":
        attrs["display_units"] = overrides["units"]
    out = da.rename(name)
    out.attrs = {**{k: v for k, v in da.attrs.items() if k in ("history", "basin")}, **attrs}
    return out


def column_heading(attrs: dict[str, Any], name: str = "") -> str:
    """'label [display units]', or the label alone when the number has no units.

    Parameters
    ----------
    attrs : dict
        A described variable's attributes.
    name : str
        Used when there is no label.

    Returns
    -------
    str

    Examples
    --------
    >>> import xarray as xr
    >>> share = describe(xr.DataArray([0.3, 0.45], dims="basin", coords={"basin": ["a", "b"]}), "seasonal_share_1")
    >>> column_heading(share.attrs)
    'seasonal share [%]'
    """
    label = attrs.get("label", name)
    units = attrs.get("display_units", attrs.get("units", ""))
    return f"{label} [{units}]" if units and units != "1" else str(label)


def format_cell(value: object, attrs: dict[str, Any]) -> str:
    """One shown value as text (the display scale is already applied), '–' when missing.

    Parameters
    ----------
    value : object
        The shown value.
    attrs : dict
        Its column's attributes (``display_format``).

    Returns
    -------
    str
        Never scientific notation; no minus sign on a value that rounds to zero.

    Examples
    --------
    >>> format_cell(12345.6, {"display_format": ".4g"}), format_cell(float("nan"), {})
    ('12,346', '–')
    """
    if value is None or value is pd.NA:
        return "–"
    if isinstance(value, (str, bytes)):
        return str(value)
    try:
        v = float(value)  # type: ignore[arg-type]  # anything float() takes
    except (TypeError, ValueError):
        return str(value)
    if not np.isfinite(v):
        return "–"
    spec = attrs.get("display_format") or ".4g"
    text = format(v, spec)
    if "e" in text.lower():  # no scientific notation in a table for people
        return _plain_number(v)
    if text.startswith("-") and not text.strip("-+0.,% "):
        # a value that rounds to zero has no sign to show ("-0.0" from rounding noise)
        text = ("+" if "+" in spec else "") + text[1:]
    return text


def table_variables(ds: xr.Dataset, index: Sequence[Hashable]) -> list[str]:
    """The variables of ``ds`` that are columns of a table indexed by ``index`` dims.

    Parameters
    ----------
    ds : xarray.Dataset
    index : sequence of hashable

    Returns
    -------
    list of str

    Examples
    --------
    >>> import xarray as xr
    >>> share = describe(xr.DataArray([0.3, 0.45], dims="basin", coords={"basin": ["a", "b"]}), "seasonal_share_1")
    >>> table_variables(xr.Dataset({"seasonal_share_1": share}), ("basin",))
    ['seasonal_share_1']
    """
    index = tuple(index)
    return [str(k) for k, v in ds.data_vars.items() if set(v.dims) == set(index) and "label" in v.attrs]


# ------------------------------------------------------------------ unit systems
#: The unit systems a user can choose, with the words menus and reports show.
UNIT_SYSTEMS: dict[str, str] = {"SI": "SI (mm, million m³, km²)", "US": "US customary (in, acre-ft, mi²)"}

#: Square kilometres in one square statute mile: (1.609344 km)² (international mile, 1959).
KM2_PER_MI2 = 1.609344**2

_SYSTEM_WORDS = {"si": "SI", "metric": "SI", "us": "US", "us customary": "US", "customary": "US"}


def unit_system(units: object, source: str = "units") -> str:
    """``"SI"`` or ``"US"`` for a unit-system choice ("SI", "si", "US", "us", "US customary").

    Parameters
    ----------
    units : object
        What the user chose; None means SI.
    source : str
        The parameter's name, for the message.

    Returns
    -------
    str

    Raises
    ------
    ParameterError
        For anything else, saying what is offered.

    Examples
    --------
    >>> unit_system("us customary"), unit_system("si")
    ('US', 'SI')
    """
    key = str(units).strip().lower() if isinstance(units, str) else None
    if key not in _SYSTEM_WORDS:
        raise ParameterError(
            f"units={units!r} is not a unit system offered here",
            source=source,
            variable="units",
            expected="'SI' (mm, million m³, km²) or 'US' (in, acre-ft, mi²)",
            fix="pass units='SI' (default) or units='US'",
        )
    return _SYSTEM_WORDS[key]


def _one_more_decimal(spec: str) -> str:
    """A fixed-point format with one decimal more (",.0f" -> ",.1f"); others unchanged."""
    m = re.fullmatch(r"([^.]*)\.(\d+)f", spec or "")
    return f"{m.group(1)}.{int(m.group(2)) + 1}f" if m else spec


def _us_conversion(units: str) -> tuple[float, str, str | None, Callable[[str], str]] | None:
    """(factor from the stored number, CF units, words replacing the SI display units or
    None to keep them with 'mm' made 'in', format rule) for stored SI ``units``; None if
    the units stay."""
    u = str(units or "").strip()
    if u == "m3":
        return 1.0 / ACRE_FOOT_M3, "acre-ft", "acre-ft", lambda spec: ",.0f"
    if u == "km2":
        return 1.0 / KM2_PER_MI2, "mi2", "mi²", lambda spec: spec
    if u == "mm" or (u.startswith("mm") and not u[2:3].isalpha()):  # mm, mm/yr, mm d-1, mm/h
        return 1.0 / MM_PER_INCH, "in" + u[2:], None, _one_more_decimal
    return None


def unit_attrs(attrs: dict[str, Any], units: str = "SI") -> dict[str, Any]:
    """The display attributes of a described number in the unit system ``units``.

    Parameters
    ----------
    attrs : dict[str, Any]
        The variable's attributes (``units`` of the stored SI number, ``display_units``,
        ``display_scale``, ``display_format``, ``label``).
    units : {"SI", "US"}
        The unit system (see :func:`unit_system`).

    Returns
    -------
    dict
        A copy: in SI the same attributes; in US, for a depth, volume or area, the
        ``display_units``, ``display_scale`` (still from the stored SI number) and
        ``display_format`` of the US customary unit, and ``unit_system = "US"``.
        Percentages, fractions and counts are unchanged.

    References
    ----------
    NIST (2008). Guide for the Use of the International System of Units (SI), Special
    Publication 811, Appendix B (inch, foot, mile, acre-foot).

    Examples
    --------
    >>> a = unit_attrs({"units": "mm", "display_units": "mm", "display_scale": 1.0,
    ...                 "display_format": ",.0f"}, "US")
    >>> a["display_units"], round(a["display_scale"] * 25.4, 12), a["display_format"]
    ('in', 1.0, ',.1f')
    """
    system = unit_system(units)
    out = dict(attrs)
    out["unit_system"] = system
    conv = _us_conversion(attrs.get("units", "")) if system == "US" else None
    if conv is None:
        return out
    factor, _cf, words, rule = conv
    si_units = str(attrs.get("display_units") or attrs.get("units", ""))
    scale = float(attrs.get("display_scale", 1.0))
    if attrs.get("units") == "m3":  # million m³ is an SI display choice: acre-feet are shown whole
        out["display_scale"] = factor
    else:
        out["display_scale"] = scale * factor
    if words is not None:
        out["display_units"] = words
    else:  # "mm" -> "in", "mm per year" -> "in per year", "mm per decade" -> "in per decade"
        out["display_units"] = (
            re.sub(r"^mm(?![a-zA-Z])", "in", si_units)
            if si_units.startswith("mm")
            else "in" + str(attrs.get("units", ""))[2:]
        )
    out["display_format"] = rule(str(attrs.get("display_format") or ".4g"))
    return out


_US_SUFFIXES = (("_m3", "_acre_ft"), ("_km2", "_mi2"), ("_mm_per_year", "_in_per_year"), ("_mm", "_in"))


def _us_name(name: str) -> str:
    for si, us in _US_SUFFIXES:
        if name.endswith(si):
            return name[: -len(si)] + us
    return name


def _column_attrs(table: pd.DataFrame, col: Hashable) -> dict[str, Any] | None:
    described = table.attrs.get("columns") or {}
    attrs = described.get(col) if isinstance(described.get(col), dict) else None
    if attrs is None and col in CATALOGUE:
        attrs = CATALOGUE[col].attrs()
    return attrs


def to_units(table: pd.DataFrame, units: str = "SI") -> pd.DataFrame:
    """A stored table (variable names as columns, SI numbers) in the unit system ``units``.

    What a CSV holds: in SI the stored numbers unchanged; in US depths in inches, volumes
    in acre-feet and areas in square miles (converted, not display-scaled), under names
    whose unit suffix says so (``annual_mean_mm`` -> ``annual_mean_in``).  A column whose
    new name is already a column (a volume in m³ beside its acre-foot twin) is left out.
    ``attrs["columns"]`` of the result gives each column's attributes, ``values_in``
    naming the units of its numbers.

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`frame` (``display=False``) or with columns the catalogue knows.
    units : {"SI", "US"}

    Returns
    -------
    pandas.DataFrame
        A new table; the input is not changed.

    Examples
    --------
    >>> t = pd.DataFrame({"annual_mean_mm": [254.0], "n_years": [30]})
    >>> to_units(t, "US").round(6).to_dict("list")
    {'annual_mean_in': [10.0], 'n_years': [30]}
    """
    system = unit_system(units)
    out = table.copy()
    meta, renamed, drop = {}, {}, []
    for col in table.columns:
        attrs = _column_attrs(table, col)
        if attrs is None:
            continue
        attrs = dict(attrs)
        conv = _us_conversion(attrs.get("units", "")) if system == "US" else None
        if conv is None:
            meta[col] = {**attrs, "values_in": attrs.get("values_in", attrs.get("units", "")), "unit_system": system}
            continue
        factor, cf, _, _ = conv
        shown = unit_attrs(attrs, "US")
        name = _us_name(str(col))
        if name != col and name in table.columns:
            drop.append(col)
            continue
        out[col] = out[col] * factor
        renamed[col] = name
        meta[name] = {**shown, "units": cf, "values_in": cf, "display_scale": shown["display_scale"] / factor}
    out = out.drop(columns=drop).rename(columns=renamed)
    out.attrs = {**{k: v for k, v in table.attrs.items() if k != "columns"}, "columns": meta}
    return out


def shown_in_units(table: pd.DataFrame, units: str = "SI") -> pd.DataFrame:
    """A table as shown (from :func:`frame` with ``display=True`` or :func:`display_frame`,
    in SI) re-expressed in the unit system ``units``: numbers, headings and formats.

    The widgets keep the table their analysis gave and show it through this, so the units
    menu redraws without computing anything.  Columns without attributes are kept as
    they are.

    Parameters
    ----------
    table : pandas.DataFrame
        A table as shown in SI.
    units : {"SI", "US"}

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> import xarray as xr
    >>> mean = describe(xr.DataArray([500.0], dims="basin", coords={"basin": ["a"]}), "annual_mean_mm")
    >>> shown = shown_in_units(frame(xr.Dataset({"annual_mean_mm": mean}), display=True), "US")
    >>> [(c, round(v, 2)) for c, v in shown.iloc[0].items()]  # 500 mm / 25.4 mm per inch
    [('mean annual total [in]', 19.69)]
    """
    system = unit_system(units)
    described = table.attrs.get("columns") or {}
    if system == "SI" or not described:
        return table
    out = table.copy()
    meta, renamed = {}, {}
    for col in table.columns:
        attrs = described.get(col)
        if not isinstance(attrs, dict):
            continue
        if attrs.get("unit_system") == system:
            meta[col] = attrs
            continue
        new = unit_attrs(attrs, system)
        old_scale, new_scale = float(attrs.get("display_scale", 1.0)), float(new.get("display_scale", 1.0))
        if new_scale != old_scale and pd.api.types.is_numeric_dtype(out[col]):
            out[col] = out[col] * (new_scale / old_scale)
        renamed[col] = column_heading(new, str(col))
        meta[renamed[col]] = {**new, "values_in": new.get("display_units", "")}
    out = _drop_twins(out, renamed, described).rename(columns=renamed)
    out.attrs = {**{k: v for k, v in table.attrs.items() if k != "columns"}, "columns": meta}
    return out


def field_in_units(field: xr.DataArray, units: str = "SI", label: str | None = None) -> tuple[xr.DataArray, str | None]:
    """``field`` with the display attributes of the unit system (``(field, label)``).

    The numbers are not changed: :func:`climwidgets.plot.maps.as_shown` scales them when
    drawing, so the colour bar and the hover read the chosen units.  A ``label`` naming
    the SI display units in brackets ("mean annual total [mm]") is given the new ones; a
    label naming other units in brackets leaves the field in SI (its numbers then still
    match its words).

    Parameters
    ----------
    field : xarray.DataArray
        A described field.
    units : {"SI", "US"}
    label : str, optional
        Its label with the SI display units in brackets.

    Returns
    -------
    tuple
        ``(field, label)`` with the unit system's display attributes and words.

    Examples
    --------
    >>> import xarray as xr
    >>> field, label = field_in_units(xr.DataArray([[1.0]], dims=("lat", "lon"), attrs={"units": "mm"}),
    ...                               "US", "mean annual total [mm]")
    >>> label, field.attrs["display_units"]
    ('mean annual total [in]', 'in')
    """
    system = unit_system(units)
    if system == "SI" or _us_conversion(field.attrs.get("units", "")) is None:
        return field, label
    new = unit_attrs(field.attrs, system)
    if label is not None:
        old_units = str(field.attrs.get("display_units") or field.attrs.get("units", ""))
        if "[" in label and f"[{old_units}]" not in label:
            return field, label  # a label naming other units: drawn as labelled, never mislabelled
        label = label.replace(f"[{old_units}]", f"[{new['display_units']}]")
    return field.assign_attrs(
        display_scale=new["display_scale"],
        display_units=new["display_units"],
        display_format=new["display_format"],
        unit_system=system,
    ), label


def frame(
    ds: xr.Dataset,
    index: Sequence[Hashable] = ("basin",),
    display: bool = False,
    columns: Sequence[str] | None = None,
    units: str = "SI",
) -> pd.DataFrame:
    """A table of the described variables of ``ds`` over the ``index`` dims.

    ``display=False`` gives the numbers as stored, with the variable names as columns
    (what the CSV holds); ``display=True`` gives them scaled to their display units under
    'label [units]' headings (what widgets and the report show).  ``attrs["columns"]`` of
    the result maps each column to the variable's attributes, for formatting.
    ``units="US"`` shows depths, volumes and areas in US customary units (with
    ``display=False``: converted numbers under US names, see :func:`to_units`).

    Parameters
    ----------
    ds : xarray.Dataset
        Described variables (computed).
    index : sequence of hashable
        The dims that index the rows.
    display : bool
        For people: scaled, under "label [units]"; else names and stored numbers.
    columns : sequence of str, optional
        The variables, in order; default every described variable on ``index``.
    units : {"SI", "US"}
        The unit system.

    Returns
    -------
    pandas.DataFrame
        ``attrs["columns"]`` holds each column's words and units.

    Examples
    --------
    >>> import xarray as xr
    >>> share = describe(xr.DataArray([0.3, 0.45], dims="basin", coords={"basin": ["a", "b"]}), "seasonal_share_1")
    >>> frame(xr.Dataset({"seasonal_share_1": share}), display=True)["seasonal share [%]"].tolist()
    [30.0, 45.0]
    """
    system = unit_system(units)
    index = tuple(index)
    names = list(columns) if columns is not None else table_variables(ds, index)
    # extra dimensions (member, realization ...) become further index levels
    extra = [d for name in names for d in ds[name].dims if d not in index]
    index = index + tuple(dict.fromkeys(extra))
    if names:
        table = ds[names].to_dataframe(dim_order=list(index))
    else:
        table = pd.DataFrame(index=ds.indexes[index[0]])
    table = table.drop(columns=[c for c in table.columns if c not in names])
    for name in names:  # stored ints come back as floats where NaN is possible
        col = table[name]
        if (
            ds[name].attrs.get("units") == "1"
            and ds[name].attrs.get("display_format") == ".0f"
            and pd.api.types.is_numeric_dtype(col)
            and col.notna().all()
            and (col % 1 == 0).all()
        ):
            table[name] = table[name].astype("int64")
    meta = {}
    if display:
        renamed = {}
        for name in names:
            attrs = unit_attrs(ds[name].attrs, system)
            scale = float(attrs.get("display_scale", 1.0))
            if scale != 1.0:
                table[name] = table[name] * scale
            heading = column_heading(attrs, name)
            renamed[name] = heading
            meta[heading] = {**attrs, "values_in": attrs.get("display_units", attrs.get("units", ""))}
        table = _drop_twins(table, renamed, {n: ds[n].attrs for n in names}).rename(columns=renamed)
    else:
        meta = {
            name: {**ds[name].attrs, "values_in": ds[name].attrs.get("units", ""), "unit_system": "SI"}
            for name in names
        }
    table.attrs = {"columns": meta}
    if not display and system != "SI":
        return to_units(table, system)
    return table


def display_frame(table: pd.DataFrame, units: str = "SI", **overrides: Any) -> pd.DataFrame:
    """A stored table (variable names as columns) as shown: scaled, under 'label [units]'.

    The attributes come from ``table.attrs["columns"]`` when they are dicts, else from
    :data:`CATALOGUE`; ``overrides`` maps a column to attribute changes (a label naming
    the season, say).  Columns the catalogue does not know keep their names.  ``units``
    is the unit system shown ("SI" or "US", see :func:`unit_attrs`).

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`frame` (``display=False``).
    units : {"SI", "US"}
    **overrides
        Attributes per column, ``{name: {"label": ...}}``.

    Returns
    -------
    pandas.DataFrame

    Examples
    --------
    >>> import xarray as xr
    >>> share = describe(xr.DataArray([0.3, 0.45], dims="basin", coords={"basin": ["a", "b"]}), "seasonal_share_1")
    >>> display_frame(frame(xr.Dataset({"seasonal_share_1": share}))).columns.tolist()
    ['seasonal share [%]']
    """
    system = unit_system(units)
    described = table.attrs.get("columns") or {}
    out = table.copy()
    renamed, meta = {}, {}
    for col in table.columns:
        attrs = described.get(col) if isinstance(described.get(col), dict) else None
        if attrs is None and col in CATALOGUE:
            attrs = CATALOGUE[col].attrs()
        if attrs is None:
            continue
        attrs = unit_attrs({**attrs, **overrides.get(col, {})}, system)
        scale = float(attrs.get("display_scale", 1.0))
        if scale != 1.0:
            out[col] = out[col] * scale
        renamed[col] = column_heading(attrs, col)
        meta[renamed[col]] = {**attrs, "values_in": attrs.get("display_units", attrs.get("units", ""))}
    out = _drop_twins(out, renamed, {c: _column_attrs(table, c) or {} for c in table.columns}).rename(columns=renamed)
    out.attrs = {"columns": meta}
    return out


def _drop_twins(table: pd.DataFrame, renamed: dict[str, Any], before: dict[str, Any]) -> pd.DataFrame:
    """``table`` without the converted columns whose new heading another column already
    has (a volume in m³ shown in acre-feet beside its acre-foot twin): never two columns
    of one name, and the twin holds the same number.  ``before`` gives each column's
    attributes in SI, ``renamed`` its new heading."""
    converted = {c for c in renamed if renamed[c] != column_heading(before.get(c) or {}, str(c))}
    plain = {renamed.get(c, c) for c in table.columns if c not in converted}
    drop = [c for c in table.columns if c in converted and renamed[c] in plain]
    return table.drop(columns=drop) if drop else table


def _plain_number(v: object) -> str:
    """A number no catalogue describes, in fixed notation with four significant digits."""
    if isinstance(v, (bool, str, bytes)) or not isinstance(v, (int, float, np.number)):
        return format_cell(v, {})
    v = float(v)
    if not np.isfinite(v):
        return "–"
    if v == 0 or abs(v) >= 1000:
        return f"{v:,.0f}"
    return f"{v:,.{max(0, 3 - int(np.floor(np.log10(abs(v)))))}f}"


def people_frame(table: pd.DataFrame, units: str = "SI", **overrides: Any) -> pd.DataFrame:
    """:func:`display_frame` with every cell as text in its display format (for notebooks
    and other tables read by people: no scientific notation, '–' for missing), in the
    unit system ``units``.

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`frame` (``display=False``).
    units : {"SI", "US"}
    **overrides
        As for :func:`display_frame`.

    Returns
    -------
    pandas.DataFrame
        Every cell text.

    Examples
    --------
    >>> import xarray as xr
    >>> share = describe(xr.DataArray([0.3, 0.45], dims="basin", coords={"basin": ["a", "b"]}), "seasonal_share_1")
    >>> people_frame(frame(xr.Dataset({"seasonal_share_1": share})))["seasonal share [%]"].tolist()
    ['30.0', '45.0']
    """
    shown = display_frame(table, units=units, **overrides)
    columns = shown.attrs["columns"]
    out = shown.astype(object)
    for i, col in enumerate(shown.columns):
        attrs = columns.get(col, {})
        out.isetitem(i, [format_cell(v, attrs) if attrs else _plain_number(v) for v in shown.iloc[:, i]])
    out.attrs = {"columns": columns}
    return out
