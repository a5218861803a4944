"""Many materials in one run: one sphere per material of a results file.

A results file with a ``material`` column (:func:`solsphere.io.trials.read_materials`)
holds the bench results of several materials. :func:`fit_materials` fits each one as
``solsphere fit`` would (the fit, the leave-one-out re-check list, optionally bootstrap
intervals), spread over worker processes, and returns one :class:`MaterialFits`: a
summary table plus each fit, ``to_dict()`` as ``{"materials": [...]}`` with each fit's
keys and ``"material"``, and ``records()`` the per-trial tables of all materials with a
``material`` column.

A material that cannot be fitted (for instance, no result outside the sphere) does not
stop the others: its entry holds ``"error"`` with the reason.

Saving: :func:`save_materials` writes **one project file per material into a folder**
(``resin-a.json``, ``resin-b.json`` ...). Each is an ordinary project, so ``rank``,
``blend``, ``next``, ``share`` and the app open any of them unchanged, a material can be
re-fitted or shared alone, and the project schema stays one material per file.
"""

from __future__ import annotations

import multiprocessing
import os
import threading
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from pathlib import Path

from solsphere.errors import FitError, InputError
from solsphere.formatting import format_table, num
from solsphere.io.project import Project, save
from solsphere.limits import current as current_limits, limited
from solsphere.results import Result
from solsphere.uncertainty.bootstrap import bootstrap, influence
from solsphere.workflows import fit_project

__all__ = ["MaterialFits", "fit_materials", "save_materials", "machine_cores",
           "material_file_names", "recheck_lines"]


def machine_cores() -> int:
    """Cores this process may use (the default number of worker processes).

    >>> machine_cores() >= 1
    True
    """
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


@dataclass
class MaterialFits(Result):
    """The fits of several materials.

    Attributes
    ----------
    fits : list of dict
        Per material, in file order: the fit's ``to_dict()`` plus ``"material"``,
        ``"n_trials"``, ``"influence"`` (rows or None) and, with a bootstrap,
        ``"intervals"``; or ``{"material", "n_trials", "error"}``.
    reports : list of str
        Each material's text report (or its error).
    jobs : int
        Worker processes used.
    """

    fits: list = field(default_factory=list)
    reports: list = field(default_factory=list)
    jobs: int = 1

    @property
    def failed(self) -> list[str]:
        return [f["material"] for f in self.fits if "error" in f]

    def to_dict(self) -> dict:
        return {"materials": [dict(f) for f in self.fits], "jobs": self.jobs}

    def records(self) -> list[dict]:
        """Every material's per-trial table, each row with its ``material``."""
        rows = []
        for f in self.fits:
            for r in f.get("table") or []:
                rows.append({"material": f["material"], **r})
        return rows

    def summary_rows(self) -> list[tuple]:
        out = [("material", "trials", "δD", "δP", "δH", "R0", "fit", "misfits")]
        for f in self.fits:
            if "error" in f:
                out.append((f["material"], f["n_trials"], "—", "—", "—", "—",
                            "not fitted", "—"))
                continue
            misfits = f.get("misfits")
            out.append((f["material"], f["n_trials"], num(f.get("dD")), num(f.get("dP")),
                        num(f.get("dH")), num(f.get("R0")),
                        num(f.get("desirability"), "{:.2f}"),
                        len(misfits) if isinstance(misfits, list) else "—"))
        return out

    def __str__(self) -> str:
        head = (f"[[{len(self.fits)} materials]] one sphere each (MPa½; fit = desirability, "
                f"1 = every result on the right side)\n" + format_table(self.summary_rows()))
        if self.failed:
            head += f"\nNot fitted: {', '.join(self.failed)} (reasons below)."
        parts = [head]
        for f, text in zip(self.fits, self.reports):
            parts.append(f"==== {f['material']} ====\n{text}")
        return "\n\n".join(parts)


def _fit_one(task: tuple) -> tuple[dict, str]:
    """One material's fit, re-check list and bootstrap (runs in a worker process)."""
    name, trials, opts, limits = task
    with limited(**limits):
        return _fit_material(name, trials, **opts)


def _fit_material(name: str, trials, *, partial, method, seed, with_influence: bool,
                  n_bootstrap: int | None) -> tuple[dict, str]:
    n = len(trials)
    try:
        fit = fit_project(Project(trials=trials), partial=partial, seed=seed, method=method)
    except FitError as exc:
        return {"material": name, "n_trials": n, "error": str(exc)}, f"not fitted: {exc}"
    obj = dict(fit.to_dict(), material=name, n_trials=n)
    text = str(fit)
    if n_bootstrap:
        boot = bootstrap(trials, n_bootstrap=n_bootstrap, seed=seed, method=method,
                         partial=fit.partial, bounds=fit.bounds, n_jobs=1)
        obj["intervals"] = boot.intervals
        obj["n_bootstrap"] = boot.n_bootstrap
        text += "\n" + str(boot)
    obj["influence"] = None
    if with_influence and n * n <= current_limits().resample_work:
        inf = influence(trials, partial=fit.partial, bounds=fit.bounds, flips=False, n_jobs=1)
        rows = inf.to_dict()["influence"]
        obj["influence"] = rows
        text += ("\n[[Re-check first]] (results whose removal moves the sphere most)\n"
                 + "\n".join(recheck_lines(rows)))
    return obj, text


