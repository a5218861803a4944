"""The share page: a report a colleague understands, in one self-contained HTML file.

:func:`build_share` gathers what the page says, from the same workflows as the command
line and the app (nothing is recomputed or re-ranked here):

- a plain-language summary: the sphere's centre and R0 (with 95 % intervals when
  resampled), what RED means, how well the sphere explains the results, the model used
  and why;
- the tested solvents (outcome, RED, whether the sphere agrees, the bench note);
- untried solvents from the pool (:func:`solsphere.workflows.candidate_pool`, the working
  pool by default) ranked by :func:`solsphere.design.ranking.rank_solvents`;
- blends from :func:`solsphere.workflows.design_blends` in its documented order
  (:mod:`solsphere.design.ordering`), with the estimated flash point, phases and drying;
- optionally replacements for a solvent (:func:`solsphere.workflows.find_replacements`);
- hazard facts beside every recommendation (:mod:`solsphere.report.facts`) and the
  cautions.

:meth:`ShareReport.html` renders it (:mod:`solsphere.report.page`); :func:`share_page`
does both.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from solsphere.design.ordering import ORDER_TEXT
from solsphere.design.ranking import rank_solvents
from solsphere.formatting import blend_label, num, pct, short
from solsphere.io.trials import DISPLAY
from solsphere.library.hazards import LISTING_CAUTION
from solsphere.report import facts, figures, page
from solsphere.results import Result
from solsphere.workflows import candidate_pool, design_blends, find_replacements

__all__ = ["ShareReport", "build_share", "share_page", "CAUTIONS", "RED_TEXT"]

#: The cautions every report carries (our wording).
CAUTIONS = (
    "Read the safety data sheet of every solvent before you use it; the hazard facts on "
    "this page are a summary, not a substitute for it.",
    "Work with ventilation (a fume hood or local extraction) and suitable protection; keep "
    "ignition sources away from flammable liquids.",
    "Local regulations and licensed practice take precedence over anything on this page.",
    "Predictions are guides, not guarantees: confirm every recommendation at the bench. "
    "Flash points of blends are estimates on the safe side, not measurements.",
    "Exposure limits differ between jurisdictions; each limit here names the table it "
    "comes from. " + LISTING_CAUTION,
)

#: What RED means, in plain words (Hansen's definition; the borderline band is common
#: practice, no source).
RED_TEXT = ("RED (relative energy difference) is a solvent's Hansen distance Ra from the "
            "centre divided by R0. Below 1 the solvent lies inside the sphere and is "
            "predicted to dissolve the material; above 1 it is predicted not to. Between "
            "about 0.9 and 1.1 the prediction is borderline: test it.")


#: The column of blends and pairs that holds every component's listings.
LISTINGS = "carcinogen / reprotoxic / corrosive"


def _cell(x, fmt: str = "{:.2f}") -> str:
    return num(x, fmt)


@dataclass
class ShareReport(Result):
    """What the share page says, as data (``to_dict``) and as a page (:meth:`html`).

    Attributes
    ----------
    title, material, notes, source : str or None
        The page title, the material's name, the user's notes and the results file.
    paragraphs : list of str
        Plain-language paragraphs.
    tested, untried, blends : list of dict
        Table rows (column name -> text, or a list of lines).
    replacement : dict or None
        ``{"target", "singles", "pairs", "left_out"}`` when a replacement was asked for.
    pool_text : str
        Which candidates were used (and what a limit left out for lack of data).
    blend_notes : list of str
        The blend workflow's notes (order, shortlist, limits).
    cautions : list of str
    technical : str
        The full fit report (shown folded).
    fit : dict
        The fit's ``to_dict()``.
    """

    title: str
    material: str | None
    notes: str | None
    source: str | None
    paragraphs: list
    tested: list
    untried: list
    blends: list
    replacement: dict | None
    pool_text: str
    blend_notes: list
    cautions: list
    technical: str
    fit: dict
    figure_map: Any = field(default=None, repr=False)
    figure_planes: Any = field(default=None, repr=False)
    figure_ladder: Any = field(default=None, repr=False)

    rows_key = "tested"

    def to_dict(self) -> dict:
        return {"title": self.title, "material": self.material, "notes": self.notes,
                "source": self.source, "summary": list(self.paragraphs),
                "tested": self.tested, "untried": self.untried, "blends": self.blends,
                "replacement": self.replacement, "pool": self.pool_text,
                "blend_notes": list(self.blend_notes), "cautions": list(self.cautions)}

    def __str__(self) -> str:
        out = [self.title]
        if self.material:
            out.append(f"Material: {self.material}")
        out += [""] + list(self.paragraphs) + ["", "Cautions:"]
        out += [f"  - {c}" for c in self.cautions]
        return "\n".join(out)

    def figures(self) -> dict:
        """The page's figures by name: ``{"map": 3D map, "planes": 2D projections,
        "ladder": the RED ladder}``."""
        return {"map": self.figure_map, "planes": self.figure_planes,
                "ladder": self.figure_ladder}

    def figure_for_image(self, name: str = "map"):
        """A copy of a figure laid out for a static image: the legend under the plot, the
        size left to the image's width and height."""
        fig = self.figures()[name]
        out = type(fig)(fig)
        out.update_layout(legend={"orientation": "h", "x": 0.0, "y": -0.02,
                                  "yanchor": "top"}, uirevision=None)
        return out

    def html(self) -> str:
        """The self-contained page (plotly.js inlined, opens offline)."""
        return page.render(self)


