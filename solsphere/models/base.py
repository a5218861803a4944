"""What every sphere model shares: the one input converter, the search box, the warnings
and the estimator base (scikit-learn's contract without needing scikit-learn).

Bench results reach a model in one of two forms: a :class:`~solsphere.io.trials.Trials`
object (read from a file or a DataFrame), or arrays — an (n, 3) array of δD, δP, δH and a
label per row in any of the bench sheet's words ("dissolves" / "partly" / "does not",
1 / 0, True / False, "good" / "bad" / "partial"). :func:`model_inputs` turns either into
validated points, canonical outcomes, names and weights; :func:`binary_data` and
:func:`graded_data` count the 'partly' results per the model's setting.
"""

from __future__ import annotations

import inspect
from dataclasses import asdict, dataclass, field

import numpy as np

from solsphere.errors import FitError, NotFittedError
from solsphere.hansen import as_points, ra
from solsphere.io.trials import DISPLAY, parse_outcome
from solsphere.models.guidance import pinning_advice
from solsphere.results import Result

AXES = ("dD", "dP", "dH")
#: Words shown to people for each outcome (one table for the whole package).
WORDS = DISPLAY
MIN_ADVISED = 5  # fewer good or bad results than this gives a warning (common practice, no source)
EDGE = 0.05  # MPa½: a centre this close to a bound of the search box is "at the edge"
SURFACE = 1e-5  # MPa½: a solvent this close to the fitted surface lies on it
#: MPa½: compilations disagreeing by more than this for a tested solvent earn a warning
#: (common practice, no source).
SPREAD_WARN = 1.0
#: Class codes of the graded model.
CLASS_CODES = {"bad": 0, "partial": 1, "good": 2}


# ----------------------------------------------------------------------------- inputs
def as_weights(weights, n: int) -> np.ndarray:
    """Per-trial weights (default 1), validated: finite, >= 0, positive sum."""
    if weights is None:
        return np.ones(n)
    w = np.asarray(weights, dtype=float).reshape(-1)
    if w.shape != (n,) or not np.all(np.isfinite(w)) or np.any(w < 0) or not w.sum() > 0:
        raise ValueError(f"weights must be {n} finite numbers >= 0 with a positive sum; "
                         f"found shape {w.shape}")
    return w


def outcome_codes(labels) -> list[str]:
    """Canonical outcomes ("good", "bad", "partial") of labels in any bench-sheet word.

    >>> outcome_codes(["dissolves", "does not", "partly", 1, 0, True, "good"])
    ['good', 'bad', 'partial', 'good', 'bad', 'good', 'good']

    Raises
    ------
    ValueError
        A label that is no outcome word, naming the first few.
    """
    out, bad = [], []
    for v in np.asarray(labels, dtype=object).reshape(-1):
        if isinstance(v, np.generic):
            v = v.item()
        o = parse_outcome(v)
        if o is None:
            bad.append(v)
        out.append(o)
    if bad:
        raise ValueError("outcomes must be words such as 'dissolves' / 'partly' / 'does not', "
                         f"'good' / 'partial' / 'bad', 1 / 0 or True / False; found {bad[:3]}")
    return out


def trial_warnings(trials) -> list[str]:
    """Warnings a fit to these trials carries: the reading problems that did not stop
    reading, and tested solvents whose compilations disagree by more than ``SPREAD_WARN``."""
    out = list(getattr(trials, "warnings", None) or [])
    for t in getattr(trials, "trials", None) or []:
        s = getattr(t, "solvent", None)
        if (s is not None and s.spread is not None and s.spread > SPREAD_WARN
                and getattr(t, "source", None) == "library"):
            out.append(f"the compilations disagree by {s.spread:.1f} MPa½ for {t.name} "
                       f"(line {t.line}); its coordinates are less certain")
    return out


