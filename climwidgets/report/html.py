"""One self-contained HTML report of a basin analysis.

Everything is inside the one file: CSS inline in a ``<style>`` element, figures as base64
PNG ``data:`` URLs; no scripts, fonts, style sheets or images are fetched, so the file
opens the same offline, in an e-mail attachment or on a locked-down machine.  The numbers
are shown in the unit system chosen (``units="SI"`` or ``"US"``: inches, acre-feet and
square miles, see :func:`climwidgets.analyses.meta.unit_attrs`); volumes for people in
million m³ or in whole acre-feet with thousands separators.  Every piece
of user text (title, basin names, file names, parameters, table cells) is escaped with
:func:`html.escape`.  The page prints cleanly: each section starts on a new page, and no
table row or figure is split across pages.
"""

from __future__ import annotations

import html
import math
import numbers
from pathlib import Path

import pandas as pd

from .._version import __version__
from ..analyses.meta import CATALOGUE, UNIT_SYSTEMS, field_in_units, format_cell, to_units, unit_attrs, unit_system
from ..compute._time import MONTH_NAMES
from ..errors import ParameterError
from ..atomic import atomic_write, check_target
from ._provenance import describe_inputs, format_value
from .content import DEFAULT_TITLE, ReportContent, build_report_content

__all__ = ["write_report", "render_html", "ReportContent", "build_report_content"]

_CSS = """
:root { --ink: #1d2731; --muted: #5b6770; --rule: #d5dbe0; --band: #f3f6f8; --accent: #1f5f8b; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, Helvetica, sans-serif; color: var(--ink);
       margin: 0 auto; max-width: 60rem; padding: 1.5rem 2rem 3rem; line-height: 1.45; font-size: 15px; }
header { border-bottom: 3px solid var(--accent); padding-bottom: .6rem; margin-bottom: 1rem; }
header h1 { font-size: 1.7rem; margin: 0 0 .3rem; }
header p { margin: .1rem 0; color: var(--muted); }
h2 { font-size: 1.2rem; color: var(--accent); border-bottom: 1px solid var(--rule); padding-bottom: .2rem;
     margin-top: 2rem; }
.notice { border-left: 4px solid #b5651d; background: #fbf4ec; padding: .5rem .8rem; margin: 1rem 0; }
table { border-collapse: collapse; width: 100%; font-size: .85rem; margin: .5rem 0; }
th, td { border: 1px solid var(--rule); padding: .3rem .45rem; vertical-align: top; }
thead th { background: var(--band); text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tbody tr:nth-child(even) { background: #fafbfc; }
table.sideways tbody th { text-align: left; font-weight: normal; background: var(--band); width: 34%; }
table.kv th { width: 30%; background: var(--band); text-align: left; font-weight: normal; }
.mono { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: .78rem; word-break: break-all; }
figure { margin: 1rem 0; text-align: center; }
figure img { max-width: 100%; height: auto; }
figcaption { font-size: .85rem; color: var(--muted); margin-top: .3rem; }
pre { white-space: pre-wrap; font-size: .75rem; background: var(--band); padding: .6rem; }
ol.cautions li { margin-bottom: .35rem; }
footer { margin-top: 2.5rem; font-size: .8rem; color: var(--muted); border-top: 1px solid var(--rule); }
@page { size: A4; margin: 14mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 11pt; }
  section { break-before: page; page-break-before: always; }
  section#inputs { break-before: auto; page-break-before: auto; }  /* keep the title page full */
  table, figure, .notice, pre { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  h2 { break-after: avoid; page-break-after: avoid; }
}
"""


def _e(text) -> str:
    return html.escape(str(text), quote=True)


