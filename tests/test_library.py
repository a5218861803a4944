"""Tests of solsphere.library: lookup, suggestions, filters, the packaged table."""

from __future__ import annotations

import csv
from decimal import Decimal
from pathlib import Path

import numpy as np
import pytest

from solsphere.errors import InputError, UnknownSolventError
from solsphere.library.table import (GHS_FLASH_CATEGORY_2_C, LOW_EXPOSURE_LIMIT_PPM, Library,
                               Solvent, hazard_flags, load_library, normalise)

DATA = Path(__file__).resolve().parent.parent / "data"



def small() -> Library:
    recs = [
        Solvent("toluene", 18.0, 1.4, 2.0, cas="108-88-3", synonyms=("methylbenzene", "toluol"),
                flash_point=4.0, boiling_point=110.6, liquid=True, twa_ppm=20.0),
        Solvent("n,n-dimethylformamide", 17.4, 13.7, 11.3, cas="68-12-2",
                synonyms=("dimethylformamide",), flash_point=58.0, boiling_point=153.0,
                liquid=True, carcinogen="IARC group 2A"),
        Solvent("water", 15.5, 16.0, 42.3, cas="7732-18-5", boiling_point=100.0, liquid=True),
        Solvent("naphthalene", 19.2, 2.0, 5.9, cas="91-20-3", flash_point=79.0,
                boiling_point=218.0, liquid=False),
        Solvent("mystery", 16.0, 5.0, 5.0),  # a user's own solvent: no CAS, nothing known
    ]
    return Library.from_records(recs, aliases={"DMF": "68-12-2", "PhMe": "toluene"})


# --------------------------------------------------------------------------- lookup
@pytest.mark.parametrize("text", ["N,N-Dimethylformamide", "n n dimethylformamide",
                                  "n,n-DIMETHYL-formamide", "DMF", "dmf", " 68-12-2 ",
                                  "dimethyl formamide", "Dimethylformamide"])
def test_lookup_any_spelling(text):
    assert small().lookup(text).cas == "68-12-2"


@pytest.mark.parametrize("text,cas", [
    ("Toluene", "108-88-3"), ("methyl-benzene", "108-88-3"), ("TOLUOL", "108-88-3"),
    ("phme", "108-88-3"), ("108-88-3", "108-88-3"), ("Water", "7732-18-5")])
def test_lookup_small(text, cas):
    assert small().lookup(text).cas == cas


@pytest.mark.parametrize("text,cas", [
    ("N,N-Dimethylformamide", "68-12-2"), ("n n dimethylformamide", "68-12-2"),
    ("DMF", "68-12-2"), ("68-12-2", "68-12-2"), ("Methyl Ethyl Ketone", "78-93-3"),
    ("MEK", "78-93-3"), ("isopropyl alcohol", "67-63-0"), ("I.P.A.", "67-63-0"),
    ("2-propanol", "67-63-0"), ("Toluol", "108-88-3"), ("THF", "109-99-9"),
    ("oxolane", "109-99-9"), ("DCM", "75-09-2"), ("methylene chloride", "75-09-2"),
    ("chloroform", "67-66-3"), ("CHCl3", "67-66-3"), ("perc", "127-18-4"),
    ("ethyl acetate", "141-78-6"), ("EtOAc", "141-78-6"), ("H2O", "7732-18-5")])
def test_lookup_packaged(lib, text, cas):
    assert lib.lookup(text).cas == cas


def test_find_and_contains():
    s = small()
    assert s.find("no such thing") is None
    assert s.find("") is None
    assert s.find("toluene").name == "toluene"
    assert "DMF" in s and "acetone" not in s


def test_unknown_name_raises_with_suggestions():
    with pytest.raises(UnknownSolventError) as info:
        small().lookup("tolune")
    err = info.value
    assert isinstance(err, InputError)
    assert err.suggestions[0] == "toluene" and len(err.suggestions) <= 3
    assert "tolune" in str(err) and "\n" not in str(err)


@pytest.mark.parametrize("typo,expected", [
    ("tolune", "toluene"), ("acetonne", "acetone"), ("dimethylformamde", "n,n-dimethylformamide"),
    ("isopropanl", "isopropanol"), ("chloroformm", "chloroform"), ("etanol", "ethanol"),
    ("68-12-3", "n,n-dimethylformamide")])
def test_suggest_packaged(lib, typo, expected):
    got = lib.suggest(typo)
    assert 1 <= len(got) <= 3
    assert expected in got
    with pytest.raises(UnknownSolventError) as info:
        lib.lookup(typo)
    assert info.value.suggestions == got