def model_inputs(X, y=None, names=None, weights=None):
    """Validated (points (n, 3), outcomes, names, weights, warnings) for a model's ``fit``.

    ``X`` is an (n, 3) array of points with labels ``y``, or a trials object (``.points``,
    ``.outcomes``, ``.names``) with ``y`` None; then the trials' own warnings come along.
    """
    warnings: list[str] = []
    if y is None:
        if not hasattr(X, "points"):
            raise TypeError("y is required when X is an array (or pass a Trials object)")
        warnings = trial_warnings(X)
        X, y, names = X.points, X.outcomes, list(X.names) if names is None else names
    outcomes = outcome_codes(y)
    n = len(outcomes)
    P = as_points(X) if n else np.empty((0, 3))
    names = [f"trial {i + 1}" for i in range(n)] if names is None else [str(s) for s in names]
    if len(P) != n or len(names) != n or not np.all(np.isfinite(P)):
        raise ValueError(f"need {n} finite points and names, one per outcome; found "
                         f"{len(P)} points and {len(names)} names")
    w = as_weights(weights, n) if n else np.ones(0)
    return P, outcomes, names, w, warnings


def default_bounds(points) -> np.ndarray:
    """The box spanned by the tested solvents, intersected with δ >= 0; shape (3, 2)."""
    p = as_points(points)
    return np.maximum(np.column_stack([p.min(axis=0), p.max(axis=0)]), 0.0)


def search_box(bounds, points) -> np.ndarray:
    """``bounds`` validated as a (3, 2) box, or :func:`default_bounds` of ``points``."""
    if bounds is None:
        return default_bounds(points)
    b = np.maximum(np.asarray(bounds, dtype=float), 0.0)
    if b.shape != (3, 2) or not np.all(np.isfinite(b)) or np.any(b[:, 0] > b[:, 1]):
        raise ValueError("bounds must be [[dD_lo, dD_hi], [dP_lo, dP_hi], [dH_lo, dH_hi]] "
                         f"with lo <= hi; found {np.asarray(bounds).tolist()}")
    return b


def counted_classes(outcomes, partial: str = "ordinal"):
    """Class codes of the outcomes under a 'partly' setting.

    Returns ``use`` (bool, trials that count), ``y`` (2 good, 1 partial, 0 bad; -1 when
    skipped), ``ordinal`` (three classes in play) and ``counted`` (the words).

    >>> use, y, ordinal, counted = counted_classes(["good", "partial", "bad"], "skip")
    >>> use.tolist(), y.tolist(), ordinal, counted
    ([True, False, True], [2, -1, 0], False, ['good', 'skipped', 'bad'])
    """
    outcomes = outcome_codes(outcomes)
    if partial not in ("ordinal", "good", "bad", "skip"):
        raise ValueError("partial must be 'ordinal', 'good', 'bad' or 'skip'; found "
                         f"{partial!r}")
    ordinal = partial == "ordinal" and "partial" in outcomes
    if partial == "ordinal":
        counted = [o if ordinal or o != "partial" else "good" for o in outcomes]
    else:
        counted = [("skipped" if partial == "skip" else partial) if o == "partial" else o
                   for o in outcomes]
    use = np.array([c != "skipped" for c in counted], dtype=bool)
    y = np.array([CLASS_CODES.get(c, -1) for c in counted], dtype=np.int64)
    return use, y, ordinal, counted


def _require_both(n_good: int, n_bad: int) -> None:
    if not (n_good and n_bad):
        raise FitError("a sphere needs at least one good and one bad result; found "
                       f"{n_good} good and {n_bad} bad")


def binary_data(data, good=None, partial: str = "good", names=None, bounds=None):
    """Points, yes/no answers, names and search box from trials or arrays.

    Parameters
    ----------
    data : Trials or array-like of shape (n, 3)
    good : array-like of shape (n,), default=None
        Labels in any bench-sheet word; required with arrays, ignored with trials.
    partial : {"good", "bad", "skip"}, default="good"
    names : list of str, default=None
    bounds : array-like of shape (3, 2), default=None
        Search box; default the box of *all* tested solvents (as the classic model).

    Returns
    -------
    X : ndarray (m, 3), g : ndarray of bool (m,), names : list of str, box : ndarray (3, 2)
    """
    if partial not in ("good", "bad", "skip"):
        raise ValueError(f"partial must be 'good', 'bad' or 'skip'; found {partial!r}")
    P, outcomes, names, _, _ = model_inputs(data, good, names)
    use, y, _, _ = counted_classes(outcomes, partial)
    X, g = P[use], y[use] == CLASS_CODES["good"]
    _require_both(int(g.sum()), int((~g).sum()))
    box = search_box(bounds, P if len(P) else X)
    return X, g, [n for n, u in zip(names, use) if u], box


