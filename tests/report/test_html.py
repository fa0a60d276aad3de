"""Self-contained HTML report: content, escaping, no outside resources, print layout,
atomic writes, and a headless-Chromium check of how the file opens."""

from __future__ import annotations

import base64
import os
import re
import shutil
import tempfile

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.errors import InputError, ParameterError
from climwidgets.io.grid import normalise_rectilinear
from climwidgets.report.html import ReportContent, build_report_content, write_report

EVIL = "<script>alert(1)</script>"
# Monthly depths (mm) of the synthetic field, the same every year and in every cell.
MONTHLY = np.array([20, 20, 40, 70, 100, 130, 150, 160, 140, 100, 70, 40], dtype=float)


def _precip():
    t = pd.date_range("1991-01-01", "2000-12-01", freq="MS")
    lat = np.arange(10.125, 11.0, 0.25)
    lon = np.arange(-150.125, -149.0, 0.25)
    values = np.broadcast_to(MONTHLY[t.month.values - 1][:, None, None], (t.size, lat.size, lon.size)).copy()
    da = xr.DataArray(
        values,
        dims=("time", "lat", "lon"),
        coords={"time": t, "lat": lat, "lon": lon},
        name="pr",
        attrs={"units": "mm", "step": "month", "history": "synthetic field for a test"},
    )
    return normalise_rectilinear(da)


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    src = folder / "grid.nc"
    src.write_bytes(b"stand-in for the input grid")
    basins = [
        cw.Basin.from_vertices([(-150.1, 10.1), (-149.6, 10.15), (-149.55, 10.6), (-150.05, 10.7)], name=EVIL),
        cw.Basin.from_vertices(
            [(-149.5, 10.3), (-149.1, 10.3), (-149.1, 10.85), (-149.5, 10.8)], name='Ridge & Vale "east" $x$'
        ),
    ]
    content = build_report_content(
        _precip(),
        basins,
        months=(7, 8),
        baseline=(1991, 2000),
        sources=[src],
        scenario_percent=-10,
        title="Water plan <b>draft</b>",
    )
    path = write_report(content, folder / "report.html")
    return content, path, path.read_text(encoding="utf-8")


# ----------------------------------------------------------------- content
def test_report_numbers_match_the_analytic_field(report):
    content, _, _ = report
    # constant months: the normal of each month is its depth, and the Jul-Aug share of
    # every year is (150 + 160) / sum of the 12 months
    share = (MONTHLY[6] + MONTHLY[7]) / MONTHLY.sum()
    for name in content.table.index:
        np.testing.assert_allclose(content.monthly_normals[name].to_numpy(), MONTHLY, rtol=1e-12)
        np.testing.assert_allclose(content.share_by_year[name].to_numpy(), share, rtol=1e-12)
        slope, _, _ = content.share_trends[name]
        assert slope == pytest.approx(0.0, abs=1e-15)
    np.testing.assert_allclose(content.table["seasonal_share_1"], share, rtol=1e-12)
    assert list(content.share_by_year.index) == list(range(1991, 2001))


def test_sections_figures_and_inputs(report):
    content, _, text = report
    for sid in ("inputs", "parameters", "basins", "maps", "normals", "share", "what-if", "cautions", "provenance"):
        assert f'<section id="{sid}">' in text
    assert f"climwidgets {cw.__version__}" in text
    import hashlib

    assert hashlib.sha256(b"stand-in for the input grid").hexdigest() in text
    images = re.findall(r'<img src="data:image/png;base64,([A-Za-z0-9+/=]+)"', text)
    assert len(images) == 4  # two maps, the normals chart, the share panels
    assert all(base64.b64decode(i)[:8] == b"\x89PNG\r\n\x1a\n" for i in images)
    assert "jurisdiction" in text and "Planning-level" in text
    assert "What-if: Jul-Aug precipitation -10 %" in text


def test_user_text_is_escaped(report):
    _, _, text = report
    assert "<script" not in text.lower()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    assert "Water plan &lt;b&gt;draft&lt;/b&gt;" in text and "<b>draft" not in text
    assert "Ridge &amp; Vale &quot;east&quot; $x$" in text


def test_nothing_is_fetched_from_outside(report):
    _, _, text = report
    attrs = re.findall(r'\b(?:src|href|action|poster|srcset)\s*=\s*["\']?([^"\'\s>]+)', text, flags=re.I)
    assert attrs and all(a.startswith("data:") or a.startswith("#") for a in attrs)
    assert not re.search(r"https?://", text)
    assert "@import" not in text and "url(" not in text
    assert "<link" not in text.lower() and "<iframe" not in text.lower()


def test_print_layout(report):
    _, _, text = report
    css = text[text.index("@media print") :]
    assert "break-before: page" in css and "page-break-before: always" in css
    assert re.search(r"table, figure[^{]*\{[^}]*break-inside: avoid", css)


def test_table_alone_and_overrides(tmp_path):
    table = pd.DataFrame(
        {
            "basin": [EVIL, "b"],
            "area_km2": [10.0, 20.0],
            "annual_mean_mm": [900.0, 1200.0],
            "volume_per_year_m3": [9e6, 2.4e7],
        }
    ).set_index("basin")
    table.attrs.update(months=[7, 8], baseline=[1991, 2020])
    grid = tmp_path / "grid.nc"
    grid.write_bytes(b"abc")
    path = write_report(table, tmp_path / "t.html", title="Summary", inputs=[grid], parameters={"analyst": "<i>me</i>"})
    text = path.read_text()
    assert "<script" not in text.lower() and "&lt;i&gt;me&lt;/i&gt;" in text
    # SHA-256 of "abc": the FIPS 180-2 example message (NIST), value from memory
    assert "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad" in text
    assert "1991, 2020" in text and "9.00" in text and "million m³" in text  # volumes rounded for people
    assert "<img" not in text and 'id="cautions"' in text  # volumes bring the cautions


