"""The solvent library: the packaged table of Hansen parameters and properties.

CONTRACT (fixed; other modules code against it). The data helper fills in the bodies.

- ``Solvent``: one compound, frozen dataclass, fields below (None where unknown).
- ``Library``: holds ``records`` (tuple of Solvent) and ``points`` (ndarray (n, 3)).
  ``Library.from_records(records)`` builds one from any Solvent list (tests use small ones).
  ``lookup(text)`` -> Solvent, case- and punctuation-insensitive over name, synonyms,
  CAS and trade abbreviations; raises ``UnknownSolventError`` with up to 3 suggestions.
  ``find(text)`` -> Solvent or None (no exception). ``suggest(text, n=3)`` -> list[str].
  ``liquids()`` -> Library of the compounds liquid at 25 °C.
  ``select(...)`` -> Library filtered (liquid_only, min_flash_point, max_boiling_point,
  exclude_carcinogens, exclude=[names]).
  ``len(lib)``, iteration over records, ``lib[i]``.
- ``load_library()`` -> the packaged Library, loaded once (cached).
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class Solvent:
    """One compound of the library (or a user's own solvent).

    Units: dD, dP, dH, spread in MPa½; molar_volume cm³/mol; density g/cm³ at 25 °C;
    boiling_point, melting_point, flash_point in °C; vapour_pressure kPa at 25 °C;
    twa_ppm in ppm and twa_mg_m3 in mg/m³ (8-hour time-weighted average exposure limit);
    mw g/mol. ``carcinogen`` is a short text ("" when none is listed).
    ``sources`` maps a field name to the name of the compilation it came from.
    """

    name: str
    dD: float
    dP: float
    dH: float
    cas: str | None = None
    synonyms: tuple[str, ...] = ()
    spread: float | None = None
    mw: float | None = None
    molar_volume: float | None = None
    density: float | None = None
    boiling_point: float | None = None
    melting_point: float | None = None
    flash_point: float | None = None
    vapour_pressure: float | None = None
    dielectric: float | None = None
    log_p: float | None = None
    twa_ppm: float | None = None
    twa_mg_m3: float | None = None
    carcinogen: str = ""
    liquid: bool | None = None
    sources: dict = field(default_factory=dict, compare=False, hash=False)

    @property
    def point(self) -> tuple[float, float, float]:
        return (self.dD, self.dP, self.dH)
