"""The one error tree and the warning class of vpkit.

Every error a user can cause derives from :class:`VpkitError`. Errors about
input also derive from :class:`ValueError`, carry the file, row and column where
they apply, and say what was found, what was expected and how to fix it.
"""

from __future__ import annotations


class VpkitError(Exception):
    """Base class of every error raised by vpkit on purpose."""


class InputError(VpkitError, ValueError):
    """Bad input: names the place (file, row, column) and how to fix it.

    Parameters
    ----------
    message : str
        What was found and what was expected.
    file, row, column : optional
        Where the problem is. ``row`` counts lines of the file from 1 (as a
        text editor or spreadsheet shows them).
    hint : str, optional
        How to fix it.
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        row: int | None = None,
        column: str | None = None,
        hint: str | None = None,
    ) -> None:
        self.message = message
        self.file = None if file is None else str(file)
        self.row = row
        self.column = column
        self.hint = hint
        super().__init__(self._render())

    def _render(self) -> str:
        where = []
        if self.file is not None:
            where.append(f"file {self.file!r}")
        if self.row is not None:
            where.append(f"row {self.row}")
        if self.column is not None:
            where.append(f"column {self.column!r}")
        text = (", ".join(where) + ": " if where else "") + self.message
        if self.hint:
            text += f" (how to fix: {self.hint})"
        return text

    def __reduce__(self):  # keep errors picklable with their fields
        return (_rebuild, (type(self), self.message, self.file, self.row, self.column, self.hint))


def _rebuild(cls, message, file, row, column, hint):
    return cls(message, file=file, row=row, column=column, hint=hint)


class RunFileError(InputError):
    """A run file (or table) cannot be read: layout, sections, columns, missing entries."""


class BadValueError(InputError):
    """A value cannot be used as entered: not a number, not finite, an unknown choice."""


class UnitError(BadValueError):
    """A unit is missing, unknown, or of the wrong kind for its quantity."""


class ImpossibleDataError(InputError):
    """The numbers can be read but describe something physically impossible."""


class FitError(VpkitError, ValueError):
    """A fit cannot be made (too few points for the model, singular problem).

    Carries the number of points and parameters, and the run it concerns when
    the fit was one of many.
    """

    def __init__(self, message: str, *, n_points: int | None = None,
                 n_params: int | None = None, run_id: str | None = None) -> None:
        self.message = message
        self.n_points = n_points
        self.n_params = n_params
        self.run_id = run_id
        super().__init__(message if run_id is None else f"run {run_id!r}: {message}")

    def __reduce__(self):
        return (_rebuild_fit, (self.message, self.n_points, self.n_params, self.run_id))


class OutputError(VpkitError):
    """An output cannot be written where asked (the folder is a file, not writable)."""


def _rebuild_fit(message, n_points, n_params, run_id=None):
    return FitError(message, n_points=n_points, n_params=n_params, run_id=run_id)


class VpkitWarning(UserWarning):
    """Something suspicious but computable; base of the warning classes below.

    Filter a kind of finding with the standard machinery, e.g.
    ``warnings.simplefilter("ignore", vpkit.errors.ExtrapolationWarning)``.
    """


class ExtrapolationWarning(VpkitWarning):
    """A result lies beyond the measured temperatures (boiling points)."""


class IllConditionedWarning(VpkitWarning):
    """The data cannot fix a model's parameters well (curvature, narrow range, few points)."""


class ImpossiblePointWarning(VpkitWarning):
    """A point is physically impossible as reduced (flagged, shown, never dropped silently)."""


class SuspectPointWarning(VpkitWarning):
    """A point looks wrong (off a robust line, duplicated, volume not growing, influential)."""


class ReferenceRangeWarning(VpkitWarning):
    """A reference equation is used outside its stated range, or not used at all."""


class ReferenceDeviationWarning(VpkitWarning):
    """The result disagrees with the reference equation or the measured boiling point."""


class ScatterWarning(VpkitWarning):
    """The scatter is larger than the stated uncertainties allow."""


class ImplausibleValueWarning(VpkitWarning):
    """An entry or a result is possible but unlikely: a unit or typing slip?"""


class ConvergenceWarning(VpkitWarning):
    """An iteration (self-consistent air amount, nonlinear fit) did not converge."""


class ChoiceWarning(VpkitWarning):
    """A choice made for the user (or forced by the data) that biases the result."""


class Notice(str):
    """A finding's message (a plain ``str``) that also carries its warning class.

    ``Analysis.warnings`` holds these: they read and compare as text, and
    ``notice.category`` says which :class:`VpkitWarning` subclass it belongs to,
    so code can filter findings without parsing the text.
    """

    category: type[VpkitWarning]

    def __new__(cls, message: str, category: type[VpkitWarning] = VpkitWarning) -> Notice:
        self = super().__new__(cls, message)
        self.category = category
        return self

    def __reduce__(self):
        return (Notice, (str(self), self.category))
