"""Liquid-liquid phase test (solsphere.mixtures.phases): checked against the analytic
binodal of a symmetric regular solution, and on blends whose behaviour is known."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from solsphere.library.table import Solvent, load_library
from solsphere.mixtures.activity import ActivityModel
from solsphere.mixtures.phases import (blend_phases, check_phases, pair_split, pair_splits,
                                       phase_compositions)

RT = 8.314462618 * 298.15


def _pair_with_chi(chi):
    """Two own solvents of equal molar volume 100 cm³/mol whose regular-solution
    interaction parameter is chi = V A / RT, with A = ΔδD² (δP, δH equal)."""
    A = chi * RT / 100.0
    a = Solvent("a", 16.0, 5.0, 5.0, molar_volume=100.0)
    b = Solvent("b", 16.0 + float(np.sqrt(A)), 5.0, 5.0, molar_volume=100.0)
    return ActivityModel([a, b])


def test_symmetric_regular_solution_splits_above_chi_2_with_the_analytic_binodal():
    # Flory-Huggins with equal sizes: critical chi = 2; binodal x from
    # ln(x / (1 - x)) = chi (2x - 1) (the symmetric common tangent).
    assert not pair_splits(_pair_with_chi(1.8), [[0, 1]])[0].splits
    s = pair_splits(_pair_with_chi(2.5), [[0, 1]])[0]
    assert s.splits and "Flory" in s.method
    x_b = brentq(lambda x: np.log(x / (1 - x)) - 2.5 * (2 * x - 1), 1e-6, 0.4999)
    lo, hi = s.gap
    # the grid resolves the tangent to about its spacing (0.01)
    assert lo == pytest.approx(x_b, abs=0.012) and hi == pytest.approx(1 - x_b, abs=0.012)


@pytest.fixture(scope="module")
def lib():
    return load_library()


def test_blend_phases_at_the_blend_composition(lib):
    W, T, E = lib.lookup("water"), lib.lookup("toluene"), lib.lookup("ethanol")
    model = ActivityModel([W, T, E])
    idx = [[0, 1, 2], [0, 1, 2], [0, 2, 1], [0, 1, 2]]
    x = [[0.45, 0.45, 0.10],   # water + toluene with a little ethanol: two phases
         [0.05, 0.05, 0.90],   # mostly ethanol: one phase
         [0.5, 0.5, 0.0],      # water + ethanol: one phase
         [0.5, 0.5, 0.0]]      # water + toluene: two phases
    phases, methods = blend_phases(model, idx, x)
    assert phases.tolist() == [2, 1, 1, 2]
    assert methods[0] == "Dortmund UNIFAC" and methods[2].startswith("published")


def test_a_blend_inside_the_solubility_limit_is_one_phase(lib):
    W, A = lib.lookup("water"), lib.lookup("ethyl acetate")
    # 2 % by mass of ethyl acetate in water: below its solubility (8 %, handbook)
    x_ea = (2 / A.mw) / (2 / A.mw + 98 / W.mw)
    assert check_phases([A, W], [x_ea, 1 - x_ea]).phases == 1
    assert check_phases([A, W], [0.5, 0.5]).phases == 2
    comp = phase_compositions(ActivityModel([A, W]), [[0, 1]], [[0.5, 0.5]])[0]
    assert comp is not None and comp[0][0] < 0.5 < comp[1][0]


def test_pair_split_is_cached_and_ordered(lib):
    a, b = lib.lookup("methanol"), lib.lookup("hexane")
    s1 = pair_split(a, b)
    assert pair_split(a, b) is s1 and s1.splits
    s2 = pair_split(b, a)
    assert s2.gap[0] == pytest.approx(1 - s1.gap[1], abs=0.01)
    assert s2.gap[1] == pytest.approx(1 - s1.gap[0], abs=0.01)
