"""Tests for the temperature shift, thermal expansion and χ functions in solsphere.hsp."""

from __future__ import annotations

import math

import numpy as np
import pytest

from solsphere.hansen import (GAS_CONSTANT, flory_huggins_chi, ra, shift_to_temperature,
                           thermal_expansion)

TOLUENE = [18.0, 1.4, 2.0]  # Hansen's table values for toluene, from memory
ALPHA_TOLUENE = 1.07e-3     # 1/K near 25 °C, from memory


def test_shift_hand_calculation_toluene_25_to_60():
    # Hansen–Beerbower relations (Hansen handbook, 2nd ed., ch. 1), integrated with
    # constant alpha = 1.07e-3 1/K over dT = 35 K, by hand:
    #   dD: 1.25*1.07e-3*35 = 0.0468125; exp(-0.0468125) = 0.9542663 -> 18.0 * = 17.17679
    #   dP: 0.5*1.07e-3*35  = 0.018725;  exp(-0.018725)  = 0.9814492 -> 1.4 *  = 1.374029
    #   dH: (1.22e-3 + 0.535e-3)*35 = 0.061425; exp(-0.061425) = 0.9404235 -> 2.0 * = 1.880847
    out = shift_to_temperature(TOLUENE, ALPHA_TOLUENE, 25.0, 60.0)
    assert out.shape == (1, 3)
    np.testing.assert_allclose(out[0], [17.17679, 1.374029, 1.880847], atol=2e-6)


def test_linearised_handbook_form_agrees_for_small_dT():
    # linearised: delta(T) = delta0 * (1 - c * dT), c = 1.25a, 0.5a, 1.22e-3 + 0.5a
    a = ALPHA_TOLUENE
    c = np.array([1.25 * a, 0.5 * a, 1.22e-3 + 0.5 * a])
    p0 = np.array(TOLUENE)
    for dT in (0.5, 2.0, 5.0):
        exact = shift_to_temperature(p0, a, 25.0, 25.0 + dT)[0]
        lin = p0 * (1.0 - c * dT)
        # the difference is the second-order term delta0 (c dT)^2 / 2 (to third order)
        np.testing.assert_allclose(exact - lin, p0 * (c * dT) ** 2 / 2, rtol=0.05)
        assert np.all(np.abs(exact - lin) < 2e-3)
    # and for a large step they differ noticeably (the test can tell them apart)
    exact = shift_to_temperature(p0, a, 25.0, 125.0)[0]
    assert abs(exact[0] - p0[0] * (1 - c[0] * 100.0)) > 0.1


def test_shift_solves_the_differential_relations():
    # central difference of the returned path reproduces d(delta)/dT = -c delta
    pts = np.array([TOLUENE, [15.8, 8.8, 19.4], [15.5, 10.4, 7.0]])
    alpha = np.array([1.07e-3, 1.1e-3, 1.4e-3])
    h = 1e-3
    at = shift_to_temperature(pts, alpha, 25.0, 50.0)
    up = shift_to_temperature(pts, alpha, 25.0, 50.0 + h)
    dn = shift_to_temperature(pts, alpha, 25.0, 50.0 - h)
    deriv = (up - dn) / (2 * h)
    c = np.column_stack([1.25 * alpha, 0.5 * alpha, 1.22e-3 + 0.5 * alpha])
    np.testing.assert_allclose(deriv, -c * at, rtol=1e-6)


def test_shift_composes_and_reverses():
    p = np.array([TOLUENE, [15.8, 8.8, 19.4]])
    a = [1.07e-3, 1.1e-3]
    there = shift_to_temperature(p, a, 25.0, 80.0)
    np.testing.assert_allclose(shift_to_temperature(there, a, 80.0, 25.0), p, rtol=1e-13)
    via = shift_to_temperature(shift_to_temperature(p, a, 25.0, 40.0), a, 40.0, 80.0)
    np.testing.assert_allclose(via, there, rtol=1e-13)
    # zero expansion: dD and dP fixed, dH still falls with temperature
    z = shift_to_temperature(p, 0.0, 25.0, 60.0)
    np.testing.assert_allclose(z[:, :2], p[:, :2])
    assert np.all(z[:, 2] < p[:, 2])


