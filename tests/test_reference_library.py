"""Reference checks of the packaged solvent table against its published sources.

Sources (each check names its own):
- the three Hansen compilations as shipped in the ``chemicals`` package
  (chemicals.solubility: Alshehri et al., AIChE J. 68 (2022) e17469; Díaz de los Ríos &
  Murcia Belmonte, SN Appl. Sci. 4 (2022) 185; Schrier, Wolfram Data Repository 2020);
- C. M. Hansen, *Hansen Solubility Parameters: A User's Handbook*, 2nd ed., CRC Press
  2007: ch. 1 (δt² = δD² + δP² + δH² equals the Hildebrand parameter squared) and
  Appendix A (the table of solvent parameters; values below are from memory);
- heats of vaporisation at 298.15 K: the CRC Handbook table carried by
  chemicals.phase_change (``Hvap_data_CRC``).
"""

from __future__ import annotations

import math
import re
import subprocess
import sys
from pathlib import Path

import pytest

chemicals = pytest.importorskip("chemicals")

from solsphere.library.table import load_library  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
# The winner rule of data/README.md, written out again here on purpose (not imported from
# the build script), so that the table is checked against the documented rule.
PRIORITY = ("WDR_SCHRIER", "ALSHERI_HANSEN", "MANUEL_RUBEN_2022")
FILES = {"WDR_SCHRIER": "schrier_hansen_solubility_parameters.tsv",
         "ALSHERI_HANSEN": "alshehri_hansen_solubility_parameters.tsv",
         "MANUEL_RUBEN_2022": "ruben_manuel_hansen_solubility_parameters.tsv"}
SET_ASIDE = {("127-18-4", "ALSHERI_HANSEN"), ("124-38-9", "ALSHERI_HANSEN"),
             ("141-43-5", "WDR_SCHRIER")}
AGREE = 0.2  # MPa½



@pytest.fixture(scope="module")
def tables():
    """{compilation: {cas: (dD, dP, dH) in MPa½}} read straight from chemicals' files."""
    import chemicals.solubility  # noqa: F401  (registers the files)
    from chemicals.data_reader import data_source
    out = {}
    for m, f in FILES.items():
        df = data_source(f)
        out[m] = {str(c): (d / 1000, p / 1000, h / 1000) for c, d, p, h in
                  zip(df.index, df.HANSEN_DELTA_D, df.HANSEN_DELTA_P, df.HANSEN_DELTA_H)}
    return out


def _agree(a, b):
    return all(abs(x - y) <= AGREE + 1e-9 for x, y in zip(a, b))


def _winner(have):
    order = [m for m in PRIORITY if m in have]
    support = {m: sum(_agree(have[m], have[o]) for o in order if o != m) for m in order}
    best = max(support.values())
    if len(order) > 1 and best > 0 and 0 < sum(v == best for v in support.values()) < len(order):
        return next(m for m in order if support[m] == best)  # majority
    return order[0]  # only one, all agree, or no agreement: priority


# --------------------------------------------------------------------------- compilations
def test_every_value_comes_from_a_compilation_by_the_rule(lib, tables):
    """Source: the three compilations in chemicals.solubility (see module docstring)."""
    counts = dict.fromkeys(PRIORITY, 0)
    for r in lib:
        have = {m: t[r.cas] for m, t in tables.items() if r.cas in t}
        if r.sources.get("hansen_rule") == "curated":  # data/curated_solvents.csv, own test
            assert not have and r.compilations == ("curated",), r.name
            continue
        if r.sources.get("hansen_rule") == "structure estimate":  # own test in test_estimate
            assert not have and not r.compilations, r.name
            continue
        assert have, f"{r.name} ({r.cas}) is in none of the three compilations"
        usable = {m: p for m, p in have.items() if (r.cas, m) not in SET_ASIDE}
        win = _winner(usable)
        assert r.sources["dD"] == r.sources["dP"] == r.sources["dH"] == win, r.name
        assert r.point == pytest.approx(usable[win], abs=1e-9), r.name
        assert set(r.compilations) == set(have)
        if len(have) > 1:
            spread = max(max(p[k] for p in have.values()) - min(p[k] for p in have.values())
                         for k in range(3))
            assert r.spread == pytest.approx(spread, abs=0.006), r.name
        else:
            assert r.spread is None
        counts[win] += 1
    assert all(v > 50 for v in counts.values()), counts  # each compilation supplies values


