#!/usr/bin/env python3
"""Regenerate ``data/solvents.csv`` from the ``chemicals`` package.

Run from the repository root (``make data`` does this)::

    .venv/bin/python data/build_solvents.py          # writes data/solvents.csv
    .venv/bin/python data/build_solvents.py --check  # rebuilds in memory, compares, writes nothing

Only this script and the reference tests import ``chemicals``; the runtime reads the CSV.
Hansen parameters come from the union of three compilations carried by
``chemicals.solubility`` (see data/README.md for the references and the winner rule):
``WDR_SCHRIER``, ``ALSHERI_HANSEN`` and ``MANUEL_RUBEN_2022``. The fourth table in that
module (credited to a program on GitHub) is deliberately never read: its file is not
loaded at all, and the module-level accessors that would load it are not touched.

Every property records the chemicals method (or coefficient table) it came from in the
``sources`` column, as ``field=METHOD;field=METHOD;...``. Output is sorted by CAS number
(numerically), so the file is deterministic. The script also checks that every CAS in
``data/aliases.csv`` is present and fails otherwise.
"""

from __future__ import annotations

import argparse
import csv
import io
import math
import re
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
OUT = HERE / "solvents.csv"
ALIASES = HERE / "aliases.csv"

T25 = 298.15  # K
WATER = "7732-18-5"
P_ATM = 101.325  # kPa

#: The three compilations, in priority order (highest first) for the winner rule.
#: Tuple of (method name in chemicals.solubility, its data file in chemicals/Misc).
COMPILATIONS = (
    ("WDR_SCHRIER", "schrier_hansen_solubility_parameters.tsv"),
    ("ALSHERI_HANSEN", "alshehri_hansen_solubility_parameters.tsv"),
    ("MANUEL_RUBEN_2022", "ruben_manuel_hansen_solubility_parameters.tsv"),
)
#: Two compilations "agree" on a compound when all three parameters differ by at most this
#: [MPa½]: twice the 0.1 MPa½ to which the tables are given (our own choice).
AGREE_TOL = 0.2

#: Entries set aside before the winner rule: rows that are verbatim copies of a different
#: compound's row (found by comparing every row with every other compound's rows in the
#: three tables; see data/README.md). The compound keeps its other compilations.
SET_ASIDE = {
    ("127-18-4", "ALSHERI_HANSEN"): "same row as 1,1,2,2-tetrachloroethane 79-34-5",
    ("124-38-9", "ALSHERI_HANSEN"): "same row as formic acid 64-18-6",
    ("141-43-5", "WDR_SCHRIER"): "same row as ethanol 64-17-5",
}

#: Estimation (group-contribution) methods that are skipped for Tb and Tm: the library
#: holds tabulated values only, so that ``liquid`` is never decided by an estimate.
ESTIMATES = {"JOBACK"}

COLUMNS = (
    "cas", "name", "synonyms", "dD", "dP", "dH", "spread", "compilations",
    "mw", "molar_volume", "density", "alpha", "boiling_point", "melting_point", "flash_point",
    "vapour_pressure", "dielectric", "log_p", "twa_ppm", "twa_mg_m3", "carcinogen",
    "liquid", "sources",
)

MAX_SYNONYMS = 6
MAX_SYNONYM_LENGTH = 32
# Registry / catalogue codes that PubChem lists as synonyms; not names a chemist types.
_CODE = re.compile(r"^(nsc|un|ccris|hsdb|einecs|ec|ai3|brn|fema|caswell|epa|rcra|dot|ins|"
                   r"chebi|unii|dtxsid|dtxcid|schembl|zinc|mfcd|nci|wln|cid|ncgc|akos|"
                   r"bidd|ksc|ls|sbi|cas|beilstein|hms|smr|mls|spectrum|prestwick)\b")
_CASLIKE = re.compile(r"^\d{2,7}-\d{2}-\d$")
# FDA UNII codes (10 letters/digits) and short catalogue codes ("i794", "3br", "p067").
_UNII = re.compile(r"^(?=[a-z0-9]*\d)(?=[a-z0-9]*[a-z])[a-z0-9]{10}$")
_SHORTCODE = re.compile(r"^([a-z]{1,3}\d{2,4}|\d{1,2}[a-z]{1,3}|\d+vr)$")
#: PubChem synonyms that are generic, isomer-ambiguous or name another substance (a
#: polymer, a class); dropped so that they never resolve to one particular compound.
BAD_SYNONYMS = {
    "xylene", "diamine", "azine", "acetates", "isobutyrate", "dimethicone", "dimethicones",
    "dimeticone", "dimeticonum", "dimeticona", "polysilane", "neoprene", "carbomer",
    "formal", "hydrazines", "amylene", "n-amylene", "isopentenes", "pentene", "pentylene",
    "hexylene", "heptylene", "nonylene", "decylene", "pentanone", "hexanone",
    "trichloroethane", "dichloroethylene", "bromopropane", "nitropropane", "methylfuran",
    "chlorohexane", "acetylphenol", "df", "disulfane", "pentanol-2", "butoxime",
}


def norm(text: str) -> str:
    """Lookup key: casefold, keep letters and digits only (same rule as solsphere.library)."""
    return re.sub(r"[\W_]+", "", str(text).casefold())


def sig(x: float | None, digits: int = 10) -> float | None:
    """Strip float noise (e.g. from K -> °C) while keeping the source's precision."""
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    return float(f"{x:.{digits}g}")