def _column_label(table: pd.DataFrame, col, label_columns: bool, units: str = "SI"):
    """(heading, unit, scale, attrs) of a column, from the analysis that made the table,
    in the unit system ``units``."""
    if not label_columns:
        return str(col), "", 1.0, {}
    attrs = (table.attrs.get("columns") or {}).get(col)
    if not isinstance(attrs, dict):
        meta = CATALOGUE.get(str(col))
        attrs = meta.attrs() if meta is not None else None
    if not attrs:
        return str(col), "", 1.0, {}
    attrs = unit_attrs(attrs, units)
    label = str(attrs.get("label", col))
    unit = attrs.get("display_units", attrs.get("units", ""))
    return label[:1].upper() + label[1:], "" if unit == "1" else unit, float(attrs.get("display_scale", 1.0)), attrs


def _cell(v, scale, attrs) -> str:
    if isinstance(v, numbers.Number) and not isinstance(v, bool):
        v = float(v)
        if not attrs:  # a column the analyses do not describe: plain numbers
            shown = "–" if not math.isfinite(v) else (f"{v:.0f}" if v.is_integer() else f"{v:.4g}")
        else:
            shown = format_cell(v * scale, attrs)
        return f"<td class='num'>{_e(shown)}</td>"
    return f"<td>{_e('–' if v is None or v is pd.NA else v)}</td>"


def _head(name, unit) -> str:
    return _e(name) + (f" <span class='unit'>({_e(unit)})</span>" if unit else "")


def _table_html(table: pd.DataFrame, label_columns: bool = True, max_wide: int | None = 7, units: str = "SI") -> str:
    """A table; with more than ``max_wide`` columns and few rows it is turned on its side
    (one row per quantity, one column per basin) so that it fits a printed page."""
    t = table
    show_index = t.index.name is not None or not isinstance(t.index, pd.RangeIndex)
    labels = [_column_label(t, c, label_columns, units) for c in t.columns]
    if max_wide is not None and len(t.columns) > max_wide and len(t) <= 6:
        first = _e(t.index.name or "") if show_index else ""
        out = [
            "<table class='sideways'><thead><tr><th scope='col'>"
            + first
            + "</th>"
            + "".join(f"<th scope='col'>{_e(i)}</th>" for i in t.index)
            + "</tr></thead><tbody>"
        ]
        for col, (name, unit, scale, dec) in zip(t.columns, labels):
            out.append(
                f"<tr><th scope='row'>{_head(name, unit)}</th>"
                + "".join(_cell(v, scale, dec) for v in t[col].tolist())
                + "</tr>"
            )
        out.append("</tbody></table>")
        return "\n".join(out)
    out = [
        "<table><thead><tr>"
        + (f"<th scope='col'>{_e(t.index.name or '')}</th>" if show_index else "")
        + "".join(f"<th scope='col'>{_head(n, u)}</th>" for n, u, _, _ in labels)
        + "</tr></thead><tbody>"
    ]
    for idx, row in zip(t.index, t.itertuples(index=False)):
        cells = [f"<th scope='row'>{_e(idx)}</th>"] if show_index else []
        cells += [_cell(v, scale, dec) for v, (_, _, scale, dec) in zip(row, labels)]
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def _kv_table(pairs) -> str:
    rows = "".join(f"<tr><th scope='row'>{_e(k)}</th><td>{_e(format_value(v))}</td></tr>" for k, v in pairs)
    return f"<table class='kv'><tbody>{rows}</tbody></table>"


def _figure(uri: str, caption: str, alt: str) -> str:
    return f'<figure><img src="{_e(uri)}" alt="{_e(alt)}"><figcaption>{_e(caption)}</figcaption></figure>'


def _section(sid: str, title: str, body: str) -> str:
    return f'<section id="{sid}"><h2>{_e(title)}</h2>\n{body}\n</section>'


def _inputs_html(content: ReportContent) -> str:
    if not content.inputs:
        return "<p>No input files were recorded.</p>"
    rows = []
    for rec in content.inputs:
        size = "" if rec.size_bytes is None else f"{rec.size_bytes:,} bytes"
        ident = (
            f"SHA-256 <span class='mono'>{_e(rec.sha256)}</span>"
            if rec.sha256
            else f"modified {_e(rec.modified)} (not checksummed: larger than 200 MB)"
            if rec.modified
            else ""
        )
        rows.append(
            f"<tr><td class='mono'>{_e(rec.name)}</td><td>{_e(rec.kind)}</td>"
            f"<td class='num'>{_e(size)}</td><td>{ident}</td><td>{_e(rec.detail)}</td></tr>"
        )
    return (
        "<table><thead><tr><th>Input</th><th>Kind</th><th>Size</th><th>Identity</th><th>Details</th>"
        "</tr></thead><tbody>" + "".join(rows) + "</tbody></table>"
    )


