"""Numbered outcome scales of bench sheets: which number means dissolves, partly, does not.

Words and ``1`` / ``0`` are read by :func:`solsphere.io.trials.parse_outcome`. Labs also
score by number on a longer scale:

- **Hansen's 1–6 visual scale** (Hansen, *Hansen Solubility Parameters: A User's
  Handbook*, 2nd ed., CRC Press 2007, ch. 1; from memory): 1 soluble, 2 almost soluble,
  3 strongly swollen with slight solubility, 4 swollen, 5 little swelling, 6 no visible
  effect. The documented default cut (:data:`HANSEN_DEFAULT_CUT`) reads 1–2 as
  dissolves, 3–4 as partly, 5–6 as does not (common practice, no source: a score that
  shows real dissolution counts as inside; swelling is a strong interaction, read as
  partly). ``hansen:G/P`` chooses another cut: scores up to G dissolve, up to P partly,
  the rest do not (``hansen:1/3`` is a strict reading).
- **A 1–3 lab scale** (``lab3``): 1 dissolves, 2 partly, 3 does not.

A column of the numbers 1–3 alone cannot tell these two apart (a 3 is "partly" on one
and "does not" on the other), so without a scale it is an error naming both readings;
scores 4–6 say the 1–6 scale. ``words`` reads numbers only as 1 / 0 (the default when
no score above 1 appears).
"""

from __future__ import annotations

from dataclasses import dataclass

from solsphere.errors import InputError

__all__ = ["Scale", "parse_scale", "detect_scale", "HANSEN_DEFAULT_CUT", "SCALE_CHOICES"]

#: Hansen's 1–6 scale, default cut: (largest score read as dissolves, largest read as partly).
HANSEN_DEFAULT_CUT = (2, 4)
#: What the scale setting accepts (``hansen:G/P`` besides).
SCALE_CHOICES = ("auto", "words", "hansen", "lab3")


@dataclass(frozen=True)
class Scale:
    """A numbered outcome scale.

    Attributes
    ----------
    name : str
        ``"hansen"`` or ``"lab3"`` (``"words"``: no numbered scale).
    low, high : int
        The scores the scale runs over.
    good, partial : int
        Scores up to ``good`` dissolve, up to ``partial`` partly; above, do not.
    """

    name: str
    low: int = 1
    high: int = 6
    good: int = 2
    partial: int = 4

    def read(self, value) -> str | None:
        """'good', 'partial' or 'bad' for a score on this scale; None if not a score.

        >>> s = parse_scale("hansen")
        >>> [s.read(v) for v in (1, "2", 3, 4.0, 5, 6, 7, "x")]
        ['good', 'good', 'partial', 'partial', 'bad', 'bad', None, None]
        """
        v = _score(value)
        if v is None or not self.low <= v <= self.high:
            return None
        if v <= self.good:
            return "good"
        return "partial" if v <= self.partial else "bad"

    def describe(self) -> str:
        """One phrase for notes and messages.

        >>> parse_scale("lab3").describe()
        'a 1–3 lab scale (1 dissolves, 2 partly, 3 does not)'
        """
        if self.name == "words":
            return "words, 1 / 0"

        def span(a: int, b: int) -> str:
            return str(a) if a == b else f"{a}–{b}"

        parts = [f"{span(self.low, self.good)} dissolves"]
        if self.partial > self.good:
            parts.append(f"{span(self.good + 1, self.partial)} partly")
        if self.high > self.partial:
            parts.append(f"{span(self.partial + 1, self.high)} does not")
        what = ("Hansen's 1–6 scale" if self.name == "hansen"
                else f"a {self.low}–{self.high} lab scale")
        return f"{what} ({', '.join(parts)})"


def _score(value) -> int | None:
    """A whole-number score from a cell (int, float or text), else None."""
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        v = float(value)
    else:
        try:
            v = float(str(value).strip().replace(",", "."))
        except ValueError:
            return None
    if v != v or not v.is_integer():
        return None
    return int(v)