def fmt(x) -> str:
    if x is None:
        return ""
    if isinstance(x, bool):
        return "true" if x else "false"
    if isinstance(x, float):
        return repr(x)
    return str(x)


def _num(v) -> float | None:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def cas_key(cas: str) -> tuple[int, int, int]:
    a, b, c = cas.split("-")
    return int(a), int(b), int(c)


# --------------------------------------------------------------------------- Hansen values
def load_compilations():
    """Return {method: {cas: (dD, dP, dH) in MPa½}} for the three allowed compilations."""
    import chemicals.solubility  # noqa: F401  (registers the data files)
    from chemicals.data_reader import data_source

    out = {}
    for method, filename in COMPILATIONS:
        df = data_source(filename)
        table = {}
        for cas, row in zip(df.index, df[["HANSEN_DELTA_D", "HANSEN_DELTA_P",
                                          "HANSEN_DELTA_H"]].itertuples(index=False)):
            vals = [_num(v) for v in row]
            if any(v is None for v in vals):
                continue
            # Pa½ -> MPa½; the tables are given to 10 Pa½ (0.01 MPa½) at finest.
            table[str(cas).strip()] = tuple(round(v / 1000.0, 2) for v in vals)
        out[method] = table
    return out


def agree(a, b, tol: float = AGREE_TOL) -> bool:
    return all(abs(x - y) <= tol + 1e-9 for x, y in zip(a, b))


def choose(have: dict[str, tuple]) -> tuple[str, str]:
    """Winner rule. ``have`` maps compilation -> point. Returns (winner, rule).

    1. only one compilation lists the compound -> it ("only");
    2. all listing compilations agree within AGREE_TOL -> the highest-priority one ("agree");
    3. some compilation agrees with more others than any rival -> the highest-priority
       member of that largest agreeing group ("majority");
    4. otherwise the highest-priority compilation ("priority").
    """
    order = [m for m, _ in COMPILATIONS if m in have]
    if len(order) == 1:
        return order[0], "only"
    support = {m: sum(agree(have[m], have[o]) for o in order if o != m) for m in order}
    if all(v == len(order) - 1 for v in support.values()):
        return order[0], "agree"
    best = max(support.values())
    if best > 0 and sum(v == best for v in support.values()) < len(order):
        return next(m for m in order if support[m] == best), "majority"
    return order[0], "priority"


def spread_of(points) -> float | None:
    """Largest difference between compilations on any one of dD, dP, dH [MPa½]."""
    if len(points) < 2:
        return None
    return round(max(max(p[k] for p in points) - min(p[k] for p in points)
                     for k in range(3)), 2)


# --------------------------------------------------------------------------- identities
def good_synonym(s: str) -> bool:
    if not s or len(s) > MAX_SYNONYM_LENGTH or not s.isascii():
        return False
    if _CASLIKE.match(s) or _CODE.match(s) or _UNII.match(s) or _SHORTCODE.match(s):
        return False
    if s.casefold() in BAD_SYNONYMS or "@" in s:
        return False
    if any(ch in s for ch in "[]{}();:/"):
        return False
    if re.search(r",\s", s) or s.endswith("-"):  # inverted index names "benzene, methyl-"
        return False
    if re.search(r"\d{4,}", s):  # catalogue numbers
        return False
    return bool(re.search(r"[a-z]", s))


#: Display names that are registry or catalogue codes (e.g. "agn-pc-00nnmj",
#: "dsstox_cid_21491", "ctk2a8768", "nsc8117", "brn 1760420").
_CODE_NAME = re.compile(r"^(agn-pc-|dsstox|ctk\d|nsc\d|brn\s)")


def usable_name(name: str) -> bool:
    """A display name is a name, not a registry code, a CAS number or an inverted index
    form ("ethene, chloro-"); curated_solvents.csv fixes the rest (non-English forms)."""
    if _CASLIKE.match(name) or _CODE_NAME.match(name.casefold()):
        return False
    return not (re.search(r",\s", name) and name.endswith("-"))


def identity(cas: str):
    """(name, [synonyms], mw) from chemicals.identifiers, or None if the CAS is not there."""
    from chemicals.identifiers import check_CAS, search_chemical

    if not check_CAS(cas):
        return None
    try:
        meta = search_chemical(cas)
    except ValueError:
        return None
    cands = [meta.common_name or ""] + [meta.iupac_name or ""] + list(meta.synonyms or [])
    name = meta.common_name
    renamed = None
    if not name or not usable_name(name):
        renamed = name if name and not _CASLIKE.match(name) else None
        ok = [s for s in cands if good_synonym(s) and usable_name(s)]
        # prefer a name without the 2013 IUPAC "-anyl" forms ("chloranylethene")
        name = next((s for s in ok if "anyl" not in s), ok[0] if ok else meta.iupac_name)
    if not name:
        return None
    seen = {norm(name)}
    syns = []
    if renamed:  # the code or index form stays findable (exact match) but is never shown
        syns.append(renamed)
        seen.add(norm(renamed))
    for s in cands:
        s = s.strip()
        k = norm(s)
        if k in seen or not good_synonym(s):
            continue
        seen.add(k)
        syns.append(s)
        if len(syns) >= MAX_SYNONYMS:
            break
    return name, syns, sig(meta.MW)


