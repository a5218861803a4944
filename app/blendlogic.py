"""The pure functions behind the 'Blends' and 'Replace a solvent' screens (no Dash).

Every computation is one workflow call (:func:`solsphere.workflows.design_blends`,
:func:`solsphere.workflows.find_replacements`), the same as ``solsphere blend`` and
``solsphere replace``. What is added here is reading the form (uploads, numbers), the
app's words for the workflows' errors, and the display strings.
"""

from __future__ import annotations

import os

from solsphere.errors import InputError, SolsphereError
from solsphere.formatting import blend_label, num
from solsphere.workflows import CAUTION, DEFAULT_RANK, design_blends, find_replacements

from .logic import cell_number as rounded
from .logic import decode_upload, fit_key, number_field, split_names, with_upload_file

#: Digits kept for the drying path points sent to the browser (MPa½).
PATH_DIGITS = 3
#: The orders the Blends screen offers (the first is the workflows' default, the same as
#: ``solsphere blend``'s --rank-by default).
RANK_CHOICES = {"hazard": "least hazardous", "red": "RED only", "cost": "cost (shelf prices)",
                "drying": "drying", "evaporation": "evaporation"}
assert next(iter(RANK_CHOICES)) == DEFAULT_RANK
#: What the screen says about each order.
ORDER_WORDS = {"hazard": "feasible, then robust, then least hazardous, then RED",
               "red": "by RED", "cost": "feasible, then robust, then cheapest",
               "drying": "feasible, then longest inside while drying",
               "evaporation": "feasible, then robust, then by evaporation rate"}
#: Pool choices of the Blends screen: the library pools (the one pool rule of
#: :func:`solsphere.workflows.candidate_pool`), a shelf file, ticked solvents.
POOL_CHOICES = {"working": "working solvents", "all": "all library liquids (reagents too)",
                "shelf": "my shelf (file)", "ticked": "solvents I tick"}

#: The app's words for a workflow setting an error is about: (field, hint).
SETTING_FIELDS = {
    "rank_by": ("order", "upload a shelf file with a 'price' column (price per litre) and "
                         "choose 'my shelf'"),
    "max_fraction": ("at most", "write e.g. toluene=30% or toluene=0.3, items separated by "
                                "commas"),
    "min_fraction": ("at least", "write e.g. toluene=10%"),
    "ticked": ("ticked solvents", "tick at least two solvents that pass the constraints, or "
                                  "choose another pool"),
    "exclude": ("leave out", None),
    "filters": (None, "relax the constraints, or choose another pool"),
}


def app_error(exc: InputError, place: str) -> str:
    """A workflow's neutral error in the app's words (its field and hint)."""
    field, hint = SETTING_FIELDS.get(exc.setting, (None, None))
    return str(exc.located(file=place if exc.file is None else None, column=field, hint=hint))


def _with_uploads(shelf: dict | None, restricted: dict | None, fn):
    """``fn(shelf_path, restricted_path)`` with the uploads written to private temporary
    files (None for those not given), read exactly as files given on the command line."""
    def with_restricted(shelf_path):
        if not restricted or not restricted.get("contents"):
            return fn(shelf_path, None)
        data = decode_upload(restricted["contents"], restricted.get("filename"))
        return with_upload_file(data, restricted.get("filename"), "restricted.csv",
                                lambda r: fn(shelf_path, r))
    if not shelf or not shelf.get("contents"):
        return with_restricted(None)
    data = decode_upload(shelf["contents"], shelf.get("filename"))
    return with_upload_file(data, shelf.get("filename"), "shelf.csv", with_restricted)


def pool_options(pool_choice: str, shelf, ticked, common_only: bool | None, exclude,
                 min_flash_point=None, max_boiling_point=None, min_boiling_point=None,
                 min_exposure_limit=None, no_carcinogens: bool = False,
                 temperature=None) -> dict:
    """The form's pool controls as :func:`solsphere.workflows.candidate_pool` keywords
    (without the uploaded files, which :func:`_with_uploads` adds).

    ``pool_choice`` "working" or "all" names the library pool; the older "library"
    takes it from ``common_only``."""
    if pool_choice == "shelf" and not (shelf and shelf.get("contents")):
        raise InputError("no shelf file yet.", file="<shelf>",
                         hint="upload a CSV with a 'solvent' column listing what you have")
    opts = dict(exclude=split_names(exclude),
                min_flash_point=number_field(min_flash_point, "min flash point"),
                max_boiling_point=number_field(max_boiling_point, "max boiling point"),
                min_boiling_point=number_field(min_boiling_point, "min boiling point"),
                min_exposure_limit=number_field(min_exposure_limit, "min exposure limit"),
                exclude_carcinogens=bool(no_carcinogens),
                temperature=number_field(temperature, "temperature"),
                pool=library_pool(pool_choice, common_only))
    if pool_choice == "ticked":
        opts["ticked"] = list(ticked or [])
    return opts


