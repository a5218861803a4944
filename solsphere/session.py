"""One working session: a project's trials fitted, the candidate pool chosen, the share page.

These steps are shared by the command line and the app, so both stay thin and neither
recomputes what the library returns.
"""

from __future__ import annotations

from .errors import InputError

SPREAD_WARN = 1.0  # MPa½: compilations disagreeing by more than this earn a warning (common practice, no source)


def fit_project(project, partial: str | None = None, library=None, seed: int = 0):
    """Fit the sphere to a project's trials.

    Parameters
    ----------
    project : Project
        Trials and settings (``settings["partial"]`` is used when ``partial`` is None).
    partial : {"good", "bad", "skip"} or None, default=None
        How to count 'partly' results; None takes the project's setting, else "good".
    library : Library or None
        Used to add a warning when compilations disagree for a tested solvent.

    Returns
    -------
    SphereFit
    """
    from .fit import SphereModel
    partial = partial or project.settings.get("partial") or "good"
    warnings = []
    for t in project.trials:
        s = getattr(t, "solvent", None)
        if s is not None and s.spread is not None and s.spread > SPREAD_WARN and t.source == "library":
            warnings.append(f"the compilations disagree by {s.spread:.1f} MPa½ for {t.name} "
                            f"(line {t.line}); its coordinates are less certain")
    model = SphereModel(partial=partial, seed=seed).fit(project.trials, warnings=warnings)
    return model.result_


def candidate_pool(library, shelf: str | None = None, exclude=(), min_flash_point=None,
                   max_boiling_point=None, exclude_carcinogens: bool = False):
    """The solvents to rank or blend: the library's liquids or a user's shelf, filtered.

    Returns
    -------
    pool : list of Solvent
    filters : dict
        What was applied, for the record.
    """
    from .library import Library
    filters = {"pool": shelf or "library liquids", "exclude": list(exclude),
               "min_flash_point": min_flash_point, "max_boiling_point": max_boiling_point,
               "exclude_carcinogens": exclude_carcinogens}
    if shelf:
        from .shelf import read_shelf
        base = Library.from_records(read_shelf(shelf, library))
        liquid_only = False
    else:
        base, liquid_only = library, True
    # a shelf's own solvents by their shelf names; everything else through the full
    # library, so abbreviations (MEK) work on shelves too
    names = {((base.find(n) if shelf else None) or library.lookup(n)).name for n in exclude}
    pool = base.select(liquid_only=liquid_only, min_flash_point=min_flash_point,
                       max_boiling_point=max_boiling_point,
                       exclude_carcinogens=exclude_carcinogens, exclude=())
    pool = [s for s in pool if s.name not in names]
    if not pool:
        raise InputError("no candidate solvent is left after the filters "
                         f"({_describe(filters)}).", file=shelf,
                         hint="relax --min-flash-point / --max-boiling-point / --exclude, "
                              "or add solvents to the shelf")
    return list(pool), filters


def _describe(filters: dict) -> str:
    parts = [f"{k}={v}" for k, v in filters.items() if v not in (None, False, [], ())]
    return ", ".join(parts) or "none"


def share_page(project, fit, library, title: str | None = None, n_blends: int = 5) -> str:
    """The standalone HTML page for a fitted project (3D map, projections, reports)."""
    from . import figures
    from .blend import screen_blends
    from .rank import CAUTION, rank_solvents
    pool, _ = candidate_pool(library)
    tested = set(project.trials.names)
    centre = (fit.dD, fit.dP, fit.dH)
    ranking = rank_solvents(pool, centre, fit.R0, tested=tested)
    blends = screen_blends(pool, centre, fit.R0, top=n_blends)
    fd = fit.to_dict()
    bl = blends.to_dict()["blends"]
    fig3 = figures.map3d(fd, untried=ranking.to_dict()["solvents"], blends=bl)
    fig2 = figures.projections(fd, blends=bl)
    top = rank_solvents(pool, centre, fit.R0, top=15, tested=tested)
    title = title or f"Hansen solubility sphere — {project.trials.source}"
    return figures.share_html(fig3, fig2, str(fit), title=title, caution=CAUTION,
                              extra_sections=[("Untried solvents nearest the sphere", str(top)),
                                              ("Blends", str(blends))])


