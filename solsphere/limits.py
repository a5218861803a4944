"""How much one input or one request may ask for, checked where the work is done.

Every limit below is checked in the library function that would do the work (reading a
bench table or a shelf, resampling, sampling, screening, listing), so the command line,
the Python API and the app refuse the same things with the same one-line message. A
lab server's operator raises a limit for everyone it serves (``solsphere app
--max-rows 5000``); the command line takes the same options on each subcommand.

=====================  =========  ==========================  ============================
limit                  default    option                      what it bounds
=====================  =========  ==========================  ============================
``rows``               1,000      ``--max-rows``              trial rows of one bench table
``shelf``              1,500      ``--max-shelf``             solvents in a shelf file
``top``                1,000      ``--max-list``              length of a list of blends
                                                              or pairs (``--top``, ``--pairs``)
``resample_work``      200,000    ``--max-resample-work``     resamples (or posterior
                                                              samples) × trial rows
``samples``            10,000     ``--max-samples``           resamples or posterior samples
=====================  =========  ==========================  ============================

The defaults are far above a bench campaign (tens of solvents, 1,000-2,000 resamples;
the library itself holds about 1,200 compounds) and keep one request of the app within
seconds and a few hundred MB on one core (measured in ``tests/perf/bench_attack.py``).
The leave-one-out influence list counts as trial rows × trial rows of resample work.

Other bounds are physical, not settings: a process temperature from
:data:`MIN_TEMPERATURE_C` to :data:`MAX_TEMPERATURE_C`, and every message that echoes a
user's value shows at most :data:`ECHO_CHARS` characters of it (:func:`clip`).

This module imports nothing from solsphere but :mod:`solsphere.errors`, so any module
may use it.
"""

from __future__ import annotations

import math
import operator
from dataclasses import dataclass, fields, replace

from solsphere.errors import InputError

__all__ = ["Limits", "current", "configure", "limited", "check", "check_work", "clip",
           "check_temperature", "MIN_TEMPERATURE_C", "MAX_TEMPERATURE_C", "ECHO_CHARS",
           "OPTIONS"]

#: Longest piece of a user's value repeated in a message [characters].
ECHO_CHARS = 60
#: Process temperatures accepted for the Hansen–Beerbower shift [°C]: below −50 °C and
#: above 250 °C the common solvents are frozen or boiling at ordinary pressure, and the
#: linear temperature relations are far outside the range they were fitted on (common
#: practice, no source).
MIN_TEMPERATURE_C, MAX_TEMPERATURE_C = -50.0, 250.0


@dataclass(frozen=True)
class Limits:
    """The limits in force (see the module's table). All are whole numbers ≥ 1."""

    rows: int = 1_000
    shelf: int = 1_500
    top: int = 1_000
    resample_work: int = 200_000
    samples: int = 10_000

    def to_dict(self) -> dict:
        return {f.name: getattr(self, f.name) for f in fields(self)}

    def __str__(self) -> str:
        return "; ".join(f"{OPTIONS[k][0]} {v}" for k, v in self.to_dict().items())


#: limit name -> (command-line option, what it counts).
OPTIONS = {
    "rows": ("--max-rows", "trial rows in one bench table"),
    "shelf": ("--max-shelf", "solvents in one shelf file"),
    "top": ("--max-list", "entries in one listed result"),
    "resample_work": ("--max-resample-work", "resamples × trial rows"),
    "samples": ("--max-samples", "resamples or posterior samples"),
}

_current = Limits()


def current() -> Limits:
    """The limits in force in this process."""
    return _current


def configure(**values) -> Limits:
    """Change limits for this process (the app's server does it before its workers
    start, so every worker has the same limits). None leaves a limit as it is.

    >>> old = current(); configure(rows=5000).rows
    5000
    >>> _ = configure(**old.to_dict()); current().rows
    1000
    """
    global _current
    known = {f.name for f in fields(Limits)}
    new = {}
    for k, v in values.items():
        if k not in known:
            raise ValueError(f"unknown limit {k!r}; known: {', '.join(sorted(known))}")
        if v is None:
            continue
        if isinstance(v, bool) or not isinstance(v, int) or v < 1:
            raise ValueError(f"limit {k} must be a whole number >= 1, found {v!r}")
        new[k] = v
    _current = replace(_current, **new)
    return _current


