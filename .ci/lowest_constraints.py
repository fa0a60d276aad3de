"""Pins for the CI run against the lowest declared versions (.ci/lowest).

``python .ci/lowest_constraints.py constraints`` prints one pin per main dependency at its
lowest declared version (``numpy>=1.26`` becomes ``numpy==1.26``).
``python .ci/lowest_constraints.py test-requirements NAME ...`` prints the ``test`` extra
without the named packages (outside reference libraries whose own minimums are newer
than ours; the checks against them run in the normal CI run).
"""

import re
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
NAME = re.compile(r"^\s*([A-Za-z0-9_.\-]+)")


def constraints() -> list[str]:
    pins = []
    for dep in PROJECT["dependencies"]:
        m = re.match(r"^\s*([A-Za-z0-9_.\-]+)(\[[^\]]*\])?\s*>=\s*([^,;\s]+)", dep)
        if m is None:
            sys.exit(f"cannot read a lowest version from {dep!r}: declare it as NAME>=VERSION")
        pins.append(f"{m.group(1)}=={m.group(3)}")
    return pins


def test_requirements(without: set[str]) -> list[str]:
    return [dep for dep in PROJECT["optional-dependencies"]["test"]
            if NAME.match(dep).group(1).lower() not in without]


if __name__ == "__main__":
    mode, *names = sys.argv[1:] or ["constraints"]
    lines = constraints() if mode == "constraints" else test_requirements({n.lower() for n in names})
    print("\n".join(lines))