def library_pool(pool_choice: str | None, common_only: bool | None = None) -> str:
    """"working" or "all" from the form.

    >>> library_pool("all"), library_pool("library", True), library_pool(None)
    ('all', 'working', 'working')
    """
    if pool_choice in ("working", "all"):
        return pool_choice
    return "all" if common_only is False else "working"


def _where(pool_choice: str, shelf, ticked, filters: dict) -> str:
    if pool_choice == "shelf":
        return f"the shelf {os.path.basename((shelf or {}).get('filename') or '')}"
    if pool_choice == "ticked":
        return f"{len(ticked or [])} ticked solvents"
    return filters["pool"]


# ----------------------------------------------------------------------------- blends

def blend_designer(result: dict | None, library, pool_choice: str | None = None,
                   shelf: dict | None = None, ticked=None, exclude: str | None = None,
                   min_flash_point=None, max_boiling_point=None, min_boiling_point=None,
                   min_exposure_limit=None, no_carcinogens: bool = False,
                   restricted: dict | None = None, components: int = 2,
                   max_fraction: str | None = None, min_fraction: str | None = None,
                   temperature=None, rank_by: str = DEFAULT_RANK, top: int = 15,
                   common_only: bool | None = None) -> dict:
    """Top blends of two or three solvents for the fitted sphere (``solsphere blend``
    with its constraints, ``--drying`` always on).

    Parameters
    ----------
    pool_choice : {"working", "all", "shelf", "ticked"} or None, default=None
        The curated working solvents, every library liquid (reagents included), the
        uploaded shelf file (``shelf`` = {"filename", "contents"}), or the ticked library
        solvents (``ticked`` = names). None: the working solvents, or every library
        liquid with ``common_only=False``.
    restricted : dict or None
        An uploaded list of restricted solvents ({"filename", "contents"}), left out.
    components : {2, 3}
    max_fraction, min_fraction : str or None
        Per-solvent volume-fraction limits for three components (``"toluene=30%"``).
    temperature : float or None
        Process temperature [°C].
    rank_by : {"hazard", "red", "cost", "drying", "evaporation"}, default=DEFAULT_RANK
        The workflows' order (the same default as ``solsphere blend``).

    Returns
    -------
    dict
        ``blends`` (the workflow's blend dicts with display strings; the drying path
        reduced to its points and verdict), ``message``, ``notes``, ``caution``,
        ``has_price``.
    """
    fit = (result or {}).get("fit")
    empty = {"blends": [], "notes": [], "caution": CAUTION, "has_price": False}
    if not fit:
        return dict(empty, message="No sphere yet: blends appear once the fit works.")
    try:
        opts = pool_options(pool_choice, shelf, ticked, common_only, exclude,
                            min_flash_point, max_boiling_point, min_boiling_point,
                            min_exposure_limit, no_carcinogens, temperature)
        design = _with_uploads(
            shelf if pool_choice == "shelf" else None, restricted,
            lambda s, r: design_blends(fit, library, components=int(components), top=int(top),
                                       rank_by=rank_by, drying=True, max_fraction=max_fraction,
                                       min_fraction=min_fraction,
                                       **dict(opts, shelf=s, restricted=r)))
    except InputError as exc:
        return dict(empty, message=app_error(exc, "<blends>"))
    except SolsphereError as exc:
        return dict(empty, message=str(exc))
    except ValueError as exc:  # a fraction limit the screen refuses (min above max)
        return dict(empty, message=f"Not screened: {exc}.")
    filters = design.screen.filters
    pool_size = design.n_pool
    key = fit_key(fit)
    out = [blend_row(b, k + 1, key) for k, b in enumerate(design.blends)]
    what = "three-solvent blends" if int(components) == 3 else "pairs"
    order = ORDER_WORDS.get(rank_by, rank_by)
    counted = f"{design.n_screened} {'triples' if int(components) == 3 else 'pairs'}"
    msg = (f"Top {len(out)} {what} ({order}) of {counted} from {pool_size} candidates "
           f"({_where(pool_choice, shelf, ticked, filters)}).")
    return {"blends": out, "message": msg, "notes": list(design.notes), "caution": CAUTION,
            "has_price": any(b.get("price_per_litre") is not None for b in out)}