@pytest.mark.parametrize("cas,source,point", [
    # one sample per compilation where it is the only one or the winner; values as in
    # chemicals.solubility (Pa½ / 1000)
    ("100-41-4", "WDR_SCHRIER", (17.8, 0.6, 1.4)),          # ethylbenzene, all three agree
    ("108-88-3", "ALSHERI_HANSEN", (18.0, 1.4, 2.0)),       # toluene, two agree
    ("75-09-2", "WDR_SCHRIER", (18.2, 6.3, 6.1)),           # dichloromethane, by priority
    ("102-71-6", "ALSHERI_HANSEN", (17.3, 22.4, 23.3)),     # triethanolamine, by priority
    ("110-54-3", "MANUEL_RUBEN_2022", (14.9, 0.0, 0.0)),    # n-hexane, only there
    ("141-43-5", "ALSHERI_HANSEN", (17.0, 15.5, 21.2)),     # ethanolamine, Schrier set aside
    ("108-20-3", "WDR_SCHRIER", (15.1, 3.2, 3.2)),          # diisopropyl ether, majority
    ("105-58-8", "ALSHERI_HANSEN", (15.1, 6.3, 3.5)),       # diethyl carbonate, majority
    ("127-18-4", "MANUEL_RUBEN_2022", (18.3, 5.7, 0.0)),    # tetrachloroethylene
])
def test_sample_values_and_winners(lib, tables, cas, source, point):
    r = lib.lookup(cas)
    assert r.sources["dD"] == source
    assert r.point == pytest.approx(point, abs=1e-9)
    assert tables[source][cas] == pytest.approx(point, abs=1e-9)


