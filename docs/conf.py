"""Sphinx configuration for the climwidgets documentation (``make docs``).

The build is offline and strict: no intersphinx inventories, no remote assets, and
``make docs`` turns every warning into an error.  Two pages are written at build time
from what is in the repository, so that they never go stale:

- ``api.rst`` lists every public name of :mod:`climwidgets` (``climwidgets.__all__``,
  which holds the ``_PUBLIC`` map), grouped by the layer that defines it;
- ``guide/screenshots.rst`` shows the PNG files present under ``_static/screenshots/``.
"""

from __future__ import annotations

import importlib
import sys
from collections import defaultdict
from pathlib import Path

DOCS = Path(__file__).resolve().parent
ROOT = DOCS.parent
sys.path.insert(0, str(ROOT))  # document the checkout, not whatever is installed

import climwidgets  # noqa: E402

project = "climwidgets"
author = "the climwidgets developers"
copyright = "2026, the climwidgets developers"  # noqa: A001 (Sphinx's name)
release = climwidgets.__version__
version = ".".join(release.split(".")[:2])

extensions = [
    "sphinx.ext.autodoc",
    "sphinx.ext.autosummary",
    "sphinx.ext.viewcode",
    "numpydoc",
    "myst_parser",
]
source_suffix = {".rst": "restructuredtext", ".md": "markdown"}
# architecture.md is pulled into architecture.rst (so its author can write plain Markdown)
exclude_patterns = ["_build", "generated/*.md", "architecture.md", "screenshots_list.txt"]
templates_path = ["_templates"]

# API pages: one page per public name, written by autosummary at build time.
autosummary_generate = True
autosummary_imported_members = True
autodoc_default_options = {"members": False}
autodoc_typehints = "none"  # the numpydoc Parameters section says it in words
numpydoc_show_class_members = False
numpydoc_class_members_toctree = False
numpydoc_xref_param_type = False
numpydoc_validation_checks: set[str] = set()  # style is checked by tests, not by the build

myst_heading_anchors = 3
# Markdown pages link to files of the repository (code, notebooks) that are not pages here.
suppress_warnings = ["myst.xref_missing"]

html_theme = "alabaster"
html_static_path = ["_static"]
html_theme_options = {
    "description": "gridded precipitation climatology",
    "fixed_sidebar": True,
    "font_family": "sans-serif",
    "head_font_family": "sans-serif",
}
html_show_sourcelink = False
html_show_sphinx = False


# ---------------------------------------------------------------- generated pages
_LAYERS = {
    "climwidgets.errors": "Errors",
    "climwidgets.io": "Reading data",
    "climwidgets.compute": "Computations",
    "climwidgets.geo": "Basins and areas",
    "climwidgets.analyses": "Analyses",
    "climwidgets.report": "Exports",
    "climwidgets.widgets": "Widgets",
}
_ORDER = list(_LAYERS)


def _layer(module: str) -> str:
    for prefix in _ORDER:
        if module == prefix or module.startswith(prefix + "."):
            return prefix
    return "climwidgets"  # top-level helpers (scale, cache, ...)


def _defining_module(name: str) -> str:
    module = climwidgets._PUBLIC.get(name)
    if module is None:  # names imported eagerly (the error classes)
        obj = getattr(climwidgets, name)
        module = getattr(obj, "__module__", "climwidgets")
    return module


def write_api_page() -> None:
    groups: dict[str, list[str]] = defaultdict(list)
    for name in climwidgets.__all__:
        if name.startswith("__"):
            continue
        groups[_layer(_defining_module(name))].append(name)
    lines = [
        "API reference",
        "=============",
        "",
        "Every public name of ``climwidgets`` (``import climwidgets as cw``), grouped by the",
        "layer that defines it.  This page is written at build time from",
        "``climwidgets.__all__``, so a name added to ``_PUBLIC`` appears here by itself.",
        "",
        ".. currentmodule:: climwidgets",
        "",
    ]
    titles = {**_LAYERS, "climwidgets": "Scale and other helpers"}
    for layer in [*_ORDER, "climwidgets"]:
        names = groups.get(layer)
        if not names:
            continue
        title = titles[layer]
        lines += [title, "-" * len(title), "", ".. autosummary::", "   :toctree: generated", "   :nosignatures:", ""]
        lines += [f"   {n}" for n in sorted(names, key=lambda n: (_defining_module(n), n))]
        lines.append("")
    _write_if_changed(DOCS / "api.rst", "\n".join(lines))


def write_screenshots_page() -> None:
    shots = sorted((DOCS / "_static" / "screenshots").glob("*.png"))
    lines = [
        "Widget screenshots",
        "==================",
        "",
        "Each widget of the tour notebook as Voilà serves it, taken in Chromium at 1400 px on the",
        "small demo by ``tests/widgets/test_browser_tour.py`` (which writes them to",
        "``out/screenshots/``; copy them here to refresh this page).",
        "",
    ]
    if not shots:
        lines += [
            "No screenshots are in this checkout yet.  PNG files placed in",
            "``docs/_static/screenshots/`` appear on this page at the next build.",
            "",
        ]
    for shot in shots:
        title = shot.stem.lstrip("0123456789").strip("_").replace("_", " ").replace("-", " ").capitalize()
        lines += [
            title,
            "-" * len(title),
            "",
            f".. image:: /_static/screenshots/{shot.name}",
            f"   :alt: {title}",
            "   :width: 100%",
            "",
        ]
    _write_if_changed(DOCS / "guide" / "screenshots.rst", "\n".join(lines))


def _write_if_changed(path: Path, text: str) -> None:
    # an unchanged file keeps its time stamp, so incremental builds stay incremental
    if not path.exists() or path.read_text() != text:
        path.write_text(text)


# The widgets need their imports at documentation time; fail early with a plain message.
for _name in ("ipywidgets", "matplotlib", "cartopy"):
    importlib.import_module(_name)

write_api_page()
write_screenshots_page()
