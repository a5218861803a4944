"""The pure functions behind "How sure is the sphere?" and "Next trials" (no Dash).

Every computation is a library call: the bootstrap and the influence of single results
(:mod:`solsphere.confidence`), the suggestions (:func:`solsphere.nexttrial.suggest_next`)
and the p_good of a solvent (:func:`solsphere.rank.rank_solvents` with the bootstrap). These run
only when asked (a button), never on every edit of the table: a bootstrap refits the
sphere hundreds of times. Results are stored in the browser with a key of the trials
they were computed from, so a later edit marks them as out of date instead of showing
numbers that belong to other results.
"""

from __future__ import annotations

import hashlib
import json
import time

from solsphere.errors import FitError, SolsphereError
from solsphere.formatting import num
from solsphere.uncertainty import bootstrap as confidence
from solsphere.uncertainty import nexttrials as nexttrial
from solsphere.uncertainty.bootstrap import Bootstrap
from solsphere.uncertainty.posterior import Posterior, sample_posterior
from solsphere.workflows import candidate_pool

from .logic import number_field, split_names

#: Resamples the app offers by default (fast: about 2 s for 35 trials here) and at most.
DEFAULT_RESAMPLES = 200
MAX_RESAMPLES = 2000
#: Time limit of a posterior run in the app [s] (a background job, but one a user waits
#: for; the run stops with a warning giving the effective samples reached).
POSTERIOR_SECONDS = 30.0
#: Seed of every bootstrap in the app (reproducible: the same results give the same
#: intervals and suggestions).
SEED = 0
#: Digits kept for the resampled centres and radii stored in the browser (MPa½).
DIGITS = 4
#: Posterior samples behind the next-trial suggestions: default, least, most.
DEFAULT_SAMPLES, MIN_SAMPLES, MAX_SAMPLES = 1000, 200, 4000
METHODS = {"classic": "classic (the sphere shown)", "graded": "graded (smooth boundary)",
           "posterior": "posterior (every sphere the results allow)"}


def trials_key(fit: dict | None) -> str | None:
    """What identifies the results a bootstrap was computed from: every counted trial's
    name, point and outcome, and the 'partly' setting."""
    if not fit:
        return None
    rows = [[r["name"], round(float(r["dD"]), 6), round(float(r["dP"]), 6),
             round(float(r["dH"]), 6), r["outcome"]] for r in fit.get("table", [])]
    text = json.dumps([fit.get("partial"), rows], ensure_ascii=False)
    return hashlib.sha1(text.encode("utf-8")).hexdigest()[:16]


def _data(fit: dict):
    """Points, outcome words and names of the fitted trials (the fit's own table)."""
    table = fit["table"]
    X = [[r["dD"], r["dP"], r["dH"]] for r in table]
    return X, [r["outcome"] for r in table], [r["name"] for r in table]


def current(store: dict | None, fit: dict | None) -> dict | None:
    """The stored result if it was computed from these results, else None."""
    if not store or not fit or store.get("key") != trials_key(fit):
        return None
    return store


# ----------------------------------------------------------------------------- bootstrap

def run_bootstrap(result: dict | None, n_resamples=DEFAULT_RESAMPLES, method: str = "classic",
                  seed: int = SEED, progress=None) -> dict:
    """Bootstrap the stored fit (:func:`solsphere.confidence.bootstrap`, stratified,
    seeded) for the browser store.

    ``progress(done, total)`` is called as the resamples are refitted (the posterior
    reports no steps).

    Returns
    -------
    dict
        ``key`` (:func:`trials_key`), ``boot`` (``Bootstrap.to_dict(samples=True)``
        with the resampled centres and radii rounded, without the per-resample
        desirabilities), ``elapsed`` [s]; or ``error`` (a message) instead of ``boot``.
    """
    fit = (result or {}).get("fit")
    if not fit:
        return {"key": None, "error": "No sphere yet: add results first."}
    try:
        n = int(number_field(n_resamples) or DEFAULT_RESAMPLES)
    except (SolsphereError, ValueError):
        n = DEFAULT_RESAMPLES
    n = max(20, min(MAX_RESAMPLES, n))
    X, outcomes, names = _data(fit)
    partial = fit.get("partial") or "good"
    try:
        if method == "posterior":
            b = sample_posterior(X, outcomes, max(n, MIN_SAMPLES), seed=seed,
                                 partial=partial if partial != "ordinal" else "good",
                                 names=names,  # its own physically wide prior
                                 max_seconds=POSTERIOR_SECONDS)
        else:
            b = confidence.bootstrap(X, outcomes, n, seed=seed, method=method,
                                     partial=partial, names=names, bounds=fit.get("bounds"),
                                     progress=progress)
    except (FitError, ValueError) as exc:
        return {"key": trials_key(fit), "error": f"No intervals: {exc}"}
    d = b.to_dict(samples=True)
    d.pop("desirabilities", None)
    d["centres"] = [[round(v, DIGITS) for v in c] for c in d["centres"]]
    d["radii"] = [round(v, DIGITS) for v in d["radii"]]
    if "widths" in d:
        d["widths"] = [round(v, DIGITS) for v in d["widths"]]
    return {"key": trials_key(fit), "boot": d, "elapsed": b.elapsed}


