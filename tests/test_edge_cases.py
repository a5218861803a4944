"""Numerical edge cases of the sphere fit, fed the way a user would feed them.

All tested solvents on a line or a plane; identical coordinates with opposite outcomes;
one good result; a single solvent repeated; a 2,000-trial panel; a centre that wants
to leave the tested region. Each must give a finite, honest result (warnings where the
data cannot locate the centre) or a clear ``FitError`` — never NaN, never a crash.
All panels are invented. Distances are recomputed here from the Hansen distance
written out (Hansen handbook, 2nd ed., 2007, ch. 1: Ra² = 4ΔδD² + ΔδP² + ΔδH²; from
memory) rather than through ``solsphere.hsp``.
"""

from __future__ import annotations

import contextlib
import io
import json
import math

import numpy as np
import pytest

from solsphere import cli

from solsphere.io import trials as T
from solsphere.errors import FitError, InputError
from solsphere.limits import limited
from solsphere.models.classic import SphereModel
from solsphere.library.table import load_library



def hansen_ra(p, c) -> np.ndarray:
    p = np.atleast_2d(np.asarray(p, dtype=float))
    return np.sqrt(4 * (p[:, 0] - c[0]) ** 2 + (p[:, 1] - c[1]) ** 2 + (p[:, 2] - c[2]) ** 2)


def finite_everywhere(obj) -> None:
    if isinstance(obj, float):
        assert math.isfinite(obj)
    elif isinstance(obj, dict):
        for v in obj.values():
            finite_everywhere(v)
    elif isinstance(obj, (list, tuple)):
        for v in obj:
            finite_everywhere(v)


def fit_text(text: str, lib, partial: str = "good"):
    trials = T.read_text(text, source="bench.csv", library=lib)
    res = SphereModel(partial=partial).fit(trials).result_
    finite_everywhere(res.to_dict())
    json.dumps(res.to_dict(), allow_nan=False)
    assert 0 < res.desirability <= 1 and res.R0 > 0
    # the reported distances are the Hansen distances from the reported centre
    table_pts = [(r["dD"], r["dP"], r["dH"]) for r in res.table]
    np.testing.assert_allclose([r["Ra"] for r in res.table],
                               hansen_ra(table_pts, (res.dD, res.dP, res.dH)), rtol=1e-12)
    return trials, res


def cli_fit_json(path) -> dict:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = cli.main(["fit", str(path), "--json"])
    assert rc == 0, err.getvalue()
    return json.loads(out.getvalue())


def own_rows(points, outcomes, prefix="own") -> str:
    return "".join(f"{prefix} {i},{o},{p[0]!r},{p[1]!r},{p[2]!r}\n"
                   for i, (p, o) in enumerate(zip(points, outcomes)))


HEADER = "solvent,outcome,dD,dP,dH\n"


# ----------------------------------------------------------------------------- a line


def test_blends_of_two_solvents_lie_on_a_line_and_still_fit(lib, tmp_path):
    """A toluene–ethanol series tested as blends: every point on one segment."""
    parts = [100, 90, 80, 70, 60, 50, 40, 30, 20, 10, 0]
    rows = []
    for a in parts:
        b = 100 - a
        name = "toluene" if b == 0 else "ethanol" if a == 0 else f"toluene {a} + ethanol {b}"
        rows.append(f"{name},{'good' if 30 <= a <= 70 else 'bad'}")
    text = "solvent,outcome\n" + "\n".join(rows) + "\n"
    trials, res = fit_text(text, lib)
    tol, eth = np.array(lib.lookup("toluene").point), np.array(lib.lookup("ethanol").point)
    d = eth - tol
    off = trials.points - tol
    # every trial is on the segment (cross product ~ 0), so the data cannot say where
    # the centre lies across the line
    assert np.allclose(np.cross(off, d), 0, atol=1e-9)
    assert res.desirability == pytest.approx(1.0)
    assert res.misfits == []
    p = tmp_path / "line.csv"
    p.write_text(text)
    assert cli_fit_json(p)["n_good"] == 5


