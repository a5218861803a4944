"""Errors a person can act on.

Every problem with user input is raised as :class:`InputError` at the edge (reading a
file, loading a project, parsing the command line). Its message names the place
(file, line, column), what was found and what would fix it, on one line.

The library speaks in neutral words: an error about a setting (rather than a file) names
the setting in ``setting`` (e.g. ``"rank_by"``, ``"max_fraction"``) and says what is wrong
in terms of the data. Each front end adds its own place and hint with
:meth:`InputError.located` (the command line names its option, the app its field); no
front end parses an error's text.
"""

from __future__ import annotations

import contextlib
import threading
import warnings as _warnings


class SolsphereError(Exception):
    """Base class for errors solsphere reports to the user (exit code 2)."""


class InputError(SolsphereError, ValueError):
    """Bad input: a file, a cell, an option.

    Parameters
    ----------
    message : str
        What was found and what was expected.
    file : str or None, default=None
        The file (or ``"<table>"`` for the app's table, ``"<command line>"``).
    line : int or None, default=None
        1-based line number in the file (the header is line 1).
    column : int or str or None, default=None
        1-based column number, or the column's name.
    hint : str or None, default=None
        What would fix it.
    setting : str or None, default=None
        The setting the problem is about, in the library's own words (a keyword argument
        of the workflow, e.g. ``"rank_by"``), for front ends to name their own control.
    """

    def __init__(self, message: str, file: str | None = None, line: int | None = None,
                 column: int | str | None = None, hint: str | None = None,
                 setting: str | None = None):
        self.message = message
        self.file = file
        self.line = line
        self.column = column
        self.hint = hint
        self.setting = setting
        super().__init__(self.__str__())

    def located(self, *, file=None, column=None, hint=None) -> "InputError":
        """This error with a front end's place and hint filled in where still empty.

        >>> e = InputError("ranking by drying needs the drying simulation.", setting="drying")
        >>> str(e.located(file="<command line>", column="--rank-by", hint="add --drying"))
        '<command line>, column --rank-by: ranking by drying needs the drying simulation. Fix: add --drying'
        """
        if self.file is None and file is not None:
            self.file = file
        if self.column is None and column is not None:
            self.column = column
        if hint is not None and self.hint is None:
            self.hint = hint
        self.args = (self.__str__(),)
        return self

    def where(self) -> str:
        parts = []
        if self.file is not None:
            parts.append(str(self.file))
        if self.line is not None:
            parts.append(f"line {self.line}")
        if self.column is not None:
            parts.append(f"column {self.column}")
        return ", ".join(parts)

    def __str__(self) -> str:
        text = " ".join(str(self.message).split())  # always one line
        where = self.where()
        out = f"{where}: {text}" if where else text
        if self.hint:
            out += f" Fix: {' '.join(str(self.hint).split())}"
        return out

    def to_dict(self) -> dict:
        return {"error": str(self), "file": self.file, "line": self.line,
                "column": self.column, "message": self.message, "hint": self.hint,
                "setting": self.setting}


class UnknownSolventError(InputError):
    """A solvent name that the library does not know; carries close suggestions."""

    def __init__(self, name: str, suggestions: list[str] | tuple[str, ...] = (), **where):
        self.name = name
        self.suggestions = list(suggestions)[:3]
        shown = name if len(name) <= 60 else name[:60] + "…"  # never echo a page of text
        #: The message without the suggestions (a front end may offer them as buttons).
        self.plain_message = msg = f"unknown solvent {shown!r}."
        if self.suggestions:
            msg += " Did you mean " + ", ".join(repr(s) for s in self.suggestions) + "?"
        where.setdefault("hint", "use a library name, CAS number or abbreviation, "
                                 "or give the solvent's own dD, dP, dH columns")
        super().__init__(msg, **where)


class FitError(SolsphereError):
    """The sphere cannot be bounded by these results (e.g. no bad results)."""


class NotFittedError(SolsphereError, AttributeError):
    """A model was used before ``fit``."""


class AmbiguousNameError(UnknownSolventError):
    """An abbreviation with several common readings (e.g. DBE); never guessed."""

    def __init__(self, name: str, readings: list[str] | tuple[str, ...] = (), **where):
        self.readings = list(readings)
        where.setdefault("hint", "type the full name of the one you mean: "
                                 + "; ".join(self.readings))
        super().__init__(name, (), **where)
        self.message = (f"{name!r} is ambiguous: it is used for "
                        + " and for ".join(self.readings) + ".")
        self.args = (str(self),)


@contextlib.contextmanager
def numeric_notes():
    """Collect numpy's floating-point complaints (overflow, division by zero, invalid
    values) and RuntimeWarnings as one-line notes for the report instead of letting them
    reach the terminal or a server's log as numpy traces.

    Safe in threads (the app answers requests in threads): numpy's floating-point
    errors are caught through its per-thread error handler (``numpy.errstate``), and
    Python's warning filters, which are shared by all threads, are changed only in the
    main thread (the command line).

    Yields a list that holds, after the block, one note per distinct complaint.

    >>> import numpy as np
    >>> with numeric_notes() as notes:
    ...     _ = np.array([1.0]) / 0.0
    >>> notes
    ['a numerical step reported: divide by zero; check the results it concerns']
    """
    import numpy as np  # deferred: the command line's --help needs no numpy

    notes: list[str] = []
    seen: set[str] = set()

    def note(text: str) -> None:
        text = " ".join(str(text).split())[:200]
        if text not in seen:
            seen.add(text)
            notes.append(f"a numerical step reported: {text}; check the results it concerns")

    def on_float_error(kind: str, _flag: int) -> None:
        note(kind)

    caught: list = []
    try:
        with contextlib.ExitStack() as stack:
            stack.enter_context(np.errstate(divide="call", over="call", invalid="call",
                                            under="ignore", call=on_float_error))
            if threading.current_thread() is threading.main_thread():
                caught = stack.enter_context(_warnings.catch_warnings(record=True))
                _warnings.simplefilter("always", RuntimeWarning)
            yield notes
    finally:  # the filters are restored: other warnings go on as they would have
        for w in caught:
            if issubclass(w.category, RuntimeWarning):
                note(w.message)
            else:
                _warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
