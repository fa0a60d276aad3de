"""One report for the page and the command line (report.content.report_content).

The served page's HTML report (the summary widget's export button) and the CLI
summary's report are written by the same function, so they hold the same sections, the
same input files with their checksums, the same basin numbers and, for the invented demo
data, the same notice.  The reference is the CLI's own report, computed independently
from the same file.
"""

import re

import pytest

import climwidgets as cw
from climwidgets.cli import main
from climwidgets.demo import generate
from climwidgets.report.content import INVENTED_DATA_NOTICE

pytest.importorskip("ipympl")


def _sections(html: str) -> list[str]:
    return re.findall(r'<section id="([^"]+)"', html)


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    return generate(directory=tmp_path_factory.mktemp("demo"), size="test", quiet=True)


def test_page_and_command_line_reports_hold_the_same_sections(demo, tmp_path):
    out = tmp_path / "cli"
    assert (
        main(
            [
                "--quiet",
                "summary",
                "--data",
                str(demo["monthly"]),
                "--basins",
                str(demo["basins"]),
                "--out",
                str(out),
                "--what-if",
                "-10",
                "--what-if-months",
                "7,8",
            ]
        )
        == 0
    )
    cli_html = (out / "basin_report.html").read_text(encoding="utf-8")

    pr = cw.open_precip(demo["monthly"])
    basins = cw.Basin.from_geojson(demo["basins"])
    w = cw.BasinSummaryWidget(pr, basins, export_dir=tmp_path / "page")
    with w.quiet():
        w.s_first.value, w.s_last.value, w.percent.value = 7, 8, -10.0
    w.refresh()
    w.wait()
    assert w.error is None, w.message.value
    w.save_copies = False
    button = next(b for b in w.exports.children if b.description == "HTML report")
    button.click()
    from tests.widgets._data import download_links

    (page_html,) = [v.decode("utf-8") for k, v in download_links(w).items() if k.endswith(".html")]

    assert _sections(page_html) == _sections(cli_html)
    assert {"inputs", "parameters", "basins", "maps", "normals", "what-if", "cautions"} <= set(_sections(cli_html))
    for html in (page_html, cli_html):
        assert INVENTED_DATA_NOTICE in html
        assert demo["monthly"].name in html and "SHA-256" in html  # the file and its checksum
        assert "No input files were recorded" not in html
    # the same basin figures in both (the table is formatted by the one catalogue)
    cells = re.compile(r"<td[^>]*>([^<]+)</td>")
    assert cells.findall(page_html.split('id="basins"')[1].split("</section>")[0]) == cells.findall(
        cli_html.split('id="basins"')[1].split("</section>")[0]
    )
