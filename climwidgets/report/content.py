"""What goes into a basin report: :class:`ReportContent` and the helper that fills it.

``ReportContent`` holds numbers and text only (tables, small maps as DataArrays,
per-basin series); :func:`climwidgets.report.html.write_report` turns it into HTML and
draws the figures.  :func:`build_report_content` computes everything with the public
compute and geo functions, so the report shows exactly what a notebook user would get.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime, timezone

import dask
import numpy as np
import pandas as pd
import xarray as xr

from ..errors import InputError, ParameterError
from ._provenance import InputRecord, cautions_for_columns, describe_inputs

__all__ = ["ReportContent", "build_report_content"]

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
            raise ParameterError(f"table is a {type(self.table).__name__}", source="ReportContent",
                                 variable="table", expected="a pandas DataFrame such as cw.basin_summary(...)",
                                 fix="pass the basin table")
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


def _basin_series(lazy: dict) -> dict:
    keys = list(lazy)
    values = dask.compute(*[lazy[k] for k in keys])
    return dict(zip(keys, values))


def build_report_content(pr: xr.DataArray, basins, months=(7, 8), baseline=(1991, 2020),
                         sources=None, title: str = DEFAULT_TITLE, year_start: int = 1,
                         scenario_percent: float | None = None, scenario_months=None,
                         notes=None) -> ReportContent:
    """Compute the figures of a basin report from a precipitation grid (mm per step).

    Uses :func:`cw.basin_summary` (the table), :func:`cw.normals` and :func:`cw.basin_mean`
    (monthly normals per basin), :func:`cw.seasonal_fraction` with ``per_year=True`` and
    :func:`cw.annual_totals` (the basin's seasonal share of each year, as the ratio of the
    basin's seasonal and annual totals), :func:`cw.trend` (Sen slope and Mann–Kendall
    p-value of that share), :func:`cw.annual_normal` and :func:`cw.seasonal_fraction` (the
    maps) and, with ``scenario_percent``, :func:`cw.scenario_delta` (the what-if table).

    ``sources`` are the input files to list with their checksums (default: the paths in
    ``pr.attrs["sources"]`` written by :func:`cw.open_precip`).
    """
    import climwidgets as cw

    from ..compute.seasonal import season_label

    basins = [basins] if isinstance(basins, cw.Basin) else list(basins)
    table = cw.basin_summary(pr, basins, months=months, baseline=baseline, year_start=year_start)

    # per-basin monthly normals and per-year seasonal share (ratio of the basin's sums)
    normals = cw.normals(pr, baseline=baseline)
    share = cw.seasonal_fraction(pr, months=months, year_start=year_start, per_year=True)
    start = int(share.attrs.get("season_year_start", year_start))
    annual = cw.annual_totals(pr, year_start=start)
    annual, share = xr.align(annual, share.drop_vars("n_years", errors="ignore"), join="inner")
    seasonal = share * annual
    lazy = {}
    for b in basins:
        lazy[(b.name, "normals")] = cw.basin_mean(normals.drop_vars("n_years", errors="ignore"), b)
        lazy[(b.name, "seasonal")] = cw.basin_mean(seasonal, b)
        lazy[(b.name, "annual")] = cw.basin_mean(annual.where(seasonal.notnull()), b)
    done = _basin_series(lazy)
    monthly = pd.DataFrame({b.name: done[(b.name, "normals")].to_series() for b in basins})
    monthly.index.name = "month"
    by_year, trends = {}, {}
    for b in basins:
        s, a = done[(b.name, "seasonal")], done[(b.name, "annual")]
        ratio = (s / a.where(a > 0)).drop_vars("covered_fraction", errors="ignore")
        ratio.name, ratio.attrs = "seasonal_share", {"units": "1", "long_name": "seasonal share"}
        by_year[b.name] = ratio.to_series()
        try:
            tr = cw.trend(ratio.dropna("year"), dim="year")
            trends[b.name] = (float(tr["slope"]), float(tr["intercept"]), float(tr["pvalue"]))
        except InputError:
            pass  # too few years for a trend: the chart shows the values only
    share_by_year = pd.DataFrame(by_year)
    share_by_year.index.name = "year"

    label = season_label(tuple(months))
    maps = {
        f"Annual normal precipitation {baseline[0]}–{baseline[1]}":
            (cw.annual_normal(pr, baseline=baseline).compute(), "total"),
        f"Seasonal share ({label}) of the annual total, all complete years":
            (cw.seasonal_fraction(pr, months=months, year_start=year_start)
             .drop_vars("n_years", errors="ignore").compute(), "share"),
    }

    what_if, wi_title, wi_note = None, "What-if", ""
    if scenario_percent is not None:
        smonths = tuple(scenario_months or months)
        what_if = cw.scenario_delta(pr, basins, months=smonths, percent=scenario_percent,
                                    year_start=year_start)
        wi_title = f"What-if: {season_label(smonths)} precipitation {scenario_percent:+g} %"
        wi_note = ("The season's mean precipitation over each basin is changed by the stated percentage; "
                   "the rest of the year is unchanged, so the annual volume changes by the same amount. "
                   "Volumes are precipitation on the basin, not runoff.")

    if sources is None:
        sources = [s for s in str(pr.attrs.get("sources", "")).split("; ") if s]
    inputs = describe_inputs(sources)
    inputs.append(InputRecord(name=str(pr.name or "precipitation"), kind="object", detail=_grid_detail(pr)))
    parameters = {
        "season (months)": f"{label} ({', '.join(str(m) for m in months)})",
        "normal period (baseline)": f"{baseline[0]}–{baseline[1]}",
        "12-month year starts in month": year_start,
        "basins": len(basins),
    }
    if scenario_percent is not None:
        parameters["what-if change"] = f"{scenario_percent:+g} % in {season_label(tuple(scenario_months or months))}"
    return ReportContent(
        table=table, title=title, inputs=inputs, parameters=parameters, basins=basins, maps=maps,
        monthly_normals=monthly, share_by_year=share_by_year, share_trends=trends,
        what_if=what_if, what_if_title=wi_title, what_if_note=wi_note,
        notes=list(notes or []) + ([table.attrs["note"]] if "note" in table.attrs else []),
        history=str(pr.attrs.get("history", "")),
    )


def share_years_span(content: ReportContent) -> tuple[int, int] | None:
    """First and last year of the per-year share, for captions."""
    if content.share_by_year is None or content.share_by_year.empty:
        return None
    idx = np.asarray(content.share_by_year.index, dtype=int)
    return int(idx.min()), int(idx.max())