def at_temperature(pool, temperature_C: float | None, reference_C: float = 25.0):
    """The pool's coordinates shifted to a process temperature.

    Uses the Hansen–Beerbower relations (:func:`solsphere.hsp.shift_to_temperature`)
    with each solvent's thermal expansion coefficient from the library. A solvent without
    an expansion coefficient keeps its 25 °C values and is listed in the returned notes.
    The material's sphere is kept as fitted at the bench temperature (its own shift is
    unknown): the comparison is a guide, not a prediction at temperature.

    Returns
    -------
    pool : list of Solvent
    notes : list of str
    """
    import dataclasses

    import numpy as np

    from . import hsp
    if temperature_C is None or abs(temperature_C - reference_C) < 1e-12:
        return list(pool), []
    out, missing = [], []
    for s in pool:
        if s.alpha is None:
            missing.append(s.name)
            out.append(s)
            continue
        p = hsp.shift_to_temperature(np.array([s.point]), s.alpha, reference_C, temperature_C)[0]
        out.append(dataclasses.replace(s, dD=float(p[0]), dP=float(p[1]), dH=float(p[2])))
    notes = [f"coordinates shifted from {reference_C:g} °C to {temperature_C:g} °C by the "
             f"Hansen–Beerbower relations; the material's sphere is kept as fitted at the bench"]
    if missing:
        notes.append(f"{len(missing)} solvents have no expansion data and keep their "
                     f"{reference_C:g} °C values")
    return out, notes


def add_safety_and_drying(screen, pool, centre, R0: float, drying: bool = False,
                          temperature_C: float = 25.0, rank_by_drying: bool = False):
    """Attach the blend flash-point estimate (and, asked for, the drying path) to each blend.

    Each blend's dict (``screen.to_dict()``) then carries ``flash_point_estimate`` and,
    with ``drying``, ``drying`` (the :class:`~solsphere.drying.DryingPath` dict). With
    ``rank_by_drying`` the blends are re-sorted so those that stay inside longest come first.

    Returns
    -------
    list of dict
        The blends as dicts, in the final order.
    """
    from .drying import drying_path, volume_to_mole_fractions
    from .flash import blend_flash_point, vapour_pressure
    by_name = {s.name: s for s in pool}
    out = []
    for b in screen.blends:
        d = b.to_dict()
        comps = [by_name[n] for n in b.solvents]
        vm = [s.molar_volume for s in comps]
        vp = [s.vapour_pressure for s in comps]
        bp = [s.boiling_point for s in comps]
        fp = [s.flash_point for s in comps]
        x = (volume_to_mole_fractions(b.volume_fractions, vm).tolist()
             if all(v is not None for v in vm) else None)
        d["flash_point_estimate"] = (blend_flash_point(x, fp, vp, bp, names=b.solvents)
                                     if x is not None else None)
        if drying:
            if all(v is not None for v in vm + vp + bp):
                vpt = [float(vapour_pressure(temperature_C, p, t)[0]) if temperature_C != 25.0
                       else p for p, t in zip(vp, bp)]
                path = drying_path([s.point for s in comps], b.volume_fractions, vm, vpt,
                                   centre, R0, names=b.solvents)
                d["drying"] = path.to_dict()
                d["drying_inside_until"] = path.inside_until
            else:
                d["drying"] = None
                d["drying_inside_until"] = None
        out.append(d)
    if drying and rank_by_drying:
        out.sort(key=lambda d: -(d["drying_inside_until"] if d["drying_inside_until"] is not None else -1))
    return out