# --------------------------------------------------------------------------- properties
#: Joback melting-point estimates below this [°C] count as liquid at 25 °C when no
#: melting point is tabulated (see ``properties``).
JOBACK_TM_BELOW = -25.0


def joback_tm(cas):
    """chemicals' Joback estimate of the melting point [°C], or None."""
    from chemicals import phase_change
    if "JOBACK" not in phase_change.Tm_methods(cas):
        return None
    v = phase_change.Tm(cas, method="JOBACK")
    return v - 273.15 if v is not None and math.isfinite(v) else None


def first_method(methods_fn, value_fn, cas, skip=()):
    """First tabulated method chemicals offers (its own priority order), skipping some."""
    for m in methods_fn(cas):
        if m in skip:
            continue
        v = value_fn(cas, method=m)
        if v is not None and (not isinstance(v, float) or math.isfinite(v)):
            return v, m
    return None, None


def in_range(T, tmin, tmax):
    tmin, tmax = _num(tmin), _num(tmax)
    return (tmin is None or tmin <= T) and (tmax is None or T <= tmax)


class Tables:
    """The chemicals coefficient tables, loaded once (they are lazily loaded modules)."""

    def __init__(self):
        import chemicals.permittivity as E
        import chemicals.vapor_pressure as P
        import chemicals.volume as V
        from chemicals import critical
        self.V, self.P, self.E, self.critical = V, P, E, critical
        self.perry_rho = V.rho_data_Perry_8E_105_l
        self.vdi_rho = V.rho_data_VDI_PPDS_2
        self.costald = V.rho_data_COSTALD
        self.psat = [
            ("WAGNER_MCGARRY", P.Psat_data_WagnerMcGarry),
            ("WAGNER_POLING", P.Psat_data_WagnerPoling),
            ("ANTOINE_EXTENDED_POLING", P.Psat_data_AntoineExtended),
            ("ANTOINE_POLING", P.Psat_data_AntoinePoling),
            ("DIPPR_PERRY_8E", P.Psat_data_Perrys2_8),
            ("VDI_PPDS", P.Psat_data_VDI_PPDS_3),
            ("LANDOLT", P.Psat_data_Landolt_Antoine),
        ]
        self.eps = E.permittivity_data_CRC

    @staticmethod
    def row(df, cas):
        if cas not in df.index:
            return None
        r = df.loc[cas]
        if getattr(r, "ndim", 1) > 1:  # duplicated index: take the first row
            r = r.iloc[0]
        return r

    def molar_volume(self, cas, mw, T=T25):
        """Liquid molar volume at 25 °C [m³/mol] and the method used.

        Order: DIPPR EQ105 fit (Perry's 8th ed. Table 2-32, within its range), VDI PPDS
        saturated-liquid density fit (below Tc), COSTALD with the tabulated characteristic
        volume and SRK acentric factor, COSTALD with critical volume and acentric factor,
        Rackett with the critical compressibility. T above Tc gives None.
        """
        from chemicals.acentric import omega
        from chemicals.dippr import EQ105
        V, crit = self.V, self.critical
        r = self.row(self.perry_rho, cas)
        if r is not None and in_range(T, r.Tmin, r.Tmax):
            rho = EQ105(T, r.C1, r.C2, r.C3, r.C4)  # mol/m³
            if rho > 0:
                return 1.0 / rho, "DIPPR_PERRY_8E"
        r = self.row(self.vdi_rho, cas)
        if r is not None and T < r.Tc and mw:
            return V.volume_VDI_PPDS(T, r.Tc, r.rhoc, r.A, r.B, r.C, r.D, mw), "VDI_PPDS"
        Tc = crit.Tc(cas)
        if Tc is None or not T < Tc:
            return None, None
        r = self.row(self.costald, cas)
        if r is not None and _num(r.Vchar) and _num(r.omega_SRK) is not None:
            return V.COSTALD(T, Tc, r.Vchar, r.omega_SRK), "COSTALD (tabulated parameters)"
        Vc, w = crit.Vc(cas), omega(cas)
        if Vc and w is not None:
            return V.COSTALD(T, Tc, Vc, w), "COSTALD (Vc, omega)"
        Pc, Zc = crit.Pc(cas), crit.Zc(cas)
        if Pc and Zc:
            return V.Rackett(T, Tc, Pc, Zc), "RACKETT"
        return None, None

    def vapour_pressure(self, cas, T=T25):
        """Liquid vapour pressure [Pa] at T (default 25 °C): first coefficient table valid at T."""
        from chemicals.dippr import EQ101
        P = self.P
        for method, df in self.psat:
            r = self.row(df, cas)
            if r is None:
                continue
            try:
                if method == "WAGNER_MCGARRY":
                    if not (r.Tmin <= T < r.Tc):
                        continue
                    v = P.Wagner_original(T, r.Tc, r.Pc, r.A, r.B, r.C, r.D)
                elif method in ("WAGNER_POLING",):
                    if not (in_range(T, r.Tmin, r.Tmax) and T < r.Tc):
                        continue
                    v = P.Wagner(T, r.Tc, r.Pc, r.A, r.B, r.C, r.D)
                elif method == "ANTOINE_EXTENDED_POLING":
                    if not in_range(T, r.Tmin, r.Tmax):
                        continue
                    v = P.TRC_Antoine_extended(T, r.Tc, r.to, r.A, r.B, r.C, r.n, r.E, r.F)
                elif method == "ANTOINE_POLING":
                    if not in_range(T, r.Tmin, r.Tmax):
                        continue
                    v = P.Antoine(T, r.A, r.B, r.C, base=10.0)
                elif method == "DIPPR_PERRY_8E":
                    if not in_range(T, r.Tmin, r.Tmax):
                        continue
                    v = EQ101(T, r.C1, r.C2, r.C3, r.C4, r.C5)
                elif method == "VDI_PPDS":
                    if not (r.Tm <= T < r.Tc):
                        continue
                    v = P.Wagner(T, r.Tc, r.Pc, r.A, r.B, r.C, r.D)
                else:  # LANDOLT: Antoine in Pa and K with the natural exponential
                    if not in_range(T, r.Tmin, r.Tmax):
                        continue
                    v = P.Antoine(T, r.A, r.B, r.C, base=math.e)
            except (TypeError, ValueError, OverflowError, ZeroDivisionError):
                continue
            v = _num(v)
            if v is not None and v > 0:
                return v, method
        return None, None

    def dielectric(self, cas):
        """Relative permittivity at 25 °C from the CRC table: its fit if valid at 298.15 K,
        else its single tabulated value when measured within 5 K of 25 °C."""
        r = self.row(self.eps, cas)
        if r is None:
            return None, None
        if _num(r.A) is not None and _num(r.Tmin) is not None and in_range(T25, r.Tmin, r.Tmax):
            coeffs = [_num(r[k]) or 0.0 for k in ("A", "B", "C", "D")]
            return self.E.permittivity_CRC(T25, *coeffs), "CRC"
        T, e = _num(r.T), _num(r.Permittivity)
        if T is not None and e is not None and abs(T - T25) <= 5.0:
            return e, f"CRC (at {T:g} K)"
        return None, None