def graded_data(data, good=None, partial: str = "ordinal", names=None, bounds=None):
    """Points, class codes (2/1/0), names, box and ordinal flag for the graded model."""
    P, outcomes, names, _, _ = model_inputs(data, good, names)
    use, y, ordinal, _ = counted_classes(outcomes, partial)
    X, y = P[use], y[use]
    _require_both(int((y > 0).sum()), int((y == 0).sum()))
    return X, y, [n for n, u in zip(names, use) if u], search_box(bounds, P), ordinal


# ----------------------------------------------------------------------------- warnings
def edge_warnings(c, box, points=None) -> list[str]:
    """Warnings for a centre at the edge of the search box (or a box too narrow); with
    ``points`` (the tested solvents) each names two or three untested common solvents
    beyond the tested range (:func:`solsphere.models.guidance.pinning_advice`)."""
    out = []
    for a, x, (lo, hi) in zip(AXES, c, box):
        span = f"tested {a} range {lo:.1f} to {hi:.1f}"
        if hi - lo <= 2 * EDGE:
            out.append(f"The {span} is too narrow to locate the centre's {a}; test solvents "
                       f"with a wider spread of {a}.")
        elif x - lo <= EDGE or hi - x <= EDGE:
            side = "lower" if x - lo <= EDGE else "upper"
            text = (f"Centre {a} = {x:.1f} is at the {side} edge of the tested region "
                    f"({span}): the true centre may lie beyond it, and R0 is then too small "
                    f"as well (the sphere is cut to fit inside the tested region); test "
                    f"solvents with {'lower' if side == 'lower' else 'higher'} {a}.")
            if points is not None and len(points):
                text += " " + pinning_advice(a, side, points, c)
            out.append(text)
    return out


#: Spread [MPa½, root mean square, δD counted twice as in Ra] below which the tested
#: solvents are taken to lie on a line or a plane (common practice, no source).
FLAT = 0.25


def shape_warnings(points, box) -> list[str]:
    """A warning when the tested solvents lie on one line or one plane in Hansen space
    (blends of two or three solvents, one family of solvents) along a direction the
    box-width warnings of :func:`edge_warnings` do not already name: across it the
    centre cannot be located.

    Examples
    --------
    >>> X = [[15 + i, 5 + i, 5 + i] for i in range(6)]  # invented, on a diagonal line
    >>> shape_warnings(X, [[15, 20], [5, 10], [5, 10]])[0][:44]
    'All tested solvents lie on (nearly) one line'
    """
    P = as_points(points) * np.array([2.0, 1.0, 1.0])
    if len(P) < 2:
        return []
    s = np.linalg.svd(P - P.mean(axis=0), compute_uv=False)
    flat = int(np.sum(s / np.sqrt(len(P)) < FLAT)) + 3 - len(s)  # (n < 3: fewer values)
    narrow = sum(hi - lo <= 2 * EDGE for lo, hi in np.asarray(box, dtype=float))
    if flat <= narrow or flat == 0:
        return []
    if flat >= 2:
        return ["All tested solvents lie on (nearly) one line in Hansen space (e.g. blends "
                "of two solvents): the results only place the centre along that line, not "
                "across it, and the fitted centre and R0 are one choice of many. Test "
                "solvents off the line."]
    return ["All tested solvents lie on (nearly) one plane in Hansen space: the results "
            "cannot place the centre across that plane, and the fitted centre and R0 are "
            "one choice of many. Test solvents off the plane."]


