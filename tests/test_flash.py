"""Tests for solsphere.flash: blend flash point bound and ideal-solution estimate."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from solsphere.mixtures.flash import blend_flash_point, clausius_clapeyron_B, vapour_pressure

K = 273.15
# Approximate data for two invented-but-realistic components (not a reference check):
#   "low":  flash point -20 °C, P25 = 30.6 kPa, Tb = 56 °C   (acetone-like)
#   "high": flash point  12 °C, P25 =  5.9 kPa, Tb = 78 °C   (ethanol-like)
FP = [-20.0, 12.0]
PV = [30.6, 5.9]
TB = [56.0, 78.0]


def test_conservative_is_lowest_present_component():
    r = blend_flash_point([0.2, 0.5, 0.3], [30.0, 12.0, -4.0], [1.0, 5.9, 12.0],
                          [150.0, 78.0, 80.0], names=["a", "b", "c"])
    assert r["conservative"] == -4.0 and r["conservative_component"] == 2
    # a component at zero fraction does not count
    r = blend_flash_point([0.5, 0.5, 0.0], [30.0, 12.0, -4.0], [1.0, 5.9, 12.0],
                          [150.0, 78.0, 80.0])
    assert r["conservative"] == 12.0
    # unknown flash point of a present component: no numbers, a note saying why
    r = blend_flash_point([0.5, 0.5], [30.0, None], [1.0, 5.9], [150.0, 78.0],
                          names=["a", "b"])
    assert r["conservative"] is None and r["estimate"] is None
    assert "unknown for b" in r["notes"][0]
    json.dumps(r, allow_nan=False)


def test_pure_component_returns_its_own_flash_point():
    for i in range(2):
        x = [0.0, 0.0]
        x[i] = 1.0
        r = blend_flash_point(x, FP, PV, TB)
        assert r["conservative"] == FP[i]
        assert r["estimate"] == pytest.approx(FP[i], abs=1e-9)
    # limit approached continuously from a blend
    r = blend_flash_point([1 - 1e-9, 1e-9], FP, PV, TB)
    assert r["estimate"] == pytest.approx(FP[0], abs=1e-5)


def test_estimate_solves_the_mixing_rule():
    x = np.array([0.3, 0.7])
    r = blend_flash_point(x, FP, PV, TB)
    T = r["estimate"]
    # independent evaluation with the vapour-pressure helper
    total = sum(x[i] * vapour_pressure(T, PV[i], TB[i])[0] / vapour_pressure(FP[i], PV[i], TB[i])[0]
                for i in range(2))
    assert total == pytest.approx(1.0, abs=1e-10)


def test_equal_slopes_have_a_closed_form():
    # same P25 and Tb -> same B for both; the rule becomes
    #   exp(-B/T) * sum x_i exp(B/Tfp_i) = 1  ->  T = B / ln(sum x_i exp(B/Tfp_i))
    B = clausius_clapeyron_B(10.0, 90.0)
    x = np.array([0.4, 0.6])
    fp = np.array([0.0, 30.0])
    T = B / math.log(float((x * np.exp(B / (fp + K))).sum()))
    r = blend_flash_point(x, fp, [10.0, 10.0], [90.0, 90.0])
    assert r["estimate"] == pytest.approx(T - K, abs=1e-8)


def test_estimate_between_components_and_monotone():
    xs = np.linspace(0.0, 1.0, 21)
    est = [blend_flash_point([1 - a, a], FP, PV, TB)["estimate"] for a in xs]
    assert est[0] == pytest.approx(FP[0]) and est[-1] == pytest.approx(FP[1])
    assert all(FP[0] - 1e-9 <= e <= FP[1] + 1e-9 for e in est)
    assert np.all(np.diff(est) > 0)  # more of the high-flash component -> higher estimate
    # the ideal rule is not linear in mole fraction: the low-flash component dominates
    mid = blend_flash_point([0.5, 0.5], FP, PV, TB)["estimate"]
    assert mid < 0.5 * (FP[0] + FP[1])


def test_two_point_vapour_pressure_line_against_antoine_toluene():
    # Antoine constants for toluene, log10(P/mmHg) = 6.95464 - 1344.8/(T/°C + 219.482),
    # as commonly tabulated (from memory). The two-point line is fitted at 25 °C and at
    # the normal boiling point (110.6 °C, from memory) and checked in between and below.
    def antoine_kpa(t):
        return 10 ** (6.95464 - 1344.8 / (t + 219.482)) * 0.133322

    p25 = antoine_kpa(25.0)
    assert p25 == pytest.approx(3.79, abs=0.01)
    assert vapour_pressure(60.0, p25, 110.6)[0] == pytest.approx(antoine_kpa(60.0), rel=0.05)
    assert vapour_pressure(0.0, p25, 110.6)[0] == pytest.approx(antoine_kpa(0.0), rel=0.15)


def test_non_flashing_component_raises_the_estimate():
    r = blend_flash_point([0.5, 0.5], [12.0, math.inf], [5.9, 3.17], [78.0, 100.0],
                          names=["ethanol-like", "water"])
    assert r["conservative"] == 12.0
    assert r["estimate"] > 12.0
    assert any("do not flash" in n for n in r["notes"])
    # the rule still holds for the flammable part: x P(T)/P(Tfp) = 1
    ratio = vapour_pressure(r["estimate"], 5.9, 78.0)[0] / vapour_pressure(12.0, 5.9, 78.0)[0]
    assert 0.5 * ratio == pytest.approx(1.0, abs=1e-9)
    r = blend_flash_point([1.0], [math.inf], [3.17], [100.0])
    assert r["conservative"] is None and r["estimate"] is None and r["notes"]


def test_missing_or_inconsistent_vapour_data_keeps_the_bound():
    r = blend_flash_point([0.5, 0.5], FP, [30.6, None], TB, names=["a", "b"])
    assert r["conservative"] == -20.0 and r["estimate"] is None
    assert "vapour pressure at 25 °C unknown for b" in r["notes"][0]
    r = blend_flash_point([0.5, 0.5], FP, [30.6, 200.0], TB)  # 200 kPa at 25 °C, Tb 78 °C
    assert r["conservative"] == -20.0 and r["estimate"] is None
    assert "inconsistent" in r["notes"][0]
    with pytest.raises(ValueError):
        blend_flash_point([0.5, 0.5], FP, PV, [56.0])