def carcinogen_text(cas) -> str:
    """Short text: IARC group 1/2A/2B and NTP 'known'/'reasonably anticipated' listings."""
    from chemicals.safety import Carcinogen
    d = Carcinogen(cas) or {}
    parts = []
    iarc = d.get("International Agency for Research on Cancer", "")
    m = re.search(r"\((1|2A|2B)\)", iarc or "")
    if m:
        parts.append(f"IARC group {m.group(1)}")
    ntp = d.get("National Toxicology Program 13th Report on Carcinogens", "")
    if ntp in ("Known", "Reasonably Anticipated"):
        parts.append("NTP " + ("known" if ntp == "Known" else "reasonably anticipated"))
    return "; ".join(parts)


def properties(cas, mw, tables):
    from chemicals import environment, phase_change, safety
    src = {}
    out = {}

    def put(field, value, method):
        out[field] = value
        if value is not None and method:
            src[field] = method

    Tb, m = first_method(phase_change.Tb_methods, phase_change.Tb, cas, ESTIMATES)
    put("boiling_point", sig(Tb - 273.15) if Tb else None, m)
    Tm, m = first_method(phase_change.Tm_methods, phase_change.Tm, cas, ESTIMATES)
    put("melting_point", sig(Tm - 273.15) if Tm else None, m)
    Tf, m = first_method(safety.T_flash_methods, safety.T_flash, cas)
    put("flash_point", sig(Tf - 273.15) if Tf else None, m)

    Vm, m = tables.molar_volume(cas, mw)
    if Vm is not None and Vm > 0:
        put("molar_volume", sig(Vm * 1e6), m)  # cm³/mol
        if mw:
            put("density", sig(mw / (Vm * 1e6)), m)  # g/cm³
    else:
        put("molar_volume", None, None)
        put("density", None, None)

    # thermal expansion coefficient [1/K]: constant-alpha secant of the same method's
    # molar volume at 25 and 50 °C, alpha = ln(Vm(50 °C)/Vm(25 °C)) / 25 K
    alpha = None
    if Vm is not None and Vm > 0:
        Vm50, m50 = tables.molar_volume(cas, mw, T=T25 + 25.0)
        if Vm50 is not None and Vm50 > 0 and m50 == m:
            a = math.log(Vm50 / Vm) / 25.0
            alpha = sig(a) if 0.0 < a < 5e-3 else None
    alpha_method = f"{m} (secant 25-50 °C)" if alpha is not None else None
    if cas == WATER:  # water: the IAPWS-95 formulation, not a generic density fit
        from chemicals.iapws import iapws95_rho
        rho25, rho50 = (iapws95_rho(T, 101325.0) for T in (T25, T25 + 25.0))
        alpha = sig(math.log(rho25 / rho50) / 25.0)
        alpha_method = "IAPWS-95 (chemicals.iapws, secant 25-50 °C at 101.325 kPa)"
    put("alpha", alpha, alpha_method)

    Ps, m = tables.vapour_pressure(cas)
    put("vapour_pressure", sig(Ps / 1000.0) if Ps else None, m)  # kPa
    eps, m = tables.dielectric(cas)
    put("dielectric", sig(eps), m)
    lp, m = first_method(environment.logP_methods, environment.logP, cas)
    put("log_p", sig(lp), m)


    # 8-hour TWA (chemicals.safety.TWA: the Ontario table). A ppm limit is also given in
    # mg/m³ (converted at 25 °C, 1 atm); a limit given only in mg/m³ is not converted.
    # chemicals derives ppm from mg/m³ itself where its table has only one; a limit for a
    # mist/dust (named so in the table) is kept in mg/m³ only.
    twa = safety.TWA(cas)
    twa_ppm = twa_mg = None
    entry = safety.Ontario_exposure_limits_dict.get(cas) or {}
    aerosol = re.search(r"\b(mist|dust|fume|particulate|aerosol)", entry.get("Name", ""), re.I)
    if twa and aerosol and entry.get("TWA (mg/m^3)"):
        twa_mg = entry["TWA (mg/m^3)"]
        src["twa_mg_m3"] = safety.TWA_methods(cas)[0] + f" ({aerosol.group(1).lower()})"
    elif twa:
        value, unit = twa
        meth = safety.TWA_methods(cas)[0]
        if unit == "ppm":
            twa_ppm = value
            src["twa_ppm"] = meth
            if mw:
                twa_mg = sig(safety.ppmv_to_mgm3(value, mw, T=T25))
                src["twa_mg_m3"] = meth + " (ppm converted at 25 °C, 1 atm)"
        else:
            twa_mg = value
            src["twa_mg_m3"] = meth
    out["twa_ppm"] = sig(twa_ppm)
    out["twa_mg_m3"] = sig(twa_mg)
    out["carcinogen"] = carcinogen_text(cas)
    if out["carcinogen"]:
        src["carcinogen"] = "IARC+NTP"
    return out, src