def few_results_warnings(n_good: int, n_bad: int) -> list[str]:
    """A warning for each side with fewer than ``MIN_ADVISED`` results."""
    out = []
    for k, m in (("good", n_good), ("bad", n_bad)):
        if m < MIN_ADVISED:
            out.append(f"Only {m} result{'s count' if m != 1 else ' counts'} as {k} (at "
                       f"least {MIN_ADVISED} are advised): the sphere is poorly determined.")
    return out


def unboundable_message(n_cg: int, n_cb: int, n_partial: int, partial: str) -> str:
    """Why no sphere can be fitted (no good or no bad result), and what to test."""
    n = n_cg + n_cb
    note = (f" ({n_partial} 'partly' results are "
            f"{'left out' if partial == 'skip' else 'counted as ' + partial}; another "
            "partial setting may help)") if n_partial else ""
    if n == 0:
        return (f"No results to fit{note}: record at least one solvent that dissolves the "
                "material and one that does not.")
    if n_cb == 0:
        return (f"All {n} results count as 'dissolves'{note}: the sphere has no outer boundary "
                "yet. Test some solvents far from these in Hansen space (e.g. water, hexane, "
                "methanol, a glycol) to find where the material does not dissolve.")
    return (f"None of the {n} results counts as 'dissolves'{note}: the sphere has no inside "
            "yet. Test solvents unlike these, with a wide spread of dD, dP and dH (e.g. "
            "toluene, acetone, ethyl acetate, dichloromethane, DMSO), until one dissolves it.")


# ----------------------------------------------------------------------------- results
@dataclass
class ModelComparison(Result):
    """Result of :func:`solsphere.models.comparison.compare_models` (kept here so that
    the fit results can carry it).

    ``rows``: one dict per reading: ``model`` ("classic"/"graded"), ``partial``,
    ``label``, ``n_scored``, ``n_right``, ``accuracy``, ``log_score`` (None for classic),
    ``gain`` (held-back results right beyond the default), ``z`` (gain over its
    standard error; None when both agree everywhere), ``recommended``.
    ``recommendation``: the label of the recommended reading; ``reason``: one sentence.
    """

    rows: list
    folds: int
    n_scored: int
    recommendation: str
    reason: str
    warnings: list = field(default_factory=list)

    rows_key = "rows"

    def to_dict(self) -> dict:
        """JSON-safe plain types (``solsphere fit --json``, key ``"model_comparison"``)."""
        return asdict(self)

    @classmethod
    def from_dict(cls, d: dict) -> "ModelComparison":
        """Inverse of :meth:`to_dict`."""
        return cls(rows=[dict(r) for r in d.get("rows", [])], folds=int(d.get("folds", 0)),
                   n_scored=int(d.get("n_scored", 0)),
                   recommendation=str(d.get("recommendation", "")),
                   reason=str(d.get("reason", "")), warnings=list(d.get("warnings", [])))

    def __str__(self) -> str:
        if not self.rows:
            return "[[Which model?]]\n    " + self.reason
        out = [f"[[Which model?]] (held-back clear results, {self.folds}-fold "
               f"cross-validation, {self.n_scored} scored)"]
        for r in self.rows:
            ls = "" if r["log_score"] is None else f", log score {r['log_score']:.2f}"
            g = "" if r["model"] == "classic" and r["partial"] == "good" else \
                f", {r['gain']:+d} vs default"
            mark = "  <- recommended" if r["recommended"] else ""
            out.append(f"    {r['label']}: {r['n_right']}/{r['n_scored']} right "
                       f"({100 * r['accuracy']:.0f} %){ls}{g}{mark}")
        out.append(f"    {self.reason}")
        out += [f"    {t}" for t in self.warnings]
        return "\n".join(out)


class FitResultBase(Result):
    """What the fit results share (dataclasses with dD, dP, dH and a per-trial ``table``):
    the centre as an array, ``to_dict()`` of plain fields, one table row per trial."""

    rows_key = "table"

    @property
    def centre(self) -> np.ndarray:
        return np.array([self.dD, self.dP, self.dH])

    def to_dict(self) -> dict:
        """JSON-safe plain types (the ``solsphere fit --json`` object)."""
        return asdict(self)


