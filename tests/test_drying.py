"""Tests for solsphere.drying: closed-form ideal-solution evaporation paths."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from solsphere.mixtures.drying import (DryingPath, drying_path, mole_to_volume_fractions,
                              volume_to_mole_fractions)
from solsphere.hansen import mix, red

# ---------------------------------------------------------------------------------------
# Hand-worked two-component case (invented round numbers).
#   A: (16, 0, 0), P_A = 10 kPa, V_A = 100 cm³/mol, initial volume fraction 0.5
#   B: (16, 17, 0), P_B = 2 kPa, V_B = 50 cm³/mol, initial volume fraction 0.5
#   Reference = B (least volatile), s = n_B / n_B0, exponent for A: 10/2 = 5.
#   Per unit initial volume: n_A0 = 0.5/100 = 0.005, n_B0 = 0.5/50 = 0.01.
#   n_A(s) = 0.005 s^5, n_B(s) = 0.01 s.  Volumes: A 0.5 s^5, B 0.5 s.
#   At s = 1/2: volume A = 0.5/32 = 0.015625, B = 0.25, remaining 0.265625,
#     fraction evaporated f = 1 - 0.265625 = 0.734375 = 47/64,
#     volume fractions (1/17, 16/17); moles A 1.5625e-4, B 0.005 -> x_A = 1/33.
#   Blend dP = 17 * phi_B = 17/(1 + s^4); dD = 16; dH = 0.
#   Sphere centre (17, 0, 2), R0 = sqrt(264):
#     Ra² = 4*(16-17)² + dP² + (0-2)² = 8 + dP²; RED = 1 <=> dP = 16 <=> s^4 = 1/16
#     <=> s = 1/2, so the liquid leaves at f = 47/64.
#   Start: dP = 8.5, RED = sqrt(8 + 72.25)/sqrt(264) = 0.5513 (inside).
#   Dryness: pure B, dP = 17, RED = sqrt(297/264) = 1.0607.
# ---------------------------------------------------------------------------------------
HAND = dict(points=[[16.0, 0.0, 0.0], [16.0, 17.0, 0.0]], volume_fractions=[0.5, 0.5],
            molar_volumes=[100.0, 50.0], vapour_pressures=[10.0, 2.0],
            centre=[17.0, 0.0, 2.0], R0=math.sqrt(264.0))


def test_hand_worked_two_component_case():
    path = drying_path(**HAND, n_points=65, names=["A", "B"])  # grid f = j/64
    assert isinstance(path, DryingPath)
    assert path.fractions_evaporated[47] == pytest.approx(47 / 64, abs=1e-15)
    np.testing.assert_allclose(path.compositions[47], [1 / 17, 16 / 17], rtol=1e-10)
    np.testing.assert_allclose(path.mole_fractions[47], [1 / 33, 32 / 33], rtol=1e-10)
    np.testing.assert_allclose(path.points[47], [16.0, 16.0, 0.0], rtol=1e-10)
    assert path.red[47] == pytest.approx(1.0, rel=1e-10)
    assert path.leaves_at == pytest.approx(47 / 64, abs=1e-12)
    np.testing.assert_allclose(path.exit_composition, [1 / 17, 16 / 17], rtol=1e-9)
    assert path.starts_inside is True
    assert path.red[0] == pytest.approx(math.sqrt(8 + 8.5 ** 2) / math.sqrt(264), rel=1e-12)
    assert path.red_at_end == pytest.approx(math.sqrt(297 / 264), rel=1e-12)
    assert path.last_component == 1
    np.testing.assert_allclose(path.residue, [0.0, 1.0])
    # relative time: tau(s) = sum x_i0 (1 - s^r_i)/r_i, x0 = (1/3, 2/3), r = (5, 1):
    # tau(1/2) = (1/3)(31/32)/5 + (2/3)(1/2) = 191/480
    assert path.relative_time[47] == pytest.approx(191 / 480, rel=1e-10)
    assert path.relative_time[-1] == pytest.approx(1 / 15 + 2 / 3, rel=1e-12)


def test_report_and_dict_are_plain():
    path = drying_path(**HAND, names=["A", "B"])
    d = path.to_dict()
    text = json.dumps(d, allow_nan=False)  # raises on NaN/inf or numpy types
    assert json.loads(text)["leaves_at"] == pytest.approx(47 / 64)
    assert d["last_component"] == "B" and d["stays_inside"] is False
    assert len(d["compositions"]) == 101 and len(d["compositions"][0]) == 2
    s = str(path)
    assert "leaves the sphere after 73.4 % evaporated" in s
    assert "last to evaporate: B" in s


def test_equal_vapour_pressures_and_molar_volumes_keep_composition():
    pts = [[18.0, 1.4, 2.0], [15.8, 8.8, 19.4]]
    path = drying_path(pts, [0.6, 0.4], [80.0, 80.0], [5.0, 5.0], [17.0, 4.0, 8.0], 8.0)
    np.testing.assert_allclose(path.compositions, np.tile([0.6, 0.4], (101, 1)), atol=1e-12)
    np.testing.assert_allclose(path.red, path.red[0], rtol=1e-12)
    assert path.leaves_at is None and path.stays_inside
    assert path.last_component is None  # residue is the (unchanged) mixture
    np.testing.assert_allclose(path.residue, [0.6, 0.4])


def test_equal_vapour_pressures_unequal_molar_volumes():
    # n_i = n_i0 s^1 for both, so mole fractions stay at x0 and volume fractions
    # (n_i V_i / sum) stay at phi0 too.
    pts = [[18.0, 1.4, 2.0], [15.8, 8.8, 19.4]]
    path = drying_path(pts, [0.6, 0.4], [120.0, 40.0], [5.0, 5.0], [17.0, 4.0, 8.0], 8.0)
    x0 = volume_to_mole_fractions([0.6, 0.4], [120.0, 40.0])
    np.testing.assert_allclose(x0, [1 / 3, 2 / 3])  # 0.6/120 : 0.4/40 = 0.005 : 0.01
    np.testing.assert_allclose(path.mole_fractions, np.tile(x0, (101, 1)), atol=1e-12)
    np.testing.assert_allclose(path.compositions, np.tile([0.6, 0.4], (101, 1)), atol=1e-12)
    np.testing.assert_allclose(path.red, path.red[0], rtol=1e-12)


def test_volume_path_does_not_depend_on_molar_volumes():
    kw = dict(points=[[18.0, 1.4, 2.0], [15.8, 8.8, 19.4], [15.5, 10.4, 7.0]],
              volume_fractions=[0.5, 0.3, 0.2], vapour_pressures=[3.8, 7.9, 30.0],
              centre=[17.0, 5.0, 7.0], R0=7.0)
    a = drying_path(molar_volumes=[106.8, 58.5, 74.0], **kw)
    b = drying_path(molar_volumes=[50.0, 200.0, 10.0], **kw)
    np.testing.assert_allclose(a.compositions, b.compositions, atol=1e-12)
    assert (a.leaves_at is None) == (b.leaves_at is None)
    if a.leaves_at is not None:
        assert a.leaves_at == pytest.approx(b.leaves_at, abs=1e-12)
    assert not np.allclose(a.mole_fractions, b.mole_fractions)  # these do depend on V
    assert not np.allclose(a.relative_time, b.relative_time)


def test_very_volatile_component_leaves_first():
    pts = [[15.0, 0.0, 0.0], [18.0, 1.4, 2.0]]
    path = drying_path(pts, [0.3, 0.7], [100.0, 100.0], [1000.0, 1.0], [17.0, 2.0, 3.0], 5.0,
                       n_points=201)
    # after 31 % evaporated essentially only the volatile 30 % has gone
    i = int(np.searchsorted(path.fractions_evaporated, 0.31))
    assert path.compositions[i, 0] < 1e-3
    # and the first 30 % evaporated is nearly pure component 1: component 2 lost < 0.5 %
    # of its volume (its volume left = 0.7 s, total left = 0.3 s^1000 + 0.7 s)
    j = int(np.searchsorted(path.fractions_evaporated, 0.3)) - 1
    left = 1.0 - path.fractions_evaporated[j]
    vol2 = path.compositions[j, 1] * left
    assert vol2 > 0.7 * 0.995
    assert path.last_component == 1


def _ode_path(points, phi0, Vm, Pv, n_eval):
    """Independent numerical integration of dn_i/dt = -x_i P_i (K = 1)."""
    n0 = np.asarray(phi0) / np.asarray(Vm)
    Pv = np.asarray(Pv, dtype=float)

    def rhs(t, n):
        n = np.maximum(n, 0.0)
        return -(n / n.sum()) * Pv

    sol = solve_ivp(rhs, (0.0, n_eval[-1]), n0, t_eval=n_eval, method="LSODA",
                    rtol=1e-11, atol=1e-14)
    assert sol.success
    return n0, sol


def test_closed_form_matches_numerical_ode_three_components():
    points = np.array([[18.0, 1.4, 2.0], [15.8, 8.8, 19.4], [15.5, 10.4, 7.0]])
    phi0 = np.array([0.5, 0.3, 0.2])
    Vm = np.array([106.8, 58.5, 74.0])
    Pv = np.array([3.8, 7.9, 30.0])  # component 1 least volatile -> reference
    n0 = phi0 / Vm
    N0 = n0.sum()
    t_end = 0.9 * (N0 / Pv.min()) * 0.6
    ts = np.linspace(0.0, t_end, 40)
    _, sol = _ode_path(points, phi0, Vm, Pv, ts)
    n_num = sol.y.T  # (40, 3)
    s = n_num[:, 0] / n0[0]
    n_closed = n0[None, :] * s[:, None] ** (Pv / Pv[0])[None, :]
    np.testing.assert_allclose(n_num, n_closed, rtol=1e-7, atol=1e-12)
    # the closed-form relative time tau(s) against the ODE's own clock
    r = Pv / Pv[0]
    x0 = n0 / N0
    tau = (x0[None, :] * (1 - s[:, None] ** r[None, :]) / r[None, :]).sum(axis=1)
    np.testing.assert_allclose(tau * N0 / Pv[0], ts, rtol=1e-7, atol=1e-12)


def test_exit_fraction_matches_ode_event():
    points = np.array([[18.0, 1.4, 2.0], [15.8, 8.8, 19.4], [15.5, 10.4, 7.0]])
    phi0, Vm, Pv = np.array([0.4, 0.35, 0.25]), np.array([106.8, 58.5, 74.0]), \
        np.array([3.8, 7.9, 30.0])
    centre, R0 = np.array([16.6, 6.0, 9.0]), 5.0
    path = drying_path(points, phi0, Vm, Pv, centre, R0)
    assert path.starts_inside and path.leaves_at is not None
    n0 = phi0 / Vm

    def rhs(t, n):
        n = np.maximum(n, 1e-300)
        return -(n / n.sum()) * Pv

    def leaves(t, n):
        vol = n * Vm
        return float(red(mix(points, vol), centre, R0)[0]) - 1.0

    leaves.terminal, leaves.direction = True, 1
    sol = solve_ivp(rhs, (0.0, 50 * n0.sum() / Pv.min()), n0, events=leaves,
                    method="LSODA", rtol=1e-11, atol=1e-16)
    assert sol.t_events[0].size == 1
    n_at = sol.y_events[0][0]
    f_ode = 1.0 - float((n_at * Vm).sum())
    assert path.leaves_at == pytest.approx(f_ode, abs=1e-7)
    # the path is inside before, outside just after
    before = path.red[path.fractions_evaporated < path.leaves_at - 1e-9]
    assert np.all(before <= 1.0)


def test_three_components_last_component_and_residue():
    points = [[18.0, 1.4, 2.0], [15.8, 8.8, 19.4], [15.5, 10.4, 7.0]]
    path = drying_path(points, [0.2, 0.3, 0.5], [106.8, 58.5, 74.0], [30.0, 7.9, 3.8],
                       [16.5, 8.0, 10.0], 12.0)
    assert path.last_component == 2
    np.testing.assert_allclose(path.residue, [0.0, 0.0, 1.0])
    np.testing.assert_allclose(path.compositions.sum(axis=1), 1.0)
    np.testing.assert_allclose(path.compositions[-1], [0.0, 0.0, 1.0], atol=1e-12)
    np.testing.assert_allclose(path.points[-1], points[2])
    assert np.all(np.diff(path.compositions[:, 2]) >= -1e-15)  # least volatile enriches


def test_starts_outside_reports_zero():
    path = drying_path(**{**HAND, "R0": 3.0})
    assert path.starts_inside is False
    assert path.leaves_at == 0.0
    assert "starts outside" in str(path)


def test_stays_inside_to_dryness():
    path = drying_path(**{**HAND, "R0": 20.0})
    assert path.leaves_at is None and path.stays_inside
    assert path.inside_until == 1.0
    assert "stays inside to dryness" in str(path)
    assert np.all(path.red <= 1.0)


def test_leaves_and_comes_back_is_caught_at_first_exit():
    # A very volatile, B middle, C least volatile. The path runs from the blend
    # towards B+C (outside) and then to pure C (inside again).
    points = np.array([[16.0, 0.0, 0.0], [16.0, 20.0, 0.0], [16.0, 4.0, 0.0]])
    path = drying_path(points, [0.45, 0.45, 0.1], [100.0] * 3, [100.0, 10.0, 1.0],
                       [16.0, 4.0, 0.0], 8.0, n_points=401)
    assert path.starts_inside
    assert path.leaves_at is not None
    assert path.red_at_end == pytest.approx(0.0, abs=1e-12)  # pure C is the centre
    assert any("comes back" in n for n in path.notes)
    # first exit: RED crosses 1 at leaves_at; dP there = 4 + 8 = 12
    ex = path.exit_composition @ points
    assert ex[1] == pytest.approx(12.0, abs=1e-8)
    assert np.all(path.red[path.fractions_evaporated < path.leaves_at - 1e-9] <= 1.0)


def test_zero_vapour_pressure_component_stays():
    path = drying_path(**{**HAND, "vapour_pressures": [10.0, 0.0], "R0": 20.0})
    assert path.max_fraction_evaporated == pytest.approx(0.5)
    assert path.last_component == 1
    np.testing.assert_allclose(path.compositions[-1], [0.0, 1.0], atol=1e-12)
    assert math.isinf(path.relative_time[-1])
    assert json.dumps(path.to_dict(), allow_nan=False)


def test_zero_fraction_component_needs_no_data():
    path = drying_path(**{**HAND, "volume_fractions": [1.0, 0.0],
                          "vapour_pressures": [10.0, None]})
    np.testing.assert_allclose(path.compositions[:, 0], 1.0)


def test_missing_vapour_pressure_names_the_component():
    with pytest.raises(ValueError, match=r"vapour pressure missing for component\(s\) 2 \(ethanol\)"):
        drying_path(HAND["points"], [0.5, 0.5], [100.0, 50.0], [10.0, None],
                    HAND["centre"], HAND["R0"], names=["toluene", "ethanol"])
    with pytest.raises(ValueError, match=r"component\(s\) 1 \(component 1\), 2"):
        drying_path(HAND["points"], [0.5, 0.5], [100.0, 50.0], [float("nan"), None],
                    HAND["centre"], HAND["R0"])
    with pytest.raises(ValueError, match="molar volume missing"):
        drying_path(HAND["points"], [0.5, 0.5], [100.0, None], [10.0, 2.0],
                    HAND["centre"], HAND["R0"])


def test_fraction_conversions_round_trip():
    phi = np.array([0.2, 0.5, 0.3])
    V = np.array([106.8, 58.5, 74.0])
    np.testing.assert_allclose(mole_to_volume_fractions(volume_to_mole_fractions(phi, V), V), phi)