def drying_text(d: dict | None) -> str:
    """'stays inside to dryness' / 'leaves at 38 % evaporated' / 'starts outside'."""
    if d is None:
        return "no data"
    if not d.get("starts_inside"):
        return "starts outside"
    if d.get("leaves_at") is None:
        return ("stays inside to dryness" if d.get("max_fraction_evaporated", 1.0) >= 1.0
                else "stays inside to the end")
    pct = 100 * d["leaves_at"]
    return f"leaves at {pct:.0f} % evaporated" if pct < 99.5 else \
        f"leaves at {min(pct, 99.9):.1f} % evaporated"  # not "100 %": it does leave


def flash_text(fpe: dict | None) -> str:
    """'≈ 28 (lowest 12)': the blend's estimate (Liaw's model) and the lowest component [°C]."""
    fpe = fpe or {}
    est, low = fpe.get("estimate"), fpe.get("conservative")
    if est is not None:
        return f"≈ {est:.0f}" + (f" (lowest {low:.0f})" if low is not None else "")
    if low is not None:
        return f"lowest {low:.0f}"
    return "—"


def blend_row(b: dict, rank: int, key) -> dict:
    """One blend dict with its display strings; the drying path is cut to its points."""
    b = dict(b, rank=rank, for_fit=key)
    b["n_components"] = len(b["solvents"])
    b["label"] = blend_label(b["solvents"], b["volume_fractions"])
    b["red_text"] = f"{b['red']:.2f}"
    if b["n_components"] == 3:
        a = b.get("inside_area")
        b["window_text"] = ("n/a" if a is None else "none" if a <= 0 else
                            f"{100 * a:.0f}% of the triangle")
    else:
        w = b.get("inside_window")
        b["window_text"] = ("none" if w is None else
                            f"{100 * w[0]:.0f}–{100 * w[1]:.0f}% {b['solvents'][0]}")
    m = b.get("mass_fractions")
    b["mass_text"] = "—" if m is None else " : ".join(f"{100 * x:.0f}" for x in m)
    b["nonsolvents_text"] = "yes" if (b.get("all_non_solvents") or
                                      b.get("both_non_solvents")) else ""
    b["fp_text"] = flash_text(b.get("flash_point_estimate"))
    b["twa_text"] = " / ".join(num(x, "{:.3g}") for x in b.get("twa_ppm") or [])
    b["price_text"] = num(b.get("price_per_litre"), "{:.2f}")
    b["mix_text"] = "may not mix" if b.get("may_not_mix") else ""
    b["flags_text"] = "; ".join(b.get("flags") or [])
    fpe = b.get("flash_point_estimate") or {}
    b["fp_n"] = rounded(fpe.get("estimate"), 0)
    b["fp_low_n"] = rounded(fpe.get("conservative"), 0)
    b["fps_text"] = " / ".join(num(x, "{:.0f}") for x in b.get("flash_points") or [])
    b["red_n"] = rounded(b["red"], 2)
    crit = b.get("criteria") or {}
    b["robust_n"] = rounded(crit.get("robustness"), 2)
    b["hazard_n"] = rounded(crit.get("hazard"), 2)
    b["price_n"] = rounded(b.get("price_per_litre"), 2)
    d = b.pop("drying", None)
    b["drying_text"] = drying_text(d)
    if d is not None:
        b["drying_points"] = [[round(v, PATH_DIGITS) for v in p] for p in d["points"]]
        b["drying_last"] = d.get("last_component")
        b["drying_notes"] = list(d.get("notes") or [])
    return b


def map_entry(b: dict) -> dict:
    """What the map needs of a clicked blend (kept in the browser's blend store)."""
    keep = ("solvents", "volume_fractions", "dD", "dP", "dH", "red", "component_points",
            "for_fit", "drying_points", "label")
    return {k: b[k] for k in keep if k in b}


# ----------------------------------------------------------------------------- replace

