"""One working session: a project's trials fitted, the candidate pool chosen, the share page.

These steps are shared by the command line and the app, so both stay thin and neither
recomputes what the library returns.
"""

from __future__ import annotations

from solsphere.errors import InputError
from solsphere.limits import check_temperature

SPREAD_WARN = 1.0  # MPa½: compilations disagreeing by more than this earn a warning (common practice, no source)


def fit_project(project, partial: str | None = None, library=None, seed: int = 0,
                method: str = "classic"):
    """Fit the sphere to a project's trials.

    Parameters
    ----------
    project : Project
        Trials and settings (``settings["partial"]`` is used when ``partial`` is None).
    partial : {"good", "bad", "skip"} or None, default=None
        How to count 'partly' results; None takes the project's setting, else "good".
    library : Library or None
        Used to add a warning when compilations disagree for a tested solvent.
    method : {"classic", "graded"}, default="classic"
        Hansen's desirability fit, or the graded (probabilistic) boundary of
        :mod:`solsphere.graded`, where 'partly' results are their own middle class
        unless ``partial`` says otherwise.

    Returns
    -------
    SphereFit or GradedFit
    """
    from solsphere.models.classic import SphereModel
    if method not in ("classic", "graded"):
        raise ValueError(f"method must be 'classic' or 'graded'; found {method!r}")
    if method == "graded":
        partial = partial or "ordinal"
    partial = partial or project.settings.get("partial") or "good"
    warnings = []
    for t in project.trials:
        s = getattr(t, "solvent", None)
        if s is not None and s.spread is not None and s.spread > SPREAD_WARN and t.source == "library":
            warnings.append(f"the compilations disagree by {s.spread:.1f} MPa½ for {t.name} "
                            f"(line {t.line}); its coordinates are less certain")
    if method == "graded":
        from solsphere.models.graded import GradedModel
        result = GradedModel(partial=partial, seed=seed).fit(project.trials).result_
        result.warnings.extend(warnings)
        return result
    model = SphereModel(partial=partial, seed=seed).fit(project.trials, warnings=warnings)
    return model.result_


