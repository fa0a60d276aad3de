"""Tests of climwidgets/errors.py: the message layout, the class tree, pickling.

The behaviour checked is the package's own contract (README, "Every bad input raises a
cw.InputError that names the file, the variable, what was expected and how to fix it").
"""

import pickle

import pytest

import climwidgets as cw
from climwidgets import errors

SUBCLASSES = [getattr(errors, name) for name in errors.__all__ if name != "InputError"]


def test_message_names_where_what_expected_and_fix():
    err = errors.UnitsError(
        "has units 'furlongs'",
        source="data/pr.nc",
        variable="pr",
        expected="a depth or a rate of precipitation",
        fix="set the units attribute.",
    )
    assert str(err) == (
        "data/pr.nc, variable 'pr': has units 'furlongs'. "
        "Expected: a depth or a rate of precipitation. Fix: set the units attribute."
    )
    assert (err.problem, err.source, err.variable) == ("has units 'furlongs'", "data/pr.nc", "pr")


def test_message_without_location_is_the_problem_alone():
    assert str(errors.ParameterError("months is empty.")) == "months is empty."


def test_source_is_kept_as_text():
    from pathlib import Path

    err = errors.SourceError("does not exist", source=Path("a") / "b.nc")
    assert err.source == str(Path("a") / "b.nc") and str(err).startswith(err.source)


@pytest.mark.parametrize("cls", SUBCLASSES, ids=lambda c: c.__name__)
def test_every_error_is_an_input_error_and_a_value_error(cls):
    assert issubclass(cls, cw.InputError) and issubclass(cls, ValueError)
    assert getattr(cw, cls.__name__) is cls  # reachable as cw.<Name>
    assert cls.__doc__  # each says when it is raised


@pytest.mark.parametrize("cls", [errors.InputError, *SUBCLASSES], ids=lambda c: c.__name__)
def test_errors_survive_pickling(cls):
    # dask workers send exceptions back pickled; keyword-only arguments need __reduce__
    err = cls("bad", source="f.nc", variable="v", expected="good", fix="change it")
    back = pickle.loads(pickle.dumps(err))
    assert type(back) is cls and str(back) == str(err)
    assert (back.source, back.variable, back.expected, back.fix) == ("f.nc", "v", "good", "change it")


def test_location_arguments_are_keyword_only():
    with pytest.raises(TypeError):
        errors.InputError("bad", "f.nc")
