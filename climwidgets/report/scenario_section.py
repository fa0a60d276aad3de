"""The report's climate-change scenario section, as one self-contained piece of HTML.

:func:`scenario_section` renders :func:`climwidgets.analyses.scenario.basin_signals`: the
scenario cautions first (a notice box, before any number), then the periods and the basin
table of changes (ensemble mean, lowest and highest member, members agreeing), under the
labels, units and formats of :mod:`climwidgets.analyses.meta`.  It draws nothing itself
and computes nothing: the numbers come from the analysis.
"""

from __future__ import annotations

import xarray as xr

from ..analyses.meta import frame
from .html import _e, _section, _table_html

__all__ = ["scenario_section"]


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
    cautions = signals.attrs.get("cautions", [])
    notice = ("<div class='notice'><strong>Before using these numbers:</strong><ol class='cautions'>"
              + "".join(f"<li>{_e(c)}</li>" for c in cautions) + "</ol></div>")
    hp, fp = signals.attrs.get("historical_period", ["?", "?"]), signals.attrs.get("future_period", ["?", "?"])
    season = signals.attrs.get("season") or ", ".join(str(m) for m in signals.attrs.get("months", []))
    what = (f"<p>Historical period {_e(hp[0])}–{_e(hp[1])}, future period {_e(fp[0])}–{_e(fp[1])}; "
            f"season {_e(season)}. "
            + ("Each change is shown as the ensemble mean with the lowest and highest member and the "
               "share of members agreeing on its sign." if ensemble else "A single run: no ensemble spread.")
            + "</p>")
    return _section("scenario", title, notice + "\n" + what + "\n" + _table_html(table, max_wide=99))