def interval_texts(store: dict | None, fit: dict | None) -> dict | None:
    """What the 'Sphere' panel prints beside the centre and R0 (None: nothing to show).

    Returns
    -------
    dict
        ``centre``, ``R0`` ("95 % interval …"), ``about`` (resamples, fit, seed,
        time), ``warnings``, ``stale`` (True when the results changed since).
    """
    if not store or not fit:
        return None
    if store.get("key") != trials_key(fit):
        return {"stale": True, "about": "The results changed since the intervals were "
                                         "computed: press the button again."}
    if store.get("error"):
        return {"stale": False, "error": store["error"]}
    d = store["boot"]
    iv = d["intervals"]
    pct = f"{100 * d['level']:g} %"

    def span(k):
        lo, hi = iv[k]
        return f"{lo:.1f}–{hi:.1f}"

    what = "stability range" if d["fit_method"] == "classic" else "interval"
    out = {"stale": False,
           "centre": f"{pct} {what}: δD {span('dD')}, δP {span('dP')}, δH {span('dH')}",
           "R0": f"{pct} {what}: {span('R0')}",
           "about": (f"From {d['n_bootstrap']} resamples of the results ({d['fit_method']} "
                     f"fit, seed {d['seed']}, {store.get('elapsed', 0):.1f} s); "
                     + ("stability ranges, not confidence intervals (see the note below)."
                        if d["fit_method"] == "classic" else "percentile intervals.")
                     if d["fit_method"] != "posterior" else
                     f"From {d['n_samples']} spheres sampled in proportion to how well they "
                     f"explain the results (posterior of the graded model, seed {d['seed']}, "
                     f"{store.get('elapsed', 0):.1f} s); credible intervals."),
           "warnings": list(d.get("warnings") or [])}
    if d["fit_method"] in ("graded", "posterior"):
        out["about"] += (f" The graded fit's own centre is δD {d['dD']:.1f}, δP "
                         f"{d['dP']:.1f}, δH {d['dH']:.1f}, R0 {d['R0']:.1f} MPa½; the "
                         f"intervals belong to it.")
        if "width" in iv:
            out["about"] += f" Boundary width {span('width')} MPa½."
    return out


def cloud(store: dict | None, fit: dict | None):
    """The resampled centres for the map, shape (n, 3) as lists (None when stale)."""
    st = current(store, fit)
    if not st or st.get("error"):
        return None
    return st["boot"].get("centres")


def bootstrap_of(store: dict | None, fit: dict | None):
    """The stored bootstrap as a :class:`solsphere.confidence.Bootstrap` (with its
    resampled spheres), or None when there is none for these results."""
    st = current(store, fit)
    if not st or st.get("error"):
        return None
    kind = Posterior if st["boot"].get("fit_method") == "posterior" else Bootstrap
    return kind.from_dict(st["boot"])


def samples_text(d: dict) -> str:
    """'200 resampled spheres (classic fit)' or '1000 sampled spheres (posterior)'."""
    if d.get("fit_method") == "posterior":
        return f"{d['n_samples']} sampled spheres (posterior of the graded model)"
    return f"{d['n_bootstrap']} resampled spheres ({d['fit_method']} fit)"


