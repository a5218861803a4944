"""Posterior samples of the graded sphere (solsphere.posterior): the sampler, the log
posterior, reproducibility, coverage on invented spheres, and the next-trial engine
built on them (solsphere.nexttrial.select_narrowing). All panels here are invented."""

import json

import numpy as np
import pytest

from solsphere.uncertainty.bootstrap import bootstrap
from solsphere.errors import FitError
from solsphere.models.graded import graded_nll
from solsphere.hansen import ra
from solsphere.uncertainty.nexttrials import suggest_next
from emcee.autocorr import integrated_time

from solsphere.uncertainty.posterior import (PRIOR_BOX, _de_steps, autocorr_time, log_posterior,
                                             sample_posterior)

from test_confidence import synthetic

KEYS = ("dD", "dP", "dH", "R0")


def test_log_posterior_is_minus_the_graded_likelihood():
    # Two implementations of one formula: the vectorised log posterior and the graded
    # fit's penalised negative log-likelihood (binary), at random parameter vectors.
    X, g, _, _ = synthetic(3)
    rng = np.random.default_rng(0)
    T = np.column_stack([rng.uniform(15, 20, 20), rng.uniform(2, 12, 20),
                         rng.uniform(2, 12, 20), rng.uniform(3, 9, 20),
                         rng.uniform(-1.5, 0.3, 20)])  # inside R0 >= ln 9 * w
    lo, hi = np.full(5, -100.0), np.full(5, 100.0)
    got = log_posterior(T, X, g, lo, hi, prior=(1.0, 1.0))
    want = [-graded_nll(t, X, 2 * g.astype(int), np.ones(len(X)), False, (1.0, 1.0),
                        grad=False) for t in T]
    np.testing.assert_allclose(got, want, rtol=1e-10)
    # Outside the flat prior's bounds: impossible.
    hi2 = hi.copy()
    hi2[3] = 1.0
    assert np.all(np.isneginf(log_posterior(T, X, g, lo, hi2)))


def test_de_sampler_recovers_a_known_gaussian():
    # The sampler on a target with known moments: a correlated 2-D normal distribution
    # (mean (1, -2), sd 1 and 3, correlation 0.8; mean and covariance are exact facts of
    # the distribution). Differential evolution adapts to the correlation and the unequal
    # scales through the walkers' differences.
    mean = np.array([1.0, -2.0])
    cov = np.array([[1.0, 0.8 * 3.0], [0.8 * 3.0, 9.0]])
    icov = np.linalg.inv(cov)

    def logp(T):
        d = T - mean
        return -0.5 * np.einsum("ki,ij,kj->k", d, icov, d)

    rng = np.random.default_rng(5)
    T = rng.normal(0, 0.1, (40, 2))
    S, acc = _de_steps(logp, T, logp(T), 3000, rng)
    assert 0.15 < acc / (3000 * 40) < 0.9
    S = S[500:].reshape(-1, 2)
    np.testing.assert_allclose(S.mean(axis=0), mean, atol=0.15)
    np.testing.assert_allclose(np.cov(S.T), cov, rtol=0.12, atol=0.08)


def test_autocorr_time_is_emcees_and_knows_an_ar1_chain():
    # An AR(1) chain x_t = phi x_(t-1) + e_t has the exact integrated autocorrelation time
    # (1 + phi) / (1 - phi) (a textbook fact of the AR(1) process, from memory): 9 for
    # phi = 0.8. Our wrapper must give emcee's estimate, close to 9.
    rng = np.random.default_rng(3)
    phi, n, k = 0.8, 20000, 8
    x = np.zeros((n, k, 1))
    e = rng.normal(size=(n, k))
    for t in range(1, n):
        x[t, :, 0] = phi * x[t - 1, :, 0] + e[t]
    tau = autocorr_time(x)
    np.testing.assert_allclose(tau, integrated_time(x, c=5, tol=0, quiet=True))
    assert 8.0 < tau[0] < 10.0
    # A parameter that never moves: the chain length, not NaN.
    assert autocorr_time(np.ones((50, 4, 1)))[0] == 50.0


def test_samples_are_reproducible_and_describe_the_panel():
    X, g, c, R0 = synthetic(11)
    a = sample_posterior(X, g, 300, seed=4, burn=200)
    b = sample_posterior(X, g, 300, seed=4, burn=200)
    d = sample_posterior(X, g, 300, seed=5, burn=200)
    np.testing.assert_array_equal(a.centres, b.centres)
    assert a.intervals == b.intervals
    assert not np.array_equal(a.centres, d.centres)
    assert a.centres.shape == (300, 3) and a.radii.shape == (300,)
    for k in (*KEYS, "width"):
        lo, hi = a.intervals[k]
        assert lo <= hi
    # Every sample lies in the prior's box, the physically wide one by default.
    box = np.array(a.bounds)
    np.testing.assert_array_equal(box, PRIOR_BOX)
    assert np.all((a.centres >= box[:, 0]) & (a.centres <= box[:, 1]))
    # Converged: the requested effective samples, a chain of 50 autocorrelation times.
    assert a.converged and a.effective_samples >= 1000
    assert a.n_steps - a.burn >= 50 * a.autocorr_time
    # p_good: the predictive probability; high at the fitted centre, ~0 far away, and
    # the mean of sigma((R0 - Ra) / w) over the samples (an independent loop).
    pts = np.vstack([a.centre, [40.0, 40.0, 40.0], X[:3]])
    p = a.p_good(pts)
    assert p[0] > 0.8 and p[1] < 1e-6
    want = [np.mean([0.5 * (1 + np.tanh((R - ra(q, c)[0]) / (2 * w)))
                     for c, R, w in zip(a.centres, a.radii, a.widths)]) for q in pts]
    np.testing.assert_allclose(p, want, rtol=1e-9, atol=1e-12)
    # Plain JSON, with or without the samples; text report.
    json.dumps(a.to_dict(samples=True))
    assert "centres" not in a.to_dict()
    assert "[[Posterior]]" in str(a) and "credible" in str(a)