def _material_of(project) -> str | None:
    for value in (getattr(project.trials, "material", None),
                  (project.settings or {}).get("material")):
        if isinstance(value, str) and value.strip():
            return value.strip()
    return None


def _model_text(fit: dict, partial: str) -> str:
    counted = {"good": "counted as dissolving", "bad": "counted as not dissolving",
               "skip": "left out", "ordinal": "kept as their own middle class"}
    part = (f" 'Partly' results were {counted.get(partial, partial)}."
            if fit.get("n_partial") else "")
    if fit.get("method") == "graded" or "width" in fit:
        return ("Model: a graded boundary (the sphere with a fitted width of "
                f"{short(fit.get('width'))} MPa½ over which dissolving becomes unlikely), "
                "chosen on the command line. It treats results near the boundary as "
                "uncertain rather than as errors, and gives probabilities." + part)
    return ("Model: Hansen's classic sphere, fitted with the desirability function (the "
            "sphere that holds the solvents that dissolve the material and keeps out those "
            "that do not, as tightly as the results allow). It is the standard model of "
            "the field, needs only yes / no results, and is the default here; a graded "
            "boundary can be asked for when many results sit near the surface." + part)


def _summary(fit: dict, bootstrap, material: str | None) -> list[str]:
    what = material or "the material"
    n_agree = sum(1 for r in fit.get("table", []) if r.get("agrees"))
    n = sum(1 for r in fit.get("table", []) if r.get("agrees") is not None)
    text = [f"The sphere of {what}: centre δD {fit['dD']:.1f}, δP {fit['dP']:.1f}, "
            f"δH {fit['dH']:.1f} MPa½, radius R0 {fit['R0']:.1f} MPa½, fitted to "
            f"{fit.get('n_trials', n)} bench results ({fit.get('n_good', 0)} dissolves, "
            f"{fit.get('n_partial', 0)} partly, {fit.get('n_bad', 0)} does not)."]
    iv = getattr(bootstrap, "intervals", None)
    if iv:
        def rng(k):
            lo, hi = iv[k]
            return f"{lo:.1f} to {hi:.1f}"
        text.append(f"95 % intervals from {bootstrap.n_bootstrap} resamples of the results: "
                    f"δD {rng('dD')}, δP {rng('dP')}, δH {rng('dH')}, R0 {rng('R0')} MPa½.")
    else:
        text.append("No intervals were computed (add --bootstrap 1000 to see how well the "
                    "results pin the sphere down).")
    text.append(RED_TEXT)
    misfits = [r["name"] for r in fit.get("table", []) if r.get("agrees") is False]
    agree = f"The sphere agrees with {n_agree} of the {n} results it was fitted to."
    if misfits:
        agree += (" It disagrees with " + ", ".join(misfits) + ": check these results "
                  "first (a slow dissolution, an impure solvent, or a sphere that is not "
                  "the whole story).")
    text.append(agree)
    text.append(_model_text(fit, fit.get("partial", "good")))
    for w in fit.get("warnings") or []:
        text.append(f"Note: {w}")
    return text


