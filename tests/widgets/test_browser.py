"""The seasonal-share widget in a real browser: Voilà serves a small notebook, headless
Chromium (Debian's, driven by Playwright; never a downloaded browser) changes the season,
reads the basin's share off the page and draws a basin with mouse clicks on the map.

The expected share is computed here, in the test process, with the public functions on
the same demo data.  In CI (CI=true) the test must run; elsewhere it is skipped when
Chromium or Playwright is missing.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import socket
import subprocess
import time
import urllib.request
from pathlib import Path

import pytest

import climwidgets as cw
from climwidgets.demo import generate

pytestmark = pytest.mark.browser

CHROMIUM = "/usr/bin/chromium"
IN_CI = os.environ.get("CI", "").lower() == "true"
NOTEBOOK = Path(__file__).with_name("browser_seasonal.ipynb")
REPO = Path(__file__).resolve().parents[2]
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]

if not IN_CI and not os.path.exists(CHROMIUM):
    pytest.skip("Chromium is not installed (the test runs in CI)", allow_module_level=True)
if not IN_CI:
    pytest.importorskip("playwright.sync_api")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("demo")
    return folder, generate(directory=folder, size="test", quiet=True)


@contextlib.contextmanager
def serve(notebook, demo_dir, workdir):
    """Voilà serving ``notebook`` on the demo in ``demo_dir`` with the page template users get;
    yields the page's address, stops the server after."""
    from climwidgets.page import voila_command

    port = _free_port()
    argv, env = voila_command(notebook, port, extra=["--show_tracebacks=True"])
    env.update(CLIMWIDGETS_DEMO_DIR=str(demo_dir), CLIMWIDGETS_DEMO_SIZE="test")
    log = open(workdir / "voila.log", "w")
    proc = subprocess.Popen(argv, cwd=workdir, env=env, stdout=log, stderr=subprocess.STDOUT)
    url = f"http://127.0.0.1:{port}/"
    deadline = time.monotonic() + 120
    try:
        while True:
            try:
                urllib.request.urlopen(url + "api", timeout=5)
                break
            except OSError as exc:
                if getattr(exc, "code", None):  # an HTTP error means the server answers
                    break
                if proc.poll() is not None or time.monotonic() > deadline:
                    log.flush()
                    pytest.fail("Voilà did not start:\n" + (workdir / "voila.log").read_text()[-3000:])
                time.sleep(0.5)
        yield url
    finally:
        proc.terminate()
        try:
            proc.wait(20)
        except subprocess.TimeoutExpired:
            proc.kill()
        log.close()


@pytest.fixture(scope="module")
def server(demo, tmp_path_factory):
    folder, _ = demo
    with serve(NOTEBOOK, folder, tmp_path_factory.mktemp("voila")) as url:
        yield url


@pytest.fixture
def page(server, tmp_path):
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        context = p.chromium.launch_persistent_context(
            str(tmp_path / "chromium-profile"),
            executable_path=CHROMIUM,
            headless=True,
            args=CHROMIUM_ARGS,
            viewport={"width": 1400, "height": 1600},
        )
        pg = context.new_page()
        pg.set_default_timeout(180_000)
        pg.requested = []  # every address the page asked for
        pg.on("request", lambda request: pg.requested.append(request.url))
        try:
            yield pg
        except Exception:
            pg.screenshot(path=str(tmp_path / "failure.png"), full_page=True)
            raise
        finally:
            context.close()


_ROW_TEXT = """([name, col]) => {
  for (const tr of document.querySelectorAll('table.cw-table tbody tr')) {
    const th = tr.querySelector('th');
    if (th && th.textContent.trim() === name) {
      const cells = tr.querySelectorAll('td');
      return cells.length > col ? cells[col].textContent.trim() : null;
    }
  }
  return null;
}"""


def _share_text(value):
    from climwidgets.analyses.meta import CATALOGUE

    meta = CATALOGUE["seasonal_share_1"]  # the widget shows the analysis' own display format
    return format(meta.display_scale * value, meta.display_format)