def test_suggest_nothing_close(lib):
    assert lib.suggest("qqqqzzzz") == []
    assert lib.suggest("") == []
    assert len(lib.suggest("ethanol", n=10)) <= 10


def test_normalise():
    assert normalise("N,N-Dimethyl formamide") == "nndimethylformamide"
    assert normalise("(−)-Menthol") == normalise("menthol")  # stereo marks are dropped
    assert normalise("1,2-dichloroethane") != normalise("1,1-dichloroethane")


# --------------------------------------------------------------------------- collisions
def test_collision_name_beats_alias_beats_synonym():
    recs = [
        Solvent("first", 1, 1, 1, cas="1-00-0", synonyms=("alpha", "beta")),
        Solvent("alpha", 2, 2, 2, cas="2-00-0"),            # a name: beats the synonym
        Solvent("third", 3, 3, 3, cas="3-00-0", synonyms=("gamma",)),
        Solvent("fourth", 4, 4, 4, cas="4-00-0", synonyms=("Be-ta",)),
    ]
    lib = Library.from_records(recs, aliases={"gamma": "4-00-0", "alpha": "3-00-0"})
    assert lib.lookup("Alpha").cas == "2-00-0"   # name beats alias and synonym
    assert lib.lookup("gamma").cas == "4-00-0"   # alias beats synonym
    assert lib.lookup("beta").cas == "1-00-0"    # as typed: 1's synonym "beta"
    assert lib.lookup("Be-ta").cas == "4-00-0"   # as typed: 4's synonym "Be-ta"
    # normalised "beta": 1 lists it second, 4 lists it first -> the earlier position wins
    assert lib.lookup("be ta").cas == "4-00-0"
    # same position on both -> the compound that comes first in the library
    tie = Library.from_records([Solvent("p", 1, 1, 1, synonyms=("Zeta-1",)),
                                Solvent("q", 2, 2, 2, synonyms=("zeta 1",))])
    assert tie.lookup("ZETA1").name == "p"
    assert tie.lookup("zeta 1").name == "q"  # as typed


def test_collision_isomers_resolve_deterministically():
    # "(+)-" and "(-)-" vanish under normalisation: the as-typed text decides first,
    # then the compound's own name, then library order. Reversing the order of the
    # records must not change what an exact name finds.
    a = Solvent("(+)-limonene", 17.2, 1.8, 4.3, cas="5989-27-5")
    b = Solvent("(-)-limonene", 17.2, 1.8, 4.3, cas="5989-54-8")
    for recs in ([a, b], [b, a]):
        lib = Library.from_records(recs)
        assert lib.lookup("(+)-Limonene").cas == "5989-27-5"
        assert lib.lookup("(-)-limonene").cas == "5989-54-8"
        assert lib.lookup("limonene").cas == recs[0].cas


def test_packaged_names_unique_after_normalisation(lib):
    keys = [normalise(n) for n in lib.names]
    assert len(keys) == len(set(keys))
    # ... and no synonym is shared by two compounds (the build drops those)
    owner = {}
    for r in lib:
        for s in r.synonyms:
            assert owner.setdefault(s.casefold(), r.cas) == r.cas, s
    # every name finds its own compound; every synonym finds its own compound as typed
    for r in lib:
        assert lib.lookup(r.name) is r
        assert lib.lookup(r.cas) is r


def test_alias_must_point_into_records():
    with pytest.raises(ValueError, match="not a CAS number or name"):
        Library.from_records([Solvent("x", 1, 1, 1, cas="1-00-0")], aliases={"X1": "9-99-9"})