def test_few_goods_give_wide_intervals_and_say_why():
    # Invented: two good solvents close together, eight bad ones far away. Many spheres
    # agree with that; the intervals must be wide, and wider than with ten goods.
    rng = np.random.default_rng(2)
    X, g, _, _ = synthetic(7, n=60, noise=0.01)
    goods = np.flatnonzero(g)[:2]
    bads = np.flatnonzero(~g)
    bads = bads[np.argsort(-ra(X[bads], X[goods].mean(axis=0)))][:8]
    few = sample_posterior(X[np.r_[goods, bads]], g[np.r_[goods, bads]], 500, seed=1)
    many = sample_posterior(X, g, 500, seed=1)
    wide = np.mean([few.intervals[k][1] - few.intervals[k][0] for k in KEYS])
    narrow = np.mean([many.intervals[k][1] - many.intervals[k][0] for k in KEYS])
    assert wide > 1.5 * narrow
    assert any("Only 2 results count as good" in w for w in few.warnings)
    del rng


def test_bad_arguments():
    X, g, _, _ = synthetic(1)
    with pytest.raises(ValueError, match="n_samples"):
        sample_posterior(X, g, 1)
    with pytest.raises(ValueError, match="n_walkers"):
        sample_posterior(X, g, 100, n_walkers=13)
    with pytest.raises(ValueError, match="partial"):
        sample_posterior(X, g, 100, partial="ordinal")
    with pytest.raises(FitError):
        sample_posterior(X, np.ones(len(X), bool), 100)


def _coverage(seeds, n_samples=500, n=40, noise=0.3, with_bootstrap=False):
    hits, boot_hits = [], []
    for s in seeds:
        X, g, c, R0 = synthetic(s, n=n, noise=noise)
        if g.sum() < 2 or (~g).sum() < 2:
            continue
        truth = (*c, R0)
        p = sample_posterior(X, g, n_samples, seed=s)
        hits += [p.intervals[k][0] <= t <= p.intervals[k][1] for k, t in zip(KEYS, truth)]
        if with_bootstrap:
            b = bootstrap(X, g, 200, seed=s, method="graded", n_jobs=1)
            boot_hits += [b.intervals[k][0] <= t <= b.intervals[k][1]
                          for k, t in zip(KEYS, truth)]
    return float(np.mean(hits)), (float(np.mean(boot_hits)) if boot_hits else None)


def test_coverage_small():
    # Fast version: 10 invented 40-trial panels (logistic noise 0.3 MPa½), 500 samples
    # each; share of true dD, dP, dH, R0 inside their 95 % interval (measured 0.97).
    share, _ = _coverage(range(10))
    assert share >= 0.75


@pytest.mark.slow
def test_coverage_against_the_bootstrap_on_small_panels():
    # 40 invented panels of 20 trials (few results: where the bootstrap runs narrow),
    # 1000 samples vs 200 graded resamples each. Measured on this machine: posterior
    # 0.99, graded bootstrap 0.74 (share of true dD, dP, dH, R0 inside the 95 %
    # intervals; 34 panels with >= 2 good and >= 2 bad). About 40 s.
    post, boot = _coverage(range(40), n_samples=1000, n=20, with_bootstrap=True)
    assert post >= 0.85
    assert post > boot


def test_suggest_next_posterior_engine(lib_liquids):
    X, g, _, _ = synthetic(21, n=14)
    res = suggest_next(X, g, lib_liquids, n=4, n_samples=400, seed=2)
    again = suggest_next(X, g, lib_liquids, n=4, n_samples=400, seed=2)
    assert res.names == again.names and len(set(res.names)) == 4
    d = res.to_dict()
    assert d["uncertainty"] == "posterior" and d["n_samples"] == 400
    assert set(d["intervals"]) >= set(KEYS)
    first = res.suggestions[0]
    assert 0.0 < first.p_good < 1.0 and first.reason
    gains = [s.gain for s in res.suggestions]
    assert all(0.0 <= x <= np.log(2) + 1e-9 for x in gains)
    # The prior box reaches the candidates, not only the tested solvents.
    res_tested_box = suggest_next(X, g, lib_liquids, n=1, n_samples=400, seed=2,
                                  bounds=[[X[:, j].min(), X[:, j].max()] for j in range(3)])
    assert res_tested_box.to_dict()["intervals"] != d["intervals"]
    boot = suggest_next(X, g, lib_liquids, n=4, uncertainty="bootstrap", n_bootstrap=40,
                        seed=2, n_jobs=1)
    assert boot.to_dict()["uncertainty"] == "bootstrap"
    with pytest.raises(ValueError, match="uncertainty"):
        suggest_next(X, g, lib_liquids, uncertainty="guess")


@pytest.fixture(scope="module")
def lib_liquids():
    from solsphere.library.table import load_library
    return list(load_library().liquids())