def liquid_state(cas, out, src):
    """Set ``out["liquid"]`` (at 25 °C) from the boiling and melting points (tabulated or
    curated) and the tabulated vapour pressure."""
    # liquid at 25 °C: Tm < 25 °C < Tb. With one of them unknown, a liquid-phase vapour
    # pressure correlation valid at 25 °C counts as evidence for the liquid (its range
    # starts at or above the melting point), provided Psat < 1 atm (not a gas).
    # Last, with a tabulated boiling point above 25 °C and no tabulated melting point:
    # liquid when the Joback group-contribution estimate of the melting point is below
    # -25 °C, a 50 K margin for that estimate's roughness (its melting points are often
    # off by tens of kelvin; our margin, no source). This is what keeps common glycol
    # ether acetates such as PGMEA, whose melting points no table here carries.
    tb, tm, ps = out["boiling_point"], out["melting_point"], out["vapour_pressure"]
    tm_est = joback_tm(cas) if tb is not None and tm is None else None
    if tb is not None and tm is not None:
        liquid = tm < 25.0 < tb
    elif (tb is not None and tb <= 25.0) or (tm is not None and tm >= 25.0):
        liquid = False
    elif ps is not None and ps < P_ATM:
        liquid = True
    elif tm_est is not None and tm_est < JOBACK_TM_BELOW:
        liquid = True
        src["liquid"] = "Joback Tm estimate < -25 °C"
    else:
        liquid = None
    out["liquid"] = liquid


# --------------------------------------------------------------------------- curated data
CURATED = HERE / "curated_solvents.csv"
#: In the dD, dP, dH cells of a curated row: estimate them from the structure (the SMILES of
#: chemicals.identifiers) with the packaged model of solsphere.estimate, marked with the
#: 95 % half-widths; such rows are never training data (build_structure_model.py skips them).
STRUCTURE = "structure"
STRUCTURE_RULE = "structure estimate"
_CURATED_COLUMNS = ("cas", "name", "dD", "dP", "dH", "boiling_point", "melting_point",
                    "flash_point", "vapour_pressure", "density", "mw", "carcinogen", "source")


def load_curated(path=CURATED) -> dict[str, dict]:
    """The rows of curated_solvents.csv by CAS (``#`` lines are comments).

    Raises ValueError (with the line) for a wrong header, a repeated CAS, a row without a
    source, a partial set of Hansen parameters or a cell that is not a number."""
    lines = path.read_text(encoding="utf-8").splitlines()
    numbered = [(i, ln) for i, ln in enumerate(lines, 1) if not ln.lstrip().startswith("#")]
    reader = csv.reader(io.StringIO("\n".join(ln for _, ln in numbered)))
    header = next(reader)
    if tuple(header) != _CURATED_COLUMNS:
        raise ValueError(f"{path.name}: header must be {','.join(_CURATED_COLUMNS)}")
    out = {}
    for (line, _), cells in zip(numbered[1:], reader):
        if not any(c.strip() for c in cells):
            continue
        row = dict(zip(_CURATED_COLUMNS, (c.strip() for c in cells)))
        where = f"{path.name}, line {line}"
        if row["cas"] in out:
            raise ValueError(f"{where}: CAS {row['cas']} repeats")
        if not row["source"]:
            raise ValueError(f"{where}: empty source")
        if 0 < sum(bool(row[k]) for k in ("dD", "dP", "dH")) < 3:
            raise ValueError(f"{where}: give all three of dD, dP, dH or none")
        structure = [row[k] == STRUCTURE for k in ("dD", "dP", "dH")]
        if any(structure) and not all(structure):
            raise ValueError(f"{where}: '{STRUCTURE}' goes in all three of dD, dP, dH")
        for k in (() if all(structure) else ("dD", "dP", "dH")) + ("boiling_point", "melting_point", "vapour_pressure",
                  "density", "mw") + (("flash_point",) if row["flash_point"] != "none" else ()):
            if row[k] and _num(row[k]) is None:
                raise ValueError(f"{where}, column {k}: not a number: {row[k]!r}")
        out[row["cas"]] = row
    return out