# --------------------------------------------------------------------------- aliases file
def test_aliases_file_all_resolve(lib):
    with open(DATA / "aliases.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) >= 40
    assert list(rows[0]) == ["alias", "cas", "note"]
    for row in rows:
        if row["cas"] == "AMBIGUOUS":  # refused, listing the readings (tested below)
            continue
        assert lib.lookup(row["alias"]).cas == row["cas"], row
        assert lib.lookup(row["alias"].lower()).cas == row["cas"]
        assert "common practice" in row["note"]
    for want in ("MEK", "MIBK", "THF", "2-MeTHF", "DMSO", "DMF", "DMAC", "NMP", "DCM", "IPA",
                 "PGMEA", "PGME", "EtOAc", "BuOAc", "ACN", "MeCN", "GBL", "DEE", "MTBE",
                 "CPME", "EtOH", "MeOH", "PC", "EC", "DEGBE", "HFIP", "TFE", "NMF", "DCE",
                 "CHCl3", "CCl4", "CS2", "Toluol"):
        assert lib.find(want) is not None, want


# --------------------------------------------------------------------------- filters
def test_liquids_small():
    liq = small().liquids()
    assert liq.names == ("toluene", "n,n-dimethylformamide", "water")
    assert liq.lookup("DMF").cas == "68-12-2"       # aliases survive filtering
    assert liq.find("naphthalene") is None


def test_liquids_packaged(lib):
    liq = lib.liquids()
    assert 600 <= len(liq) < len(lib)
    assert all(r.liquid is True for r in liq)
    for name in ("water", "toluene", "acetone", "DMSO", "ethanol", "hexane"):
        assert liq.find(name) is not None, name
    for name in ("naphthalene", "ethylene carbonate", "carbon dioxide", "phenol"):
        assert liq.find(name) is None, name
    for r in liq:  # the rule of data/README.md
        if r.melting_point is not None and r.boiling_point is not None:
            assert r.melting_point < 25 < r.boiling_point, r.name


def test_select_small():
    s = small()
    assert s.select(min_flash_point=GHS_FLASH_CATEGORY_2_C).names == (
        "n,n-dimethylformamide", "naphthalene")
    assert s.select(min_flash_point=23, keep_unknown=True).names == (
        "n,n-dimethylformamide", "water", "naphthalene", "mystery")
    assert s.select(max_boiling_point=120).names == ("toluene", "water")
    assert s.select(max_boiling_point=120, keep_unknown=True).names == (
        "toluene", "water", "mystery")
    assert "n,n-dimethylformamide" not in s.select(exclude_carcinogens=True).names
    assert s.select(exclude=["DMF", "108-88-3"]).names == ("water", "naphthalene", "mystery")
    assert s.select(exclude="Water").names == (
        "toluene", "n,n-dimethylformamide", "naphthalene", "mystery")
    assert s.select(liquid_only=True, min_flash_point=0).names == (
        "toluene", "n,n-dimethylformamide")
    assert len(s.select()) == len(s)


def test_select_unknown_exclude_raises():
    with pytest.raises(UnknownSolventError) as info:
        small().select(exclude=["tolune"])
    assert info.value.suggestions[:1] == ["toluene"]


def test_select_packaged(lib):
    safe = lib.select(liquid_only=True, min_flash_point=60, exclude_carcinogens=True,
                      exclude=["DMSO"])
    assert len(safe) > 50
    assert all(r.liquid and r.flash_point >= 60 and not r.carcinogen for r in safe)
    assert safe.find("dimethyl sulfoxide") is None
    assert lib.select(max_boiling_point=100).find("toluene") is None
    assert lib.select(max_boiling_point=111).find("toluene") is not None


# --------------------------------------------------------------------------- container
def test_container_protocol():
    s = small()
    assert len(s) == 5 and s[0].name == "toluene" and s[-1].name == "mystery"
    assert [r.name for r in s] == list(s.names)
    assert s["DMF"].name == "n,n-dimethylformamide"
    assert isinstance(s[1:3], Library) and s[1:3].names == ("n,n-dimethylformamide", "water")
    assert s.points.shape == (5, 3)
    np.testing.assert_array_equal(s.points[0], [18.0, 1.4, 2.0])
    with pytest.raises(ValueError):
        s.points[0, 0] = 1.0  # read-only
    empty = Library.from_records([])
    assert len(empty) == 0 and empty.points.shape == (0, 3) and empty.suggest("x") == []
    assert repr(s) == "Library(5 solvents)"


def test_from_records_rejects_non_solvents():
    with pytest.raises(TypeError):
        Library.from_records([("toluene", 18.0, 1.4, 2.0)])


def test_load_library_cached(lib):
    assert load_library() is lib
    assert lib.points.shape == (len(lib), 3)
    np.testing.assert_array_equal(lib.points[:, 0], [r.dD for r in lib])


# --------------------------------------------------------------------------- hazard flags
def test_hazard_flags():
    tol = small().lookup("toluene")
    assert hazard_flags(tol) == ["flash point 4 °C < 23 °C (highly flammable, GHS category 2)"]
    ether = Solvent("ether", 14.5, 2.9, 5.1, flash_point=-45, boiling_point=34.6)
    assert "GHS category 1" in hazard_flags(ether)[0]
    assert hazard_flags(Solvent("x", 1, 1, 1, flash_point=40))[0].endswith("GHS category 3)")
    assert hazard_flags(Solvent("x", 1, 1, 1, flash_point=80))[0].endswith("GHS category 4)")
    assert hazard_flags(Solvent("x", 1, 1, 1, flash_point=150)) == []
    assert hazard_flags(small().lookup("water")) == ["no flash point data"]
    flags = hazard_flags(Solvent("b", 18.4, 0, 2, flash_point=-11, twa_ppm=0.5,
                                 carcinogen="IARC group 1; NTP known", spread=1.25))
    assert flags[1:] == ["exposure limit 0.5 ppm (≤ 10 ppm)",
                         "carcinogen: IARC group 1; NTP known",
                         "compilations disagree by 1.2 MPa½"]
    assert hazard_flags(Solvent("x", 1, 1, 1, flash_point=150, twa_ppm=LOW_EXPOSURE_LIMIT_PPM + 1,
                                spread=1.0)) == []


def test_hazard_flags_packaged(lib):
    assert any("exposure limit" in f for f in hazard_flags(lib.lookup("benzene")))
    assert any(f.startswith("carcinogen: IARC group 1") for f in hazard_flags(lib.lookup("benzene")))
    assert any("disagree" in f for f in hazard_flags(lib.lookup("tetrachloroethylene")))
    # water is marked not flammable in data/curated_solvents.csv: no flash-point flag
    assert not any("flash point" in f for f in hazard_flags(lib.lookup("water")))
    nmp = hazard_flags(lib.lookup("dimethyl carbonate"))  # no measured flash point
    assert nmp[0].startswith("flash point estimated")
    # the library's exposure limits are the Ontario table's, and the flag says so
    assert any("(Ontario; ≤ 10 ppm)" in f for f in hazard_flags(lib.lookup("benzene")))


# --------------------------------------------------------------------------- the table itself
def test_checksum_of_packaged_table():
    """Pinned sums so that any edit of data/solvents.csv is noticed (rebuild, then update
    these numbers on purpose, with the reason in the commit message)."""
    with open(DATA / "solvents.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == 1241  # 6 working solvents estimated from structure
    assert sum(Decimal(r["dD"]) for r in rows) == Decimal("21117.23")
    assert sum(Decimal(r["dP"]) for r in rows) == Decimal("9117.49")
    assert sum(Decimal(r["dH"]) for r in rows) == Decimal("9235.62")
    assert sum(r["liquid"] == "true" for r in rows) == 783


def test_table_columns_and_units(lib):
    with open(DATA / "solvents.csv", newline="", encoding="utf-8") as fh:
        header = next(csv.reader(fh))
    assert header == ["cas", "name", "synonyms", "dD", "dP", "dH", "spread", "compilations",
                      "mw", "molar_volume", "density", "alpha", "boiling_point", "melting_point",
                      "flash_point", "vapour_pressure", "dielectric", "log_p", "twa_ppm",
                      "twa_mg_m3", "carcinogen", "liquid", "sources"]
    cas = [r.cas for r in lib]
    key = [tuple(int(p) for p in c.split("-")) for c in cas]
    assert key == sorted(key) and len(set(cas)) == len(cas)
    for r in lib:
        assert 0 <= r.dP < 40 and 0 <= r.dH < 45 and 7 < r.dD < 30, r.name
        assert (r.sources["dD"] in r.compilations
                or r.sources["hansen_rule"] == "structure estimate"), r.name
        if r.alpha is not None:  # liquids expand by ~1e-4 to 2e-3 per K; molten metals less (common practice, no source)
            assert 1e-5 < r.alpha < 5e-3, r.name
        for f in ("boiling_point", "flash_point", "molar_volume", "vapour_pressure",
                  "dielectric", "log_p", "twa_ppm"):
            if getattr(r, f) is not None:
                assert f in r.sources, (r.name, f)
    # units: °C, cm³/mol, g/cm³, kPa; water at 25 °C: density 0.997 g/cm³, vapour pressure
    # 3.17 kPa, normal boiling point 100 °C (from memory, CRC Handbook of Chemistry and Physics)
    water = lib.lookup("water")
    assert water.boiling_point == pytest.approx(100.0, abs=0.1)
    assert water.molar_volume == pytest.approx(18.07, abs=0.05)
    assert water.density == pytest.approx(0.997, abs=0.002)
    assert water.vapour_pressure == pytest.approx(3.17, abs=0.03)
