"""Serving notebooks as pages: the Voila command line with the suite's page template.

The template (``voila/templates/climwidgets-page``) is Voila's lab page without its links
to a public network address, so that a served page makes no request off the machine.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

__all__ = ["TEMPLATE", "voila_command"]

#: Name of the page template.
TEMPLATE = "climwidgets-page"
_DATA = Path(__file__).resolve().parent


def voila_command(notebook, port: int, extra=()) -> tuple[list[str], dict[str, str]]:
    """The argv and environment that serve ``notebook`` on 127.0.0.1:``port`` with the page template.

    The template folder is put first on ``JUPYTER_PATH`` (where Voila looks for templates).
    """
    env = dict(os.environ)
    env["JUPYTER_PATH"] = os.pathsep.join(
        [str(_DATA)] + [p for p in env.get("JUPYTER_PATH", "").split(os.pathsep) if p]
    )
    argv = [
        sys.executable,
        "-m",
        "voila",
        str(notebook),
        f"--port={int(port)}",
        "--no-browser",
        "--Voila.ip=127.0.0.1",
        f"--template={TEMPLATE}",
        *extra,
    ]
    return argv, env
