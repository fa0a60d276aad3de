"""Security: no eval/exec of user strings, no shell built from paths, all user text escaped in HTML."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

import climwidgets as cw

PACKAGE = Path(cw.__file__).resolve().parent
PAYLOAD = "<script>alert('x')</script>\"' onerror=alert(1) &amp;x"
# quotes only matter inside attribute values, where no user text is placed; in element text
# an escaped < and & are what count (pandas' to_html escapes those and leaves quotes)
RAW_MARKERS = ("<script>", "alert(1) &amp;x")


def _calls():
    for path in sorted(PACKAGE.rglob("*.py")):
        tree = ast.parse(path.read_text(), filename=str(path))
        for node in ast.walk(tree):
            if isinstance(node, ast.Call):
                yield path.relative_to(PACKAGE.parent), node


def _name(func) -> str:
    if isinstance(func, ast.Name):
        return func.id
    if isinstance(func, ast.Attribute):
        return f"{_name(func.value)}.{func.attr}"
    return ""


def test_no_eval_exec_or_dynamic_code_anywhere():
    banned = {
        "eval",
        "exec",
        "compile",
        "__import__",
        "builtins.eval",
        "builtins.exec",
        "pickle.loads",
        "marshal.loads",
    }
    found = [f"{p}:{n.lineno} {_name(n.func)}" for p, n in _calls() if _name(n.func) in banned]
    assert found == []


def test_no_shell_commands_built_from_strings():
    found = []
    for path, node in _calls():
        name = _name(node.func)
        if name in ("os.system", "os.popen", "subprocess.getoutput", "subprocess.getstatusoutput"):
            found.append(f"{path}:{node.lineno} {name}")
        if name.startswith("subprocess."):
            shell = [k for k in node.keywords if k.arg == "shell"]
            if shell and not (isinstance(shell[0].value, ast.Constant) and shell[0].value.value is False):
                found.append(f"{path}:{node.lineno} {name}(shell=...)")
            if node.args and not isinstance(node.args[0], (ast.List, ast.Tuple)):
                found.append(f"{path}:{node.lineno} {name} with a non-list command")
    assert found == []


def test_cli_paths_with_shell_characters_are_only_paths(tmp_path):
    """A path full of shell syntax is reported as a missing file; nothing is run."""
    marker = tmp_path / "ran"
    evil = f"{tmp_path}/x.nc; touch {marker}; echo $(touch {marker}) `touch {marker}` #"
    proc = subprocess.run(
        [sys.executable, "-m", "climwidgets.cli", "info", evil],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=tmp_path,
    )
    assert proc.returncode != 0
    assert "does not exist" in proc.stderr or "matches no files" in proc.stderr, proc.stderr
    assert "Traceback" not in proc.stderr
    assert not marker.exists()


def _no_raw_payload(text: str):
    for marker in RAW_MARKERS:
        assert marker not in text, f"unescaped user text {marker!r}"


def test_html_report_escapes_every_user_text(tmp_path):
    table = pd.DataFrame({"annual_mm": [1200.0], PAYLOAD: [0.3]}, index=pd.Index([PAYLOAD], name=PAYLOAD))
    table.attrs = {"note": PAYLOAD, PAYLOAD: PAYLOAD}
    src = tmp_path / "in<put>.nc"
    src.write_bytes(b"not used")
    out = cw.write_report(
        table,
        tmp_path / "r.html",
        title=PAYLOAD,
        inputs=[src],
        parameters={PAYLOAD: PAYLOAD},
        cautions=[PAYLOAD],
        notes=[PAYLOAD],
        figures=False,
    )
    text = out.read_text()
    _no_raw_payload(text)
    assert "&lt;script&gt;" in text and "in&lt;put&gt;.nc" in text
    assert text.count("&lt;script&gt;") >= 6  # title, index, column, note, parameter, caution…


def test_widget_html_escapes_user_text(tmp_path):
    import ipywidgets as widgets

    from climwidgets.widgets.base import BaseWidget

    class W(BaseWidget):
        title = PAYLOAD

        def compute(self):
            raise cw.ParameterError(PAYLOAD, source=PAYLOAD, fix=PAYLOAD)

    w = W(export_dir=tmp_path)
    w.show_table(pd.DataFrame({PAYLOAD: [1.0]}, index=pd.Index([PAYLOAD], name="basin")))
    _no_raw_payload(w.table_html.value)
    w.compute_now()
    assert isinstance(w.error, cw.ParameterError)
    _no_raw_payload(w.message.value)
    w.say(PAYLOAD)
    _no_raw_payload(w.message.value)
    heads = [c.value for c in w.children if isinstance(c, widgets.HTML)]
    for value in heads:
        _no_raw_payload(value)


def test_unexpected_errors_in_widgets_are_escaped(tmp_path):
    from climwidgets.widgets.base import BaseWidget

    class W(BaseWidget):
        def compute(self):
            raise RuntimeError(PAYLOAD)

    w = W(export_dir=tmp_path)
    w.compute_now()
    _no_raw_payload(w.message.value)
    assert "&lt;script&gt;" in w.message.value


@pytest.mark.parametrize("name", [PAYLOAD, "../../etc/passwd", "a\nb"])
def test_basin_names_reach_html_escaped(tmp_path, name):
    basin = cw.Basin.from_vertices([(-141.0, -31.0), (-140.0, -31.0), (-140.0, -30.0)], name=name)
    table = pd.DataFrame({"area_km2": [1.0]}, index=pd.Index([basin.name], name="basin"))
    text = cw.write_report(table, tmp_path / "b.html", figures=False).read_text()
    _no_raw_payload(text)