class limited:
    """Context manager: other limits inside a ``with`` block (tests, one API call).

    >>> with limited(rows=3):
    ...     current().rows
    3
    """

    def __init__(self, **values):
        self.values = values

    def __enter__(self) -> Limits:
        self.old = current()
        return configure(**self.values)

    def __exit__(self, *exc) -> None:
        global _current
        _current = self.old


def _refusal(name: str, what: str, value: int, limit: int, file, column) -> InputError:
    option, counts = OPTIONS[name]
    return InputError(f"{what}: {value:,} {counts}, above the limit of {limit:,} "
                      f"(limit '{name}').", file=file, column=column,
                      hint=f"ask for less, or raise the limit with {option} N on the "
                           f"command line (a lab server: solsphere app {option} N)")


def check(name: str, value: int, what: str, *, file=None, column=None) -> None:
    """Refuse ``value`` above limit ``name`` with a one-line :class:`InputError`.

    >>> check("rows", 10, "the table")
    >>> with limited(rows=5):
    ...     check("rows", 10, "the table")
    Traceback (most recent call last):
    ...
    solsphere.errors.InputError: the table: 10 trial rows in one bench table, above the limit of 5 (limit 'rows'). Fix: ask for less, or raise the limit with --max-rows N on the command line (a lab server: solsphere app --max-rows N)
    """
    limit = getattr(current(), name)
    value = _whole(value, what, file, column)
    if value > limit:
        raise _refusal(name, what, value, limit, file, column)


def _whole(value, what: str, file, column) -> int:
    """``value`` as an int (numpy integers and integral floats too), else InputError."""
    if not isinstance(value, bool):
        try:
            return operator.index(value)
        except TypeError:
            if isinstance(value, float) and value.is_integer():
                return int(value)
    raise InputError(f"{what}: expected a whole number, found {clip(value)}.",
                     file=file, column=column, hint="give a whole number")


def check_work(n: int, rows: int, what: str, *, file=None, column=None) -> None:
    """Refuse ``n`` resamples (or samples) of ``rows`` trials above the limits
    ``samples`` and ``resample_work``."""
    check("samples", n, what, file=file, column=column)
    n, rows = _whole(n, what, file, column), _whole(rows, what, file, column)
    limit = current().resample_work
    if n * max(rows, 1) > limit:
        raise _refusal("resample_work", f"{what} ({n:,} × {rows:,} rows)", n * max(rows, 1),
                       limit, file, column)


def check_temperature(value, *, file=None, column=None) -> float | None:
    """A process temperature in °C within the physical range, or None.

    >>> check_temperature(25)
    25.0
    >>> check_temperature(-300)
    Traceback (most recent call last):
    ...
    solsphere.errors.InputError: the temperature -300 °C is outside -50 to 250 °C. Fix: give a process temperature in °C within that range (the temperature relations hold near room temperature)
    """
    if value is None:
        return None
    try:
        t = float(value)
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"the temperature {clip(value)} is not a number.", file=file,
                         column=column, hint="give a temperature in °C, e.g. 40") from None
    if not math.isfinite(t) or not MIN_TEMPERATURE_C <= t <= MAX_TEMPERATURE_C:
        raise InputError(f"the temperature {clip(value, 24)} °C is outside "
                         f"{MIN_TEMPERATURE_C:g} to {MAX_TEMPERATURE_C:g} °C.", file=file,
                         column=column, hint="give a process temperature in °C within that "
                                             "range (the temperature relations hold near "
                                             "room temperature)")
    return t


def clip(value, n: int = ECHO_CHARS, *, quote: bool = True) -> str:
    """``repr`` of a user's value, cut to about ``n`` characters for a message
    (``quote=False``: a string as it is, cut the same way).

    >>> clip("toluene"), clip("toluene", quote=False)
    ("'toluene'", 'toluene')
    >>> clip("x" * 1000, 10)
    "'xxxxxxxxxx…' (1000 characters)"
    """
    if isinstance(value, str) and not quote:
        return value if len(value) <= n else value[:n] + "…"
    if isinstance(value, str):
        if len(value) <= n:
            return repr(value)
        return f"{value[:n] + '…'!r} ({len(value)} characters)"
    if isinstance(value, int) and not isinstance(value, bool):
        if value.bit_length() > 200:  # never format a huge integer in full
            return f"a {value.bit_length()}-bit integer"
    try:
        text = repr(value)
    except ValueError:  # e.g. a container holding an integer too long to print
        return f"a {type(value).__name__} too large to show"
    return text if len(text) <= n else text[:n] + f"… ({len(text)} characters)"