def test_axis_aligned_line_warns_that_two_coordinates_cannot_be_located(lib):
    dP = [0.0, 2, 4, 6, 8, 10, 12, 14, 16, 18]
    pts = [(17.0, v, 6.0) for v in dP]
    outcomes = ["good" if 6 <= v <= 12 else "bad" for v in dP]
    _, res = fit_text(HEADER + own_rows(pts, outcomes), lib)
    assert (res.dD, res.dH) == (17.0, 6.0)
    text = " ".join(res.warnings)
    assert "too narrow to locate the centre's dD" in text
    assert "too narrow to locate the centre's dH" in text
    assert res.misfits == []
    assert 6 <= res.dP <= 12


def test_all_on_a_plane_warns_about_the_missing_direction(lib):
    rng = np.random.default_rng(11)
    pts = np.column_stack([np.full(30, 18.0), rng.uniform(0, 20, 30), rng.uniform(0, 25, 30)])
    inside = hansen_ra(pts, (18.0, 8.0, 9.0)) <= 7.0
    _, res = fit_text(HEADER + own_rows(pts.tolist(), np.where(inside, "good", "bad")), lib)
    assert res.dD == 18.0
    assert any("too narrow to locate the centre's dD" in w for w in res.warnings)
    assert not any("centre's dP" in w or "centre's dH" in w for w in res.warnings)
    assert res.desirability == pytest.approx(1.0)


# ---------------------------------------------------------------- same place, both ways


def test_identical_coordinates_with_opposite_outcomes(lib):
    """Two own solvents at one point, one dissolves and one does not (e.g. two batches):
    the fit cannot satisfy both; it reports exactly that and stays finite."""
    text = (HEADER + "batch A,good,17.0,6.0,7.0\nbatch B,bad,17.0,6.0,7.0\n"
            + "toluene,good,,,\nacetone,good,,,\nethyl acetate,good,,,\n"
            + "water,bad,,,\nn-hexane,bad,,,\nmethanol,bad,,,\nethanol,bad,,,\n")
    _, res = fit_text(text, lib)
    a, b = (next(r for r in res.table if r["name"] == n) for n in ("batch A", "batch B"))
    assert a["Ra"] == b["Ra"]
    if a["on_surface"]:  # on the surface: either outcome fits, the cost is ~0
        assert res.desirability > 0.9999
    else:  # otherwise one of the two is a misfit and the desirability shows it
        assert ("batch A" in res.misfits) != ("batch B" in res.misfits)
        assert res.desirability < 1


def test_all_trials_at_one_point_with_both_outcomes(lib):
    """No sphere separates them: said so (before: R0 = 1e-9 MPa½, shown as 0.0)."""
    pts = [(16.0, 8.0, 10.0)] * 4
    text = HEADER + own_rows(pts, ["good", "bad", "good", "bad"])
    with pytest.raises(FitError) as info:
        fit_text(text, lib)
    msg = str(info.value)
    assert "same point (16.0, 8.0, 10.0 MPa½) disagree" in msg and "\n" not in msg


# ----------------------------------------------------------------------------- one good


def test_one_good_result_is_explained_not_fitted_to_a_point(lib):
    """One point gives the sphere no size (before: R0 = 1e-9, RED ~ 1e9 in rank)."""
    text = ("solvent,outcome\nacetone,good\nwater,bad\nn-hexane,bad\nmethanol,bad\n"
            "toluene,bad\nethanol,bad\ndimethyl sulfoxide,bad\n")
    with pytest.raises(FitError) as info:
        fit_text(text, lib)
    assert "only one point dissolves the material (acetone)" in str(info.value)


def test_one_good_result_alone_at_a_corner_of_the_box(lib):
    pts = [(14.0, 0.0, 0.0), (20.0, 15.0, 20.0), (17.0, 8.0, 8.0), (19.0, 2.0, 15.0)]
    with pytest.raises(FitError, match="only one point dissolves"):
        fit_text(HEADER + own_rows(pts, ["good", "bad", "bad", "bad"]), lib)


def test_two_good_results_fit_with_a_warning(lib):
    text = ("solvent,outcome\nacetone,good\nbutanone,good\nwater,bad\nn-hexane,bad\n"
            "methanol,bad\ntoluene,bad\nethanol,bad\ndimethyl sulfoxide,bad\n")
    _, res = fit_text(text, lib)
    assert res.misfits == [] and res.R0 >= 0.5
    assert any("Only 2 results count as good" in w for w in res.warnings)


# ------------------------------------------------------------------------ repeated


