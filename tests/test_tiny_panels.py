"""Tiny panels (1 to 3 results) through every report the command line prints.

A panel with a single good result once crashed the re-check list (a missing value was
formatted as a number). Any panel of 1-3 results must give either a report (exit 0) or
a one-line message (exit 2) — never an internal error. Panels are invented.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clirun import run_cli

SOLVENTS = ("MEK", "water", "hexane", "toluene", "ethanol", "acetone", "DMSO",
            "ethyl acetate", "dichloromethane")
OUTCOMES = ("dissolves", "partly", "does not")

panels = st.lists(st.tuples(st.sampled_from(SOLVENTS), st.sampled_from(OUTCOMES)),
                  min_size=1, max_size=3, unique_by=lambda r: r[0])


def _check(argv):
    rc, out, err = run_cli(argv)
    assert "internal error" not in err and "Traceback" not in err, err
    assert rc in (0, 2), (rc, err)
    if rc == 2:
        assert len(err.strip().splitlines()) == 1 and err.startswith("solsphere: error:")
    else:
        assert out.strip()
    return rc


def _write(panel) -> str:
    d = Path(tempfile.mkdtemp(prefix="tiny-"))
    f = d / "panel.csv"
    f.write_text("solvent,outcome\n" + "".join(f"{s},{o}\n" for s, o in panel), "utf-8")
    return str(f)


def test_the_one_good_result_panel_is_explained_not_fitted_to_a_point():
    """One good result gives the sphere no size: a one-line explanation (exit 2), not a
    sphere of radius 1e-9 MPa½ and REDs of 1e9."""
    f = _write([("MEK", "dissolves"), ("water", "does not"), ("hexane", "does not")])
    rc, out, err = run_cli(["fit", f])
    assert rc == 2 and out == "", err
    assert "only one point dissolves the material (2-butanone)" in err


def test_the_only_bad_result_is_said_in_the_recheck_list_not_computed():
    f = _write([("MEK", "dissolves"), ("acetone", "dissolves"), ("water", "does not")])
    rc, out, err = run_cli(["fit", f])
    assert rc == 0, err
    assert "the only result counted as bad" in out


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(panel=panels, partial=st.sampled_from(["good", "bad", "skip"]))
def test_fit_reports_of_tiny_panels(panel, partial):
    f = _write(panel)
    _check(["fit", f, "--partial", partial])
    _check(["fit", f, "--partial", partial, "--json"])


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(panel=panels)
def test_rank_blend_and_graded_reports_of_tiny_panels(panel):
    f = _write(panel)
    _check(["rank", f, "--top", "3", "--pool", "common"])
    _check(["blend", f, "--top", "3", "--pool", "common"])
    _check(["fit", f, "--method", "graded", "--no-influence"])