def render_html(content: ReportContent, figures: bool = True, units: str = "SI") -> str:
    """The report as one HTML string (``figures=False`` skips drawing, for quick previews).

    ``units`` is the unit system of every table, map and chart: "SI" (mm, million m³, km²)
    or "US" (in, acre-ft, mi²); the numbers of ``content`` are SI.
    """
    from . import _figures as F

    system = unit_system(units, "render_html")
    depth = unit_attrs(
        {"units": "mm", "display_units": "mm", "display_scale": 1.0, "display_format": ",.1f"}, system
    )  # the monthly normals: mm to one decimal, inches to two
    parts = []
    stamp = content.created.strftime("%Y-%m-%d %H:%M UTC")
    parts.append(
        f"<header><h1>{_e(content.title)}</h1>"
        f"<p>Prepared {_e(stamp)} with climwidgets {_e(__version__)}</p>"
        f"<p>{len(content.table)} basin(s)</p></header>"
    )
    if content.cautions:
        parts.append(
            "<div class='notice'><strong>Planning-level figures.</strong> "
            "Read the cautions at the end of this report before using these numbers.</div>"
        )
    parts.append(_section("inputs", "Inputs", _inputs_html(content)))
    params = list(content.parameters.items()) + [("units shown", UNIT_SYSTEMS[system])]
    parts.append(_section("parameters", "Parameters", _kv_table(params)))
    parts.append(
        _section(
            "basins",
            "Basin summary",
            "<div id='basin-table'>"
            + _table_html(to_units(content.table, system), units=system)
            + "</div>"
            + "".join(f"<p>{_e(str(n)[:1].upper() + str(n)[1:])}</p>" for n in content.notes),
        )
    )
    if figures and content.maps:
        body = []
        for caption, (field, kind) in content.maps.items():
            fig = F.map_figure(field_in_units(field, system)[0], content.basins, kind=kind)
            body.append(
                _figure(F.png_data_uri(fig), caption + ". Basin outlines in red; grid cells as drawn.", alt=caption)
            )
        body.append("<p>Coastlines are drawn only when map data is on the computer; the grid is shown as is.</p>")
        parts.append(_section("maps", "Maps", "\n".join(body)))
    if figures and content.monthly_normals is not None and not content.monthly_normals.empty:
        normals = content.monthly_normals * depth["display_scale"]
        fig = F.normals_figure(normals, units=depth["display_units"])
        table = normals.T.copy()  # one row per basin, one column per month
        table.columns = [MONTH_NAMES[int(m) - 1] for m in table.columns]
        table.index.name = f"basin ({depth['display_units']})"
        table.attrs = {
            "columns": {
                m: {
                    "label": m,
                    "units": "",
                    "display_units": "",
                    "display_scale": 1.0,
                    "display_format": depth["display_format"],
                }
                for m in table.columns
            }
        }
        parts.append(
            _section(
                "normals",
                "Monthly normals",
                _figure(
                    F.png_data_uri(fig),
                    f"Area-weighted monthly normal precipitation of each basin ({depth['display_units']}).",
                    alt="monthly normals chart",
                )
                + _table_html(table, max_wide=None),
            )
        )
    if figures and content.share_by_year is not None and not content.share_by_year.empty:
        season = str(content.parameters.get("season (months)", "")).split(" (")[0]
        fig = F.share_figure(content.share_by_year, content.share_trends, season=season)
        text = (
            "Share of each year's basin precipitation that fell in the season. The dashed line is the "
            "Sen slope; the Mann–Kendall p-value says how likely a trend this strong is by chance alone."
        )
        extra = "" if len(content.share_by_year.columns) <= 8 else "<p>Only the first eight basins are drawn.</p>"
        parts.append(
            _section(
                "share",
                "Seasonal share over time",
                _figure(F.png_data_uri(fig), text, alt="seasonal share by year") + extra,
            )
        )
    if content.what_if is not None:
        body = _table_html(to_units(content.what_if, system), units=system)
        if content.what_if_note:
            body = f"<p>{_e(content.what_if_note)}</p>" + body
        parts.append(_section("what-if", content.what_if_title, body))
    parts.extend(getattr(content, "extra_sections", ()) or ())  # e.g. report.indices_section
    cautions = content.cautions or ("Planning-level figures from gridded data.",)
    parts.append(
        _section(
            "cautions", "Cautions", "<ol class='cautions'>" + "".join(f"<li>{_e(c)}</li>" for c in cautions) + "</ol>"
        )
    )
    if content.history:
        parts.append(_section("provenance", "Provenance", f"<pre>{_e(content.history)}</pre>"))
    parts.append(
        f"<footer><p>climwidgets {_e(__version__)}. Figures are planning-level estimates; see Cautions.</p></footer>"
    )
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(content.title)}</title><style>{_CSS}</style></head>\n<body>\n"
        + "\n".join(parts)
        + "\n</body></html>\n"
    )


