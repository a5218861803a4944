"""The project file: bench results, settings and the last fit in one versioned JSON file.

Layout (schema version 1)::

    {
      "format": "solsphere-project",
      "schema_version": 1,
      "created_with": "0.1.0",            # solsphere version that saved it
      "saved_at": "2024-05-01T12:00:00+00:00",
      "settings": {"partial": "good", ...},  # free-form JSON values
      "fit": {...} or null,               # SphereFit.to_dict() of the last fit
      "trials": Trials.to_dict()          # rows + resolved coordinates
    }

:func:`save` is atomic (a crash leaves the old file or the new one, never a mix) and
refuses to replace a file that is not a solsphere project. :func:`load` is strict:
anything unexpected is an :class:`~solsphere.errors.InputError` naming the file (and
for JSON syntax errors, its line and column). Loading re-validates every trial row and
keeps the saved coordinates, so a loaded project gives the same fit.

Every CLI subcommand takes either a results file or a project file:
:func:`load_any` decides with :func:`is_project_file`.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path

import numpy as np

from solsphere.errors import InputError
from solsphere.io.files import atomic_write_text, check_output, read_text
from solsphere import __version__
from solsphere.io import trials as bench
from solsphere.io.trials import Trials, json_type
from solsphere.limits import clip

__all__ = ["Project", "save", "load", "load_any", "is_project_file", "FORMAT",
           "SCHEMA_VERSION", "PROJECT_MAX_BYTES"]

#: Value of the ``"format"`` key.
FORMAT = "solsphere-project"
#: Schema this version writes and the newest it reads.
SCHEMA_VERSION = 1
#: Largest project file accepted [bytes]; :func:`save` refuses to write a larger one,
#: so whatever it writes, :func:`load` reads.
PROJECT_MAX_BYTES = 20_000_000
#: Deepest nesting of JSON objects and lists accepted (a project needs 5).
PROJECT_MAX_DEPTH = 64
#: Most digits of a whole number accepted in a project file (line numbers need 7).
PROJECT_MAX_DIGITS = 30
_PARTIAL_CHOICES = ("good", "bad", "skip")
_DAMAGED = ("the project file was edited or damaged: restore it from a backup, or make a "
            "new project from the results file")


def _version() -> str:
    return __version__


@dataclass
class Project:
    """Trials, settings and the last fit of one material.

    Attributes
    ----------
    trials : Trials
    settings : dict
        JSON-safe values, e.g. ``{"partial": "good", "candidates": "shelf.csv"}``.
    fit : dict or None
        The last fit's ``to_dict()``, or None.
    path : str or None
        The project file it was loaded from (None for a results file or a new project).
    saved_at, created_with : str or None
        From the file (informational; not compared).
    """

    trials: Trials
    settings: dict = field(default_factory=dict)
    fit: dict | None = None
    path: str | None = field(default=None, compare=False)
    saved_at: str | None = field(default=None, compare=False)
    created_with: str | None = field(default=None, compare=False)

    def __str__(self) -> str:
        fit = "with a fit" if self.fit else "no fit yet"
        return f"project {self.path or '(unsaved)'}: {self.trials}; {fit}"

    def to_dict(self, saved_at: str | None = None) -> dict:
        """The JSON document (``saved_at`` defaults to now, UTC)."""
        if saved_at is None:
            saved_at = datetime.now(timezone.utc).isoformat(timespec="seconds")
        return {"format": FORMAT, "schema_version": SCHEMA_VERSION,
                "created_with": _version(), "saved_at": saved_at,
                "settings": dict(self.settings), "fit": self.fit,
                "trials": self.trials.to_dict()}


def _plain(obj):
    """json.dumps fallback for numpy scalars and arrays."""
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, (tuple, set, frozenset)):
        return list(obj)
    raise TypeError(f"{type(obj).__name__} is not JSON-serialisable")


def _is_our_file(p: Path) -> bool:
    try:
        with open(p, "rb") as fh:
            head = fh.read(4096)
    except OSError:
        return False
    return f'"{FORMAT}"'.encode() in head


def save(project: Project, path) -> Path:
    """Write ``project`` to ``path`` atomically.

    Parameters
    ----------
    project : Project
    path : str or os.PathLike

    Returns
    -------
    path : pathlib.Path

    Raises
    ------
    InputError
        ``path`` exists and is not a solsphere project (so a results file is never
        overwritten), is a folder, or cannot be written (the old file stays as it was).
    ValueError
        The settings or the fit hold values JSON cannot represent (NaN, objects).
    """
    check_output(path)  # before anything opens it: a pipe would block the check below
    p = Path(path)
    if p.exists() and not p.is_dir() and not _is_our_file(p):
        raise InputError("this file exists and is not a solsphere project; not "
                         "overwriting it.", file=str(path),
                         hint="choose another name, e.g. one ending in .json")
    text = json.dumps(project.to_dict(), indent=1, ensure_ascii=False, allow_nan=False,
                      default=_plain) + "\n"
    size = len(text.encode("utf-8", "surrogatepass"))
    if size > PROJECT_MAX_BYTES:
        raise InputError(f"the project would be {size / 1e6:.1f} MB, above the "
                         f"{PROJECT_MAX_BYTES / 1e6:g} MB a project file may have (it could "
                         f"not be opened again); nothing was written.", file=str(path),
                         hint="save fewer or shorter rows and notes")
    return atomic_write_text(path, text)


def _error(label: str, msg: str, **kw) -> InputError:
    kw.setdefault("hint", _DAMAGED)
    return InputError(msg, file=label, **kw)


def _cut_short(text: str, exc: json.JSONDecodeError) -> bool:
    """Whether a JSON syntax error is the end of a truncated file: the error is at the
    end, inside a string that runs to the end, or in a last token cut in two
    (``tru``, ``1.``)."""
    rest = text[exc.pos:].strip()
    if not rest or exc.msg.startswith("Unterminated string"):
        return True
    if "\n" in rest or len(rest) > 8:
        return False
    return (any(w.startswith(rest) for w in ("true", "false", "null"))
            or all(ch in "0123456789+-.eE" for ch in rest))


def load(path, library=None) -> Project:
    """Read a project file strictly.

    Parameters
    ----------
    path : str or os.PathLike
    library : Library or None, default=None
        Re-validates the trial rows. None means
        :func:`solsphere.library.load_library`.

    Returns
    -------
    Project

    Raises
    ------
    InputError
        Not JSON (with line and column), truncated, not a solsphere project, saved by
        a newer solsphere, a missing key, a wrong type, or a trial row that no longer
        validates.
    """
    label = str(path)
    text = read_text(path, limit=PROJECT_MAX_BYTES)
    def no_constants(name):
        raise _error(label, f"not valid JSON: {name} is not a number JSON allows.")

    def whole(digits: str) -> int:
        if len(digits.lstrip("-")) > PROJECT_MAX_DIGITS:
            raise _error(label, f"a whole number of {len(digits)} digits; a project holds "
                                f"numbers of at most {PROJECT_MAX_DIGITS}.")
        return int(digits)

    def real(digits: str) -> float:
        v = float(digits)
        if v in (float("inf"), float("-inf")):
            raise _error(label, f"the number {clip(digits, 24)} is too large for a "
                                f"project file.")
        return v

    try:
        doc = json.loads(text, parse_constant=no_constants, parse_int=whole,
                         parse_float=real)
    except RecursionError:
        raise _error(label, f"the JSON is nested too deeply (a project needs "
                            f"{PROJECT_MAX_DEPTH} levels at most).") from None
    except json.JSONDecodeError as exc:
        if not text.strip():
            raise _error(label, "the project file is empty.") from None
        if _cut_short(text, exc):
            raise _error(label, f"the file ends in the middle of the JSON ({exc.msg}): it "
                                f"was cut short.", line=exc.lineno, column=exc.colno,
                         hint="restore it from a backup (solsphere saves atomically, so "
                              "something else truncated it)") from None
        raise _error(label, f"not valid JSON: {exc.msg}.", line=exc.lineno,
                     column=exc.colno) from None
    doc, replaced = _checked(doc, label)
    if not isinstance(doc, dict):
        raise _error(label, f"not a solsphere project: the file holds "
                            f"{json_type(doc)}, not an object.",
                     hint="give a project file saved by solsphere, or a results CSV")
    if "format" not in doc:
        raise _error(label, "not a solsphere project: no 'format' key.",
                     hint="give a project file saved by solsphere, or a results CSV")
    if doc["format"] != FORMAT:
        raise _error(label, f"not a solsphere project: format is {clip(doc['format'])}, "
                            f"expected {FORMAT!r}.",
                     hint="give a project file saved by solsphere, or a results CSV")
    version = doc.get("schema_version")
    if not isinstance(version, int) or isinstance(version, bool) or version < 1:
        raise _error(label, f"'schema_version' must be a positive integer, found "
                            f"{clip(version)}.")
    if version > SCHEMA_VERSION:
        raise _error(label, f"this file was saved by a newer solsphere (schema {version}); "
                            f"this version reads schema ≤ {SCHEMA_VERSION}.",
                     hint="upgrade solsphere")
    for key in ("trials", "settings", "fit"):
        if key not in doc:
            raise _error(label, f"missing key {key!r}.")
    for key in ("created_with", "saved_at"):
        if key in doc and not isinstance(doc[key], str):
            raise _error(label, f"{key!r} must be a string, found "
                                f"{json_type(doc[key])}.")
    settings = doc["settings"]
    if not isinstance(settings, dict):
        raise _error(label, f"'settings' must be an object, found "
                            f"{json_type(settings)}.")
    if "partial" in settings and settings["partial"] not in _PARTIAL_CHOICES:
        raise _error(label, f"settings.partial is {clip(settings['partial'])}; expected one of "
                            f"{', '.join(_PARTIAL_CHOICES)}.")
    fit = doc["fit"]
    if fit is not None and not isinstance(fit, dict):
        raise _error(label, f"'fit' must be an object or null, found "
                            f"{json_type(fit)}.")
    trials = Trials.from_dict(doc["trials"], library=library, file=label)
    if replaced:
        trials.warnings.append(f"{label}: {replaced} text value{'s' if replaced > 1 else ''} "
                               f"held characters that are not valid Unicode (lone "
                               f"surrogates), replaced by �")
    return Project(trials=trials, settings=settings, fit=fit, path=label,
                   saved_at=doc.get("saved_at"), created_with=doc.get("created_with"))


def _checked(doc, label: str):
    """(doc, count of strings fixed): nesting checked against PROJECT_MAX_DEPTH, lone
    surrogates (which no file can store) replaced by U+FFFD; iterative, so any depth
    is answered with a message."""
    replaced = 0

    def fix(s: str) -> str:
        nonlocal replaced
        new = bench.replace_surrogates(s)
        replaced += new is not s
        return new

    stack = [(doc, 1)]
    while stack:
        node, depth = stack.pop()
        if depth > PROJECT_MAX_DEPTH:
            raise _error(label, f"the JSON is nested more than {PROJECT_MAX_DEPTH} levels "
                                f"deep; a project needs 5.")
        if isinstance(node, dict):
            for k in list(node):
                v = node[k]
                if isinstance(v, str):
                    node[k] = fix(v)
                elif isinstance(v, (dict, list)):
                    stack.append((v, depth + 1))
                nk = fix(k)
                if nk is not k:
                    node[nk] = node.pop(k)
        elif isinstance(node, list):
            for i, v in enumerate(node):
                if isinstance(v, str):
                    node[i] = fix(v)
                elif isinstance(v, (dict, list)):
                    stack.append((v, depth + 1))
    return (fix(doc) if isinstance(doc, str) else doc), replaced


def is_project_file(path) -> bool:
    """True when ``path`` looks like a project file: a ``.json`` name, or text whose
    first non-blank character is ``{``. False for a missing or unreadable path.
    """
    p = Path(path)
    if p.suffix.lower() == ".json":
        return True
    if not p.is_file():  # a pipe or device is never opened here (it could block)
        return False
    try:
        with open(p, "rb") as fh:
            head = fh.read(512)
    except OSError:
        return False
    if head.startswith(b"\xef\xbb\xbf"):
        head = head[3:]
    if head[:2] in (b"\xff\xfe", b"\xfe\xff"):
        text = head.decode("utf-16", errors="ignore")
    else:
        text = head.decode("utf-8", errors="ignore")
    return text.lstrip().startswith("{")


def load_any(path, library=None, *, sheet: str | None = None, scale=None,
             material: str | None = None) -> Project:
    """A :class:`Project` from a project file or a bench results file.

    A results file (CSV/TSV, a workbook, or ``"-"`` for standard input) becomes a
    project with no settings and no fit (``path`` None, so saving it needs a new name);
    ``sheet``, ``scale`` and ``material`` say how to read it
    (:func:`solsphere.io.trials.read_trials`; a project file has them settled already).

    Raises
    ------
    InputError
    """
    if str(path) != "-" and is_project_file(path):
        return load(path, library=library)
    trials = bench.read_trials(path, library=library, sheet=sheet, scale=scale,
                               material=material)
    settings = {"material": trials.material} if trials.material is not None else {}
    return Project(trials=trials, settings=settings)