def parse_scale(text: str | None) -> Scale | None:
    """The scale named by ``text`` (None or ``"auto"``: decide from the file).

    Raises
    ------
    InputError
        An unknown name or a bad cut (``setting="scale"``).

    Examples
    --------
    >>> parse_scale("hansen:1/3")
    Scale(name='hansen', low=1, high=6, good=1, partial=3)
    >>> parse_scale(None) is None
    True
    """
    if text is None:
        return None
    t = str(text).strip().lower()
    hint = ("give 'hansen' (Hansen's 1–6 scale, cut 1–2 / 3–4 / 5–6), 'hansen:G/P' "
            "(e.g. hansen:1/3), 'lab3' (1 dissolves, 2 partly, 3 does not) or 'words'")
    if t == "auto":
        return None
    if t == "words":
        return Scale("words", 0, 1, 1, 1)
    if t == "lab3":
        return Scale("lab3", 1, 3, 1, 2)
    if t == "hansen":
        return Scale("hansen", 1, 6, *HANSEN_DEFAULT_CUT)
    if t.startswith("hansen:"):
        g, sep, p = t[7:].partition("/")
        gi, pi = _score(g), _score(p) if sep else None
        if gi is None or pi is None or not 1 <= gi <= pi <= 6:
            raise InputError(f"scale {text!r}: the cut must be two scores G/P with "
                             f"1 ≤ G ≤ P ≤ 6.", setting="scale", hint=hint)
        return Scale("hansen", 1, 6, gi, pi)
    raise InputError(f"unknown outcome scale {text!r}.", setting="scale", hint=hint)


def detect_scale(values, lines, file: str) -> tuple[Scale | None, str | None]:
    """The scale a column of outcome cells uses, when nobody said.

    Parameters
    ----------
    values : list
        The outcome cells (text or numbers), empty ones included.
    lines : list of int
        The line of each cell (for the error).
    file : str

    Returns
    -------
    scale : Scale or None
        None: plain words and 1 / 0.
    note : str or None
        A note for the reader's warnings when a scale was chosen.

    Raises
    ------
    InputError
        Scores 1–3 only (both readings possible), or a 0 among scores above 1.

    Examples
    --------
    >>> detect_scale([1, 5, "6", "good"], [2, 3, 4, 5], "f.csv")[0].name
    'hansen'
    >>> detect_scale(["1", "0", "yes"], [2, 3, 4], "f.csv")
    (None, None)
    """
    scores = {}
    for v, line in zip(values, lines):
        s = _score(v)
        if s is not None and 0 <= s <= 6:
            scores.setdefault(s, line)
    if not scores or max(scores) <= 1:
        return None, None
    top = max(scores)
    if 0 in scores:
        raise InputError(f"the outcomes mix 0 with scores up to {top}; solsphere cannot "
                         f"tell which scale this is.", file=file, line=scores[0],
                         column="outcome", setting="scale",
                         hint="write words (dissolves / partly / does not), 1 / 0, or "
                              "scores on one scale named with the scale setting "
                              "(--scale hansen or --scale lab3)")
    if top <= 3:
        first = min(line for s, line in scores.items() if s >= 2)
        hansen = Scale("hansen", 1, 6, *HANSEN_DEFAULT_CUT)
        lab = Scale("lab3", 1, 3, 1, 2)
        raise InputError(f"the outcomes are scores 1–{top}: on {hansen.describe()} a 3 is "
                         f"partly, on {lab.describe()} it does not dissolve.", file=file,
                         line=first, column="outcome", setting="scale",
                         hint="say which with the scale setting: --scale hansen or "
                              "--scale lab3")
    scale = Scale("hansen", 1, 6, *HANSEN_DEFAULT_CUT)
    return scale, (f"outcomes read on {scale.describe()}; choose another cut with "
                   f"--scale hansen:G/P")