def test_a_single_solvent_repeated_is_kept_once_with_warnings(lib):
    text = "solvent,outcome\n" + "toluene,good\n" * 6 + "p-xylene,good\nwater,bad\nmethanol,bad\n"
    trials, res = fit_text(text, lib)
    assert trials.names == ["toluene", "p-xylene", "water", "methanol"]
    # one warning with the count (a 1 MB file of repeats once made a 20 MB project)
    assert [w for w in trials.warnings if "repeats line 2" in w] == [
        "bench.csv, line 3: toluene repeats line 2 with the same outcome 5 times (lines 3, 4, "
        "5, 6, 7); kept line 2 only"]


def test_only_one_solvent_repeated_cannot_bound_a_sphere(lib):
    trials = T.read_text("solvent,outcome\n" + "acetone,dissolves\n" * 20, library=lib)
    with pytest.raises(FitError) as info:
        SphereModel().fit(trials)
    msg = str(info.value)
    assert "no outer boundary" in msg and "\n" not in msg


def test_repeated_points_in_arrays_behave_like_one(lib):
    X = np.array([[17.0, 8, 8]] * 10 + [[18.0, 9, 6]] * 3 + [[15.5, 16.0, 42.3]] * 10
                 + [[14.9, 0, 0]] * 5)
    good = np.array([True] * 13 + [False] * 15)
    res = SphereModel().fit(X, good).result_
    once = SphereModel().fit(X[[0, 10, 13, 23]], good[[0, 10, 13, 23]]).result_
    finite_everywhere(res.to_dict())
    assert res.desirability == pytest.approx(1.0) and once.desirability == pytest.approx(1.0)
    assert res.misfits == []


# -------------------------------------------------------------------------- huge panel


def _huge_panel(n=2000, seed=7):
    rng = np.random.default_rng(seed)
    X = np.column_stack([rng.uniform(14, 21, n), rng.uniform(0, 25, n), rng.uniform(0, 30, n)])
    X = np.round(X, 3)
    good = hansen_ra(X, (17.5, 9.0, 8.0)) <= 7.0  # an invented sphere
    return X, good


def test_huge_panel_reads(lib):
    X, good = _huge_panel()
    text = HEADER + own_rows(X.tolist(), np.where(good, "good", "bad"))
    with pytest.raises(InputError, match="2,000 trial rows .* limit of 1,000 .*--max-rows"):
        T.read_text(text, library=lib)
    with limited(rows=2000):
        trials = T.read_text(text, library=lib)
    assert len(trials) == 2000
    np.testing.assert_array_equal(trials.points, X)


@pytest.mark.slow
def test_huge_panel_fits(lib):
    """2,000 own-coordinate trials from an invented sphere: the fit separates them all."""
    X, good = _huge_panel()
    with limited(rows=2000):
        _, res = fit_text(HEADER + own_rows(X.tolist(), np.where(good, "good", "bad")), lib)
    assert res.n_trials == 2000
    assert res.misfits == [] and res.desirability == pytest.approx(1.0)
    assert res.success
    assert hansen_ra([(res.dD, res.dP, res.dH)], (17.5, 9.0, 8.0))[0] < 0.5
    assert abs(res.R0 - 7.0) < 0.3


# ------------------------------------------------------------ centre beyond the region


def test_centre_that_wants_to_leave_the_tested_region_is_bounded_with_a_warning(lib):
    """Everything tested has dH <= 20, and the higher the dH the better it dissolves: the
    best centre would lie above dH 20. The fit stays in the tested box and says so."""
    rng = np.random.default_rng(5)
    pts = np.column_stack([rng.uniform(15, 20, 40), rng.uniform(2, 16, 40),
                           rng.uniform(0, 20, 40)]).round(2)
    inside = hansen_ra(pts, (17.5, 9.0, 30.0)) <= 14.0  # invented sphere centred at dH 30
    assert inside.any() and (~inside).any()
    _, res = fit_text(HEADER + own_rows(pts.tolist(), np.where(inside, "good", "bad")), lib)
    box = np.array(res.bounds)
    assert box[2, 1] == pts[:, 2].max()
    assert res.dH <= box[2, 1] and res.dH >= box[2, 1] - 0.05  # at the upper edge
    assert any("upper edge of the tested region" in w and "higher dH" in w
               for w in res.warnings)
    for c, (lo, hi) in zip((res.dD, res.dP, res.dH), box):
        assert lo <= c <= hi