def apply_curated(row: dict, cur: dict) -> None:
    """Overwrite a library row with the filled cells of its curated row (sources say
    ``curated``; the curated file holds the source text of each)."""
    src = row["sources"]
    if cur["name"] and cur["name"] != row["name"]:
        if row["name"] and not _CASLIKE.match(row["name"]):
            row["synonyms"] = [row["name"]] + [x for x in row["synonyms"]
                                               if norm(x) != norm(row["name"])]
        row["name"] = cur["name"]
    if cur["dD"] and cur["dD"] != STRUCTURE:
        row["dD"], row["dP"], row["dH"] = (round(float(cur[k]), 2) for k in ("dD", "dP", "dH"))
        for k in ("dD", "dP", "dH"):
            src[k] = "curated"
        src["hansen_rule"] = "curated"
        row["compilations"] = "|".join(x for x in (row["compilations"], "curated") if x)
    for k in ("boiling_point", "melting_point", "vapour_pressure", "mw"):
        if cur[k]:
            row[k] = sig(float(cur[k]))
            src[k] = "curated"
    if cur["density"] and row["mw"]:
        row["density"] = sig(float(cur["density"]))
        row["molar_volume"] = sig(row["mw"] / row["density"])
        src["density"] = src["molar_volume"] = "curated"
        if row.get("alpha") is None:
            src.pop("alpha", None)
    if cur["flash_point"] == "none":
        row["flash_point"] = None
        src["flash_point"] = "none (not flammable)"
    elif cur["flash_point"]:
        row["flash_point"] = sig(float(cur["flash_point"]))
        src["flash_point"] = "curated"
    if cur["carcinogen"]:
        row["carcinogen"] = cur["carcinogen"]
        src["carcinogen"] = "curated"


def structure_estimate(cas: str):
    """The packaged structure model's estimate for the compound's SMILES (chemicals'
    identifiers); RDKit is needed at build time only."""
    from chemicals.identifiers import search_chemical

    sys.path.insert(0, str(HERE.parent))
    from solsphere.estimate.model import estimate

    est = estimate([search_chemical(cas).smiles])[0]
    if est.refused or not est.in_domain:
        raise ValueError(f"curated_solvents.csv: {cas} cannot be estimated from its "
                         f"structure ({est.refused or '; '.join(est.notes)})")
    return est


# --------------------------------------------------------------------------- estimates
#: Offset subtracted from every estimated flash point [K], so that the estimate errs on the
#: safe (low) side: set from the comparison with measured flash points printed by the
#: build (see data/README.md, "Estimated flash points").
FLASH_SAFETY_OFFSET_K = 9.0
_HALOGENS = ("F", "Cl", "Br", "I")


#: thermo's own estimation methods, skipped: only its fitted correlations are used here.
_THERMO_ESTIMATES = {"LEE_KESLER_PSAT", "AMBROSE_WALTON", "EDALAT", "BOILING_CRITICAL",
                     "SANJARI"}
_THERMO_VP: dict = {}


def thermo_psat(cas, T):
    """Vapour pressure [Pa] from thermo's VaporPressure: the first of its ranked fitted
    correlations whose range includes T (no extrapolation, no estimation method)."""
    if cas not in _THERMO_VP:
        try:
            from thermo.vapor_pressure import VaporPressure
            _THERMO_VP[cas] = VaporPressure(CASRN=cas)
        except Exception:  # thermo missing or the compound unknown to it
            _THERMO_VP[cas] = None
    vp = _THERMO_VP[cas]
    if vp is None:
        return None, None
    for m in vp.ranked_methods:
        if m in vp.all_methods and m not in _THERMO_ESTIMATES:
            lo, hi = vp.T_limits[m]
            if lo <= T <= hi:
                try:
                    v = _num(vp.calculate(T, m))
                except Exception:
                    continue
                if v is not None and v > 0:
                    return v, f"thermo {m}"
    return None, None


def psat_any(cas, T, tables, tb_C=None):
    """Vapour pressure [Pa] at T: a coefficient table valid at T, else a thermo correlation
    valid at T (:func:`thermo_psat`), else the Ambrose–Walton
    corresponding-states estimate from Tc, Pc and ω (chemicals.vapor_pressure), else (with
    a boiling point) the Clausius–Clapeyron equation with Trouton's rule, ΔHvap = 88 J/(mol K)
    × Tb (from memory, e.g. Atkins' Physical Chemistry); with the method name."""
    from chemicals import critical
    from chemicals.acentric import omega
    from chemicals.vapor_pressure import Ambrose_Walton
    v, m = tables.vapour_pressure(cas, T)
    if v is not None:
        return v, m
    v, m = thermo_psat(cas, T)
    if v is not None:
        return v, m
    Tc, Pc, w = critical.Tc(cas), critical.Pc(cas), omega(cas)
    if Tc and Pc and w is not None and T < Tc:
        v = _num(Ambrose_Walton(T, Tc, Pc, w))
        if v is not None and v > 0:
            return v, "AMBROSE_WALTON (Tc, Pc, omega)"
    if tb_C is not None:
        Tb = tb_C + 273.15
        return P_ATM * 1000.0 * math.exp(-88.0 / 8.314462618 * Tb * (1.0 / T - 1.0 / Tb)), \
            "Clausius-Clapeyron with Trouton's rule"
    return None, None