def test_season_change_and_drawing_in_the_browser(page, server, demo, tmp_path):
    from climwidgets.widgets.mapframe import MapFrame

    _, paths = demo
    pr = cw.open_precip(paths["monthly"])
    basin = cw.Basin.from_geojson(paths["basins"])[0]
    series = cw.basin_mean(pr, basin)
    before = _share_text(float(cw.seasonal_fraction(series, months=(7, 8))))
    after = _share_text(float(cw.seasonal_fraction(series, months=(7, 8, 9))))
    assert before != after

    page.goto(server, timeout=180_000)
    # widgets rendered and the first computation shown (kernel start + first compute)
    page.wait_for_function(f"() => ({_ROW_TEXT})([{basin.name!r}, 1]) === {before!r}", timeout=180_000)

    # season July-August -> July-September: the basin's share on the page follows
    page.locator(".widget-dropdown:has(label:text-is('to')) select").first.select_option(label="September")
    page.wait_for_function(f"() => ({_ROW_TEXT})([{basin.name!r}, 1]) === {after!r}", timeout=120_000)

    # draw a basin with mouse clicks on the map canvas
    share_map = cw.seasonal_fraction(pr, months=(7, 8, 9)).compute()
    frame = MapFrame(share_map, kind="share")  # same grid and figure size: same pixel layout
    canvas = page.locator(".jupyter-matplotlib-canvas-div").first
    canvas.scroll_into_view_if_needed()
    box = canvas.bounding_box()
    page.locator("button.widget-toggle-button", has_text="Draw").first.click(timeout=30_000)
    corners = [(-149.4, 33.8), (-148.4, 33.8), (-148.4, 34.6), (-149.4, 34.6)]
    for lon, lat in corners:
        fx, fy = frame.figure_fraction(lon, lat)
        page.mouse.click(box["x"] + fx * box["width"], box["y"] + (1 - fy) * box["height"])
        page.wait_for_timeout(700)  # distinct single clicks, each sent to the kernel
    page.get_by_placeholder("name of the new basin").first.fill("Test Hollow", timeout=30_000)
    page.wait_for_timeout(500)
    page.locator("button", has_text="Close basin").first.click(timeout=30_000)
    page.wait_for_function(f"() => ({_ROW_TEXT})(['Test Hollow', 1]) !== null", timeout=120_000)
    drawn = cw.Basin.from_vertices(corners)
    area_text = page.evaluate(f"({_ROW_TEXT})(['Test Hollow', 0])")
    # clicks land within a pixel of the corners: area within a few percent of the outline's
    assert float(area_text.replace(",", "")) == pytest.approx(drawn.area_m2 / 1e6, rel=0.05)

    page.wait_for_timeout(1500)  # let the map image refresh before the picture
    shot = tmp_path / "seasonal_share_browser.png"
    page.screenshot(path=str(shot), full_page=True)
    assert shot.stat().st_size > 10_000
    keep = REPO / "out" / "screenshots"
    keep.mkdir(parents=True, exist_ok=True)
    shutil.copy(shot, keep / shot.name)


def test_every_export_button_downloads_in_the_browser(page, server, demo, tmp_path):
    """Each export button shows links; clicking a link is a browser download whose bytes
    are the analysis result (the CSV read with plain pandas, its settings in the metadata)."""
    import io
    import json

    import pandas as pd

    _, paths = demo
    pr = cw.open_precip(paths["monthly"])
    basin = cw.Basin.from_geojson(paths["basins"])[0]
    share = float(cw.seasonal_fraction(cw.basin_mean(pr, basin), months=(7, 8)))
    page.goto(server, timeout=180_000)
    page.wait_for_function(f"() => ({_ROW_TEXT})([{basin.name!r}, 1]) === {_share_text(share)!r}", timeout=180_000)
    buttons = page.locator("button:has(i.fa-download)")
    labels = [t.strip() for t in buttons.all_inner_texts()]
    assert {"Table as CSV", "Map as PNG", "Per-year shares as CSV"} <= set(labels)
    got = {}
    for i, label in enumerate(labels):
        buttons.nth(i).click()
        links = page.locator("a.cw-download")
        links.first.wait_for(timeout=60_000)
        page.wait_for_function(
            "(n) => document.querySelectorAll('a.cw-download').length > 0 && "
            "[...document.querySelectorAll('a.cw-download')].every(a => a.download.includes(n))",
            arg={"Table as CSV": "seasonal_share_", "Map as PNG": ".png", "Per-year shares as CSV": "per_year"}.get(
                label, ""
            ),
            timeout=60_000,
        )
        for j in range(links.count()):
            with page.expect_download(timeout=60_000) as info:
                links.nth(j).click()
            download = info.value
            got[download.suggested_filename] = Path(download.path()).read_bytes()
    day = __import__("datetime").date.today().strftime("%Y%m%d")
    table_name = next(n for n in got if n.startswith("seasonal_share_jul-aug") and n.endswith(".csv"))
    assert day in table_name
    table = pd.read_csv(io.BytesIO(got[table_name]), index_col=0)
    col = next(c for c in table.columns if "share" in c and "%" in c)
    assert table.loc[basin.name, col] == pytest.approx(100 * share, rel=1e-6)
    meta = json.loads(got[table_name + "-metadata.json"])
    assert meta["parameters"]["months"] == [7, 8] and meta["url"] == table_name
    png = next(v for n, v in got.items() if n.endswith(".png"))
    assert png[:4] == b"\x89PNG"
    per_year = next(n for n in got if "per_year" in n and n.endswith(".csv"))
    years = pd.read_csv(io.BytesIO(got[per_year]), index_col=0)
    assert years.shape[0] > 5 and any(basin.name in c for c in years.columns)
    page.screenshot(path=str(tmp_path / "exports.png"), full_page=True)
    keep = REPO / "out" / "screenshots"
    keep.mkdir(parents=True, exist_ok=True)
    shutil.copy(tmp_path / "exports.png", keep / "seasonal_share_downloads.png")


LOOPBACK = ("http://127.0.0.1", "ws://127.0.0.1", "data:", "blob:", "about:")


def test_the_page_asks_nothing_of_the_network(page, server):
    """Every request of the served page stays on the machine (page template without public links)."""
    page.goto(server, timeout=180_000)
    page.wait_for_selector("table.cw-table", timeout=180_000)
    outside = [u for u in page.requested if not u.startswith(LOOPBACK)]
    assert outside == [], outside
    assert any(u.startswith("http://127.0.0.1") for u in page.requested)
