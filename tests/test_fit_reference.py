"""The classic fit against an exhaustive grid of centres, on invented panels.

Perfect panels (good iff inside an invented sphere): the exact path
(:func:`solsphere.models.classic.separable_fit`) must find a perfect sphere whenever the
grid finds one, never a larger one than the grid's smallest perfect sphere, and be
certified. Noisy panels (a few results flipped): the fit's desirability is at least the
grid's, and at equal desirability its R0 is no larger. Both: the same answer whatever
``seed`` the caller passes. All panels are invented; the grid (every centre of a
0.25 MPa½ grid over the tested box, each with its exact best R0) is the reference.
"""

import numpy as np
import pytest

from solsphere.hansen import ra
from solsphere.models.classic import (default_bounds, desirability, best_sphere, grid_search,
                                      separable_fit)

STEP = 0.25


def panel(seed: int, flips: int, n: int = 20):
    """Invented: n uniform solvents in a small region, a random true sphere, flips."""
    rng = np.random.default_rng(seed)
    X = np.column_stack([rng.uniform(15.0, 20.0, n), rng.uniform(0.0, 14.0, n),
                         rng.uniform(0.0, 16.0, n)])
    centre = np.array([rng.uniform(16, 19), rng.uniform(3, 11), rng.uniform(3, 13)])
    good = ra(X, centre) <= rng.uniform(4.0, 8.0)
    if good.sum() < 2 or (~good).sum() < 2:  # keep both kinds: move the radius
        good = ra(X, centre) <= np.median(ra(X, centre))
    if flips:
        i = rng.choice(n, flips, replace=False)
        good[i] = ~good[i]
    return X, good


def check_perfect(seed: int):
    X, good = panel(seed, 0)
    c, R0, D = best_sphere(X, good)
    gc, gR0, gD, _ = grid_search(X, good, step=STEP)
    exact = separable_fit(X, good, default_bounds(X))
    assert exact is not None and exact[1], "a perfect panel must be certified separable"
    assert D == pytest.approx(1.0, abs=1e-12)
    assert gD <= 1.0
    if gD == pytest.approx(1.0, abs=1e-12):
        assert R0 <= gR0 + 1e-9  # never a larger perfect sphere than the grid's smallest
    # every good inside or on the surface, every bad outside or on it
    d = ra(X, c)
    assert np.all(d[good] <= R0 + 1e-9) and np.all(d[~good] >= R0 - 1e-9)
    for s in (1, 7, 12345):
        c2, R2, D2 = best_sphere(X, good, seed=s)
        np.testing.assert_array_equal(c2, c)
        assert (R2, D2) == (R0, D)
    return R0, gR0


def check_noisy(seed: int):
    X, good = panel(1000 + seed, 1 + seed % 4)
    c, R0, D = best_sphere(X, good)
    gc, gR0, gD, _ = grid_search(X, good, step=STEP)
    assert D >= gD - 1e-12
    if abs(D - gD) <= 1e-9:
        assert R0 <= gR0 + 1e-6
    assert D == pytest.approx(desirability(ra(X, c), good, R0), rel=1e-15)
    for s in (1, 99):
        c2, R2, D2 = best_sphere(X, good, seed=s)
        np.testing.assert_array_equal(c2, c)
        assert (R2, D2) == (R0, D)
    return D, gD


@pytest.mark.parametrize("seed", range(4))
def test_perfect_panels_exact(seed):
    check_perfect(seed)


@pytest.mark.parametrize("seed", range(4))
def test_noisy_panels_at_least_as_good_as_the_grid(seed):
    check_noisy(seed)


@pytest.mark.slow
def test_thirty_perfect_and_thirty_noisy_panels():
    # The full check of the issue: 30 + 30 invented panels (about a minute).
    for s in range(4, 34):
        check_perfect(s)
    for s in range(4, 34):
        check_noisy(s)


def test_separable_fit_says_none_when_no_perfect_sphere_exists():
    # A bad solvent between two goods on a line: no sphere holds both goods without it
    # (invented points).
    X = np.array([[16.0, 5.0, 5.0], [18.0, 5.0, 5.0], [17.0, 5.0, 5.0], [17.0, 20.0, 20.0]])
    good = np.array([True, True, False, False])
    assert separable_fit(X, good, [[15, 19], [0, 25], [0, 25]]) is None
    c, R0, D = best_sphere(X, good)
    assert D < 1.0 and np.all(np.isfinite(c)) and np.isfinite(R0)
