"""The pure functions behind the 'Blends' and 'Replace a solvent' screens (no Dash).

Every computation is a library call: the pool (:func:`solsphere.session.candidate_pool`,
:func:`solsphere.session.at_temperature`), pairs (:func:`solsphere.blend.screen_blends`),
triples (:func:`solsphere.triples.screen_triples`), flash-point estimate, price, "may not
mix" and drying path (:func:`solsphere.session.add_safety_and_drying`), replacements
(:func:`solsphere.substitute.find_substitutes`). What is added here is the choice of
inputs and the display strings.
"""

from __future__ import annotations

import os
import re

from solsphere.errors import InputError, SolsphereError
from solsphere.limits import clip

from .logic import _fmt, _num, _with_temp_file, decode_upload, fit_key, split_names

#: Three-solvent blends are screened over at most this many candidates (the nearest to
#: the sphere centre): 100 give 161,700 triples, screened in about 0.1 s here; the 761
#: library liquids would give 73 million.
#: With ranking by cost or drying, the blends nearest the centre looked at (then the
#: inside ones are re-ranked), as ``solsphere blend --rank-by`` does.
RERANK_POOL = 500
#: Digits kept for the drying path points sent to the browser (MPa½).
PATH_DIGITS = 3
RANK_CHOICES = {"red": "RED", "cost": "cost (shelf prices)", "drying": "drying"}


# ----------------------------------------------------------------------------- inputs

_SHARE = re.compile(r"[0-9]+(?:[.,][0-9]*)?")


def _name_and_share(item: str):
    """('name', 'share', '%') groups of 'toluene=30%', 'toluene: 0.3', 'toluene 30', or
    None; read from the right in one pass (no backtracking pattern)."""
    s = item.strip()
    pct = "%" if s.endswith("%") else ""
    s = s[:-1].rstrip() if pct else s
    k = len(s)
    while k > 0 and s[k - 1] in "0123456789.,":
        k -= 1
    share, before = s[k:], s[:k]
    if not _SHARE.fullmatch(share) or not before or not (before[-1].isspace()
                                                          or before[-1] in "=:"):
        return None
    name = before.rstrip()
    if name[-1:] in ("=", ":"):
        name = name[:-1].rstrip()
    return name, share, pct


def parse_fraction_limits(text: str | None, names, library, what: str) -> dict[str, float]:
    """'toluene=30%, ethanol 0.5' -> {"toluene": 0.3, "ethanol": 0.5}.

    Each item is a solvent name (as in the pool, or any library name, CAS number or
    abbreviation) followed by ``=``, ``:`` or a space and a share: a fraction (0 to 1)
    or a percentage (``30%``, or a number above 1 read as percent).

    Raises
    ------
    InputError
        An item without a share, a share outside 0-100 %, or an unknown name.
    """
    out: dict[str, float] = {}
    by_key = {n.casefold(): n for n in names}
    for item in split_names(text):
        m = _name_and_share(item)
        if not m or not m[0].strip():
            raise InputError(f"{what}: {clip(item)} is not a solvent and a share.",
                             file="<blends>", column=what,
                             hint="write e.g. toluene=30% or toluene=0.3, items separated "
                                  "by commas")
        name, value = m[0].strip(), float(m[1].replace(",", "."))
        frac = value / 100.0 if (m[2] or value > 1.0) else value
        if not 0.0 <= frac <= 1.0:
            raise InputError(f"{what}: the share {clip(m[1] + m[2], 20)} for {clip(name)} is not "
                             "between 0 and 100 %.", file="<blends>", column=what,
                             hint="write e.g. toluene=30%")
        key = by_key.get(name.casefold()) or library.lookup(name).name
        out[key] = frac
    return out