def lower_flammability_limit(cas):
    """(LFL as a mole fraction, method): chemicals' tabulated value, else the Crowl–Louvar
    estimate from the formula (0.55 × the stoichiometric concentration; D. A. Crowl,
    J. F. Louvar, Chemical Process Safety, 3rd ed., 2011). None for compounds without
    carbon, and for halogenated ones with at least as many halogen as hydrogen atoms (which
    may not burn at all: no estimate rather than a wrong one)."""
    from chemicals import safety
    from chemicals.elements import simple_formula_parser
    from chemicals.identifiers import search_chemical
    try:
        atoms = simple_formula_parser(search_chemical(cas).formula)
    except (ValueError, AttributeError, TypeError):
        return None, None
    n_halogen = sum(atoms.get(x, 0) for x in _HALOGENS)
    if not atoms.get("C") or (n_halogen and n_halogen >= atoms.get("H", 0)):
        return None, None
    methods = safety.LFL_methods(CASRN=cas)
    if methods:
        v = _num(safety.LFL(CASRN=cas, method=methods[0]))
        if v:
            return v, methods[0]
    try:
        v = _num(safety.Crowl_Louvar_LFL(atoms))
    except (ValueError, KeyError, ZeroDivisionError):
        v = None
    return (v, "Crowl-Louvar") if v else (None, None)


def flash_point_estimate(cas, tb_C, tables):
    """Flash point [°C] estimated as the temperature at which the liquid's vapour pressure
    reaches the lower flammability limit (LFL × 101.325 kPa), the published relation
    behind closed-cup flash points (e.g. Crowl & Louvar, Chemical Process Safety, 3rd ed.,
    2011, ch. 6); minus FLASH_SAFETY_OFFSET_K. Searched between -80 °C and the boiling point by
    bisection to 0.01 K. Returns (value, method text) or (None, None)."""
    lfl, lm = lower_flammability_limit(cas)
    if lfl is None or tb_C is None:
        return None, None
    target = lfl * P_ATM * 1000.0
    lo, hi = 193.15, tb_C + 273.15
    p_hi, _ = psat_any(cas, hi, tables, tb_C)
    p_lo, _ = psat_any(cas, lo, tables, tb_C)
    if p_hi is None or p_hi < target or (p_lo is not None and p_lo >= target):
        return None, None
    while hi - lo > 0.01:  # bisection: vapour pressure rises with temperature
        mid = 0.5 * (lo + hi)
        p, _ = psat_any(cas, mid, tables, tb_C)
        lo, hi = (lo, mid) if p is not None and p >= target else (mid, hi)
    _, pm = psat_any(cas, hi, tables, tb_C)
    return (sig(round(hi - 273.15 - FLASH_SAFETY_OFFSET_K, 1)),
            f"estimated: T where Psat = LFL (LFL {lm}, Psat {pm})")


def add_estimates(row, cas, tables):
    """Vapour pressure and flash point estimates for a liquid that has none tabulated
    (marked ``estimated`` in sources)."""
    src = row["sources"]
    if row["vapour_pressure"] is None:
        p, m = psat_any(cas, T25, tables, row["boiling_point"])
        if p is not None and m.startswith("thermo"):
            row["vapour_pressure"] = sig(p / 1000.0)  # a fitted correlation, not an estimate
            src["vapour_pressure"] = m
        elif p is not None and not m.startswith(("WAGNER", "ANTOINE", "DIPPR", "VDI", "LANDOLT")):
            row["vapour_pressure"] = sig(p / 1000.0)
            src["vapour_pressure"] = f"estimated: {m}"
    if row["flash_point"] is None and src.get("flash_point") is None:
        fp, m = flash_point_estimate(cas, row["boiling_point"], tables)
        if fp is not None:
            row["flash_point"] = fp
            src["flash_point"] = m