def test_shift_rejects_missing_alpha():
    with pytest.raises(ValueError, match="alpha must be finite"):
        shift_to_temperature([TOLUENE, TOLUENE], [1e-3, float("nan")], 25.0, 60.0)
    with pytest.raises(ValueError, match="one per point"):
        shift_to_temperature([TOLUENE, TOLUENE], [1e-3, 1e-3, 1e-3], 25.0, 60.0)


def test_thermal_expansion_exact_for_exponential_density():
    a = 1.07e-3
    rho1 = 0.8623  # invented density at 25 °C, g/cm³
    rho2 = rho1 * math.exp(-a * 25.0)
    assert thermal_expansion(rho1, 25.0, rho2, 50.0)[0] == pytest.approx(a, rel=1e-12)
    # kelvin or °C: only the difference matters; order of the two points does not matter
    assert thermal_expansion(rho2, 323.15, rho1, 298.15)[0] == pytest.approx(a, rel=1e-12)
    # plain finite difference -(drho/dT)/rho_mean agrees to second order
    fd = -(rho2 - rho1) / 25.0 / (0.5 * (rho1 + rho2))
    assert thermal_expansion(rho1, 25.0, rho2, 50.0)[0] == pytest.approx(fd, rel=1e-4)
    vec = thermal_expansion([1.0, 0.8], 20.0, [0.99, 0.79], 30.0)
    assert vec.shape == (2,)
    with pytest.raises(ValueError):
        thermal_expansion(1.0, 25.0, 0.99, 25.0)


def test_chi_hand_example_and_units():
    # V = 100 cm³/mol = 1e-4 m³/mol; Ra = 8 MPa½ -> Ra² = 64 MPa = 6.4e7 Pa.
    # V Ra² / 4 = 1e-4 * 6.4e7 / 4 = 1600 J/mol; RT at 25 °C = 8.314462618 * 298.15
    #   = 2478.957 J/mol; chi = 1600 / 2478.957 = 0.645433.
    chi = flory_huggins_chi(8.0, 100.0, 25.0)
    assert chi.shape == (1,)
    assert chi[0] == pytest.approx(0.645433, abs=1e-6)
    # same number in SI units throughout
    assert chi[0] == pytest.approx((1e-4 * 64e6 / 4) / (GAS_CONSTANT * 298.15), rel=1e-12)
    # proportional to V and Ra², inversely to absolute temperature
    assert flory_huggins_chi(16.0, 100.0)[0] == pytest.approx(4 * chi[0])
    assert flory_huggins_chi(8.0, 50.0)[0] == pytest.approx(chi[0] / 2)
    hot = flory_huggins_chi(8.0, 100.0, 60.0)[0]
    assert hot == pytest.approx(chi[0] * 298.15 / 333.15, rel=1e-12)
    assert flory_huggins_chi(0.0, 100.0)[0] == 0.0


def test_chi_bracket_form_from_points():
    # (V/RT)[(dD1-dD2)² + (dP1-dP2)²/4 + (dH1-dH2)²/4] equals V Ra²/(4RT)
    s, m = np.array(TOLUENE), np.array([17.0, 6.0, 5.0])
    bracket = (s[0] - m[0]) ** 2 + (s[1] - m[1]) ** 2 / 4 + (s[2] - m[2]) ** 2 / 4
    expected = 106.8 * bracket / (GAS_CONSTANT * 298.15)
    got = flory_huggins_chi(ra(s, m), 106.8)[0]
    assert got == pytest.approx(expected, rel=1e-12)
    with pytest.raises(ValueError):
        flory_huggins_chi(5.0, 0.0)
