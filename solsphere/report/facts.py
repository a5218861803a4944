"""Plain-text hazard and property facts of a solvent, one cell each, for report tables.

Every recommendation in a report carries these beside it: the flash point (marked when
estimated), the 8-hour exposure limit with the jurisdiction whose table it comes from, the
carcinogen classification and the reproductive-toxicity / regulatory listing
(:mod:`solsphere.library.hazards`). An unknown value says so ("no data"), never a blank:
absence from a list is not evidence of safety.
"""

from __future__ import annotations

from solsphere.formatting import short
from solsphere.library.hazards import corrosive_toxic_level, ghs_category, health_of, listing_of
from solsphere.library.table import Solvent, hazard_flags

__all__ = ["NO_DATA", "flash_text", "exposure_text", "jurisdiction_of", "carcinogen_text",
           "listing_text", "health_text", "listings_text", "ghs_text", "boiling_text", "caveats",
           "hazard_cells"]

#: What a cell says when the data has no value (never a blank).
NO_DATA = "no data"


def flash_text(solvent: Solvent) -> str:
    """The flash point in °C, marked when estimated or not flammable.

    >>> flash_text(Solvent("x", 15.0, 5.0, 5.0, flash_point=4.0))
    '4 °C'
    >>> flash_text(Solvent("x", 15.0, 5.0, 5.0, flash_point=103.4,
    ...                    sources={"flash_point": "estimated: T where Psat = LFL"}))
    '103 °C (estimated)'
    >>> flash_text(Solvent("w", 15.5, 16.0, 42.3, sources={"flash_point": "none (not flammable)"}))
    'none (not flammable)'
    """
    source = str(solvent.sources.get("flash_point", ""))
    if solvent.flash_point is None:
        return "none (not flammable)" if source.startswith("none") else NO_DATA
    text = f"{solvent.flash_point:.0f} °C"
    return text + " (estimated)" if source.startswith("estimated") else text


def jurisdiction_of(source: str | None) -> str:
    """The jurisdiction named by an exposure limit's source text.

    The library's limits come from the Ontario table of the ``chemicals`` package
    (``chemicals.safety``, "Ontario Limits"); other sources are shown as recorded.

    >>> jurisdiction_of("Ontario Limits")
    'Ontario'
    >>> jurisdiction_of(None)
    'source not recorded'
    """
    text = str(source or "").strip()
    if not text:
        return "source not recorded"
    if "ontario" in text.casefold():
        return "Ontario"
    return text


def exposure_text(solvent: Solvent) -> str:
    """The 8-hour exposure limit (TWA) with its jurisdiction.

    >>> exposure_text(Solvent("x", 15.0, 5.0, 5.0, twa_ppm=20.0,
    ...                       sources={"twa_ppm": "Ontario Limits"}))
    '20 ppm (Ontario)'
    >>> exposure_text(Solvent("x", 15.0, 5.0, 5.0))
    'no data'
    """
    if solvent.twa_ppm is None:
        if solvent.twa_mg_m3 is not None:
            where = jurisdiction_of(solvent.sources.get("twa_mg_m3"))
            return f"{solvent.twa_mg_m3:.3g} mg/m³ ({where})"
        return NO_DATA
    return f"{solvent.twa_ppm:.3g} ppm ({jurisdiction_of(solvent.sources.get('twa_ppm'))})"


def carcinogen_text(solvent: Solvent) -> str:
    """The carcinogen classification, or "none listed"."""
    listing = listing_of(solvent)
    parts = [solvent.carcinogen] if solvent.carcinogen else []
    if listing is not None and listing.carcinogen:
        parts.append(f"Carc. {listing.carcinogen} ({listing.jurisdiction})")
    return "; ".join(parts) or "none listed"


def listing_text(solvent: Solvent) -> str:
    """The reproductive-toxicity / regulatory listing, or "none listed"."""
    listing = listing_of(solvent)
    if listing is None:
        return "none listed"
    parts = [f"Repr. {listing.reprotoxic}"] if listing.reprotoxic else []
    if listing.restricted:
        parts.append("restricted")
    return f"{', '.join(parts) or 'listed'} ({listing.jurisdiction})"


def health_text(solvent: Solvent) -> str:
    """Skin corrosion, acute toxicity and eye damage from the health file, or "none
    listed".

    >>> from solsphere.library.table import load_library
    >>> health_text(load_library().lookup("acetic acid"))
    'Skin Corr. 1A (EU)'
    """
    entry = health_of(solvent)
    if entry is not None:
        return entry.text()
    return "none listed" if corrosive_toxic_level(solvent) == 0 else "not assessed"


def listings_text(solvent: Solvent) -> str:
    """Carcinogen class, reprotoxic / restricted listing and health entry in one cell
    (for tables with one line per blend component), or "none listed".

    >>> from solsphere.library.table import load_library
    >>> listings_text(load_library().lookup("NMP"))
    'reprotoxic Repr. 1B, restricted (EU)'
    """
    parts = []
    for label, text in (("carcinogen", carcinogen_text(solvent)),
                        ("reprotoxic", listing_text(solvent)),
                        ("", health_text(solvent))):
        if text != "none listed":
            parts.append(f"{label} {text}".strip())
    return "; ".join(parts) or "none listed"


def caveats(solvent: Solvent) -> list[str]:
    """The data caveats of :func:`solsphere.library.table.hazard_flags` that the hazard
    cells do not already say: compilations that disagree, coordinates estimated from
    structure (with their 95 % half-width)."""
    shown = ("flash point", "no flash point", "exposure limit", "carcinogen")
    return [f for f in hazard_flags(solvent) if not f.startswith(shown)]


def ghs_text(solvent: Solvent) -> str:
    """The GHS flammable-liquid category from flash and boiling point (UN GHS Rev. 9,
    2021, ch. 2.6): "cat. 1" to "cat. 4", "not classified" (flash point above 93 °C),
    "not flammable" (none by the data), or "no data".

    >>> ghs_text(Solvent("x", 15, 5, 5, flash_point=-20, boiling_point=56))
    'cat. 2'
    >>> ghs_text(Solvent("x", 15, 5, 5, flash_point=150, boiling_point=300))
    'not classified'
    """
    cat = ghs_category(solvent)
    if cat is None:
        return NO_DATA
    if cat == 0:
        return "not flammable" if solvent.flash_point is None else "not classified"
    return f"cat. {cat}"


def boiling_text(solvent: Solvent) -> str:
    """The boiling point in °C (a slow or fast drying guide), or "no data"."""
    return NO_DATA if solvent.boiling_point is None else f"{short(solvent.boiling_point)} °C"


def hazard_cells(solvent: Solvent) -> dict[str, str]:
    """The hazard facts of one solvent as report cells."""
    return {"flash point": flash_text(solvent), "GHS flammability": ghs_text(solvent),
            "exposure limit (8 h)": exposure_text(solvent),
            "carcinogen": carcinogen_text(solvent),
            "reprotoxic / restricted": listing_text(solvent),
            "corrosive / toxic": health_text(solvent),
            "boiling point": boiling_text(solvent)}