# --------------------------------------------------------------------------- assembly
def build(verbose: bool = True):
    t0 = time.perf_counter()
    comps = load_compilations()
    curated = load_curated()
    all_cas = sorted(set().union(*[set(t) for t in comps.values()], set(curated)),
                     key=cas_key)
    tables = Tables()
    rows, dropped = [], []
    stats = {}
    for cas in all_cas:
        cur = curated.get(cas)
        have = {m: comps[m][cas] for m, _ in COMPILATIONS if cas in comps[m]}
        if not have and not (cur and cur["dD"]):
            continue  # a curated repair of a compound that no compilation carries
        ident = identity(cas)
        if ident is None and not (cur and cur["name"]):
            dropped.append(cas)
            continue
        name, syns, mw = ident or (cur["name"], [], None)
        usable = {m: p for m, p in have.items() if (cas, m) not in SET_ASIDE}
        if usable:
            winner, rule = choose(usable)
            if len(usable) < len(have):
                rule += ", " + " ".join(m for m in have if m not in usable) + " set aside"
            dD, dP, dH = have[winner]
        elif cur["dD"] == STRUCTURE:
            winner, rule = "structure", STRUCTURE_RULE
            est = structure_estimate(cas)
            dD, dP, dH = (round(float(v), 2) for v in (est.dD, est.dP, est.dH))
        else:
            winner, rule = "curated", "curated"
            dD, dP, dH = (round(float(cur[k]), 2) for k in ("dD", "dP", "dH"))
        stats[rule] = stats.get(rule, 0) + 1
        props, src = properties(cas, mw, tables)
        sources = {"dD": winner, "dP": winner, "dH": winner, "hansen_rule": rule}
        if rule == STRUCTURE_RULE:
            sources.update(est.library_sources())
        if mw:
            sources["mw"] = "chemicals.identifiers"
        sources.update(src)
        row = {"cas": cas, "name": name, "synonyms": syns, "dD": dD, "dP": dP, "dH": dH,
               "spread": spread_of(list(have.values())),
               "compilations": "|".join(have), "mw": mw, **props, "sources": sources}
        if cur:
            apply_curated(row, cur)
            sources["curated"] = "curated_solvents.csv"
        liquid_state(cas, row, sources)
        if row["liquid"] is True:
            add_estimates(row, cas, tables)
        rows.append(row)
    _dedupe_names(rows)
    _drop_ambiguous_synonyms(rows)
    for r in rows:
        r["synonyms"] = "|".join(r["synonyms"])
        r["sources"] = ";".join(f"{k}={v}" for k, v in r["sources"].items())
    if verbose:
        n = len(rows)
        print(f"compilations: " + ", ".join(f"{m} {len(comps[m])}" for m, _ in COMPILATIONS))
        print(f"union {len(all_cas)} CAS; dropped {len(dropped)} not in chemicals.identifiers "
              f"(no name): {' '.join(dropped)}")
        print(f"kept {n}; winner rule: {stats}")
        for f in ("liquid", "flash_point", "twa_ppm", "twa_mg_m3", "boiling_point",
                  "melting_point", "molar_volume", "vapour_pressure", "dielectric", "log_p"):
            k = sum(1 for r in rows if (r[f] is True if f == "liquid" else r[f] is not None))
            print(f"  with {f}: {k}")
        print(f"  carcinogen listed: {sum(1 for r in rows if r['carcinogen'])}")
        print(f"  spread > 1 MPa½: {sum(1 for r in rows if (r['spread'] or 0) > 1)}")
        print(f"  liquids with spread > 1 MPa½: "
              f"{sum(1 for r in rows if r['liquid'] is True and (r['spread'] or 0) > 1)}")
        print(f"build time {time.perf_counter() - t0:.1f} s")
    return rows


def _dedupe_names(rows):
    """Two CAS whose names coincide after normalisation (stereo descriptors and
    punctuation are dropped by it, e.g. "(+)-menthol" / "menthol"): the first (lowest
    CAS) keeps the name, the others get " (CAS)" appended so every display name is unique
    as a lookup key. A renamed compound keeps its original name as its first synonym (an
    exact, unnormalised match still finds it) and loses the synonyms it shares with the
    compound that kept the name."""
    first = {}
    for r in rows:
        k = norm(r["name"])
        if k in first:
            kept = first[k]
            shared = {s.casefold() for s in kept["synonyms"]}
            original = r["name"]
            r["name"] = f"{original} ({r['cas']})"
            r["synonyms"] = [original] + [s for s in r["synonyms"]
                                          if s.casefold() not in shared][:MAX_SYNONYMS - 1]
        else:
            first[k] = r


def _drop_ambiguous_synonyms(rows):
    """A synonym names one compound only: it is dropped when it is (casefolded) another
    compound's name or a synonym of two compounds. Coincidences that appear only after
    normalisation are left to the lookup's priority rule (names before synonyms)."""
    names = {r["name"].casefold() for r in rows}
    count = {}
    for r in rows:
        for s in r["synonyms"]:
            count[s.casefold()] = count.get(s.casefold(), 0) + 1
    for r in rows:
        r["synonyms"] = [s for s in r["synonyms"]
                         if count[s.casefold()] == 1 and s.casefold() not in names]


def to_csv(rows) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(COLUMNS)
    for r in rows:
        w.writerow([fmt(r[c]) for c in COLUMNS])
    return buf.getvalue()


def check_aliases(rows) -> list[str]:
    """Problems with data/aliases.csv: unknown CAS, duplicate alias, missing note."""
    cas = {r["cas"] for r in rows}
    problems, seen = [], set()
    with open(ALIASES, newline="", encoding="utf-8") as fh:
        for i, a in enumerate(csv.DictReader(fh), start=2):
            if a["cas"] == "AMBIGUOUS":  # refused by the lookup; the note lists the readings
                if len([x for x in a["note"].split("|") if x.strip()]) < 2:
                    problems.append(f"aliases.csv line {i}: {a['alias']} is AMBIGUOUS but "
                                    "its note does not list two readings separated by |")
            elif a["cas"] not in cas:
                problems.append(f"aliases.csv line {i}: {a['alias']} -> {a['cas']} not in solvents.csv")
            if norm(a["alias"]) in seen:
                problems.append(f"aliases.csv line {i}: duplicate alias {a['alias']}")
            seen.add(norm(a["alias"]))
            if not a.get("note"):
                problems.append(f"aliases.csv line {i}: empty note")
    return problems


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--check", action="store_true",
                    help="rebuild in memory and compare with data/solvents.csv; write nothing")
    ap.add_argument("-q", "--quiet", action="store_true")
    args = ap.parse_args(argv)
    rows = build(verbose=not args.quiet)
    text = to_csv(rows)
    problems = check_aliases(rows) if ALIASES.exists() else ["data/aliases.csv missing"]
    for p in problems:
        print(p, file=sys.stderr)
    if args.check:
        same = OUT.exists() and OUT.read_text(encoding="utf-8") == text
        print("solvents.csv is up to date" if same else "solvents.csv differs from a rebuild")
        return 0 if same and not problems else 1
    OUT.write_text(text, encoding="utf-8")
    print(f"wrote {OUT} ({len(rows)} rows)")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
