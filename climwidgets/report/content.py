"""What goes into a basin report: :class:`ReportContent` and the helper that fills it.

``ReportContent`` holds numbers and text only (tables, small maps as DataArrays,
per-basin series); :func:`climwidgets.report.html.write_report` turns it into HTML and
draws the figures.  The numbers come from the analyses (:func:`cw.basin_table`,
:func:`cw.what_if`), so the report shows exactly what the widgets and the CSV show.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime, timezone

import numpy as np
import pandas as pd
import xarray as xr

from ..errors import ParameterError
from ._provenance import InputRecord, cautions_for_columns, describe_inputs

__all__ = ["ReportContent", "build_report_content", "content_from_analysis"]

DEFAULT_TITLE = "Basin precipitation summary"


@dataclass
class ReportContent:
    """Everything a report shows.  Only ``table`` is required.

    Attributes
    ----------
    table
        The basin table (e.g. :func:`cw.basin_summary`), one row per basin.
    title
        Report title (user text; escaped when written).
    inputs
        :class:`InputRecord` list: files with size and checksum, and described objects.
    parameters
        Name → value of the settings behind the numbers (months, baseline …).
    basins
        :class:`cw.Basin` objects, outlined on the maps.
    maps
        Caption → (2-D DataArray on lat/lon or y/x, colour kind: "total", "share",
        "percent" or "difference").
    monthly_normals
        DataFrame, index month 1..12, one column per basin (mm).
    share_by_year
        DataFrame, index year, one column per basin (fraction).
    share_trends
        Basin name → (Sen slope per year, intercept, Mann–Kendall p-value) of
        ``share_by_year``.
    what_if, what_if_title, what_if_note
        A scenario or warming table (e.g. :func:`cw.scenario_delta`) and its explanation.
    cautions
        Lines of caution; by default those for the table's volumes or design depths.
    notes
        Further plain lines (method notes).
    history
        Provenance text of the inputs (``attrs["history"]``).
    created
        UTC time the content was assembled.
    """

    table: pd.DataFrame
    title: str = DEFAULT_TITLE
    inputs: list = field(default_factory=list)
    parameters: dict = field(default_factory=dict)
    basins: list = field(default_factory=list)
    maps: dict = field(default_factory=dict)
    monthly_normals: pd.DataFrame | None = None
    share_by_year: pd.DataFrame | None = None
    share_trends: dict = field(default_factory=dict)
    what_if: pd.DataFrame | None = None
    what_if_title: str = "What-if"
    what_if_note: str = ""
    cautions: tuple | None = None
    notes: list = field(default_factory=list)
    history: str = ""
    created: datetime = field(default_factory=lambda: datetime.now(timezone.utc))

    def __post_init__(self):
        if not isinstance(self.table, pd.DataFrame):
            raise ParameterError(
                f"table is a {type(self.table).__name__}",
                source="ReportContent",
                variable="table",
                expected="a pandas DataFrame such as cw.basin_summary(...)",
                fix="pass the basin table",
            )
        self.inputs = [i if isinstance(i, InputRecord) else describe_inputs(i)[0] for i in self.inputs]
        if self.cautions is None:
            cols = list(self.table.columns)
            if self.what_if is not None:
                cols += list(self.what_if.columns)
            self.cautions = cautions_for_columns(cols)


def _grid_detail(pr: xr.DataArray) -> str:
    dims = " × ".join(f"{d} {n}" for d, n in pr.sizes.items())
    parts = [f"variable '{pr.name or 'unnamed'}'", dims]
    a = pr.attrs
    if a.get("units"):
        parts.append(f"units {a['units']}" + (f" per {a['step']}" if a.get("step") else ""))
    if a.get("calendar"):
        parts.append(f"calendar {a['calendar']}")
    if "time" in pr.coords and pr.sizes.get("time", 0):
        t = pr["time"].values
        parts.append(f"{str(t[0])[:10]} to {str(t[-1])[:10]}")
    return ", ".join(parts)


def content_from_analysis(
    ds: xr.Dataset,
    basins,
    pr_attrs: dict,
    what: xr.Dataset | None = None,
    sources=None,
    title: str = DEFAULT_TITLE,
    notes=None,
    pr_detail: str = "",
    pr_name: str = "precipitation",
) -> ReportContent:
    """A :class:`ReportContent` from a computed :func:`cw.basin_table` (and :func:`cw.what_if`).

    Nothing is computed here: the numbers are those of the analysis, so the report, the
    CSV and the widgets show the same ones.
    """
    from ..analyses.basins import SUMMARY_COLUMNS, WHAT_IF_COLUMNS
    from ..analyses.meta import frame
    from ..compute.seasonal import season_label

    basins = list(basins)
    months, baseline = tuple(ds.attrs["months"]), tuple(ds.attrs["baseline"])
    year_start = ds.attrs.get("year_start", 1)
    table = frame(ds, columns=SUMMARY_COLUMNS)
    table.index.name = "basin"
    table.attrs.update({k: ds.attrs[k] for k in ("months", "baseline", "year_start", "note") if k in ds.attrs})
    monthly = ds["monthly_normal"].transpose("month", "basin").to_pandas()
    monthly.columns = [str(c) for c in monthly.columns]
    share_by_year = ds["seasonal_share_per_year"].transpose("year", "basin").to_pandas()
    share_by_year.columns = [str(c) for c in share_by_year.columns]
    trends = {}
    if "share_slope" in ds:
        for name in share_by_year.columns:
            sel = ds.sel(basin=name)
            if np.isfinite(float(sel["share_slope"])):
                trends[name] = (float(sel["share_slope"]), float(sel["share_intercept"]), float(sel["share_pvalue"]))
    label = season_label(months)
    maps = {}
    if "annual_normal_map" in ds:
        maps[f"Annual normal precipitation {baseline[0]}–{baseline[1]}"] = (ds["annual_normal_map"], "total")
    maps[f"Seasonal share ({label}) of the annual total, all complete years"] = (ds["seasonal_share_map"], "share")

    what_if_table, wi_title, wi_note = None, "What-if", ""
    parameters = {
        "season (months)": f"{label} ({', '.join(str(m) for m in months)})",
        "normal period (baseline)": f"{baseline[0]}–{baseline[1]}",
        "12-month year starts in month": year_start,
        "basins": len(basins),
        "basin area": ds.attrs.get("area", ""),
    }
    if what is not None:
        what_if_table = frame(what, columns=WHAT_IF_COLUMNS)
        what_if_table.index.name = "basin"
        smonths, percent = tuple(what.attrs["months"]), float(what.attrs["percent"])
        wi_title = f"What-if: {season_label(smonths)} precipitation {percent:+g} %"
        wi_note = (
            "The season's mean precipitation over each basin is changed by the stated percentage; "
            "the rest of the year is unchanged, so the annual volume changes by the same amount. "
            "Volumes are precipitation on the basin, not runoff."
        )
        parameters["what-if change"] = f"{percent:+g} % in {season_label(smonths)}"
    inputs = describe_inputs(sources or [])
    inputs.append(InputRecord(name=str(pr_name), kind="object", detail=pr_detail))
    return ReportContent(
        table=table,
        title=title,
        inputs=inputs,
        parameters=parameters,
        basins=basins,
        maps=maps,
        monthly_normals=monthly,
        share_by_year=share_by_year,
        share_trends=trends,
        what_if=what_if_table,
        what_if_title=wi_title,
        what_if_note=wi_note,
        notes=list(notes or []) + ([ds.attrs["note"]] if "note" in ds.attrs else []),
        history=str(pr_attrs.get("history", "")),
    )


def report_content(
    analysis: xr.Dataset,
    basins,
    pr: xr.DataArray,
    what: xr.Dataset | None = None,
    title: str = DEFAULT_TITLE,
    notes=None,
    sources=None,
) -> ReportContent:
    """The basin report of a computed analysis: the one function behind the page's, the notebook's
    and the command line's report, so all three hold the same sections.

    Parameters
    ----------
    analysis : xarray.Dataset
        A computed :func:`cw.basin_table` (with its maps).
    basins : list of Basin or BasinSet
    pr : xarray.DataArray
        The precipitation the analysis was computed from: its files (``attrs["sources"]``,
        listed with their checksums), variable, units, grid and period go into the report.
    what : xarray.Dataset, optional
        A computed :func:`cw.what_if`.
    title, notes
        Report title and extra notes.
    sources : list of str, optional
        Input files, when they differ from ``pr.attrs["sources"]``.

    Returns
    -------
    ReportContent
        Nothing is computed here: the numbers are those of the analysis.
    """
    if sources is None:
        sources = [s for s in str(pr.attrs.get("sources", "")).split("; ") if s]
    notes = list(notes or []) + invented_data_notice(sources)
    return content_from_analysis(
        analysis,
        basins,
        pr.attrs,
        what=what,
        sources=sources,
        title=title,
        notes=notes,
        pr_detail=_grid_detail(pr),
        pr_name=str(pr.name or "precipitation"),
    )


#: Said in every report whose inputs are the invented demo data.
INVENTED_DATA_NOTICE = (
    "The input data are invented (the climwidgets demo scenario): not observations and not "
    "a model run. The numbers show how the tool works; use them for nothing else."
)


def invented_data_notice(sources) -> list[str]:
    """``[INVENTED_DATA_NOTICE]`` when any NetCDF input says it is invented demo data, else ``[]``.

    Only the file's global attributes are read (the demo generator writes
    ``institution = "none (invented demo data)"``).
    """
    for src in sources:
        if not str(src).endswith((".nc", ".nc4")):
            continue
        try:
            import netCDF4

            with netCDF4.Dataset(str(src)) as nc:
                said = " ".join(str(getattr(nc, a, "")) for a in ("institution", "title", "history"))
        except Exception:  # noqa: BLE001 - an unreadable header adds no notice; the inputs list names the file
            continue
        if "invented" in said:
            return [INVENTED_DATA_NOTICE]
    return []


def build_report_content(
    pr: xr.DataArray,
    basins,
    months=(7, 8),
    baseline=(1991, 2020),
    sources=None,
    title: str = DEFAULT_TITLE,
    year_start: int = 1,
    scenario_percent: float | None = None,
    scenario_months=None,
    notes=None,
    bundle=None,
) -> ReportContent:
    """Compute the figures of a basin report from a precipitation grid (mm per step).

    The numbers are :func:`cw.basin_table` (the table, the monthly normals and the
    per-year seasonal share of each basin with its Sen slope, and the maps) and, with
    ``scenario_percent``, :func:`cw.what_if`, all computed in one pass over the data.

    ``sources`` are the input files to list with their checksums (default: the paths in
    ``pr.attrs["sources"]`` written by :func:`cw.open_precip`).
    """
    from ..analyses.basins import basin_table, summary_bundle, what_if
    from ..analyses.run import compute
    from ..geo.basinset import as_basin_list

    basins = as_basin_list(basins, "build_report_content")
    if bundle is None:  # one bundle for the table and the what-if: one read of the data
        bundle = summary_bundle(pr, months=months, baseline=baseline, year_start=year_start)
    ds = basin_table(pr, basins, months=months, baseline=baseline, year_start=year_start, bundle=bundle)
    what = None
    if scenario_percent is not None:
        what = what_if(
            pr,
            basins,
            months=tuple(scenario_months or months),
            percent=scenario_percent,
            year_start=year_start,
            bundle=bundle,
        )
    ds, what = compute(ds, what)
    return report_content(ds, basins, pr, what=what, title=title, notes=notes, sources=sources)


def share_years_span(content: ReportContent) -> tuple[int, int] | None:
    """First and last year of the per-year share, for captions."""
    if content.share_by_year is None or content.share_by_year.empty:
        return None
    idx = np.asarray(content.share_by_year.index, dtype=int)
    return int(idx.min()), int(idx.max())
