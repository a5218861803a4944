"""The packaged mixture data (data/mixture_data.csv): pinned sums, and a rebuild check."""

from __future__ import annotations

import csv
import subprocess
import sys
from decimal import Decimal
from pathlib import Path

import pytest

from solsphere.library.table import load_library
from solsphere.mixtures.data import load_mixture_data

ROOT = Path(__file__).resolve().parents[1]
DATA = ROOT / "data" / "mixture_data.csv"


def test_checksum_of_mixture_table():
    """Pinned counts and sums so that any edit is noticed (rebuild with make data, then
    update these numbers on purpose, with the reason in the commit message)."""
    with open(DATA, newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert len(rows) == 1241  # 16 curated additions (data/curated_solvents.csv)
    assert sum(1 for r in rows if r["dortmund"] or r["unifac"]) == 999
    assert sum(1 for r in rows if "structure" in r["groups_source"]) == 114
    assert sum(1 for r in rows if r["vp_A"]) == 1142
    assert sum(Decimal(r["vp_B"]) for r in rows if r["vp_B"]) == Decimal("-10299315.308578864")


def test_every_library_compound_has_a_row_and_the_common_pool_is_covered():
    data = load_mixture_data()
    lib = load_library()
    assert {s.cas for s in lib} == set(data)
    # the working pool's generic mixtures (xylene, mineral spirits, naphthas, isoparaffin,
    # dibasic esters, methyl soyate) have no single structure, hence no UNIFAC groups
    mixtures = {"1330-20-7", "64742-47-8", "64742-95-6", "64742-94-5", "64742-48-9",
                "95481-62-2", "67762-38-3"}
    common = [s for s in lib.common() if s.cas not in mixtures]
    no_groups = [s.name for s in common if not (data[s.cas].dortmund or data[s.cas].unifac)]
    no_vp = [s.name for s in common if data[s.cas].vp_coefficients is None]
    assert no_groups == []
    # the coalescent ester and Cyrene (a curated addition) have no correlation nor critical
    # data: the library holds only a curated 25 °C value for them
    assert len(no_vp) <= 2, no_vp


@pytest.mark.slow
def test_rebuild_matches_committed_table():
    """data/build_mixtures.py regenerates the table byte for byte with the versions it was
    built with (chemicals 1.5.2, thermo 0.6.1, RDKit: see data/README.md)."""
    chemicals = pytest.importorskip("chemicals")
    thermo = pytest.importorskip("thermo")
    pytest.importorskip("rdkit")
    if (chemicals.__version__, thermo.__version__) != ("1.5.2", "0.6.1"):
        pytest.skip("table built with chemicals 1.5.2 and thermo 0.6.1")
    out = subprocess.run([sys.executable, str(ROOT / "data" / "build_mixtures.py"), "--check"],
                         capture_output=True, text=True, cwd=ROOT)
    assert out.returncode == 0, out.stdout + out.stderr
