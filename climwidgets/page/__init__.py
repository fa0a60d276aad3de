"""Serving notebooks as pages: the Voila command line with the suite's page template.

The template (``voila/templates/climwidgets-page``) is Voila's lab page without its links
to a public network address, so that a served page makes no request off the machine.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Iterable
from pathlib import Path

__all__ = ["TEMPLATE", "voila_command"]

#: Name of the page template.
TEMPLATE = "climwidgets-page"
_DATA = Path(__file__).resolve().parent


def voila_command(
    notebook: str | os.PathLike[str], port: int, extra: Iterable[str] = ()
) -> tuple[list[str], dict[str, str]]:
    """The argv and environment that serve ``notebook`` on 127.0.0.1:``port`` with the page template.

    The template folder is put first on ``JUPYTER_PATH`` (where Voila looks for templates).

    Parameters
    ----------
    notebook : str or os.PathLike
        The notebook to serve.
    port : int
        Local port to listen on (bound to 127.0.0.1 only).
    extra : iterable of str, optional
        Further Voila command-line arguments, appended last.

    Returns
    -------
    argv : list of str
        The command line (this Python's ``-m voila``) to run.
    env : dict of str to str
        A copy of the current environment with the template folder first on ``JUPYTER_PATH``.

    Examples
    --------
    >>> argv, env = voila_command("tour.ipynb", 8866)
    >>> argv[1:5]
    ['-m', 'voila', 'tour.ipynb', '--port=8866']
    >>> "--template=climwidgets-page" in argv
    True
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