def candidate_pool(library, shelf: str | None = None, exclude=(), min_flash_point=None,
                   max_boiling_point=None, exclude_carcinogens: bool = False,
                   min_boiling_point=None, min_exposure_limit=None, restricted: str | None = None,
                   liquid_only: bool | None = None, pool: str = "liquids"):
    """The solvents to rank or blend: the library's liquids, the curated common solvents
    or a user's shelf, filtered.

    Parameters
    ----------
    library : Library
    shelf : str or None
        A shelf file (the user's solvents); None means the library, per ``pool``.
    exclude : iterable of str
        Names, CAS numbers or abbreviations to leave out.
    min_flash_point, max_boiling_point, min_boiling_point : float or None
        Limits [°C]; a solvent whose value is unknown does not pass an active limit.
        For blends a minimum flash point on every component is the conservative rule:
        for ideal mixtures the blend's flash point is not below its lowest component's,
        so requiring each component to pass keeps the blend at or above the limit
        (non-ideal blends can flash lower: see :mod:`solsphere.flash`).
    exclude_carcinogens : bool
        Leave out solvents with any carcinogen classification.
    min_exposure_limit : float or None
        Leave out solvents whose 8-hour exposure limit (TWA) is below this [ppm]; a
        solvent with no exposure-limit data is kept (most of the library has none).
    restricted : str or None
        A file listing restricted solvents (column ``solvent``), all left out.
    liquid_only : bool or None
        Keep only liquids at 25 °C; None means yes for the library, no for a shelf.
    pool : {"liquids", "common"}, default="liquids"
        Without a shelf: every compound of the library (its liquids, with
        ``liquid_only``), or only those on the curated list of common solvents
        (:meth:`Library.common`; reagents left out). A shelf overrides it.

    Returns
    -------
    pool : list of Solvent
    filters : dict
        What was applied, for the record.
    """
    from solsphere.library.pools import POOLS
    from solsphere.library.table import Library
    from solsphere.io.shelf import read_shelf
    if pool not in POOLS:
        raise ValueError(f"pool must be one of {', '.join(map(repr, POOLS))}; found {pool!r}")
    common = pool == "common" and not shelf
    filters = {"pool": shelf or ("common solvents" if common else "library liquids"),
               "exclude": list(exclude),
               "min_flash_point": min_flash_point, "max_boiling_point": max_boiling_point,
               "min_boiling_point": min_boiling_point, "min_exposure_limit": min_exposure_limit,
               "exclude_carcinogens": exclude_carcinogens, "restricted": restricted}
    if shelf:
        base = Library.from_records(read_shelf(shelf, library))
    else:
        base = library.common() if common else library
    if liquid_only is None:
        liquid_only = not shelf
    # a shelf's own solvents by their shelf names; everything else through the full
    # library, so abbreviations (MEK) work on shelves too
    names = {((base.find(n) if shelf else None) or library.lookup(n)).name for n in exclude}
    if restricted:
        banned = {s.name for s in read_shelf(restricted, library)}
        filters["restricted_names"] = sorted(banned)
        names |= banned
    pool = base.select(liquid_only=liquid_only, min_flash_point=min_flash_point,
                       max_boiling_point=max_boiling_point,
                       exclude_carcinogens=exclude_carcinogens, exclude=())
    pool = [s for s in pool if s.name not in names]
    if min_boiling_point is not None:
        pool = [s for s in pool if s.boiling_point is not None and s.boiling_point >= min_boiling_point]
    if min_exposure_limit is not None:
        pool = [s for s in pool if s.twa_ppm is None or s.twa_ppm >= min_exposure_limit]
    if not pool:
        raise InputError("no candidate solvent is left after the filters "
                         f"({_describe(filters)}).", file=shelf,
                         hint="relax --min-flash-point / --max-boiling-point / "
                              "--min-boiling-point / --min-exposure-limit / --exclude / "
                              "--restricted, or add solvents to the shelf"
                              + (" (or use --pool liquids)" if common else ""))
    return list(pool), filters


def _describe(filters: dict) -> str:
    parts = [f"{k}={v}" for k, v in filters.items() if v not in (None, False, [], ())]
    return ", ".join(parts) or "none"


