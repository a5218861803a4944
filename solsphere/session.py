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
    # resolve against the full library so abbreviations work on shelves too
    names = {library.lookup(n).name for n in exclude}
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
