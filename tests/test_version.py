"""climwidgets._version: the version string the package reports."""

import importlib.metadata

import pytest

from climwidgets import _version


def test_version_is_pep440():
    # Outside reference: PEP 440 as implemented by the `packaging` library (PyPA).
    version = pytest.importorskip("packaging.version")
    parsed = version.Version(_version.__version__)
    assert str(parsed) == _version.__version__  # already in normalised form


def test_version_matches_installed_metadata():
    # Outside reference: the installed distribution's metadata (importlib.metadata, stdlib).
    assert importlib.metadata.version("climwidgets") == _version.__version__