def _pool(library, pool_choice, shelf, ticked, restricted, kw, common_only: bool = False):
    """(pool, where) for the chosen pool under the constraints ``kw``."""
    from solsphere.library.table import Library
    from solsphere.workflows import candidate_pool
    from solsphere.io.shelf import read_shelf

    def with_restricted(fn):
        if not restricted or not restricted.get("contents"):
            return fn(None)
        data = decode_upload(restricted["contents"], restricted.get("filename"))
        return _with_temp_file(data, restricted.get("filename"), "restricted.csv", fn)

    if pool_choice == "shelf":
        if not shelf or not shelf.get("contents"):
            raise InputError("no shelf file yet.", file="<shelf>",
                             hint="upload a CSV with a 'solvent' column listing what you have")
        data = decode_upload(shelf["contents"], shelf.get("filename"))
        pool, _ = _with_temp_file(data, shelf.get("filename"), "shelf.csv", lambda p: with_restricted(
            lambda r: candidate_pool(library, shelf=p, restricted=r, **kw)))
        return pool, f"the shelf {os.path.basename(shelf.get('filename') or '')}"
    if pool_choice == "ticked":
        picked = [library.lookup(n) for n in (ticked or [])]
        if len(picked) < 2:
            raise InputError("tick at least two solvents to combine.", file="<blends>",
                             hint="type names into the box, or choose another pool")
        drop = {library.lookup(n).name for n in kw.get("exclude") or ()}
        drop |= with_restricted(lambda r: {s.name for s in read_shelf(r, library)} if r else set())
        kept = [s for s in picked if s.name not in drop]
        if not kept:
            raise InputError("every ticked solvent is left out or restricted.",
                             file="<blends>", hint="tick other solvents")
        pool, _ = candidate_pool(Library.from_records(kept), liquid_only=False,
                                 **dict(kw, exclude=()))
        if len(pool) < 2:
            raise InputError("fewer than two ticked solvents pass the constraints.",
                             file="<blends>", hint="relax the constraints or tick more")
        return pool, f"{len(picked)} ticked solvents"
    pool, filters = with_restricted(lambda r: candidate_pool(
        library, restricted=r, pool="common" if common_only else "liquids", **kw))
    return pool, filters["pool"]


# ----------------------------------------------------------------------------- blends