def _tested_rows(project, fit: dict) -> list[dict]:
    trials = list(project.trials)
    table = fit.get("table", [])
    rows = []
    for k, r in enumerate(table):
        t = trials[k] if len(trials) == len(table) else None
        name = r["name"]
        typed = (t.text or "").strip() if t is not None else ""
        if typed and " ".join(typed.split()).casefold() != name.casefold():
            name = f"{name} (typed: {typed})"
        predicted = r.get("predicted") or ""
        rows.append({"solvent": name, "outcome": DISPLAY.get(r.get("outcome"), r.get("outcome")),
                     "RED": _cell(r.get("red")),
                     "sphere predicts": {"inside": "dissolves", "outside": "does not"}.get(
                         predicted, predicted),
                     "agrees": {True: "yes", False: "NO (misfit)"}.get(
                         r.get("agrees"), "not counted"),
                     "note": (t.note or "") if t is not None else "",
                     "_outcome": r.get("outcome"), "_agrees": r.get("agrees")})
    return rows


def _untried_rows(ranking) -> list[dict]:
    with_p = any(r.p_good is not None for r in ranking.solvents)
    rows = []
    for r in ranking.solvents:
        s = r.solvent
        row = {"solvent": s.name, "RED": f"{r.red:.2f}"}
        if with_p:
            row["p_good"] = _cell(r.p_good)
        row.update(facts.hazard_cells(s))
        row["notes"] = facts.caveats(s)
        rows.append(row)
    return rows


def _solvent(name: str, by_name: dict, library):
    return by_name.get(name) or library.find(name)


def _per_component(names, by_name, library, cell) -> list[str] | str:
    """One line per component ("name: value"); one word when every component says the
    same (e.g. "none listed"), so the table stays narrow."""
    values = []
    for n in names:
        s = _solvent(n, by_name, library)
        values.append(cell(s) if s is not None else facts.NO_DATA)
    if len(set(values)) == 1:
        return values[0] if len(values) == 1 else f"{values[0]} (all)"
    return [f"{n}: {v}" for n, v in zip(names, values)]


def _flash_blend(b: dict) -> str:
    fpe = b.get("flash_point_estimate") or {}
    if fpe.get("estimate") is None:  # no blend estimate: the lowest component still counts
        low = fpe.get("conservative")
        return facts.NO_DATA if low is None else f"no estimate; lowest component {low:.0f} °C"
    text = f"≈ {fpe['estimate']:.0f} °C (estimate)"
    if fpe.get("minimum_flash_point"):
        text += "; BELOW its lowest-flashing component"
    return text


def _drying_blend(b: dict) -> str:
    d = b.get("drying")
    if d is None:
        return "no vapour-pressure data"
    if d.get("leaves_at") is None:
        last = d.get("last_component")
        return "stays inside to dryness" + (f" ({last} evaporates last)" if last else "")
    return f"leaves the sphere at {100 * d['leaves_at']:.0f} % evaporated"


def _blend_rows(blends: list[dict], by_name: dict, library) -> list[dict]:
    rows = []
    for b in blends:
        win = b.get("inside_window")
        crit = b.get("criteria") or {}
        if win and len(b["solvents"]) == 2:
            window = ("any ratio" if win[0] <= 0.0 and win[1] >= 1.0 else
                      f"{pct(win[0])}–{pct(win[1])} {b.get('window_solvent') or ''}".strip())
        elif crit.get("robustness") is not None:
            window = f"margin {crit['robustness']:.2f}"
        else:
            window = "—"
        rows.append({
            "blend (volume %)": blend_label(b["solvents"], b["volume_fractions"]),
            "RED": f"{b['red']:.2f}",
            "inside range": window,
            "phases": ["one phase" if b.get("phases", 1) == 1 else "MAY NOT MIX (two phases)"]
                      + [f for f in b.get("flags") or [] if "may not mix" in f],
            "flash point": _flash_blend(b),
            "drying": _drying_blend(b),
            "exposure limit (8 h)": _per_component(b["solvents"], by_name, library,
                                                   facts.exposure_text),
            # carcinogen, reprotoxic and corrosive / toxic in one column: a line per
            # component would otherwise make the table wider than a printed page
            LISTINGS: _per_component(b["solvents"], by_name, library, facts.listings_text),
        })
    return rows


