"""The steps the command line, the app and a notebook share.

Each front end parses its own input (options, form fields, arguments) and then calls one
of these functions; none re-implements a rule that another applies:

- :func:`fit_project` — a project's trials fitted (classic or graded) with its settings;
- :func:`candidate_pool` — the one pool rule: library liquids, the curated common solvents,
  a shelf or ticked solvents, filtered (:func:`solsphere.library.pools.apply_filters`),
  restricted solvents removed, shifted to a process temperature;
- :func:`parse_fraction_limits` — the one reader of per-solvent share limits;
- :func:`design_blends` — the one blend workflow (pairs or triples, limits, flash point,
  price, drying, ranking order);
- :func:`find_replacements` — replacements for a solvent from a pool.

Errors are raised in neutral words (:class:`~solsphere.errors.InputError` with ``setting``
naming the keyword argument); each front end adds its own place and hint.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Any, Iterable

import numpy as np

from solsphere import hansen as hsp
from solsphere.design.ordering import MAX_USES, ORDER_TEXT, blend_rows, order_blends
from solsphere.design.pairs import screen_blends
from solsphere.design.recommend import rank_pair_blends
from solsphere.design.ranking import CAUTION
from solsphere.design.substitution import Substitution, find_substitutes
from solsphere.design.triples import screen_triples, triple_shortlist
from solsphere.errors import InputError
from solsphere.formatting import blend_label, split_names
from solsphere.io.shelf import read_shelf
from solsphere.library.pools import apply_filters, pool_name
from solsphere.library.table import Library
from solsphere.mixtures.activity import ActivityModel
from solsphere.mixtures.drying import drying_paths
from solsphere.mixtures.flash import blend_flash_results
from solsphere.mixtures.phases import blend_phases
from solsphere.mixtures.vapour import VapourPressures
from solsphere.models.base import SPREAD_WARN  # noqa: F401  (re-exported for callers)
from solsphere.models.classic import SphereModel
from solsphere.models.comparison import compare_or_explain
from solsphere.models.graded import GradedSphereModel
from solsphere.results import Result
from solsphere.limits import check as check_limit, check_temperature

__all__ = ["fit_project", "candidate_pool", "at_temperature", "parse_fraction_limits",
           "design_blends", "BlendDesign", "add_safety_and_drying", "blend_notes",
           "find_replacements", "RANK_CHOICES", "DEFAULT_RANK", "RERANK_POOL", "CAUTION",
           "resolved_names"]

#: Orders a blend list can take.
RANK_CHOICES = ("hazard", "cost", "drying", "evaporation", "red")
#: The blend order every front end starts with (the CLI's --rank-by default, the app's
#: Blends screen): feasible, robust, then least hazardous.
DEFAULT_RANK = "hazard"
#: With ranking by cost or drying, the blends nearest the centre that are looked at (the
#: inside ones among them are re-ranked): bounded work whatever the pool.
RERANK_POOL = 500


# ----------------------------------------------------------------------------- fit

def estimate_structure(smiles: str):
    """Estimated coordinates of a shelf solvent from its SMILES (the ``structure`` of
    :func:`solsphere.io.shelf.read_shelf`); ImportError without the structure extra."""
    from solsphere.estimate.model import estimate_one  # deferred: loads RDKit (optional)

    return estimate_one(smiles)

def fit_project(project, partial: str | None = None, library=None, seed: int = 0,
                method: str = "classic", compare: bool = False):
    """Fit the sphere to a project's trials.

    Parameters
    ----------
    project : Project
        Trials and settings (``settings["partial"]`` is used when ``partial`` is None).
    partial : {"good", "bad", "skip"} or None, default=None
        How to count 'partly' results; None takes the project's setting, else "good".
    library : Library or None
        Unused (kept for callers that pass it); the trials carry their library records.
    method : {"classic", "graded"}, default="classic"
        Hansen's desirability fit, or the graded (probabilistic) boundary, where 'partly'
        results are their own middle class unless ``partial`` says otherwise.
    compare : bool, default=False
        Also compare the classic and graded fits and the 'partly' readings on held-back
        results (:func:`solsphere.models.comparison.compare_or_explain`; about a second
        on the 35-result demo) and attach it as ``model_comparison``.

    Returns
    -------
    SphereFitResult or GradedFitResult
        With the trials' reading warnings and the "compilations disagree" warnings.
    """
    if method not in ("classic", "graded"):
        raise ValueError(f"method must be 'classic' or 'graded'; found {method!r}")
    if method == "graded":
        result = GradedSphereModel(partial=partial or "ordinal", seed=seed).fit(
            project.trials).result_
    else:
        partial = partial or project.settings.get("partial") or "good"
        result = SphereModel(partial=partial, seed=seed).fit(project.trials).result_
    if compare:
        result.model_comparison = compare_or_explain(project.trials)
    return result


def resolved_names(trials) -> list[str]:
    """``"PM acetate → 1-methoxy-2-propyl acetate"`` for each library solvent typed
    otherwise than the library's name (once each, in table order): what the CLI's fit
    report and the app both show.

    Parameters
    ----------
    trials : Trials
    """
    out = []
    for t in trials:
        if (t.source.startswith("library")
                and " ".join(t.text.split()).casefold() != t.name.casefold()):
            line = f"{t.text.strip()} → {t.name}"
            if line not in out:
                out.append(line)
    return out


# ----------------------------------------------------------------------------- pool
def candidate_pool(library, shelf: str | None = None, exclude=(), min_flash_point=None,
                   max_boiling_point=None, exclude_carcinogens: bool = False,
                   min_boiling_point=None, min_exposure_limit=None, restricted: str | None = None,
                   liquid_only: bool | None = None, pool: str = "working",
                   ticked: Iterable[str] | None = None, temperature: float | None = None,
                   limits: bool = True):
    """The solvents to rank, blend or test: the one pool rule of every front end.

    Parameters
    ----------
    library : Library
    shelf : str or None
        A shelf file (the user's solvents); it overrides ``pool``.
    exclude : iterable of str
        Names, CAS numbers or abbreviations to leave out.
    min_flash_point, max_boiling_point, min_boiling_point : float or None
        Limits [°C]; a solvent whose value is unknown does not pass an active limit.
        For blends the limit applies to every component; non-ideal blends can still flash
        lower (:mod:`solsphere.mixtures.flash`), which the blend workflow flags.
    exclude_carcinogens : bool
        Leave out solvents with any carcinogen classification.
    min_exposure_limit : float or None
        Leave out solvents whose 8-hour exposure limit (TWA) is below this [ppm]; a
        solvent with no exposure-limit data is kept (most of the library has none).
    restricted : str or None
        A file listing restricted solvents (column ``solvent``), all left out.
    liquid_only : bool or None
        Keep only liquids at 25 °C; None means yes for the library, no for a shelf or
        ticked solvents.
    pool : {"working", "all"}, default="working"
        Without a shelf or ticked solvents: the curated working solvents
        (:meth:`Library.working`; reagents left out), or every library liquid (reagents
        included). The older names "common" and "liquids" are accepted.
    ticked : iterable of str or None
        Library solvents picked by name (at least two); overrides ``pool``.
    temperature : float or None
        Process temperature [°C]: coordinates shifted there (:func:`at_temperature`).
    limits : bool, default=True
        False leaves ``min_flash_point`` and ``max_boiling_point`` to the caller (the blend
        screens apply them and record what each one removed), after checking that
        something passes them.

    Returns
    -------
    pool : list of Solvent
    filters : dict
        What was applied, for the record (and ``temperature_notes`` when shifted).

    Raises
    ------
    InputError
        Nothing left after the filters (``setting="filters"``), fewer than two ticked
        solvents (``setting="ticked"``), or an unknown name (``setting="exclude"``).
    """
    pool = pool_name(pool)  # ValueError for an unknown name
    ticked = list(ticked) if ticked is not None else None
    common = pool == "working" and not shelf and ticked is None
    if shelf:
        label = shelf
    elif ticked is not None:
        label = f"{len(ticked)} ticked solvents"
    else:
        label = "working solvents" if common else "library liquids"
    filters = {"pool": label, "exclude": list(exclude),
               "min_flash_point": min_flash_point, "max_boiling_point": max_boiling_point,
               "min_boiling_point": min_boiling_point, "min_exposure_limit": min_exposure_limit,
               "exclude_carcinogens": exclude_carcinogens, "restricted": restricted}
    if shelf:
        base = Library.from_records(read_shelf(shelf, library, structure=estimate_structure))
    elif ticked is not None:
        base = Library.from_records([library.lookup(n) for n in ticked])
        if len(base) < 2:
            raise InputError("at least two ticked solvents are needed to combine.",
                             setting="ticked")
    else:
        base = library.working() if common else library
    if liquid_only is None:
        liquid_only = not shelf and ticked is None
    # a shelf's own solvents by their shelf names; everything else through the full
    # library, so abbreviations (MEK) work on shelves too
    try:
        names = {((base.find(n) if shelf else None) or library.lookup(n)).name
                 for n in exclude}
    except InputError as exc:
        exc.setting = exc.setting or "exclude"
        raise
    if restricted:
        banned = {s.name for s in read_shelf(restricted, library)}
        filters["restricted_names"] = sorted(banned)
        names |= banned
    kept = base.select(liquid_only=liquid_only, exclude_carcinogens=exclude_carcinogens).records
    checked = apply_filters(kept, exclude_names=names, min_flash_point=min_flash_point,
                            max_boiling_point=max_boiling_point,
                            min_boiling_point=min_boiling_point,
                            min_exposure_limit=min_exposure_limit)
    from_filter = checked.kept
    # never a silent drop: what a limit left out for lack of data is listed
    no_fp = checked.removed.get("removed_unknown_flash_point", [])
    by_name = {s.name: s for s in kept}
    not_flammable = [n for n in no_fp if str(by_name[n].sources.get("flash_point", "")
                                               ).startswith("none")]
    no_data = {"flash_point": [n for n in no_fp if n not in not_flammable],
               "not_flammable": not_flammable,
               "boiling_point": (checked.removed.get("removed_unknown_boiling_point", [])
                                 + checked.removed.get("removed_unknown_boiling_point_min", []))}
    if any(no_data.values()):
        filters["left_out_for_lack_of_data"] = {k: v for k, v in no_data.items() if v}
    if not from_filter:
        raise InputError("no candidate solvent is left after the filters "
                         f"({describe_filters(filters)}).", file=shelf, setting="filters")
    solvents = from_filter if limits else apply_pool_filters(
        kept, names, None, None, min_boiling_point, min_exposure_limit)
    solvents, notes = at_temperature(solvents, temperature)
    if notes:
        filters["temperature"] = temperature
        filters["temperature_notes"] = notes
    return solvents, filters


def apply_pool_filters(solvents, names, min_flash_point, max_boiling_point, min_boiling_point,
                       min_exposure_limit) -> list:
    """:func:`solsphere.library.pools.apply_filters` with the pool's settings."""
    return apply_filters(
        solvents, exclude_names=names, min_flash_point=min_flash_point,
        max_boiling_point=max_boiling_point, min_boiling_point=min_boiling_point,
        min_exposure_limit=min_exposure_limit).kept


def describe_filters(filters: dict) -> str:
    """The active filters as ``key=value`` text, or "none"."""
    parts = [f"{k}={v}" for k, v in filters.items()
             if v not in (None, False, [], ()) and k != "left_out_for_lack_of_data"]
    return ", ".join(parts) or "none"


def at_temperature(pool, temperature_C: float | None, reference_C: float = 25.0):
    """The pool's coordinates shifted to a process temperature.

    Uses the Hansen–Beerbower relations (:func:`solsphere.hansen.shift_to_temperature`)
    with each solvent's thermal expansion coefficient from the library. A solvent without
    an expansion coefficient keeps its 25 °C values and is counted in the returned notes.
    The material's sphere is kept as fitted at the bench temperature (its own shift is
    unknown): the comparison is a guide, not a prediction at temperature.

    Returns
    -------
    pool : list of Solvent
    notes : list of str
    """
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


# ----------------------------------------------------------------------------- limits
def _share(text: str) -> tuple[str, str] | None:
    """Split 'NAME=SHARE', 'NAME: SHARE' or 'NAME SHARE' (linear time, no regex)."""
    item = text.strip()
    for sep in ("=", ":"):
        if sep in item:
            name, _, value = item.rpartition(sep)
            return name.strip(), value.strip()
    name, _, value = item.rpartition(" ")
    return (name.strip(), value.strip()) if name.strip() else None


def _has_share(text: str) -> bool:
    """True when ``text`` ends in a share after a name ("toluene=30%", "MEK 0.2")."""
    parts = _share(text)
    if not parts or not parts[0]:
        return False
    try:
        float(parts[1].rstrip("%").strip())
    except ValueError:
        return False
    return True


def _limit_items(items) -> list[str]:
    """The items of a limits text, split at commas, semicolons and new lines, except where
    a comma belongs to a name: "1,2-dichlorobenzene=10%, toluene 30" is two items."""
    out: list[str] = []
    for piece in split_names(items):
        if out and not _has_share(out[-1]):
            out[-1] = f"{out[-1]},{piece}"
        else:
            out.append(piece)
    return out


def parse_fraction_limits(items, library, names: Iterable[str] = (),
                          setting: str = "max_fraction") -> dict[str, float]:
    """Per-solvent volume-fraction limits: ``"toluene=0.3"``, ``"toluene=30%"``,
    ``"toluene 30"`` -> ``{"toluene": 0.3}``.

    ``items`` is a list of such texts or one comma-separated text. A share is a fraction
    (0 to 1) or a percentage (``30%``, or a number above 1 read as percent). Names are
    resolved through ``names`` (as typed, case-insensitive) or the library.

    >>> from solsphere.library.table import Solvent
    >>> lib = Library([Solvent("toluene", 18.0, 1.4, 2.0, cas="108-88-3")])
    >>> parse_fraction_limits(["toluene=30%"], lib), parse_fraction_limits("toluene 0.5", lib)
    ({'toluene': 0.3}, {'toluene': 0.5})
    >>> _limit_items("1,2-dichlorobenzene=10%, toluene 30; MEK:0.2")
    ['1,2-dichlorobenzene=10%', 'toluene 30', 'MEK:0.2']

    Raises
    ------
    InputError
        An item without a share, a share outside 0-100 %, or an unknown name, with
        ``setting`` naming the limit.
    """
    by_key = {n.casefold(): n for n in names}
    out: dict[str, float] = {}
    for item in _limit_items(items):
        parts = _share(item)
        value = None
        if parts and parts[0]:
            raw = parts[1]
            percent = raw.endswith("%")
            try:
                value = float(raw.rstrip("%").strip().replace(",", "."))
            except ValueError:
                value = None
        if value is None or value != value:
            raise InputError(f"{item[:80]!r} is not a solvent and a share (e.g. toluene=0.3 "
                             "or toluene=30%).", setting=setting)
        frac = value / 100.0 if (percent or value > 1.0) else value
        if not 0.0 <= frac <= 1.0:
            raise InputError(f"the share {raw[:20]} for {parts[0][:60]} is not between 0 and "
                             "100 %.", setting=setting)
        name = parts[0]
        try:
            key = by_key.get(name.casefold()) or library.lookup(name).name
        except InputError as exc:
            exc.setting = setting
            raise
        out[key] = frac
    return out


# ----------------------------------------------------------------------------- blends
@dataclass
class BlendDesign(Result):
    """Result of :func:`design_blends`: the screen, its blends with their flash point,
    price and drying facts in the final order, and notes about the run."""

    screen: Any
    blends: list
    notes: list = field(default_factory=list)
    components: int = 2
    rank_by: str = "red"
    drying: bool = False
    n_pool: int = 0
    ordered: Any = None     # RankedBlends (pairs in the documented order), when used

    rows_key = "blends"

    @property
    def n_screened(self) -> int:
        s = self.screen
        return int(getattr(s, "n_triples_screened", None) or getattr(s, "n_pairs_screened", 0))

    def to_dict(self) -> dict:
        base = self.ordered.to_dict() if self.ordered is not None else self.screen.to_dict()
        return dict(base, blends=self.blends, notes=list(self.notes), rank_by=self.rank_by)

    def __str__(self) -> str:
        head = str(self.ordered) if self.ordered is not None else str(self.screen)
        text = head + blend_notes(self.blends, self.drying)
        if self.notes:
            text += "\n\nNotes:\n" + "\n".join(f"  - {n}" for n in self.notes)
        return text


def design_blends(fit, library, *, components: int = 2, top: int = 20,
                  rank_by: str = DEFAULT_RANK, drying: bool = False, max_fraction=None,
                  min_fraction=None, with_single: bool = False, diverse: bool = True,
                  **pool_options) -> BlendDesign:
    """The one blend workflow: pool, screen (pairs or triples), safety and drying, order.

    Parameters
    ----------
    fit : result or dict
        The fitted sphere (``dD``, ``dP``, ``dH``, ``R0`` as attributes or keys).
    library : Library
    components : {2, 3}, default=2
    top : int, default=20
    rank_by : {"hazard", "cost", "drying", "evaporation", "red"}, default="hazard"
        The user's priority in the documented order of :mod:`solsphere.design.ordering`
        (feasible → robust → priority → RED): pairs are all ordered on arrays
        (:func:`solsphere.design.recommend.rank_pair_blends`; "drying" simulates the 50
        first and orders them); triples order the :data:`RERANK_POOL` nearest the centre.
        "red" is the plain RED order. "drying" needs ``drying``; "cost" needs prices (a
        shelf with a price column).
    diverse : bool, default=True
        No solvent in more than two of the listed blends (except with "red").
    drying : bool, default=False
        Simulate each blend's drying path (vapour pressures at the pool's temperature).
    max_fraction, min_fraction : list of str, str or dict, default=None
        Per-solvent share limits for three-solvent blends (:func:`parse_fraction_limits`);
        with two components they are noted and not used.
    with_single : bool, default=False
        Also list pairs whose best mix is one solvent alone.
    **pool_options
        Passed to :func:`candidate_pool` (``pool``, ``shelf``, ``ticked``, ``exclude``,
        ``min_flash_point``, ``max_boiling_point``, ``temperature`` ...).

    Returns
    -------
    BlendDesign
    """
    if rank_by not in RANK_CHOICES:
        raise ValueError(f"rank_by must be one of {RANK_CHOICES}; found {rank_by!r}")
    if int(components) not in (2, 3):
        raise ValueError(f"components must be 2 or 3; found {components!r}")
    if rank_by == "drying" and not drying:
        raise InputError("ranking by drying needs the drying simulation.", setting="drying")
    # the cheap refusals first, before the pool is read and shifted (a request that
    # will be refused costs next to nothing)
    check_temperature(pool_options.get("temperature"))
    check_limit("top", top, "the blend list")
    for text, setting in ((max_fraction, "max_fraction"), (min_fraction, "min_fraction")):
        for item in _limit_items(text):
            if not (_share(item) or ("", ""))[0]:
                parse_fraction_limits([item], library, (), setting)  # its message
    get = fit.get if isinstance(fit, dict) else lambda k: getattr(fit, k)
    centre, R0 = (get("dD"), get("dP"), get("dH")), get("R0")
    pool, filters = candidate_pool(library, limits=False, **pool_options)
    if rank_by == "cost" and not any(s.price is not None for s in pool):
        raise InputError("ranking by cost needs prices, and no candidate has one (a shelf "
                         "file with a price column gives them).", setting="rank_by")
    notes = list(filters.get("temperature_notes") or [])
    top = int(top)
    screen_top = top if rank_by == "red" else max(RERANK_POOL, top)
    limits = dict(min_flash_point=pool_options.get("min_flash_point"),
                  max_boiling_point=pool_options.get("max_boiling_point"),
                  top=screen_top, only_blends=not with_single)
    if int(components) == 3:
        names = [s.name for s in pool]
        upper = (dict(max_fraction) if isinstance(max_fraction, dict) else
                 parse_fraction_limits(max_fraction, library, names, "max_fraction"))
        lower = (dict(min_fraction) if isinstance(min_fraction, dict) else
                 parse_fraction_limits(min_fraction, library, names, "min_fraction"))
        short = triple_shortlist(pool, centre, R0, keep=set(upper) | set(lower))
        if len(short) < len(pool):
            filters["shortlist"] = (f"{len(short)} of {len(pool)} candidates: the nearest "
                                    f"and the partners of the best pairs")
            notes.append(f"three-solvent blends from a shortlist of {len(short)} of "
                         f"{len(pool)} candidates (the nearest the sphere centre and the "
                         f"partners of the best pairs; all triples would be too many)")
        screen = screen_triples(short, centre, R0, max_fraction=upper, min_fraction=lower,
                                **limits)
        if screen.filters.get("n_infeasible"):
            notes.append(f"{screen.filters['n_infeasible']} triples cannot meet the fraction "
                         "limits together and were left out")
    else:
        if split_names(max_fraction) or split_names(min_fraction):
            notes.append("share limits apply to three-solvent blends only; not used for pairs")
        if rank_by != "red":
            return _ordered_pairs(pool, filters, centre, R0, top, rank_by, drying, diverse,
                                  with_single, notes, pool_options)
        screen = screen_blends(pool, centre, R0, **limits)
    screen.filters.update(filters)
    ordered = rank_by != "red"
    blends = add_safety_and_drying(screen, pool, centre, R0, drying=drying,
                                   temperature_C=pool_options.get("temperature") or 25.0,
                                   rank_by="red" if ordered else rank_by,
                                   top=None if ordered else top)
    if ordered:  # the documented order among the triples looked at, diverse
        by_name = {s.name: s for s in pool}
        keep = order_blends(blends, by_name, rank_by, top, MAX_USES if diverse else None)
        blends = [blends[k] for k in keep]
        screen.blends = [screen.blends[k] for k in keep]
        for d, c in zip(blends, blend_rows(blends, by_name, rank_by)):
            d["criteria"] = c
        notes.append(ORDER_TEXT.format(priority=rank_by))
    _flag_below_min_flash_point(blends, limits["min_flash_point"], notes)
    return BlendDesign(screen=screen, blends=blends, notes=notes, components=int(components),
                       rank_by=rank_by, drying=drying,
                       n_pool=len(apply_pool_filters(pool, (), limits["min_flash_point"],
                                                     limits["max_boiling_point"], None, None)))


def _flag_below_min_flash_point(blends: list, low, notes: list) -> None:
    """Every component passes a minimum flash point; the blend itself may still flash
    lower (non-ideal mixture): mark those blends and say so in the notes."""
    if low is None:
        return
    below = []
    for b in blends:
        est = (b.get("flash_point_estimate") or {}).get("estimate")
        b["below_min_flash_point"] = est is not None and est < low
        if b["below_min_flash_point"]:
            below.append(blend_label(b["solvents"], b["volume_fractions"]))
    if below:
        notes.append(f"estimated to flash below the {low:g} °C limit although every "
                     f"component passes it (non-ideal mixture): " + "; ".join(below))


def _ordered_pairs(pool, filters, centre, R0, top, rank_by, drying, diverse, with_single,
                   notes, pool_options) -> BlendDesign:
    """Pairs in the documented order (:func:`solsphere.design.recommend.rank_pair_blends`),
    with the pool's flash and boiling limits applied and recorded (never a silent drop)."""
    fp, bp = pool_options.get("min_flash_point"), pool_options.get("max_boiling_point")
    checked = apply_filters(pool, min_flash_point=fp, max_boiling_point=bp)
    filters = dict(filters, min_flash_point=fp, max_boiling_point=bp,
                   removed_low_flash_point=checked.removed.get("removed_low_flash_point", []),
                   removed_unknown_flash_point=checked.removed.get(
                       "removed_unknown_flash_point", []),
                   removed_high_boiling_point=checked.removed.get(
                       "removed_high_boiling_point", []),
                   removed_unknown_boiling_point=checked.removed.get(
                       "removed_unknown_boiling_point", []))
    usable = checked.kept
    T = pool_options.get("temperature") or 25.0
    by_drying = rank_by == "drying"
    ranked = rank_pair_blends(usable, centre, R0, top=max(50, top) if by_drying else top,
                              priority=rank_by, diverse_top=diverse and not by_drying,
                              only_blends=not with_single, filters=filters, temperature_C=T)
    blends = add_safety_and_drying(ranked.screen, usable, centre, R0, drying=drying,
                                   temperature_C=T, rank_by="red")
    # re-order the listed blends with the phase test of add_safety_and_drying (the
    # screen's own one-phase test is the quicker Flory–Huggins estimate) and, for
    # "drying", the simulated paths
    by_name = {s.name: s for s in usable}
    keep = order_blends(blends, by_name, rank_by, top, MAX_USES if diverse else None)
    blends = [blends[k] for k in keep]
    ranked.screen.blends = [ranked.screen.blends[k] for k in keep]
    old_crit = [ranked.criteria[k] for k in keep]
    ranked.criteria = blend_rows(blends, by_name, rank_by)
    for c, o in zip(ranked.criteria, old_crit):
        c.update(robustness_step=o["robustness_step"], ghs_categories=o["ghs_categories"],
                 notes=o["notes"], priority_value=(c.get("drying_inside_until")
                                                   if rank_by == "drying" else
                                                   o["priority_value"]))
    ranked.diverse = diverse
    for d, c in zip(blends, ranked.criteria):
        d["criteria"] = c
    _flag_below_min_flash_point(blends, fp, notes)
    return BlendDesign(screen=ranked.screen, blends=blends, notes=notes, components=2,
                       rank_by=rank_by, drying=drying, n_pool=len(usable), ordered=ranked)


def add_safety_and_drying(screen, pool, centre, R0: float, drying: bool = False,
                          temperature_C: float = 25.0, rank_by: str = "red",
                          top: int | None = None, humidity: float = 0.0):
    """Attach the blend's real-mixture facts (flash point, phases, drying) to each blend.

    Each blend's dict (``screen.to_dict()``) then carries ``flash_point_estimate``
    (Liaw's model with activity coefficients, :mod:`solsphere.mixtures.flash`),
    ``phases`` (1 or 2 liquid phases at the blend's composition and ``temperature_C``,
    :mod:`solsphere.mixtures.phases`), ``may_not_mix`` (= two phases), ``inside`` (RED ≤ 1
    and one phase: a blend that separates is not inside), ``price_per_litre`` (Σ volume
    fraction × price, when the shelf gives every price) and, with ``drying``, ``drying``
    (the :class:`~solsphere.mixtures.drying.DryingPath` dict, activity coefficients and
    evaporative cooling at ``temperature_C`` and ``humidity``). All blends are computed
    together (one activity model over the components used).
    ``rank_by`` re-sorts: "red" (as screened: the order of the JSON contract; ``inside``
    is false for a blend that separates), "drying" (one-phase blends that stay inside
    longest first) or "cost" (blends inside the sphere,
    cheapest first, those that separate after the others; then the rest by RED).
    ``screen.blends`` is put in the same order and cut to ``top``.

    Returns
    -------
    list of dict
        The blends as dicts, in the final order.
    """
    by_name = {s.name: s for s in pool}
    blends = list(screen.blends)
    comps_of = [[by_name[n] for n in b.solvents] for b in blends]
    used = list({s.name: s for c in comps_of for s in c}.values())
    pos = {s.name: i for i, s in enumerate(used)}
    K = max((len(c) for c in comps_of), default=1)
    n = len(blends)
    idx = np.zeros((n, K), dtype=int)
    phi = np.zeros((n, K))
    for r, (b, c) in enumerate(zip(blends, comps_of)):
        idx[r, :len(c)] = [pos[s.name] for s in c]
        phi[r, :len(c)] = b.volume_fractions
    vm = np.array([s.molar_volume or np.nan for s in used], dtype=float)
    has_vm = np.all(np.isfinite(vm[idx]) | (phi == 0), axis=1) if n else np.zeros(0, bool)
    flash = [None] * n
    phases = np.ones(n, dtype=int)
    phase_method = [None] * n
    paths = [None] * n
    if has_vm.any():
        model, vapour = ActivityModel(used), VapourPressures(used)
        rows = np.flatnonzero(has_vm)
        ii, ph = idx[rows], phi[rows]
        x = ph / np.where(np.isfinite(vm[ii]), vm[ii], 1.0)
        x = x / x.sum(axis=1, keepdims=True)
        p, m, split = blend_phases(model, ii, x, temperature_C, compositions=True)
        for r, f in zip(rows, blend_flash_results(model, vapour, ii, x, split=split)):
            flash[r] = f
        phases[rows] = p
        for r, label in zip(rows, m):
            phase_method[r] = label
        if drying:
            for r, path in zip(rows, drying_paths(model, vapour, ii, ph, centre, R0,
                                                  T_C=temperature_C, humidity=humidity)):
                paths[r] = path
    out = []
    for r, b in enumerate(blends):
        d = b.to_dict()
        comps = comps_of[r]
        d["flash_point_estimate"] = flash[r]
        d["phases"] = int(phases[r])
        d["phase_method"] = phase_method[r]
        d["may_not_mix"] = bool(phases[r] == 2)
        d["inside"] = bool(d["red"] <= 1.0 and phases[r] == 1)
        prices = [s.price for s in comps]
        d["price_per_litre"] = (float(sum(f * p for f, p in zip(b.volume_fractions, prices)))
                                if all(p is not None for p in prices) else None)
        if drying:
            path = paths[r]
            d["drying"] = path.to_dict() if path is not None else None
            d["drying_inside_until"] = path.inside_until if path is not None else None
        out.append((b, d))
    if rank_by == "red":  # the JSON contract keeps RED order; ``inside`` says who separates
        pass
    elif rank_by == "drying":
        if not drying:
            raise InputError("ranking by drying needs the drying simulation.", setting="drying")
        out.sort(key=lambda bd: (bd[1]["phases"] == 2,
                                 -(bd[1]["drying_inside_until"]
                                   if bd[1]["drying_inside_until"] is not None else -1.0)))
    elif rank_by == "cost":
        if not any(d["price_per_litre"] is not None for _, d in out):
            raise InputError("ranking by cost needs prices, and no blend has one (a shelf "
                             "file with a price column gives them).", setting="rank_by")
        out.sort(key=lambda bd: (bd[1]["red"] > 1.0, bd[1]["may_not_mix"],
                                 bd[1]["price_per_litre"] is None,
                                 bd[1]["price_per_litre"] or 0.0, bd[1]["red"]))
    else:
        raise ValueError(f"rank_by must be 'red', 'drying' or 'cost'; found {rank_by!r}")
    out = out[:top] if top is not None else out
    screen.blends = [b for b, _ in out]
    return [d for _, d in out]


def blend_notes(blends: list[dict], drying: bool) -> str:
    """Flash-point estimates and drying outcomes, one line per blend."""
    lines = []
    for k, b in enumerate(blends, 1):
        parts = []
        if b.get("price_per_litre") is not None:
            parts.append(f"price ≈ {b['price_per_litre']:.2f} per litre")
        fpe = b.get("flash_point_estimate") or {}
        if fpe.get("estimate") is not None:
            low = fpe.get("conservative")
            parts.append(f"flash point ≈ {fpe['estimate']:.0f} °C (Liaw's model, activity "
                         f"coefficients, {fpe.get('safety_margin', 0):g} °C margin"
                         + (f"; lowest component {low:.0f} °C)" if low is not None else ")"))
            if fpe.get("minimum_flash_point"):
                parts.append("BELOW its lowest-flashing component (minimum-flash-point "
                             "behaviour)")
        elif fpe.get("conservative") is not None:
            parts.append(f"flash point: no blend estimate; lowest component "
                         f"{fpe['conservative']:.0f} °C")
        if b.get("phases") == 2:
            parts.append("SEPARATES into two liquid phases at this ratio"
                         + (f" ({b['phase_method']})" if b.get("phase_method") else ""))
        if drying:
            d = b.get("drying")
            if d is None:
                parts.append("drying: no vapour-pressure data")
            elif d.get("leaves_at") is None:
                last = d.get("last_component")
                parts.append("drying: stays inside to dryness ("
                             + (f"{last} left last)" if last else "the residue is a mixture)"))
            else:
                parts.append(f"drying: leaves the sphere at {100 * d['leaves_at']:.0f}% evaporated")
        if parts:
            lines.append(f"  {k}. {blend_label(b['solvents'], b['volume_fractions'])}: "
                         + "; ".join(parts))
    if not lines:
        return ""
    return "\n\nFlash point and drying (estimates, not measurements):\n" + "\n".join(lines)


# ----------------------------------------------------------------------------- replace
def find_replacements(library, name: str, *, fit=None, top: int = 10, n_pairs: int = 5,
                      allow_worse: bool = False, **pool_options) -> Substitution:
    """Solvents and pairs that can take the place of ``name``, from the pool.

    Parameters
    ----------
    library : Library
    name : str
        The solvent to replace (name, CAS number or abbreviation).
    fit : result or dict or None
        A fitted sphere: rank by behaviour towards that material.
    top, n_pairs : int
    allow_worse : bool, default=False
        Also offer candidates worse than the old solvent on a hazard, or listed
        (:func:`solsphere.library.hazards.never_worse`).
    **pool_options
        Passed to :func:`candidate_pool`.
    """
    target = library.lookup(name.strip())
    pool, filters = candidate_pool(library, **pool_options)
    material = None
    if fit is not None:
        get = fit.get if isinstance(fit, dict) else lambda k: getattr(fit, k)
        material = ((get("dD"), get("dP"), get("dH")), get("R0"))
    result = find_substitutes(target, pool, top=int(top), n_pairs=max(int(n_pairs), 0),
                              material=material, allow_worse=allow_worse)
    result.filters = filters
    return result


