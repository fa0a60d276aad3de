"""The whole tour in a real browser, as a planner sees it at 1400 px.

Voilà serves notebooks/tour.ipynb on the small demo with the suite's page template;
Debian's Chromium (driven by Playwright) waits for every widget, then checks what a
reviewer would: no request leaves the machine, no console error, no label cut off in its
box (scrollWidth <= clientWidth), no table cell for people in scientific notation, and
every export button of every widget ends in a real browser download of a readable file
(CSV read with plain pandas, PNG, HTML, NetCDF by their signatures).  A screenshot of each
widget is kept in out/screenshots/ for reviewers.
"""

from __future__ import annotations

import io
import re
import time
from pathlib import Path

import pytest

from .test_browser import CHROMIUM, CHROMIUM_ARGS, LOOPBACK, REPO, serve

pytestmark = pytest.mark.browser

TOUR = REPO / "notebooks" / "tour.ipynb"
# label elements whose text must fit their box
_OVERFLOW = """() => [...document.querySelectorAll(
    '.widget-label, .widget-label-basic, .widget-readout, .jupyter-button, .widget-dropdown select')]
  .filter(e => e.offsetParent !== null && e.clientWidth > 0 && e.scrollWidth > e.clientWidth + 1)
  .map(e => (e.textContent || e.value || '').trim()).filter(t => t)"""
_SCIENTIFIC = """() => [...document.querySelectorAll('table.cw-table td')].map(e => e.textContent.trim())
  .filter(t => /\\d[eE][+-]?\\d/.test(t))"""
SIGNATURES = {".png": (b"\x89PNG",), ".nc": (b"CDF", b"\x89HDF"), ".html": (b"<!DOCTYPE", b"<html")}


@pytest.fixture(scope="module")
def tour(tmp_path_factory):
    from climwidgets.demo import generate

    folder = tmp_path_factory.mktemp("demo")
    generate(directory=folder, size="test", quiet=True)
    with serve(TOUR, folder, tmp_path_factory.mktemp("voila-tour")) as url:
        yield url


def _read(name: str, data: bytes):
    """A downloaded file opened the way its reader would."""
    import pandas as pd

    if name.endswith(".csv"):
        return pd.read_csv(io.BytesIO(data))
    if name.endswith(".json"):
        import json

        return json.loads(data)
    for suffix, heads in SIGNATURES.items():
        if name.endswith(suffix):
            assert data.startswith(heads), f"{name} does not look like a {suffix} file"
            return data
    raise AssertionError(f"unexpected download {name}")


def test_the_tour_as_a_planner_sees_it(tour, tmp_path):
    from playwright.sync_api import sync_playwright

    shots = REPO / "out" / "screenshots"
    shots.mkdir(parents=True, exist_ok=True)
    with sync_playwright() as p:
        context = p.chromium.launch_persistent_context(
            str(tmp_path / "profile"),
            executable_path=CHROMIUM,
            headless=True,
            args=CHROMIUM_ARGS,
            viewport={"width": 1400, "height": 2200},
        )
        page = context.new_page()
        page.set_default_timeout(300_000)
        requested, errors = [], []
        page.on("request", lambda r: requested.append(r.url))
        page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
        page.on("pageerror", lambda e: errors.append(str(e)))
        try:
            page.goto(tour, timeout=300_000)
            # every widget has drawn its table and no computation is still running
            n_widgets = TOUR.read_text().count("Widget(")
            page.wait_for_function(
                f"() => document.querySelectorAll('table.cw-table').length >= {n_widgets}", timeout=600_000
            )
            page.wait_for_function(
                "() => [...document.querySelectorAll('.widget-progress')]"
                ".every(e => getComputedStyle(e).visibility === 'hidden')",
                timeout=600_000,
            )
            assert not [u for u in requested if not u.startswith(LOOPBACK)]
            assert errors == [], errors
            assert page.evaluate(_OVERFLOW) == []
            assert page.evaluate(_SCIENTIFIC) == []
            assert "Traceback" not in page.inner_text("body")
            for i, out in enumerate(page.locator(".jp-OutputArea-output:has(.widget-vbox)").all()):
                title = out.locator("h3, b").first.inner_text() if out.locator("h3, b").count() else "widget"
                slug = re.sub(r"[^a-z0-9]+", "_", title.lower()).strip("_")[:40] or "widget"
                out.screenshot(path=str(shots / f"{i:02d}_{slug}.png"))  # named after the widget's title

            buttons = page.locator("button:has(i.fa-download)")
            assert buttons.count() >= 2 * n_widgets - 2
            got = {}
            for i in range(buttons.count()):
                button = buttons.nth(i)
                # the links appear in the same widget, after its exports row, replacing older ones
                box = button.locator("xpath=ancestor::div[contains(@class,'widget-vbox')][1]")

                def names(box=box):  # read in one go: the links are replaced as a whole
                    return box.evaluate("b => [...b.querySelectorAll('a.cw-download')].map(a => a.download)")

                before = names()
                button.scroll_into_view_if_needed()
                button.click()
                deadline = time.monotonic() + 120
                while not (now := names()) or now == before:
                    assert time.monotonic() < deadline, f"no download link after {button.inner_text()!r}"
                    time.sleep(0.2)
                for name in now:
                    with page.expect_download(timeout=120_000) as info:
                        box.locator(f"a.cw-download[download={name!r}]").click()
                    d = info.value
                    got[d.suggested_filename] = Path(d.path()).read_bytes()
            for name, data in got.items():
                _read(name, data)
            assert sum(n.endswith(".csv") for n in got) >= n_widgets - 1
            assert all(n + "-metadata.json" in got for n in got if n.endswith(".csv"))
        except Exception:
            page.screenshot(path=str(shots / "tour_failure.png"), full_page=True)
            raise
        finally:
            context.close()