#: Short hazard names for the "versus old" cells.
_SHORT = {"carcinogen": "carc.", "reprotoxic": "repr.", "corrosive_toxic": "corr./tox.",
          "flammability": "flam."}


def _replacement(result, by_name: dict, library) -> dict:
    d = result.to_dict()
    singles = []
    for s, row in zip(result.singles, d["singles"]):
        vs = row.get("versus_old") or {}
        item = {"solvent": s.solvent.name, "Ra to old": f"{s.Ra:.1f}"}
        if s.red is not None:
            item["RED (material)"] = f"{s.red:.2f}"
        item["versus old"] = [f"{_SHORT.get(k, k)} {v}" for k, v in vs.items()]
        cells = facts.hazard_cells(s.solvent)
        cells.pop("boiling point")
        cells.pop("GHS flammability")  # said in "versus old" and by the flash point
        item.update(cells)
        item["notes"] = facts.caveats(s.solvent)
        singles.append(item)
    pairs = []
    for p in d["pairs"]:
        pairs.append({"blend (volume %)": blend_label(p["solvents"], p["volume_fractions"]),
                      "Ra to old": f"{p['ra']:.1f}",
                      "phases": ("one phase" if (p.get("criteria") or {}).get("one_phase", True)
                                 else "MAY NOT MIX (two phases)"),
                      "flash point": _per_component(p["solvents"], by_name, library,
                                                    facts.flash_text),
                      "exposure limit (8 h)": _per_component(p["solvents"], by_name, library,
                                                             facts.exposure_text),
                      LISTINGS: _per_component(p["solvents"], by_name, library,
                                               facts.listings_text)})
    t = result.target
    return {"target": t.name, "target_facts": facts.hazard_cells(t),
            "singles": singles, "pairs": pairs, "left_out": d.get("left_out") or {},
            "allow_worse": result.allow_worse}


def pool_text(filters: dict) -> str:
    """Which candidates were used, and what a limit left out for lack of data."""
    label = filters.get("pool", "working solvents")
    if label == "working solvents":
        text = ("Candidates: the working solvents (our curated list of solvents in use in "
                "industry and the lab; no reagents).")
    elif label == "library liquids":
        text = ("Candidates: every liquid in the library, reagents, monomers and "
                "intermediates included (asked for with --pool all).")
    else:
        text = f"Candidates: {label}."
    for what, names in (filters.get("left_out_for_lack_of_data") or {}).items():
        why = ("with no flash point to compare (not flammable by the data)"
               if what == "not_flammable" else f"for lack of {what.replace('_', ' ')} data")
        text += (f" Left out {why} ({len(names)}): " + ", ".join(names[:15])
                 + (" …" if len(names) > 15 else "") + ".")
    return text


