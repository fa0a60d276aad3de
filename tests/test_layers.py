"""The layer contract: data flows one way through the package.

Every ``import`` in climwidgets — at the top of a module or inside a function — is read
from the source (Python's own ``ast``), relative imports resolved, and checked against
the floors below.  A module may import from its own floor and the floors beneath it,
never above, so there is no loop between floors: io, geo and compute import nothing of
analyses, plot, widgets, report, jobs or the command line, and geo does not import
compute.
"""

from __future__ import annotations

import ast
from pathlib import Path

import climwidgets

PACKAGE = Path(climwidgets.__file__).resolve().parent

# floor -> the floors it may import (besides itself)
BASE = {"errors", "provenance", "atomic", "_version", "cache", "scale"}
ALLOWED = {
    "base": set(),
    "io": {"base"},
    "geo": {"base", "io"},
    "compute": {"base", "io", "geo"},
    "analyses": {"base", "io", "geo", "compute"},
    "plot": {"base", "io", "geo", "compute", "analyses"},
    "report": {"base", "io", "geo", "compute", "analyses", "plot"},
    "widgets": {"base", "io", "geo", "compute", "analyses", "plot", "report"},
    "demo": {"base", "io", "geo", "compute"},
    "jobs": {"base", "io", "geo", "compute", "analyses", "plot", "report", "demo"},
    "cli": {"base", "io", "geo", "compute", "analyses", "plot", "report", "demo", "jobs"},
    "package": {"base", "io", "geo", "compute", "analyses", "plot", "report", "widgets", "demo", "jobs", "cli"},
}
FRONT_END = ("ipywidgets", "ipympl", "IPython", "ipykernel", "matplotlib")
# top-level modules that belong to another floor's family
SAME_FLOOR_AS = {"demo_ensemble": "demo", "page": "cli"}


def _floor(parts: tuple[str, ...]) -> str:
    """The floor of a module given as its path inside the package."""
    if not parts or parts == ("__init__",) or parts == ("__main__",):
        return "package"
    head = parts[0]
    if head in BASE:
        return "base"
    return SAME_FLOOR_AS.get(head, head)


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE).with_suffix("")
        yield path, tuple(rel.parts)


def _imports(path: Path, parts: tuple[str, ...]):
    """(line, imported module path inside climwidgets or None, top-level name) of every import."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = parts[:-1] if parts[-1] != "__init__" else parts[:-1]
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                name = alias.name.split(".")
                yield node.lineno, tuple(name[1:]) if name[0] == "climwidgets" else None, name[0]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - (node.level - 1)] if node.level > 1 else package
                target = base + tuple((node.module or "").split(".")) if node.module else base
                if not node.module:  # "from . import x": each name is a module
                    for alias in node.names:
                        yield node.lineno, target + (alias.name,), "climwidgets"
                    continue
                yield node.lineno, tuple(p for p in target if p), "climwidgets"
            else:
                name = (node.module or "").split(".")
                if name[0] == "climwidgets":
                    rest = tuple(name[1:])
                    if not rest:
                        for alias in node.names:
                            yield node.lineno, (alias.name,), "climwidgets"
                        continue
                    yield node.lineno, rest, "climwidgets"
                else:
                    yield node.lineno, None, name[0]


def _violations():
    found = []
    for path, parts in _modules():
        floor = _floor(parts)
        for line, target, top in _imports(path, parts):
            where = f"{'/'.join(parts)}.py:{line}"
            if target is None:
                if floor in ("base", "io", "geo", "compute", "analyses") and top in FRONT_END:
                    found.append(f"{where} imports {top} (a front-end library) on the {floor} floor")
                continue
            other = _floor(target)
            if other not in ALLOWED:
                found.append(f"{where}: imports {'.'.join(target)}, on no known floor (add it to ALLOWED)")
            elif other != floor and other not in ALLOWED[floor] and not (floor == "package"):
                found.append(f"{where}: {floor} imports {'.'.join(target)} ({other}), above it")
            if floor == "package" and target and target[0] not in ("errors", "_version"):
                found.append(f"{where}: the package root imports {'.'.join(target)} eagerly (use _PUBLIC)")
    return found


def test_no_floor_imports_a_floor_above_it():
    assert _violations() == []


def test_the_checker_sees_imports_inside_functions(tmp_path):
    src = tmp_path / "m.py"
    src.write_text("def f():\n    from ..widgets.base import BaseWidget\n    import climwidgets.report.html\n")
    found = list(_imports(src, ("geo", "m")))
    assert (2, ("widgets", "base"), "climwidgets") in found
    assert (3, ("report", "html"), "climwidgets") in found


def test_every_floor_is_known():
    floors = {_floor(parts) for _, parts in _modules()}
    assert floors <= set(ALLOWED), floors - set(ALLOWED)


def test_the_public_names_point_at_their_floor():
    """Public names of the analyses live on the analyses floor, not in geo or compute."""
    for name in ("basin_summary", "scenario_delta", "products_basin_table"):
        assert climwidgets._PUBLIC[name].startswith("climwidgets.analyses.")
