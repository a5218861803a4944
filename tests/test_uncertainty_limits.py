"""The posterior's time limit, the model comparison in every fit report, and degenerate
panels through the command line (fit, bootstrap, posterior, rank, next). All panels are
invented."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from clirun import run_cli
from solsphere.io.project import load_any
from solsphere.models.base import ModelComparison
from solsphere.models.classic import SphereFitResult
from solsphere.models.comparison import compare_or_explain
from solsphere.uncertainty.posterior import Posterior, sample_posterior
from solsphere.workflows import fit_project

SIX = [[17, 10, 7], [19, 10, 7], [18, 9, 8], [10, 30, 30], [25, 0, 0], [14, 2, 20]]


def test_time_limit_stops_the_chain_and_says_how_far_it_got():
    # An effective sample size no chain reaches in a second: the time limit stops it
    # and the warning gives what was reached (the step limit is far away).
    p = sample_posterior(SIX, [1, 1, 1, 0, 0, 0], 200, n_effective=10**7, max_seconds=1.0,
                         max_steps=10**6)
    assert p.converged is False and p.stopped_by == "time"
    assert p.n_steps < 10**6
    note = next(w for w in p.warnings if w.startswith("The chain stopped"))
    assert "time limit of 1 s" in note and f"{p.effective_samples:.0f} effective" in note
    assert "NOT converged: time limit" in str(p)
    d = p.to_dict()
    assert d["stopped_by"] == "time"
    assert Posterior.from_dict(p.to_dict(samples=True)).stopped_by == "time"


def test_converged_chain_says_so_and_limits_are_checked():
    p = sample_posterior(SIX, [1, 1, 1, 0, 0, 0], 200, n_effective=200)
    assert p.converged and p.stopped_by == "converged"
    assert not any(w.startswith("The chain stopped") for w in p.warnings)
    for bad in (0, -1.0):
        with pytest.raises(ValueError, match="max_seconds"):
            sample_posterior(SIX, [1, 1, 1, 0, 0, 0], 200, max_seconds=bad)


def test_step_limit_is_named_as_such():
    p = sample_posterior(SIX, [1, 1, 1, 0, 0, 0], 200, n_effective=10**7, max_steps=300,
                         max_seconds=None)
    assert p.stopped_by == "steps" and "limit of" in p.warnings[0] and "steps" in p.warnings[0]


def test_fit_project_carries_the_comparison_and_round_trips(demo_path):
    project = load_any(demo_path)
    plain = fit_project(project)
    assert plain.model_comparison is None and "[[Which model?]]" not in str(plain)
    fit = fit_project(project, compare=True)
    mc = fit.model_comparison
    assert isinstance(mc, ModelComparison) and sum(r["recommended"] for r in mc.rows) == 1
    assert "[[Which model?]]" in str(fit)
    d = fit.to_dict()
    json.dumps(d)
    assert d["model_comparison"]["recommendation"] == mc.recommendation
    back = SphereFitResult.from_dict(d)
    assert back.model_comparison == mc
    assert SphereFitResult.from_dict({k: v for k, v in d.items()
                                      if k != "model_comparison"}).model_comparison is None
    graded = fit_project(project, method="graded", compare=True)
    assert graded.model_comparison.rows == mc.rows  # the same comparison whatever the fit


def test_fit_cli_shows_the_comparison_by_default_and_skips_it_on_request(demo_path):
    rc, out, _ = run_cli(["fit", demo_path, "--no-influence"])
    assert rc == 0 and "[[Which model?]]" in out and "Recommended:" in out
    rc, out, _ = run_cli(["fit", demo_path, "--no-influence", "--no-compare", "--json"])
    assert rc == 0 and json.loads(out)["model_comparison"] is None
    rc, out, _ = run_cli(["fit", demo_path, "--no-influence", "--compare", "--json"])
    assert json.loads(out)["model_comparison"]["rows"]  # the old option still works


def test_too_few_results_to_compare_say_so():
    cmp = compare_or_explain([[17, 5, 5], [18, 6, 7], [10, 30, 30]], ["good", "good", "bad"])
    assert cmp.rows == [] and cmp.reason.startswith("Not compared") and "2 clear" in cmp.reason
    assert "Not compared" in str(cmp)
    json.dumps(cmp.to_dict())


PANELS = {
    "all good": "solvent,outcome\nacetone,good\ntoluene,good\nethanol,good\n",
    "all bad": "solvent,outcome\nacetone,bad\ntoluene,bad\nethanol,bad\n",
    "two results": "solvent,outcome\nacetone,good\nwater,bad\n",
    "identical coordinates": "solvent,outcome,dD,dP,dH\n" + "".join(
        f"s{i},{'good' if i % 2 else 'bad'},17,5,5\n" for i in range(6)),
    "collinear": "solvent,outcome,dD,dP,dH\n" + "".join(
        f"s{i},{o},{15 + i},{5 + i},{5 + i}\n" for i, o in
        enumerate(["bad", "bad", "good", "good", "good", "bad", "bad", "bad"])),
}
COMMANDS = {"fit": ["fit"], "bootstrap": ["fit", "--bootstrap", "40", "--no-influence"],
            "posterior": ["fit", "--posterior", "100", "--no-influence"],
            "rank": ["rank", "--posterior", "100", "--top", "3"],
            "next": ["next", "--n", "2", "--samples", "100"]}


def _finite(obj):
    if isinstance(obj, float):
        assert math.isfinite(obj), obj
    elif isinstance(obj, dict):
        for v in obj.values():
            _finite(v)
    elif isinstance(obj, list):
        for v in obj:
            _finite(v)


@pytest.mark.parametrize("case", sorted(PANELS))
@pytest.mark.parametrize("what", sorted(COMMANDS))
def test_degenerate_panels_through_the_command_line(case, what, tmp_path):
    f = tmp_path / "panel.csv"
    f.write_text(PANELS[case], "utf-8")
    rc, out, err = run_cli([*COMMANDS[what], f, "--json"])
    assert "Traceback" not in err and "internal error" not in err, err
    assert rc in (0, 2), (rc, err)
    if rc == 2:
        # one line naming the file and saying what to do
        assert len(err.strip().splitlines()) == 1 and "panel.csv" in err
        assert "nan" not in err.lower() and ("Test" in err or "Check" in err), err
        assert case != "collinear"  # a line of solvents still gives a (warned) sphere
    else:
        d = json.loads(out)
        _finite(d)
        warnings = json.dumps(d).lower()
        assert "warning" in warnings and "line" in warnings or what in ("rank", "next")


def test_collinear_panel_warns_about_the_missing_directions(tmp_path):
    f = tmp_path / "panel.csv"
    f.write_text(PANELS["collinear"], "utf-8")
    rc, out, _ = run_cli(["fit", f, "--no-influence", "--json"])
    d = json.loads(out)
    assert rc == 0 and any("line" in w for w in d["warnings"]), d["warnings"]
    assert np.isfinite([d["dD"], d["dP"], d["dH"], d["R0"]]).all()