def substitutes(result: dict | None, library, name: str | None, for_material: bool = False,
                exclude: str | None = None, min_flash_point=None, max_boiling_point=None,
                no_carcinogens: bool = False, top: int = 10, n_pairs: int = 5,
                common_only: bool = True, pool: str | None = None,
                allow_worse: bool = False) -> dict:
    """Solvents and pairs that can take the place of ``name``: the replacement workflow
    (``solsphere replace``) read from the form.

    ``pool`` "working" (default) or "all"; ``allow_worse`` lifts the rule that a
    replacement is never worse than the solvent replaced on carcinogen class,
    reproductive-toxicity listing, skin corrosion / acute toxicity and flammability
    category.

    Returns
    -------
    dict
        ``singles`` and ``pairs`` (``Substitution.to_dict()`` entries with display
        strings), ``target`` (its point), ``message``, ``caution``.
    """
    empty = {"singles": [], "pairs": [], "target": None, "caution": CAUTION}
    if not (name or "").strip():
        return dict(empty, message="Type the solvent to replace.")
    fit = (result or {}).get("fit")
    material = fit if (for_material and fit) else None
    try:
        sub = find_replacements(
            library, name, fit=material, top=int(top), n_pairs=int(n_pairs),
            allow_worse=bool(allow_worse),
            **pool_options(pool or "library", None, None, common_only, exclude,
                           min_flash_point, max_boiling_point,
                           no_carcinogens=no_carcinogens))
        resolved = library.resolved(name)
    except InputError as exc:
        return dict(empty, message=app_error(exc, "<replace>"))
    except SolsphereError as exc:
        return dict(empty, message=str(exc))
    d = sub.to_dict()
    key = fit_key(fit)
    singles = []
    for s in d["singles"]:
        singles.append(dict(s, for_fit=key if material else None, Ra_text=f"{s['Ra']:.1f}",
                            red_text=num(s.get("red"), "{:.2f}"),
                            side_text={True: "same", False: "other", None: "—"}[s.get("same_side")],
                            fp_text=num(s.get("flash_point"), "{:.0f}"),
                            bp_text=num(s.get("boiling_point"), "{:.0f}"),
                            twa_text=num(s.get("twa_ppm"), "{:.3g}"),
                            Ra_n=rounded(s["Ra"], 1), red_n=rounded(s.get("red"), 2),
                            fp_n=rounded(s.get("flash_point"), 0),
                            bp_n=rounded(s.get("boiling_point"), 0),
                            twa_n=rounded(s.get("twa_ppm"), 1),
                            **versus_texts(s.get("versus_old")),
                            flags_text="; ".join(s.get("flags") or [])))
    pairs = []
    for b in d["pairs"]:
        pairs.append(dict(b, red=None, for_fit=key,
                          label=blend_label(b["solvents"], b["volume_fractions"]),
                          Ra_text=f"{b['ra']:.2f}", Ra_n=rounded(b["ra"], 2),
                          fp_text=" / ".join(num(x, "{:.0f}") for x in b["flash_points"]),
                          flags_text="; ".join(b.get("flags") or [])))
    t = d["target"]
    if material:
        side = "inside" if d["material"]["red_target"] <= 1 else "outside"
        how = (f"for this material: {t['name']} is {side} the sphere (RED "
               f"{d['material']['red_target']:.2f}); replacements on the same side first, "
               f"nearest first")
    else:
        how = "nearest in Hansen space (distance Ra)"
        if for_material:
            how += " (no sphere yet, so not for the material)"
    rule = ("worse ones allowed (you ticked 'allow worse')" if allow_worse else
            "none worse than it on carcinogen class, reproductive-toxicity listing, "
            "corrosivity / acute toxicity or flammability")
    msg = (f"Replacing {resolved}: {len(singles)} solvents and {len(pairs)} pairs "
           f"(δD {t['dD']:.1f}, δP {t['dP']:.1f}, δH {t['dH']:.1f}), {how}; {rule}; from "
           f"{d['n_candidates']} candidates ({'all library liquids' if library_pool(pool, common_only) == 'all' else 'working solvents'}).")
    return {"singles": singles, "pairs": pairs, "target": t, "message": msg,
            "caution": CAUTION, "resolved": resolved}


def versus_texts(versus: dict | None) -> dict:
    """Better / same / worse than the solvent replaced, per hazard, as grid cells.

    >>> versus_texts({"carcinogen": "same", "reprotoxic": "better"})["vs_repro"]
    'better'
    """
    v = versus or {}
    return {"vs_carc": v.get("carcinogen") or "—", "vs_repro": v.get("reprotoxic") or "—",
            "vs_tox": v.get("corrosive_toxic") or "—", "vs_flam": v.get("flammability") or "—"}
