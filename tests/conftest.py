"""Fixtures shared across the suite."""

import pytest

from climwidgets import demo


@pytest.fixture(scope="session")
def demo_files(tmp_path_factory):
    """The invented demo at its small "test" size, generated once per test session.

    Tests must treat these files as read-only (they are shared).
    """
    return demo.generate(tmp_path_factory.getbasetemp() / "cw_demo_test", quiet=True, size="test")