# ----------------------------------------------------------------------------- next trials

def next_trials(result: dict | None, library, n: int = 5, n_samples=DEFAULT_SAMPLES,
                min_flash_point=None, max_boiling_point=None, no_carcinogens: bool = False,
                exclude: str | None = None, seed: int = SEED, pool: str = "working",
                progress=None, recheck_progress=None) -> dict:
    """Suggestions (``solsphere next``) and the results to re-check (influence).

    ``pool``: "working" (the curated working solvents, as ``solsphere next``) or
    "all" (every library liquid). ``progress`` and ``recheck_progress``
    (``callable(done, total)``) follow the two stages.

    Returns
    -------
    dict
        ``key``, ``suggestions`` (``Suggestions.to_dict()`` entries with display
        strings), ``recheck`` (the most influential trials), ``message``, ``warnings``,
        ``caution`` (the suggestions' own caution), ``elapsed``.
    """
    fit = (result or {}).get("fit")
    if not fit:
        return {"key": None, "suggestions": [], "recheck": [], "warnings": [],
                "message": "No sphere yet: add results first.", "caution": nexttrial.CAUTION}
    t0 = time.perf_counter()
    X, outcomes, names = _data(fit)
    partial = fit.get("partial") or "good"
    key = trials_key(fit)
    try:
        pool, filters = candidate_pool(library, exclude=split_names(exclude),
                                 min_flash_point=number_field(min_flash_point),
                                 max_boiling_point=number_field(max_boiling_point),
                                 exclude_carcinogens=bool(no_carcinogens), pool=pool)
        ns = max(MIN_SAMPLES, min(MAX_SAMPLES, int(number_field(n_samples) or DEFAULT_SAMPLES)))
        sug = nexttrial.suggest_next(X, outcomes, pool, int(n), n_samples=ns, seed=seed,
                                     partial=partial, names=names, progress=progress)
        infl = confidence.influence(X, outcomes, partial=partial, names=names,
                                    bounds=fit.get("bounds"), progress=recheck_progress)
    except (SolsphereError, ValueError) as exc:
        return {"key": key, "suggestions": [], "recheck": [], "warnings": [],
                "message": str(exc), "caution": nexttrial.CAUTION}
    d = sug.to_dict()
    rows = []
    for s in d["suggestions"]:
        rows.append(dict(s, p_text=f"{s['p_good']:.2f}", red_text=f"{s['red']:.2f}",
                         fp_text=num(s.get("flash_point"), "{:.0f}"),
                         bp_text=num(s.get("boiling_point"), "{:.0f}"),
                         twa_text=num(s.get("twa_ppm"), "{:.3g}")))
    msg = (f"{len(rows)} of {d['n_candidates']} untried {filters['pool']}, chosen with "
           f"{d['n_samples']} spheres sampled from the graded fit's posterior (seed "
           f"{d['seed']}).")
    return {"key": key, "suggestions": rows, "recheck": recheck_rows(infl.to_dict()),
            "message": msg, "warnings": list(d.get("warnings") or []) + list(infl.warnings),
            "caution": nexttrial.CAUTION, "elapsed": time.perf_counter() - t0}


def recheck_rows(infl: dict, n: int = 5) -> list[dict]:
    """The ``n`` most influential trials, each with a sentence a chemist can act on."""
    out = []
    for r in infl["influence"][:n]:
        if r["shift"] is None:
            text = r["note"]
        else:
            dr = 0.0 if abs(r["dR0"]) < 0.05 else r["dR0"]  # no "-0.0"
            text = (f"without it the centre moves {r['shift']:.1f} MPa½ and R0 changes by "
                    f"{dr:+.1f}")
            if r.get("flip_shift") is not None:
                text += (f"; with the opposite result the centre moves "
                         f"{r['flip_shift']:.1f} MPa½")
        word = {"good": "counted as dissolving", "bad": "counted as not dissolving"}
        out.append({"name": r["name"], "misfit": r["misfit"], "text": text,
                    "counted": word.get(r["counted_as"], r["counted_as"]),
                    "impact": r["impact"]})
    return out
