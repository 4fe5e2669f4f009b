"""Errors and warnings the engine hands to every front end.

A user's mistake becomes a :class:`CaseError` holding one :class:`Problem` per bad field: the
field's path (``facilities[1].recovery.std``), the value given and what is allowed. Front ends
print :meth:`CaseError.paragraph`; they never show a traceback for a user's mistake.

Things a user can live with (a PD floor that binds, a short history) are :class:`Caution`
objects carried in the results, shown by the workbench and printed in the memo.
"""

from __future__ import annotations

import reprlib
from dataclasses import dataclass
from typing import Any

_MAX_VALUE_CHARS = 80
_SHORT_REPR = reprlib.Repr()  # Python 3.11 has no keyword constructor
_SHORT_REPR.maxlevel, _SHORT_REPR.maxlist, _SHORT_REPR.maxtuple = 2, 4, 4
_SHORT_REPR.maxdict, _SHORT_REPR.maxset = 4, 4
_SHORT_REPR.maxstring = _SHORT_REPR.maxother = _MAX_VALUE_CHARS


def show_value(value: Any) -> str:
    """A short, unambiguous rendering of a user's value for a message.

    Parameters
    ----------
    value : Any
        The value as given.

    Returns
    -------
    str
        The rendering.
    """
    if isinstance(value, (str, float, int, bool)):
        text = repr(value) if len(str(value)) <= 10 * _MAX_VALUE_CHARS else repr(str(value)[:_MAX_VALUE_CHARS])
    elif value is None:
        text = "empty (null)"
    else:  # containers: a bounded rendering, never the whole (possibly huge, shared) structure
        text = _SHORT_REPR.repr(value)
    if len(text) > _MAX_VALUE_CHARS:
        # Keep both ends: the end of a path (the file name) matters as much as its start.
        keep = (_MAX_VALUE_CHARS - 3) // 2
        text = text[:keep] + "..." + text[-keep:]
    return text


@dataclass(frozen=True)
class Problem:
    """One bad input: where it is, what was given, what is allowed."""

    field: str
    """Dotted path of the field, e.g. ``facilities[0].drawn``."""
    value: Any
    """The value as given."""
    allowed: str
    """What is allowed, in words."""

    def sentence(self) -> str:
        """Render the problem as one sentence, e.g. ``field: got 3; allowed: 0 to 1.``.

        Returns
        -------
        str
            The sentence.
        """
        return f"{self.field}: got {show_value(self.value)}; allowed: {self.allowed}."


class CaseError(ValueError):
    """A case (file, upload or form) that cannot be evaluated as given.

    Parameters
    ----------
    problems : list[Problem] | tuple[Problem, ...]
        Every bad input found, in order.
    source : str, optional
        What holds the inputs (the case, a file name), named in the message.
    """

    def __init__(self, problems: list[Problem] | tuple[Problem, ...], source: str = "case"):
        self.problems: tuple[Problem, ...] = tuple(problems)
        self.source = source
        super().__init__(self.paragraph())

    @classmethod
    def single(cls, field: str, value: Any, allowed: str, source: str = "case") -> CaseError:
        """Build a case error of one problem.

        Parameters
        ----------
        field : str
            Dotted path of the field.
        value : Any
            The value as given.
        allowed : str
            What is allowed, in words.
        source : str, optional
            What holds the input (the case, a scenario), named in the message.

        Returns
        -------
        CaseError
            The error with its one problem.
        """
        return cls([Problem(field, value, allowed)], source=source)

    def paragraph(self, limit: int = 8) -> str:
        """Render the problems as one paragraph, the first ``limit`` in full.

        Parameters
        ----------
        limit : int, optional
            Largest number of problems written out; the rest are counted.

        Returns
        -------
        str
            The paragraph.
        """
        shown = self.problems[:limit]
        head = f"The {self.source} has {len(self.problems)} problem{'s' if len(self.problems) != 1 else ''}: "
        body = " ".join(p.sentence() for p in shown)
        more = len(self.problems) - len(shown)
        tail = f" ({more} more not shown.)" if more > 0 else ""
        return head + body + tail

    @property
    def fields(self) -> tuple[str, ...]:
        """The field of each problem, in order."""
        return tuple(p.field for p in self.problems)


class InputError(ValueError):
    """One bad input found by an engine step: the field, the value given and what is allowed.

    Every step raises this (not a bare ValueError) for a bad input, so a front end turns it into
    a :class:`Problem` by reading its attributes, never by parsing its text. ``str()`` is the
    same one-line sentence as :meth:`Problem.sentence` without the final stop.

    Parameters
    ----------
    field : str
        Dotted path of the field.
    value : Any
        The value as given (a string is shown as it is).
    allowed : str
        What is allowed, in words.
    """

    def __init__(self, field: str, value: Any, allowed: str):
        self.field = field
        self.value = value
        self.allowed = allowed
        super().__init__(f"{field}: got {value if isinstance(value, str) else show_value(value)}; allowed: {allowed}")

    @property
    def problem(self) -> Problem:
        """The error as a :class:`Problem` (field, value, allowed)."""
        return Problem(self.field, self.value, self.allowed)


@dataclass(frozen=True)
class Caution:
    """Something the reader should know about a result; not an error.

    ``code`` is a stable identifier (tests and templates key on it), ``field`` the input it
    concerns (may be empty), ``message`` a plain sentence.
    """

    code: str
    """Stable identifier, e.g. ``pd.override``."""
    message: str
    """A plain sentence."""
    field: str = ""
    """The input it concerns; empty for none."""