def recheck_lines(rows: list[dict], n: int = 5) -> list[str]:
    """The re-check list: results whose removal moves the sphere most (a result whose
    removal leaves no sphere to fit says so instead of a number)."""
    out = []
    for r in rows[:n]:
        if r.get("shift") is None:
            out.append(f"    {r['name']}: {r.get('note') or 'no refit without it'}")
        else:
            out.append(f"    {r['name']}: centre moves {num(r['shift'])} MPa½, R0 "
                       f"{num(r['dR0'], '{:+.1f}')}")
    return out


def _context():
    """fork from a single-threaded POSIX process (instant start), else spawn."""
    if (os.name == "posix" and threading.active_count() == 1
            and "fork" in multiprocessing.get_all_start_methods()):
        return multiprocessing.get_context("fork")
    return multiprocessing.get_context("spawn")


def fit_materials(groups, *, partial: str | None = None, method: str = "classic",
                  seed: int = 0, with_influence: bool = True, n_bootstrap: int | None = None,
                  jobs: int | None = None) -> MaterialFits:
    """Fit one sphere per material.

    Parameters
    ----------
    groups : list of Trials
        One per material (``Trials.material`` names it), e.g. from
        :func:`solsphere.io.trials.read_materials`.
    partial, method, seed
        As for :func:`solsphere.workflows.fit_project`.
    with_influence : bool, default=True
        Add each material's leave-one-out re-check list.
    n_bootstrap : int or None, default=None
        Resamples for bootstrap intervals (None: none).
    jobs : int or None, default=None
        Worker processes; None uses :func:`machine_cores`. One process, or one
        material, runs in this process.

    Returns
    -------
    MaterialFits

    Examples
    --------
    >>> from solsphere.io.trials import read_materials
    >>> rows = [{"material": m, "solvent": s, "outcome": o} for m in ("A", "B")
    ...         for s, o in (("toluene", "good"), ("xylene", "good"), ("acetone", "good"),
    ...                      ("water", "bad"), ("methanol", "bad"), ("n-hexane", "bad"))]
    >>> res = fit_materials(read_materials(rows), with_influence=False, jobs=1)
    >>> [f["material"] for f in res.to_dict()["materials"]]
    ['A', 'B']
    """
    groups = list(groups)
    jobs = machine_cores() if jobs is None else max(1, int(jobs))
    jobs = min(jobs, len(groups)) or 1
    opts = dict(partial=partial, method=method, seed=seed, with_influence=with_influence,
                n_bootstrap=n_bootstrap)
    names = [g.material if g.material is not None else f"material {i + 1}"
             for i, g in enumerate(groups)]
    lim = current_limits().to_dict()
    tasks = [(name, g, opts, lim) for name, g in zip(names, groups)]
    results = None
    if jobs > 1:
        try:
            with ProcessPoolExecutor(max_workers=jobs, mp_context=_context()) as ex:
                results = list(ex.map(_fit_one, tasks))
        except (OSError, BrokenProcessPool, NotImplementedError, PermissionError):
            results, jobs = None, 1  # processes cannot be started here: run serially
    if results is None:
        jobs = 1
        results = [_fit_one(t) for t in tasks]
    return MaterialFits(fits=[r[0] for r in results], reports=[r[1] for r in results],
                        jobs=jobs)


def material_file_names(names) -> list[str]:
    """A distinct, safe file name (``.json``) per material name.

    >>> material_file_names(["Resin A", "resin a", "../x", "é"])
    ['Resin-A.json', 'resin-a-2.json', 'x.json', 'é.json']
    """
    out, used = [], set()
    for name in names:
        stem = "".join(ch if ch.isalnum() or ch in "-_" else "-" for ch in str(name).strip())
        stem = "-".join(p for p in stem.split("-") if p)[:80] or "material"
        cand, k = stem, 2
        while cand.casefold() in used:
            cand, k = f"{stem}-{k}", k + 1
        used.add(cand.casefold())
        out.append(cand + ".json")
    return out


def save_materials(groups, fits: MaterialFits, folder, *, method: str = "classic") -> list[Path]:
    """Write one project per fitted material into ``folder`` (created if missing).

    Returns the paths written. Each file is an ordinary project (trials, settings with
    the ``material`` name, the fit); a material that could not be fitted is saved
    without a fit. Existing files that are not solsphere projects are never replaced.

    Raises
    ------
    InputError
        ``folder`` is a file, or its parent folder does not exist.
    """
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise InputError("several materials are saved as one project each in a folder, "
                         "but this is a file.", file=str(folder), setting="save",
                         hint="give a folder name (it is created)")
    if not folder.exists():
        if not folder.parent.is_dir():
            raise InputError(f"the folder {str(folder.parent)!r} does not exist.",
                             file=str(folder), setting="save",
                             hint="create it first or choose another place")
        folder.mkdir()
    paths = []
    for g, f, name in zip(groups, fits.fits, material_file_names(x["material"] for x in fits.fits)):
        project = Project(trials=g, settings={"material": f["material"], "method": method})
        if "error" not in f:
            fit = {k: v for k, v in f.items()
                   if k not in ("material", "n_trials", "influence", "intervals",
                                "n_bootstrap")}
            project.fit = fit
            project.settings["partial"] = f.get("partial")
        paths.append(save(project, folder / name))
    return paths