# ----------------------------------------------------------------------------- estimator
def estimator(cls):
    """Class decorator: the settings, declared as annotated class attributes with their
    defaults, become ``__init__``'s keyword arguments, stored as given and nothing else
    (scikit-learn's rule; ``get_params`` reads them back from the signature)."""
    return dataclass(repr=False, eq=False)(cls)


class SphereEstimator:
    """Base of the sphere models: scikit-learn's estimator contract, no scikit-learn needed.

    ``__init__`` of a subclass only stores its keyword settings; ``get_params`` /
    ``set_params`` read and change them (so ``sklearn.base.clone`` works); ``fit`` returns
    ``self``; ``predict`` says inside (1) or outside (0) per point, ``red`` gives RED,
    ``score(X, y)`` the share of results the sphere gets right.
    """

    @classmethod
    def _param_names(cls) -> list[str]:
        sig = inspect.signature(cls.__init__)
        return [p.name for p in sig.parameters.values()
                if p.name != "self" and p.kind == p.POSITIONAL_OR_KEYWORD]

    def get_params(self, deep: bool = True) -> dict:
        """The settings given to ``__init__`` (scikit-learn's contract)."""
        return {k: getattr(self, k) for k in self._param_names()}

    def set_params(self, **params) -> "SphereEstimator":
        """Change settings; unknown names raise ``ValueError`` listing the valid ones."""
        valid = self._param_names()
        for k, v in params.items():
            if k not in valid:
                raise ValueError(f"invalid parameter {k!r} for {type(self).__name__}; "
                                 f"valid parameters: {', '.join(valid)}")
            setattr(self, k, v)
        return self

    def __sklearn_tags__(self):
        """scikit-learn's estimator tags: a classifier (inside = dissolves) that needs y.

        Called only by scikit-learn (``cross_val_score`` and friends), so scikit-learn is
        imported here and is never a run-time dependency of solsphere.
        """
        from sklearn.utils import ClassifierTags, InputTags, Tags, TargetTags  # only sklearn calls this

        return Tags(estimator_type="classifier", target_tags=TargetTags(required=True),
                    classifier_tags=ClassifierTags(), input_tags=InputTags())

    def __repr__(self) -> str:
        defaults = {p.name: p.default for p in inspect.signature(type(self).__init__)
                    .parameters.values() if p.name != "self"}
        args = [f"{k}={v!r}" for k, v in self.get_params().items()
                if not (isinstance(v, (str, int, float, bool, type(None))) and v == defaults.get(k))]
        return f"{type(self).__name__}({', '.join(args)})"

    def check_fitted(self) -> None:
        """Raise :class:`NotFittedError` unless ``fit`` has run."""
        if not hasattr(self, "result_"):
            raise NotFittedError(f"{type(self).__name__} is not fitted yet. Call 'fit' first.")

    def red(self, points) -> np.ndarray:
        """RED = Ra / R0 of each point; shape (n,)."""
        self.check_fitted()
        return ra(points, self.centre_) / self.R0_

    def predict(self, points) -> np.ndarray:
        """True where a point lies inside the sphere (Ra <= R0); shape (n,)."""
        self.check_fitted()
        return ra(points, self.centre_) <= self.R0_

    def score(self, X, y) -> float:
        """Share of results the sphere gets right ('partly' results count per the model's
        ``partial`` setting, or as dissolving; skipped ones are left out)."""
        self.check_fitted()
        partial = getattr(self, "partial", "good")
        partial = "good" if partial == "ordinal" else partial
        P, outcomes, _, _, _ = model_inputs(X, y)
        use, codes, _, _ = counted_classes(outcomes, partial)
        if not use.any():
            raise ValueError("no result to score (every result is skipped)")
        g = codes[use] == CLASS_CODES["good"]
        return float(np.mean(self.predict(P[use]) == g))

    @property
    def center_(self) -> np.ndarray:
        """Alias of ``centre_``."""
        self.check_fitted()
        return self.centre_
