"""The error tree: types, fields in messages, pickling (common practice, no source)."""

import pickle

import pytest

from vpkit.errors import (
    BadValueError,
    FitError,
    ImpossibleDataError,
    InputError,
    RunFileError,
    UnitError,
    VpkitError,
)


@pytest.mark.parametrize("cls", [RunFileError, BadValueError, UnitError, ImpossibleDataError])
def test_input_errors_carry_the_place(cls):
    err = cls("found x, expected y", file="a.csv", row=7, column="reading", hint="do z")
    assert isinstance(err, InputError) and isinstance(err, ValueError)
    assert isinstance(err, VpkitError)
    text = str(err)
    for part in ("a.csv", "row 7", "reading", "found x", "do z"):
        assert part in text
    back = pickle.loads(pickle.dumps(err))
    assert type(back) is cls and back.row == 7 and str(back) == text


def test_fit_error_carries_counts():
    err = FitError("too few", n_points=2, n_params=3)
    back = pickle.loads(pickle.dumps(err))
    assert back.n_points == 2 and back.n_params == 3 and isinstance(back, ValueError)