def write_report(
    summary,
    path,
    overwrite: bool = False,
    title: str | None = None,
    inputs=None,
    parameters: dict | None = None,
    cautions=None,
    notes=None,
    figures: bool = True,
    units: str = "SI",
) -> Path:
    """Write a self-contained HTML report, atomically.

    Parameters
    ----------
    summary
        A :class:`ReportContent` (see :func:`build_report_content`, which computes maps,
        monthly normals, the seasonal share over time and a what-if table from a
        precipitation grid and basins), or a basin table alone (e.g. the DataFrame from
        :func:`cw.basin_summary`), which gives a report of the table, its inputs,
        parameters and cautions.
    path
        Output ``.html`` file; refuses to replace an existing file unless ``overwrite=True``.
    title, inputs, parameters, cautions, notes
        Override or fill in the corresponding parts (``inputs`` are file paths, described
        with their size and SHA-256 checksum; ``parameters`` a dict).
    figures
        False leaves out the maps and charts.
    units
        "SI" (default: mm, million m³, km²) or "US" (US customary: in, acre-ft, mi²) for
        every table, map and chart of the report.

    Returns
    -------
    pathlib.Path of the written file.
    """
    system = unit_system(units, "write_report")
    target = check_target(path, overwrite, "write_report")
    if isinstance(summary, pd.DataFrame):
        params = {k: v for k, v in (summary.attrs or {}).items() if k != "note"}
        extra_notes = [summary.attrs["note"]] if "note" in (summary.attrs or {}) else []
        content = ReportContent(table=summary, title=title or DEFAULT_TITLE, notes=extra_notes)
        content.parameters = params
    elif isinstance(summary, ReportContent):
        content = summary
    else:
        raise ParameterError(
            f"cannot report a {type(summary).__name__}",
            source="write_report",
            variable="summary",
            expected="a ReportContent or a basin table (pandas DataFrame)",
            fix="pass cw.basin_summary(...) or build_report_content(pr, basins)",
        )
    changes = {}
    if title is not None:
        changes["title"] = str(title)
    if inputs is not None:
        changes["inputs"] = describe_inputs(inputs)
    if parameters is not None:
        changes["parameters"] = {**content.parameters, **dict(parameters)}
    if cautions is not None:
        changes["cautions"] = tuple(cautions)
    if notes is not None:
        changes["notes"] = list(content.notes) + list(notes)
    if changes:
        from dataclasses import replace

        content = replace(content, **changes)
    text = render_html(content, figures=figures, units=system)

    def write(tmp: Path):
        tmp.write_text(text, encoding="utf-8")

    return atomic_write(target, overwrite, write, "write_report")
