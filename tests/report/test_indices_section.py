"""Report sections and CSV files for the indices and the DDF table (climwidgets/report/indices_section.py).

The numbers are checked in tests/analyses/test_indices.py and tests/compute/test_ddf.py;
here: every shown number is the analysis's number in its display format (no scientific
notation), units are in the headings, the design-depth cautions travel with the DDF
section and CSV, and user text is escaped.
"""

import re

import json

import numpy as np
import pandas as pd

import climwidgets as cw
from climwidgets.analyses.ddf_table import ddf_long_table, ddf_wide_table
from climwidgets.analyses.indices import basin_index_table, gridded_indices
from climwidgets.report import indices_section as S
from climwidgets.report.tables import read_csv, read_metadata

from ..analyses.test_indices import _daily

BASIN = cw.Basin.from_vertices([(10.0, 40.0), (11.0, 40.0), (11.0, 41.0), (10.0, 41.0)], name="<b>box</b>")


def _tables():
    pr = _daily(years=(1991, 2010))
    ind = gridded_indices(pr, names=("PRCPTOT", "CDD"))
    table = basin_index_table(ind, [BASIN], "PRCPTOT").compute()
    ddf = cw.depth_duration_frequency(
        pr, durations=(1, 2, 3), periods=(2, 10, 100), basins=[BASIN], n_boot=100
    ).compute()
    return table, ddf


def test_sections_show_units_formats_and_cautions(tmp_path):
    table, ddf = _tables()
    html = S.indices_section(table)
    assert "PRCPTOT mean [mm]" in html and "Sen slope [mm per decade]" in html
    assert "&lt;b&gt;box&lt;/b&gt;" in html and "<b>box</b>" not in html
    assert "Wet day" in html and "spells are cut" in html
    mean = float(table["index_mean"].isel(basin=0))
    assert f"{mean:,.0f}" in html
    body = S.ddf_section(ddf)
    for caution in cw.DESIGN_DEPTH_CAUTIONS:
        assert html_escape(caution) in body
    wide = ddf_wide_table(ddf)
    assert list(wide.columns) == ["2 years", "10 years", "100 years"]
    assert list(wide.index) == ["1 day", "2 days", "3 days"]
    assert f"{wide.iloc[2, 2]:.1f}" in body
    assert not re.search(r"\d e[+-]?\d|\de[+-]\d", re.sub(r"<[^>]+>", " ", body))  # no scientific notation
    assert "depth [mm]" in body
    # the hook: the HTML report places the sections before its cautions
    from climwidgets.report.content import ReportContent
    from climwidgets.report.html import render_html

    content = ReportContent(table=pd.DataFrame({"area_km2": [1.0]}, index=pd.Index(["a"], name="basin")))
    content.extra_sections = (html, body)
    page = render_html(content, figures=False)
    assert page.index('id="indices"') < page.index('id="ddf"') < page.index('id="cautions"')


def test_ddf_in_inches_and_csv_files(tmp_path):
    table, ddf = _tables()
    inches = cw.convert_depth(ddf, "in")
    long_in, long_mm = ddf_long_table(inches), ddf_long_table(ddf)
    np.testing.assert_allclose(long_in["ddf_estimate"].to_numpy() * 25.4, long_mm["ddf_estimate"].to_numpy())
    shown = ddf_long_table(inches, display=True)
    assert "depth [in]" in shown.columns
    path = S.ddf_csv(inches, tmp_path / "ddf.csv")
    text = path.read_text()
    # the table alone in the CSV; its cautions and units in the metadata file beside it
    meta_text = json.dumps(read_metadata(path))
    assert "ddf_estimate_in" in text and "Defer to" in meta_text
    back = read_csv(path)
    assert len(back) == 9
    path = S.indices_csv(table, tmp_path / "idx.csv")
    meta_text = json.dumps(read_metadata(path), ensure_ascii=False)
    assert "index_mean [mm]" in meta_text and "index_slope [mm/yr]" in meta_text
    assert "index_mean" in read_csv(path).columns


def html_escape(text):
    import html

    return html.escape(text, quote=True)
