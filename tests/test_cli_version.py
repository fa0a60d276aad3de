"""``climwidgets --version`` (climwidgets/cli.py): prints the package version and exits 0.

Kept apart from tests/test_cli.py so that the command's other tests can change freely.
"""

import subprocess
import sys
from importlib.metadata import version

import climwidgets
from climwidgets import cli


def test_version_option_prints_package_version(capsys):
    assert cli.main(["--version"]) == 0
    out = capsys.readouterr().out.strip()
    assert out == f"climwidgets {climwidgets.__version__}"


def test_version_matches_installed_metadata():
    # the version in the package and the one pip recorded at install come from one place
    assert climwidgets.__version__ == version("climwidgets")


def test_version_through_python_m():
    done = subprocess.run(
        [sys.executable, "-m", "climwidgets.cli", "--version"], capture_output=True, text=True, timeout=120, check=False
    )
    assert done.returncode == 0
    assert done.stdout.strip() == f"climwidgets {climwidgets.__version__}"
