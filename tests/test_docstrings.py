"""Every public function and class of the documented modules has a numpydoc docstring with
Parameters (when it takes arguments), Returns (functions) and Examples sections.

The Examples run as doctests in ``make test`` (``--doctest-modules`` in pyproject.toml);
this test checks that they are there, with numpydoc's own parser (numpydoc.docscrape).
Scope (issue 20): compute/, geo/, io/, analyses/, scale, cache, atomic, errors, page and
the top-level public API.  ``DOCUMENTED`` lists the modules that meet the rule; ``PENDING``
the ones still to be written.  Move a module from PENDING to DOCUMENTED when its
docstrings are complete; never add one to PENDING (a new module is documented from the
start).
"""

from __future__ import annotations

import importlib
import inspect
import pkgutil

import pytest

docscrape = pytest.importorskip("numpydoc.docscrape")

DOCUMENTED = [
    "climwidgets.atomic",
    "climwidgets.errors",
    "climwidgets.cache",
    "climwidgets.scale",
    "climwidgets.compute.anomaly",
    "climwidgets.compute.arf",
    "climwidgets.compute.bundle",
    "climwidgets.compute.compare",
    "climwidgets.compute.ddf",
    "climwidgets.compute.depth_units",
    "climwidgets.compute.ensemble",
    "climwidgets.compute.extremes",
    "climwidgets.compute.gev",
    "climwidgets.compute.indices",
    "climwidgets.compute.linear_model",
    "climwidgets.compute.normals",
    "climwidgets.compute.orographic",
    "climwidgets.compute.regional",
    "climwidgets.compute.regrid",
    "climwidgets.compute.scenario",
    "climwidgets.compute.seasonal",
    "climwidgets.compute.signals",
    "climwidgets.compute.spi",
    "climwidgets.compute.thermo",
    "climwidgets.compute.totals",
    "climwidgets.compute.trend",
    "climwidgets.compute.warming",
    "climwidgets.geo.aggregate",
    "climwidgets.geo.area",
    "climwidgets.geo.basin",
    "climwidgets.geo.basinset",
    "climwidgets.geo.coverage",
    "climwidgets.geo.grid",
    "climwidgets.io.chunkreader",
    "climwidgets.io.combine",
    "climwidgets.io.extent",
    "climwidgets.io.grid",
    "climwidgets.io.info",
    "climwidgets.io.loader",
    "climwidgets.io.projected",
    "climwidgets.io.sources",
    "climwidgets.io.timeaxis",
    "climwidgets.io.units",
    "climwidgets.io.values",
    "climwidgets.analyses.anomalies",
    "climwidgets.analyses.basins",
    "climwidgets.analyses.comparison",
    "climwidgets.analyses.ddf_table",
    "climwidgets.analyses.ensemble",
    "climwidgets.analyses.extremes",
    "climwidgets.analyses.indices",
    "climwidgets.analyses.meta",
    "climwidgets.analyses.orographic",
    "climwidgets.analyses.run",
    "climwidgets.analyses.scenario",
    "climwidgets.page",
]

PENDING: list[str] = []  # every module in scope is documented; never add one back


def _scope() -> list[str]:
    names = ["climwidgets.atomic", "climwidgets.cache", "climwidgets.errors", "climwidgets.scale"]
    for pkg in ("climwidgets.compute", "climwidgets.geo", "climwidgets.io", "climwidgets.analyses"):
        mod = importlib.import_module(pkg)
        names += [f"{pkg}.{m.name}" for m in pkgutil.iter_modules(mod.__path__) if not m.name.startswith("_")]
    return sorted(names)


def _public(module_name: str) -> list[tuple[str, object]]:
    mod = importlib.import_module(module_name)
    names = getattr(mod, "__all__", None) or [n for n in vars(mod) if not n.startswith("_")]
    out = []
    for name in names:
        obj = getattr(mod, name, None)
        if (inspect.isfunction(obj) or inspect.isclass(obj)) and obj.__module__ == module_name:
            out.append((name, obj))
    return out


def _takes_arguments(obj: object) -> bool:
    try:
        params = inspect.signature(obj).parameters  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return False
    return any(p not in ("self", "cls") for p in params)


def _adds_nothing(obj: object) -> bool:
    """A subclass that only names a kind (its own docstring, nothing else): its parameters
    and examples are those of its documented base (the InputError subclasses)."""
    own = {k for k in vars(obj) if not k.startswith("__")} if inspect.isclass(obj) else {"x"}
    return inspect.isclass(obj) and not own and "__init__" not in vars(obj) and len(obj.__mro__) > 2


def _missing(obj: object) -> list[str]:
    if _adds_nothing(obj):
        return []
    doc = docscrape.FunctionDoc(obj) if inspect.isfunction(obj) else docscrape.ClassDoc(obj)
    missing = []
    if _takes_arguments(obj) and not doc["Parameters"]:
        missing.append("Parameters")
    if inspect.isfunction(obj) and not (doc["Returns"] or doc["Yields"]):
        missing.append("Returns")
    if not doc["Examples"]:
        missing.append("Examples")
    return missing


def test_every_module_in_scope_is_listed():
    listed = set(DOCUMENTED) | set(PENDING)
    assert not set(DOCUMENTED) & set(PENDING)
    unlisted = [m for m in _scope() if m not in listed and _public(m)]
    assert not unlisted, f"new modules must be documented and added to DOCUMENTED: {unlisted}"


@pytest.mark.parametrize("module_name", DOCUMENTED)
def test_numpydoc_sections(module_name):
    gaps = {name: miss for name, obj in _public(module_name) if (miss := _missing(obj))}
    assert not gaps, f"{module_name}: sections missing: {gaps}"


def test_top_level_api_documented_where_its_module_is():
    import climwidgets as cw

    documented = set(DOCUMENTED)
    gaps = {}
    for name in cw.__all__:
        obj = getattr(cw, name)
        if (inspect.isfunction(obj) or inspect.isclass(obj)) and obj.__module__ in documented:
            if miss := _missing(obj):
                gaps[name] = miss
    assert not gaps, f"climwidgets.<name>: sections missing: {gaps}"