def share_page(project, fit, library, title: str | None = None, n_blends: int = 5) -> str:
    """The standalone HTML page for a fitted project: 3D map (with the best blends and
    their drying paths), the projections, and the reports."""
    from solsphere.report import figures
    from solsphere.design.pairs import screen_blends
    from solsphere.design.ranking import CAUTION, rank_solvents
    pool, _ = candidate_pool(library)
    tested = set(project.trials.names)
    centre = (fit.dD, fit.dP, fit.dH)
    ranking = rank_solvents(pool, centre, fit.R0, tested=tested)
    blends = screen_blends(pool, centre, fit.R0, top=n_blends)
    bl = add_safety_and_drying(blends, pool, centre, fit.R0, drying=True)
    paths = [{"points": b["drying"]["points"],
              "label": "drying: " + " + ".join(b["solvents"])}
             for b in bl if b.get("drying")]
    fd = fit.to_dict()
    fig3 = figures.map3d(fd, untried=ranking.to_dict()["solvents"], blends=bl, paths=paths)
    fig2 = figures.projections(fd, blends=bl)
    top = rank_solvents(pool, centre, fit.R0, top=15, tested=tested)
    title = title or f"Hansen solubility sphere — {project.trials.source}"
    return figures.share_html(fig3, fig2, str(fit), title=title, caution=CAUTION,
                              extra_sections=[("Untried solvents nearest the sphere", str(top)),
                                              ("Blends", str(blends) + blend_notes(bl, True))])


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

    from solsphere import hansen as hsp
    temperature_C = check_temperature(temperature_C)
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
                          temperature_C: float = 25.0, rank_by: str = "red",
                          top: int | None = None):
    """Attach the blend flash-point estimate (and, asked for, the drying path) to each blend.

    Each blend's dict (``screen.to_dict()``) then carries ``flash_point_estimate``,
    ``price_per_litre`` (Σ volume fraction × price, when the shelf gives every price) and,
    with ``drying``, ``drying`` (the :class:`~solsphere.drying.DryingPath` dict).
    ``rank_by`` re-sorts: "red" (as screened), "drying" (those that stay inside longest
    first) or "cost" (blends inside the sphere, cheapest first, those whose components may
    not mix after the others; then the rest by RED).
    ``screen.blends`` is put in the same order and cut to ``top``.

    Returns
    -------
    list of dict
        The blends as dicts, in the final order.
    """
    from solsphere.design.pairs import may_not_mix
    from solsphere.mixtures.drying import drying_path, volume_to_mole_fractions
    from solsphere.mixtures.flash import blend_flash_point, vapour_pressure
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
        d["may_not_mix"] = may_not_mix(comps)
        prices = [s.price for s in comps]
        d["price_per_litre"] = (float(sum(f * p for f, p in zip(b.volume_fractions, prices)))
                                if all(p is not None for p in prices) else None)
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
        out.append((b, d))
    if rank_by == "drying":
        if not drying:
            raise InputError("ranking by drying needs the drying simulation.",
                             file="<command line>", hint="add --drying")
        out.sort(key=lambda bd: -(bd[1]["drying_inside_until"]
                                  if bd[1]["drying_inside_until"] is not None else -1.0))
    elif rank_by == "cost":
        if not any(d["price_per_litre"] is not None for _, d in out):
            raise InputError("no blend has a price: ranking by cost needs a shelf file with "
                             "a price column.", file="<command line>",
                             hint="give --candidates SHELF with columns solvent,price")
        out.sort(key=lambda bd: (bd[1]["red"] > 1.0, bd[1]["may_not_mix"],
                                 bd[1]["price_per_litre"] is None,
                                 bd[1]["price_per_litre"] or 0.0, bd[1]["red"]))
    elif rank_by != "red":
        raise ValueError(f"rank_by must be 'red', 'drying' or 'cost'; found {rank_by!r}")
    out = out[:top] if top is not None else out
    screen.blends = [b for b, _ in out]
    return [d for _, d in out]


def blend_notes(blends: list[dict], drying: bool) -> str:
    """Flash-point estimates and drying outcomes, one line per blend."""
    lines = []
    for k, b in enumerate(blends, 1):
        label = " + ".join(f"{100 * f:.0f}% {n}" for n, f in zip(b["solvents"], b["volume_fractions"]))
        parts = []
        if b.get("price_per_litre") is not None:
            parts.append(f"price ≈ {b['price_per_litre']:.2f} per litre")
        fpe = b.get("flash_point_estimate") or {}
        if fpe.get("estimate") is not None:
            low = fpe.get("conservative")
            parts.append(f"flash point ≈ {fpe['estimate']:.0f} °C (ideal-mixture estimate"
                         + (f"; lowest component {low:.0f} °C)" if low is not None else ")"))
        if drying:
            d = b.get("drying")
            if d is None:
                parts.append("drying: no vapour-pressure data")
            elif d.get("leaves_at") is None:
                parts.append(f"drying: stays inside to dryness ({d.get('last_component')} left last)")
            else:
                parts.append(f"drying: leaves the sphere at {100 * d['leaves_at']:.0f}% evaporated")
        if parts:
            lines.append(f"  {k}. {label}: " + "; ".join(parts))
    if not lines:
        return ""
    return "\n\nFlash point and drying (estimates, not measurements):\n" + "\n".join(lines)