def build_share(project, fit, library, *, title: str | None = None,
                material: str | None = None, notes: str | None = None, top: int = 20,
                n_blends: int = 5, components: int = 2, rank_by: str = "hazard",
                diverse: bool = True, max_fraction=None, min_fraction=None,
                replace: str | None = None, n_pairs: int = 5, allow_worse: bool = False,
                bootstrap=None, **pool_options) -> ShareReport:
    """Everything the share page says, from the shared workflows.

    Parameters
    ----------
    project : Project
        The trials (their typed names and notes appear in the tested-solvents table).
    fit : fit result
        The fitted sphere of ``project``.
    library : Library
    title : str or None, default=None
        The page title; None: "Solubility report" with the material's name.
    material : str or None, default=None
        The material's name; None takes the project's, if it has one.
    notes : str or None, default=None
        Free text shown under the title (never parsed).
    top : int, default=20
        Untried solvents to list (and single replacements).
    n_blends : int, default=5
        Blends to list (0: none), in :func:`solsphere.workflows.design_blends`' order.
    components, rank_by, diverse, max_fraction, min_fraction
        As :func:`solsphere.workflows.design_blends`.
    replace : str or None, default=None
        A solvent to find replacements for (from the same pool), with ``n_pairs`` pairs
        and ``allow_worse`` as :func:`solsphere.workflows.find_replacements`.
    bootstrap : Bootstrap or None, default=None
        Resampled spheres: 95 % intervals in the summary and ``p_good`` per solvent.
    **pool_options
        As :func:`solsphere.workflows.candidate_pool` (``pool``, ``shelf``, ``exclude``,
        ``min_flash_point`` ...): the working pool by default.

    Returns
    -------
    ShareReport
    """
    material = (material or "").strip() or _material_of(project)
    pool, filters = candidate_pool(library, **pool_options)
    by_name = {s.name: s for s in pool}
    tested = list(project.trials.names) + [t.cas for t in project.trials if t.cas]
    centre = (fit.dD, fit.dP, fit.dH)
    T = pool_options.get("temperature")
    T = 25.0 if T is None else T
    ranking = rank_solvents(pool, centre, fit.R0, top=top, tested=tested, filters=filters,
                            temperature_C=T, bootstrap=bootstrap)
    everyone = rank_solvents(pool, centre, fit.R0, tested=tested)
    blend_rows, notes_b, blend_dicts = [], [], []
    if n_blends:
        design = design_blends(fit, library, components=components, top=n_blends,
                               rank_by=rank_by, drying=True, max_fraction=max_fraction,
                               min_fraction=min_fraction, diverse=diverse, **pool_options)
        blend_dicts = design.blends
        blend_rows = _blend_rows(blend_dicts, by_name, library)
        notes_b = list(design.notes)
        if rank_by != "red" and ORDER_TEXT.format(priority=rank_by) not in notes_b:
            notes_b.insert(0, ORDER_TEXT.format(priority=rank_by))
    replacement = None
    if replace:
        result = find_replacements(library, replace, fit=fit, top=top, n_pairs=n_pairs,
                                   allow_worse=allow_worse, **pool_options)
        replacement = _replacement(result, by_name, library)
    fd = fit.to_dict()
    paths = [{"points": b["drying"]["points"],
              "label": "drying: " + " + ".join(b["solvents"])}
             for b in blend_dicts if b.get("drying")]
    fig3 = figures.map3d(fd, untried=everyone.to_dict()["solvents"], blends=blend_dicts,
                         paths=paths)
    # on the page the legend goes under the scene (beside it, the long drying-path
    # labels take half the width) and the camera is nearer
    fig3.update_layout(legend={"orientation": "h", "x": 0.0, "y": -0.02, "yanchor": "top"},
                       margin={"l": 0, "r": 0, "t": 10, "b": 0}, height=700,
                       scene_camera={"eye": {"x": 1.15, "y": 0.95, "z": 0.6}})
    fig2 = figures.projections(fd, blends=blend_dicts)
    ladder = figures.red_ladder(fd, height=420)
    source = str(project.trials.source or "") or None
    if not title:
        title = f"Solubility report: {material}" if material else "Solubility report"
    return ShareReport(
        title=title, material=material, notes=(notes or "").strip() or None,
        source=source, paragraphs=_summary(fd, bootstrap, material),
        tested=_tested_rows(project, fd), untried=_untried_rows(ranking),
        blends=blend_rows, replacement=replacement, pool_text=pool_text(filters),
        blend_notes=notes_b, cautions=list(CAUTIONS), technical=str(fit), fit=fd,
        figure_map=fig3, figure_planes=fig2, figure_ladder=ladder)


def share_page(project, fit, library, title: str | None = None, n_blends: int = 5,
               **options) -> str:
    """The standalone HTML page for a fitted project (:func:`build_share`, rendered)."""
    return build_share(project, fit, library, title=title, n_blends=n_blends,
                       **options).html()


def source_name(report: ShareReport) -> str:
    """The results file's name without folders, for the page's heading line."""
    return Path(report.source).name if report.source else ""