def blend_designer(result: dict | None, library, pool_choice: str = "library",
                   shelf: dict | None = None, ticked=None, exclude: str | None = None,
                   min_flash_point=None, max_boiling_point=None, min_boiling_point=None,
                   min_exposure_limit=None, no_carcinogens: bool = False,
                   restricted: dict | None = None, components: int = 2,
                   max_fraction: str | None = None, min_fraction: str | None = None,
                   temperature=None, rank_by: str = "red", top: int = 15,
                   common_only: bool = False) -> dict:
    """Top blends of two or three solvents for the fitted sphere (``solsphere blend``
    with its constraints, ``--drying`` always on).

    Parameters
    ----------
    pool_choice : {"library", "shelf", "ticked"}
        All library liquids, the uploaded shelf file (``shelf`` = {"filename",
        "contents"}), or the ticked library solvents (``ticked`` = names).
    common_only : bool, default=False
        With ``pool_choice="library"``: only the curated common solvents
        (``solsphere blend --pool common``); a shelf or ticked solvents ignore it.
    restricted : dict or None
        An uploaded list of restricted solvents ({"filename", "contents"}), left out.
    components : {2, 3}
    max_fraction, min_fraction : str or None
        Per-solvent volume-fraction limits for three components (``"toluene=30%"``).
    temperature : float or None
        Process temperature [°C]: the candidates' coordinates and vapour pressures are
        taken there (the sphere stays as fitted).
    rank_by : {"red", "cost", "drying"}

    Returns
    -------
    dict
        ``blends`` (the blend dicts of :func:`solsphere.session.add_safety_and_drying`
        with display strings; the drying path reduced to its points and verdict),
        ``message``, ``notes`` (temperature, pool cut), ``caution``, ``has_price``.
    """
    from solsphere.design.pairs import screen_blends
    from solsphere.design.ranking import CAUTION
    from solsphere.workflows import add_safety_and_drying, at_temperature
    fit = (result or {}).get("fit")
    if not fit:
        return {"blends": [], "message": "No sphere yet: blends appear once the fit works.",
                "notes": [], "caution": CAUTION, "has_price": False}
    centre, R0 = (fit["dD"], fit["dP"], fit["dH"]), fit["R0"]
    notes: list[str] = []
    try:
        kw = dict(exclude=split_names(exclude), min_flash_point=_num(min_flash_point),
                  max_boiling_point=_num(max_boiling_point),
                  min_boiling_point=_num(min_boiling_point),
                  min_exposure_limit=_num(min_exposure_limit),
                  exclude_carcinogens=bool(no_carcinogens))
        pool, where = _pool(library, pool_choice, shelf, ticked, restricted, kw,
                            common_only=common_only)
        if rank_by == "cost" and not any(s.price is not None for s in pool):
            raise InputError("ranking by cost needs prices.", file="<blends>")
        T = _num(temperature)
        pool, tnotes = at_temperature(pool, T)
        notes += tnotes
        screen_top = int(top) if rank_by == "red" else max(RERANK_POOL, int(top))
        if int(components) == 3:
            from solsphere.design.triples import screen_triples, triple_shortlist
            names = [s.name for s in pool]
            upper = parse_fraction_limits(max_fraction, names, library, "at most")
            lower = parse_fraction_limits(min_fraction, names, library, "at least")
            pool3 = triple_shortlist(pool, centre, R0, keep=set(upper) | set(lower))
            if len(pool3) < len(pool):
                notes.append(f"three-solvent blends from a shortlist of {len(pool3)} of "
                             f"{len(pool)} candidates (the nearest the sphere centre and the "
                             f"partners of the best pairs; all triples would be too many); "
                             f"choose a shelf or tick solvents to combine others")
            screen = screen_triples(pool3, centre, R0, top=screen_top, max_fraction=upper,
                                    min_fraction=lower)
            counted = f"{screen.n_triples_screened} triples"
            if screen.filters.get("n_infeasible"):
                notes.append(f"{screen.filters['n_infeasible']} triples cannot meet the "
                             f"fraction limits together and were left out")
        else:
            if (max_fraction or "").strip() or (min_fraction or "").strip():
                notes.append("the share limits apply to three-solvent blends only")
            screen = screen_blends(pool, centre, R0, top=screen_top)
            counted = f"{screen.n_pairs_screened} pairs"
        if rank_by != "red":  # re-rank the inside blends, as `solsphere blend --rank-by`
            inside = [b for b in screen.blends if b.red <= 1.0]
            screen.blends = inside or screen.blends
        blends = add_safety_and_drying(screen, pool, centre, R0, drying=True,
                                       temperature_C=25.0 if T is None else T,
                                       rank_by=rank_by, top=int(top))
    except SolsphereError as exc:
        text = str(exc)
        if "ranking by cost" in text:
            text = ("Ranking by cost needs prices: upload a shelf file with a 'price' "
                    "column (price per litre) and choose 'my shelf'.")
        return {"blends": [], "message": text, "notes": notes, "caution": CAUTION,
                "has_price": False}
    except ValueError as exc:  # a fraction limit the screen refuses (min above max)
        return {"blends": [], "message": f"Not screened: {exc}.", "notes": notes,
                "caution": CAUTION, "has_price": False}
    points = {s.name: [s.dD, s.dP, s.dH] for s in pool}
    key = fit_key(fit)
    out = [blend_row(b, k + 1, key, points) for k, b in enumerate(blends)]
    what = "three-solvent blends" if int(components) == 3 else "pairs"
    order = {"red": "by RED", "cost": "inside the sphere, cheapest first",
             "drying": "longest inside while drying first"}.get(rank_by, "")
    msg = (f"Top {len(out)} {what} ({order}) of {counted} from {len(pool)} candidates "
           f"({where}).")
    return {"blends": out, "message": msg, "notes": notes, "caution": CAUTION,
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
    """'≈ 28 (lowest 12)': the ideal-solution estimate and the lowest component [°C]."""
    fpe = fpe or {}
    est, low = fpe.get("estimate"), fpe.get("conservative")
    if est is not None:
        return f"≈ {est:.0f}" + (f" (lowest {low:.0f})" if low is not None else "")
    if low is not None:
        return f"lowest {low:.0f}"
    return "—"


def blend_row(b: dict, rank: int, key, points: dict) -> dict:
    """One blend dict with its display strings; the drying path is cut to its points."""
    b = dict(b, rank=rank, for_fit=key)
    if not b.get("component_points"):  # triples carry no points of their own
        b["component_points"] = [points[n] for n in b["solvents"] if n in points]
    b["n_components"] = len(b["solvents"])
    b["label"] = " + ".join(f"{100 * f:.0f}% {n}"
                            for n, f in zip(b["solvents"], b["volume_fractions"]))
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
    b["twa_text"] = " / ".join(_fmt(x, "{:.3g}") for x in b.get("twa_ppm") or [])
    b["price_text"] = _fmt(b.get("price_per_litre"), "{:.2f}")
    b["mix_text"] = "may not mix" if b.get("may_not_mix") else ""
    b["flags_text"] = "; ".join(b.get("flags") or [])
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


def drying_paths(blends) -> list[dict]:
    """The drying paths of the clicked blends, for :func:`solsphere.figures.map3d`."""
    return [{"points": b["drying_points"],
             "label": "drying path: " + " + ".join(b["solvents"])}
            for b in blends or [] if b.get("drying_points")]


# ----------------------------------------------------------------------------- replace

def substitutes(result: dict | None, library, name: str | None, for_material: bool = False,
                exclude: str | None = None, min_flash_point=None, max_boiling_point=None,
                no_carcinogens: bool = False, top: int = 10, n_pairs: int = 5) -> dict:
    """Solvents and pairs that can take the place of ``name`` (``solsphere replace``).

    Returns
    -------
    dict
        ``singles`` and ``pairs`` (``Substitution.to_dict()`` entries with display
        strings), ``target`` (its point), ``message``, ``caution``.
    """
    from solsphere.design.ranking import CAUTION
    from solsphere.workflows import candidate_pool
    from solsphere.design.substitution import find_substitutes
    empty = {"singles": [], "pairs": [], "target": None, "caution": CAUTION}
    if not (name or "").strip():
        return dict(empty, message="Type the solvent to replace.")
    fit = (result or {}).get("fit")
    try:
        target = library.lookup(name.strip())
        pool, _ = candidate_pool(library, exclude=split_names(exclude),
                                 min_flash_point=_num(min_flash_point),
                                 max_boiling_point=_num(max_boiling_point),
                                 exclude_carcinogens=bool(no_carcinogens))
    except SolsphereError as exc:
        return dict(empty, message=str(exc))
    material = ((fit["dD"], fit["dP"], fit["dH"]), fit["R0"]) if (for_material and fit) else None
    sub = find_substitutes(target, pool, top=int(top), n_pairs=int(n_pairs), material=material)
    d = sub.to_dict()
    key = fit_key(fit)
    singles = []
    for s in d["singles"]:
        singles.append(dict(s, for_fit=key if material else None, Ra_text=f"{s['Ra']:.1f}",
                            red_text=_fmt(s.get("red"), "{:.2f}"),
                            side_text={True: "same", False: "other", None: "—"}[s.get("same_side")],
                            fp_text=_fmt(s.get("flash_point"), "{:.0f}"),
                            bp_text=_fmt(s.get("boiling_point"), "{:.0f}"),
                            twa_text=_fmt(s.get("twa_ppm"), "{:.3g}"),
                            flags_text="; ".join(s.get("flags") or [])))
    pairs = []
    for b in d["pairs"]:
        fa, fb = b["volume_fractions"]
        pairs.append(dict(b, red=None, for_fit=key,
                          label=f"{100 * fa:.0f}% {b['solvents'][0]} + {100 * fb:.0f}% "
                                f"{b['solvents'][1]}",
                          Ra_text=f"{b['ra']:.2f}",
                          fp_text=" / ".join(_fmt(x, "{:.0f}") for x in b["flash_points"]),
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
    msg = (f"{len(singles)} solvents and {len(pairs)} pairs to replace {t['name']} "
           f"(δD {t['dD']:.1f}, δP {t['dP']:.1f}, δH {t['dH']:.1f}), {how}; from "
           f"{d['n_candidates']} candidates.")
    return {"singles": singles, "pairs": pairs, "target": t, "message": msg,
            "caution": CAUTION}
