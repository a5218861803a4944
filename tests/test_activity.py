"""Activity coefficients (solsphere.mixtures.activity) against thermo's own UNIFAC and
against the closed form of the regular-solution fallback."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from solsphere.library.table import Solvent, load_library
from solsphere.mixtures.activity import (DORTMUND, IDEAL, REGULAR, UNIFAC, ActivityModel,
                                         activity_coefficients)
from solsphere.mixtures.data import load_mixture_data

NAMES = ["ethanol", "water", "toluene", "acetone", "2-butoxyethanol", "hexane",
         "ethyl acetate", "N,N-dimethylformamide", "dichloromethane"]


@pytest.fixture(scope="module")
def pool():
    lib = load_library()
    return [lib.lookup(n) for n in NAMES]


@pytest.mark.parametrize("version,code,key", [(1, DORTMUND, "dortmund"), (0, UNIFAC, "unifac")])
def test_batch_matches_thermo_unifac_at_random_compositions(pool, version, code, key):
    # the trusted independent computation: thermo.unifac.UNIFAC, one mixture at a time
    from thermo.unifac import UNIFAC as Reference
    data = load_mixture_data()
    model = ActivityModel(pool)
    rng = np.random.default_rng(12)
    idx = np.array([rng.choice(len(pool), 3, replace=False) for _ in range(25)])
    x = rng.dirichlet([0.7, 0.7, 0.7], 25)
    T = 270.0 + 90.0 * rng.random(25)
    ours = np.exp(model.sets[code].ln_gamma(idx, x, T))
    same_T = np.exp(model.sets[code].ln_gamma(idx, x, np.full(25, 300.0)))
    for r in range(25):
        groups = [getattr(data[pool[i].cas], key) for i in idx[r]]
        ref = Reference.from_subgroups(T[r], list(x[r]), groups, version=version).gammas()
        np.testing.assert_allclose(ours[r], ref, rtol=1e-10)
        ref300 = Reference.from_subgroups(300.0, list(x[r]), groups, version=version).gammas()
        np.testing.assert_allclose(same_T[r], ref300, rtol=1e-10)


def test_rows_are_independent_of_the_batch(pool):
    model = ActivityModel(pool)
    rng = np.random.default_rng(3)
    idx = np.array([rng.choice(len(pool), 2, replace=False) for _ in range(40)])
    x = rng.dirichlet([1, 1], 40)
    batch, meth = model.ln_gamma(idx, x, 25.0)
    for r in range(40):
        one, m1 = model.ln_gamma(idx[r:r + 1], x[r:r + 1], 25.0)
        np.testing.assert_allclose(one[0], batch[r], rtol=1e-12, atol=1e-12)
        assert m1[0] == meth[r]


def test_gamma_is_one_for_a_pure_component(pool):
    g, how = activity_coefficients(pool[:2], [[1.0, 0.0], [0.0, 1.0]])
    assert g[0, 0] == pytest.approx(1.0) and g[1, 1] == pytest.approx(1.0)
    assert how == "Dortmund UNIFAC"


def _own(name, point, vm):
    return Solvent(name, *point, molar_volume=vm)


def test_regular_solution_fallback_matches_the_closed_form():
    # two own solvents (no CAS: no UNIFAC groups) with molar volumes
    a = _own("a", (18.0, 2.0, 3.0), 100.0)
    b = _own("b", (16.0, 9.0, 12.0), 60.0)
    model = ActivityModel([a, b])
    x = np.array([[0.3, 0.7]])
    lg, meth = model.ln_gamma([[0, 1]], x, 25.0)
    assert meth[0] == REGULAR
    RT = 8.314462618 * 298.15
    A = (2.0 ** 2 + 0.25 * 7.0 ** 2 + 0.25 * 9.0 ** 2)  # Ra²/4 [MPa]
    phi = np.array([0.3 * 100, 0.7 * 60]) / (0.3 * 100 + 0.7 * 60)
    # binary Flory-Huggins + Scatchard-Hildebrand: ln γ1 = ln(φ1/x1) + 1 - φ1/x1 + V1 φ2² A / RT
    exp1 = math.log(phi[0] / 0.3) + 1 - phi[0] / 0.3 + 100 * phi[1] ** 2 * A / RT
    exp2 = math.log(phi[1] / 0.7) + 1 - phi[1] / 0.7 + 60 * phi[0] ** 2 * A / RT
    np.testing.assert_allclose(lg[0], [exp1, exp2], rtol=1e-12)


def test_method_chain_dortmund_then_unifac_then_fallback_then_ideal(pool):
    lib = load_library()
    glycerol = lib.lookup("glycerol")  # Dortmund groups derived from structure
    pc = lib.lookup("propylene carbonate")  # structure-derived groups, no Dortmund parameters
    own_vm = _own("own", (17.0, 5.0, 5.0), 90.0)
    own_none = _own("bare", (17.0, 5.0, 5.0), None)
    model = ActivityModel([pool[0], pool[1], pc, own_vm, own_none, glycerol])
    idx = [[0, 1], [2, 5], [0, 3], [0, 4]]
    x = [[0.5, 0.5]] * 4
    meth = model.methods(idx, x)
    assert meth[0] == DORTMUND
    assert meth[1] in (DORTMUND, UNIFAC)
    assert meth[2] == REGULAR and meth[3] == IDEAL
    # an absent component does not decide the method
    assert model.methods([[0, 4]], [[1.0, 0.0]])[0] == DORTMUND


def test_shelf_copy_of_a_library_solvent_keeps_its_groups(pool):
    copy = dataclasses.replace(pool[0], price=3.0)
    assert ActivityModel([copy, pool[1]]).methods([[0, 1]], [[0.5, 0.5]])[0] == DORTMUND