def test_refuses_overwrite_and_keeps_old_file_on_failure(tmp_path, monkeypatch):
    table = pd.DataFrame({"annual_mean_mm": [1.0]}, index=pd.Index(["a"], name="basin"))
    path = tmp_path / "r.html"
    path.write_text("old")
    with pytest.raises(FileExistsError) as info:
        write_report(table, path)
    assert isinstance(info.value, InputError) and str(path) in str(info.value)
    from climwidgets.report import html as hmod

    monkeypatch.setattr(hmod, "render_html", lambda *a, **k: (_ for _ in ()).throw(OSError("simulated")))
    with pytest.raises(OSError, match="simulated"):
        write_report(table, path, overwrite=True)
    assert path.read_text() == "old" and [p.name for p in tmp_path.iterdir()] == ["r.html"]
    with pytest.raises(ParameterError, match="ReportContent"):
        write_report({"not": "a table"}, tmp_path / "x.html")
    with pytest.raises(ParameterError, match="DataFrame"):
        ReportContent(table=[1, 2])


# ----------------------------------------------------------------- real browser
CHROMIUM = "/usr/bin/chromium"
ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]


@pytest.mark.browser
def test_opens_in_headless_chromium_without_errors_or_requests(report, tmp_path):
    if not os.path.exists(CHROMIUM) and os.environ.get("CI") != "true":
        pytest.skip("Debian chromium is not installed (runs in CI)")
    sync_api = (
        pytest.importorskip("playwright.sync_api")
        if os.environ.get("CI") != "true"
        else __import__("playwright.sync_api", fromlist=["sync_playwright"])
    )
    _, path, _ = report
    errors, requests, dialogs = [], [], []
    user_dir = tempfile.mkdtemp(dir=tmp_path)
    with sync_api.sync_playwright() as p:
        ctx = p.chromium.launch_persistent_context(
            user_dir, executable_path=CHROMIUM, args=ARGS, headless=True, viewport={"width": 1000, "height": 800}
        )
        try:
            page = ctx.new_page()
            page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
            page.on("pageerror", lambda e: errors.append(str(e)))
            page.on("request", lambda r: requests.append(r.url))
            page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
            page.goto(path.as_uri(), wait_until="load")
            assert page.locator("#basin-table table").is_visible()
            assert page.locator("#basin-table").get_by_text(EVIL).first.is_visible()
            assert page.evaluate("document.scripts.length") == 0
            sizes = page.evaluate("Array.from(document.images).map(i => i.naturalWidth)")
            assert len(sizes) == 4 and min(sizes) > 100  # every figure decoded
        finally:
            ctx.close()
    shutil.rmtree(user_dir, ignore_errors=True)
    assert errors == [] and dialogs == []
    assert [u for u in requests if not (u == path.as_uri() or u.startswith("data:"))] == []


# ----------------------------------------------------------------- units
def test_report_in_us_customary_units(report, tmp_path):
    """The same content in US customary units: inches, acre-feet and square miles, whole
    acre-feet with thousands separators, no scientific notation."""
    from climwidgets.report.html import render_html

    content, _, si_text = report
    text = render_html(content, figures=False, units="US")
    basin = content.table.index[0]
    row = content.table.loc[basin]
    # 1 in = 25.4 mm, 1 acre-ft = 43 560 ft³ = 1 233.481 837 547 52 m³, 1 mi² = 2.589 988 110 336 km²
    # (international yard and pound agreement 1959; NIST SP 811, Appendix B; from memory)
    inches = row["annual_mean_mm"] / 25.4
    acre_ft = row["volume_per_year_m3"] / 1233.48183754752
    mi2 = row["area_km2"] / 2.589988110336
    assert f"{inches:,.1f}" in text and f"{mi2:,.1f}" in text
    assert f"{acre_ft:,.0f}" in text and "acre-ft" in text
    assert "(in)" in text and "(mi²)" in text and "(mm)" not in text.split('id="cautions"')[0]
    assert "US customary" in text  # the parameters say which units are shown
    assert text.count("Volume per year <span class='unit'>(acre-ft)</span>") == 1  # not beside its m³ twin
    assert "million m³" in si_text and "million m³" not in text
    body = re.sub(r"<style>.*?</style>|<pre>.*?</pre>|class='mono'>[^<]*", "", text, flags=re.S)
    cells = re.findall(r"<td class='num'>([^<]*)</td>", body)
    assert cells and not [c for c in cells if re.search(r"\de[+-]?\d", c)], cells
    # the monthly normals in inches: 150 mm in July = 5.906 in
    figures = render_html(content, figures=True, units="US")
    assert "basin (in)" in figures and f"{150 / 25.4:.2f}" in figures


def test_write_report_refuses_an_unknown_unit_system(report, tmp_path):
    content, _, _ = report
    with pytest.raises(ParameterError, match="unit system"):
        write_report(content, tmp_path / "x.html", units="imperial")
    assert not (tmp_path / "x.html").exists()
