"""Report sections and CSV files for the ETCCDI indices and the depth-duration-frequency table.

Self-contained: each ``*_section`` returns one ``<section>`` of HTML (escaped, units in
the headings, formats from the analyses), each ``*_csv`` writes one CSV through
:func:`climwidgets.report.tables.to_csv` (provenance header, atomic).  The HTML report
takes finished sections through ``ReportContent.extra_sections`` (a tuple of strings),
placed before the cautions.  The DDF section and CSV always carry the design-depth
cautions (``cw.DESIGN_DEPTH_CAUTIONS``): defer to adopted local estimates, codes and
licensed practice.
"""

from __future__ import annotations

import html

import pandas as pd
import xarray as xr

from ..analyses.ddf_table import ddf_long_table, ddf_wide_table
from ..analyses.indices import index_table
from ..analyses.meta import column_heading, format_cell
from ..compute.warming import DESIGN_DEPTH_CAUTIONS

__all__ = ["indices_section", "ddf_section", "indices_csv", "ddf_csv", "INDEX_CONVENTIONS"]

#: dataset attrs of cw.precip_indices that state its conventions, with their plain headings
INDEX_CONVENTIONS = (
    ("wet_day", "Wet day"),
    ("spell_convention", "Spells"),
    ("percentile_method", "Percentiles"),
    ("base_period", "Percentile base period"),
    ("missing_rule", "Missing days"),
    ("year_label", "Year"),
)


def _e(text) -> str:
    return html.escape(str(text), quote=True)


def _table(df: pd.DataFrame) -> str:
    """Escaped HTML of a displayed table (``df.attrs['columns']`` holds each column's formats)."""
    described = df.attrs.get("columns") or {}
    names = list(df.index.names)
    head = "".join(f"<th scope='col'>{_e(n or '')}</th>" for n in names)
    head += "".join(f"<th scope='col'>{_e(c)}</th>" for c in df.columns)
    rows = []
    for idx, row in zip(df.index, df.itertuples(index=False)):
        keys = idx if isinstance(idx, tuple) else (idx,)
        cells = "".join(f"<th scope='row'>{_e(k)}</th>" for k in keys)
        cells += "".join(
            f"<td class='num'>{_e(format_cell(v, described.get(c, {})))}</td>" for c, v in zip(df.columns, row)
        )
        rows.append(f"<tr>{cells}</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def _cautions(cautions) -> str:
    return (
        "<div class='notice'><strong>Design-depth cautions</strong><ol class='cautions'>"
        + "".join(f"<li>{_e(c)}</li>" for c in cautions)
        + "</ol></div>"
    )


def indices_section(table: xr.Dataset, maps=None) -> str:
    """The indices section: the basin index table and the conventions it rests on.

    ``table`` is a computed :func:`climwidgets.analyses.indices.basin_index_table`;
    ``maps`` an optional list of (data URI, caption) figures.
    """
    name = table.attrs.get("index", "")
    years = f"{table.attrs.get('first_year', '')}-{table.attrs.get('last_year', '')}"
    shown = index_table(table, display=True)
    body = [
        f"<p>ETCCDI index {_e(name)} per basin over {_e(years)}: the mean, the Sen slope (per decade) and "
        f"the two-sided Mann-Kendall p of the basin's per-year values. {_e(table.attrs.get('note', ''))}.</p>",
        _table(shown),
    ]
    for uri, caption in maps or ():
        body.append(f'<figure><img src="{_e(uri)}" alt="{_e(caption)}"><figcaption>{_e(caption)}</figcaption></figure>')
    conv = [(label, table.attrs[key]) for key, label in INDEX_CONVENTIONS if key in table.attrs]
    if conv:
        body.append(
            "<table class='kv'><tbody>"
            + "".join(f"<tr><th scope='row'>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in conv)
            + "</tbody></table>"
        )
    return f'<section id="indices"><h2>Precipitation indices: {_e(name)}</h2>\n' + "\n".join(body) + "\n</section>"


def ddf_section(ds: xr.Dataset, basin=None) -> str:
    """The depth-duration-frequency section of one basin (or one cell), with the cautions first."""
    wide = ddf_wide_table(ds, basin)
    units = wide.attrs.get("units", "mm")
    where = basin if basin is not None else ("" if "basin" not in ds.dims else str(ds["basin"].values[0]))
    long = ddf_long_table(ds, basin, display=True)
    heading = column_heading({"label": "depth", "display_units": units})
    body = [
        _cautions(ds.attrs.get("cautions") or DESIGN_DEPTH_CAUTIONS),
        f"<p>{_e(heading)} by duration (rows) and return period (columns){' for ' + _e(where) if where else ''}. "
        f"Areal method: {_e(ds.attrs.get('areal', ''))}. Consistency across durations: "
        f"{_e(ds.attrs.get('consistency', ''))}.</p>",
        _table(wide),
        "<p>With the bootstrap interval:</p>",
        _table(long),
    ]
    return '<section id="ddf"><h2>Depth-duration-frequency table</h2>\n' + "\n".join(body) + "\n</section>"


def indices_csv(table: xr.Dataset, path, overwrite: bool = False, inputs=None):
    """Write the basin index table (stored numbers, variable names as columns) as CSV."""
    from .tables import to_csv

    stored = index_table(table)
    units = {c: stored.attrs["columns"][c].get("units", "") for c in stored.columns}
    notes = [table.attrs.get("note", "")] + [
        f"{label}: {table.attrs[key]}" for key, label in INDEX_CONVENTIONS if key in table.attrs
    ]
    notes.append("units: " + ", ".join(f"{c} [{u}]" for c, u in units.items() if u))
    return to_csv(
        stored,
        path,
        overwrite=overwrite,
        provenance={
            "title": f"ETCCDI index {table.attrs.get('index', '')} per basin",
            "inputs": inputs,
            "notes": notes,
            "cautions": [],
        },
    )


def ddf_csv(ds: xr.Dataset, path, basin=None, overwrite: bool = False, inputs=None):
    """Write one basin's depth-duration-frequency table (long form, with interval) as CSV."""
    from .tables import to_csv

    stored = ddf_long_table(ds, basin)
    units = str(ds["estimate"].attrs.get("units", "mm"))
    stored = stored.rename(columns={c: f"{c}_{units}" for c in stored.columns})
    return to_csv(
        stored,
        path,
        overwrite=overwrite,
        provenance={
            "title": "depth-duration-frequency table",
            "inputs": inputs,
            "notes": [f"depths in {units}", str(ds.attrs.get("areal", "")), str(ds.attrs.get("consistency", ""))],
            "cautions": list(ds.attrs.get("cautions") or DESIGN_DEPTH_CAUTIONS),
        },
    )