def test_rebuild_matches_committed_table():
    """data/build_solvents.py regenerates data/solvents.csv byte for byte (deterministic,
    no hand edits), when run with the chemicals version the table was built with."""
    readme = (ROOT / "data" / "README.md").read_text(encoding="utf-8")
    m = re.search(r"built with chemicals (\d+\.\d+\.\d+)", readme)
    assert m, "data/README.md must say which chemicals version built the table"
    if m.group(1) != chemicals.__version__:
        pytest.skip(f"table built with chemicals {m.group(1)}, installed "
                    f"{chemicals.__version__}")
    out = subprocess.run([sys.executable, str(ROOT / "data" / "build_solvents.py"),
                          "--check", "-q"], capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, out.stdout + out.stderr


# --------------------------------------------------------------------------- Hildebrand
# Non-hydrogen-bonding solvents: alkanes, alkenes, aromatics, chlorinated. For them
# δt = sqrt(δD² + δP² + δH²) should equal the Hildebrand parameter
# δ = sqrt((ΔHvap − RT) / Vm) (Hansen, Handbook 2nd ed., ch. 1). ΔHvap(298.15 K) from the
# CRC Handbook table in chemicals.phase_change; Vm from the library (its source method,
# from chemicals.volume, is in ``sources``). Tolerance 0.8 MPa½ (about 4 %). Measured with
# chemicals 1.5.2: median |Δ| 0.09, largest 0.72 MPa½ (cumene); 28 of 30 within 0.3.
# With the Alshehri row for tetrachloroethylene (a copy of tetrachloroethane's row, set
# aside by the build) this check fails: δt 20.2 against 19.0.
HILDEBRAND_TOL = 0.8
NON_HB = ("109-66-0 110-54-3 142-82-5 111-65-9 111-84-2 124-18-5 112-40-3 287-92-3 "
          "110-82-7 108-87-2 540-84-1 592-41-6 111-66-0 71-43-2 108-88-3 100-41-4 95-47-6 "
          "106-42-3 108-67-8 98-82-8 108-90-7 95-50-1 75-09-2 67-66-3 56-23-5 107-06-2 "
          "71-55-6 79-01-6 127-18-4 109-69-3").split()


def test_total_parameter_equals_hildebrand(lib):
    from chemicals.phase_change import Hvap_data_CRC
    R, T = 8.314462618, 298.15
    devs = {}
    for cas in NON_HB:
        s = lib.lookup(cas)
        H = float(Hvap_data_CRC.loc[cas, "Hvap298"])  # J/mol
        hild = math.sqrt((H - R * T) / (s.molar_volume * 1e-6)) / 1000.0  # MPa½
        dt = math.sqrt(s.dD ** 2 + s.dP ** 2 + s.dH ** 2)
        devs[s.name] = dt - hild
    worst = max(devs, key=lambda k: abs(devs[k]))
    assert abs(devs[worst]) <= HILDEBRAND_TOL, (worst, devs[worst])
    assert len(devs) == 30


def test_molar_volume_against_costald(lib):
    """The library's Vm (DIPPR/VDI fits first) against COSTALD with its own tabulated
    parameters (Hankinson & Thomson, AIChE J. 25 (1979) 653, as in chemicals.volume) for
    the non-hydrogen-bonding solvents above that the table covers (19; largest deviation
    measured 0.5 %): within 1 %.
    (COSTALD is a corresponding-states method and is known to be poorer for alcohols:
    ethanol 57.0 against 58.6 cm³/mol from the DIPPR fit; those are not compared.)"""
    import chemicals.volume as V
    from chemicals.critical import Tc
    n = 0
    for cas in NON_HB:
        s = lib.lookup(cas)
        if cas not in V.rho_data_COSTALD.index:
            continue
        row = V.rho_data_COSTALD.loc[cas]
        vm = V.COSTALD(298.15, Tc(cas), row.Vchar, row.omega_SRK) * 1e6
        assert s.molar_volume == pytest.approx(vm, rel=0.01), s.name
        n += 1
    assert n >= 15


# --------------------------------------------------------------------------- handbook values
@pytest.mark.parametrize("name,point", [
    # Hansen, Handbook 2nd ed. (2007), Appendix A, from memory
    ("toluene", (18.0, 1.4, 2.0)), ("acetone", (15.5, 10.4, 7.0)),
    ("ethanol", (15.8, 8.8, 19.4)), ("water", (15.5, 16.0, 42.3)),
    ("n-hexane", (14.9, 0.0, 0.0)), ("methanol", (15.1, 12.3, 22.3)),
    ("DMSO", (18.4, 16.4, 10.2)), ("DMF", (17.4, 13.7, 11.3)),
    ("THF", (16.8, 5.7, 8.0)), ("chloroform", (17.8, 3.1, 5.7)),
    ("ethyl acetate", (15.8, 5.3, 7.2)), ("NMP", (18.0, 12.3, 7.2)),
    ("cyclohexane", (16.8, 0.0, 0.2)), ("dichloromethane", (18.2, 6.3, 6.1)),
    ("acetonitrile", (15.3, 18.0, 6.1)), ("benzene", (18.4, 0.0, 2.0)),
    ("MEK", (16.0, 9.0, 5.1)), ("1-butanol", (16.0, 5.7, 15.8)),
    ("isopropanol", (15.8, 6.1, 16.4)), ("diethyl ether", (14.5, 2.9, 5.1)),
    ("tetrachloroethylene", (18.3, 5.7, 0.0)),
])
def test_handbook_values(lib, name, point):
    assert lib.lookup(name).point == pytest.approx(point, abs=0.5)


# --------------------------------------------------------------------------- other columns
def test_dielectric_constants(lib):
    # common practice, no source: water ≈ 78 at 25 °C, formamide higher, alkanes ≈ 2
    assert lib.lookup("water").dielectric == pytest.approx(78.4, abs=1.0)
    assert lib.lookup("formamide").dielectric > lib.lookup("water").dielectric
    assert lib.lookup("n-hexane").dielectric == pytest.approx(1.9, abs=0.2)


def test_log_p(lib):
    # common practice, no source: toluene 2.5-2.7, acetone ≈ -0.2, DMF ≈ -1, octane 4.5-5.
    # The table (CRC values via chemicals.environment) has toluene 2.73 and octane 5.15, a
    # little above those rules of thumb and in line with the Hansch-Leo compilation
    # (Hansch, Leo & Hoekman, "Exploring QSAR", ACS 1995: toluene 2.73, octane 5.18; from
    # memory), so the upper bounds here are 2.8 and 5.3.
    assert 2.5 <= lib.lookup("toluene").log_p <= 2.8
    assert lib.lookup("acetone").log_p == pytest.approx(-0.2, abs=0.2)
    assert lib.lookup("DMF").log_p == pytest.approx(-1.0, abs=0.3)
    assert 4.5 <= lib.lookup("octane").log_p <= 5.3
    assert lib.lookup("n-hexane").log_p < lib.lookup("octane").log_p


def test_safety_columns(lib):
    # Flash points (closed cup) and limits, common practice, no source: toluene ≈ 4 °C,
    # acetone ≈ −20 °C; benzene is IARC group 1 (IARC Monographs vol. 120, 2018).
    assert lib.lookup("toluene").flash_point == pytest.approx(4, abs=2)
    assert lib.lookup("acetone").flash_point == pytest.approx(-19, abs=3)
    assert "IARC group 1" in lib.lookup("benzene").carcinogen
    assert lib.lookup("benzene").twa_ppm <= 1
