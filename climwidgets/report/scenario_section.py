"""The report's climate-change scenario section, and the scenario report page around it.

:func:`scenario_section` renders :func:`climwidgets.analyses.scenario.basin_signals`: the
scenario cautions first (a notice box, before any number), then the periods and the basin
table of changes (ensemble mean, lowest and highest member, members agreeing), under the
labels, units and formats of :mod:`climwidgets.analyses.meta`.  :func:`depth_section`
does the same for :func:`~climwidgets.analyses.scenario.basin_depth_signals`.
:func:`scenario_report` puts them on one self-contained page with the inputs (sizes and
checksums) and the parameters, as the ``climwidgets scenario`` job and the scenario
widget write it.  Nothing here draws or computes: the numbers come from the analyses.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import xarray as xr

from .._version import __version__
from ..analyses.meta import frame
from ..atomic import atomic_write, check_target
from ._provenance import describe_inputs
from .content import ReportContent
from .html import _CSS, _e, _inputs_html, _kv_table, _section, _table_html

__all__ = ["depth_section", "scenario_report", "scenario_section", "write_scenario_report"]


def _cautions_box(cautions) -> str:
    return (
        "<div class='notice'><strong>Before using these numbers:</strong><ol class='cautions'>"
        + "".join(f"<li>{_e(c)}</li>" for c in cautions)
        + "</ol></div>"
    )


def scenario_section(signals: xr.Dataset, title: str = "Climate-change scenario") -> str:
    """The scenario section (``<section id="scenario">``) for an HTML report.

    Parameters
    ----------
    signals
        A computed :func:`climwidgets.analyses.scenario.basin_signals` result.
    title
        The section heading (user text; escaped).

    Returns
    -------
    str
        HTML: the cautions, the periods and season, and the basin table.
    """
    ensemble = signals.attrs.get("member_dim", "none") != "none"
    # stored numbers with their attributes: the table renderer scales, labels and formats them
    table = frame(signals) if ensemble else frame(signals, columns=["share_change_1", "normal_change_1"])
    notice = _cautions_box(signals.attrs.get("cautions", []))
    hp, fp = signals.attrs.get("historical_period", ["?", "?"]), signals.attrs.get("future_period", ["?", "?"])
    season = signals.attrs.get("season") or ", ".join(str(m) for m in signals.attrs.get("months", []))
    compared = signals.attrs.get("comparison")
    what = (
        f"<p>Historical period {_e(hp[0])}–{_e(hp[1])}, future period {_e(fp[0])}–{_e(fp[1])}; "
        f"season {_e(season)}. "
        + (f"Compared: {_e(compared)}. " if compared else "")
        + (
            "Each change is shown as the ensemble mean with the lowest and highest member and the "
            "share of members agreeing on its sign."
            if ensemble
            else "A single run: no ensemble spread."
        )
        + "</p>"
    )
    return _section("scenario", title, notice + "\n" + what + "\n" + _table_html(table, max_wide=99))


def depth_section(depths: xr.Dataset, title: str = "Change in design depths") -> str:
    """The design-depth section (``<section id="scenario-depths">``): one row per basin and return period.

    Parameters
    ----------
    depths
        A computed :func:`climwidgets.analyses.scenario.basin_depth_signals` result.
    title
        The section heading (user text; escaped).

    Returns
    -------
    str
        HTML: the design-depth cautions, the periods and the table.
    """
    ensemble = depths.attrs.get("member_dim", "none") != "none"
    names = (
        [str(n) for n in depths.data_vars if set(depths[n].dims) == {"basin", "return_period"}]
        if ensemble
        else ["historical_depth_mm", "future_depth_mm", "depth_change_1"]
    )
    table = frame(depths, index=("basin", "return_period"), columns=names)
    hp, fp = depths.attrs.get("historical_period", ["?", "?"]), depths.attrs.get("future_period", ["?", "?"])
    text = (
        f"<p>Areal {_e(depths.attrs.get('duration', ''))} design depths (return level of the basin-mean annual "
        f"maxima, GEV by L-moments) of the model runs as they are, {_e(hp[0])}–{_e(hp[1])} against "
        f"{_e(fp[0])}–{_e(fp[1])}.</p>"
    )
    return _section(
        "scenario-depths",
        title,
        _cautions_box(depths.attrs.get("cautions", [])) + text + _table_html(table, max_wide=99),
    )


def scenario_report(
    signals: xr.Dataset,
    inputs=None,
    parameters: dict | None = None,
    depths=None,
    title: str = "Climate-change signals per basin",
) -> str:
    """One self-contained HTML page: cautions, basin signals, design depths, inputs, parameters.

    Parameters
    ----------
    signals
        A computed :func:`climwidgets.analyses.scenario.basin_signals` result.
    inputs
        Input file paths (listed with their sizes and SHA-256 checksums).
    parameters
        Settings to list (season, periods, method ...).
    depths
        Optional computed :func:`climwidgets.analyses.scenario.basin_depth_signals`.
    title
        The page title (user text; escaped).

    Returns
    -------
    str
        The HTML page (no scripts, nothing fetched).
    """
    parts = [
        f"<header><h1>{_e(title)}</h1><p>Prepared with climwidgets {_e(__version__)}</p>"
        f"<p>{signals.sizes.get('basin', 0)} basin(s)</p></header>",
        scenario_section(signals),
    ]
    if depths is not None:
        parts.append(depth_section(depths))
    listed = ReportContent(table=pd.DataFrame(), inputs=describe_inputs(inputs))  # only its inputs are read
    parts.append(_section("inputs", "Inputs", _inputs_html(listed)))
    params = list((parameters or {}).items()) or [("(none recorded)", "")]
    parts.append(_section("parameters", "Parameters", _kv_table(params)))
    if signals.attrs.get("history"):
        parts.append(_section("provenance", "Provenance", f"<pre>{_e(signals.attrs['history'])}</pre>"))
    parts.append(
        f"<footer><p>climwidgets {_e(__version__)}. Projections, not forecasts: see the cautions at the "
        f"top.</p></footer>"
    )
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(title)}</title><style>{_CSS}</style></head>\n<body>\n" + "\n".join(parts) + "\n</body></html>\n"
    )


def write_scenario_report(signals: xr.Dataset, path, overwrite: bool = False, **kwargs) -> Path:
    """Write :func:`scenario_report` to ``path`` atomically (refuses to replace a file unless ``overwrite``).

    Parameters
    ----------
    signals
        A computed :func:`climwidgets.analyses.scenario.basin_signals` result.
    path
        The ``.html`` file.
    overwrite
        Replace an existing file.
    **kwargs
        ``inputs``, ``parameters``, ``depths``, ``title`` of :func:`scenario_report`.

    Returns
    -------
    pathlib.Path
        The written file.
    """
    target = check_target(path, overwrite, "scenario report")
    page = scenario_report(signals, **kwargs)

    def write(tmp: Path) -> None:
        tmp.write_text(page, encoding="utf-8")

    return atomic_write(target, overwrite, write, "scenario report")
