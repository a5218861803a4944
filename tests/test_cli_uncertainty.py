"""CLI wiring of the uncertainty features: intervals, influence, p_good, next trials,
graded and two-sphere fits (on the invented demo file)."""

import json

import pytest

from solsphere.cli import main

DEMO = "data/demo/varnish_binder.csv"  # invented demo data


def run_json(capsys, *argv):
    code = main(list(argv) + ["--json"])
    out = capsys.readouterr()
    assert code == 0, out.err
    assert out.err == ""  # no progress bar under --json
    return json.loads(out.out)


def test_fit_bootstrap_intervals_are_reproducible(capsys):
    a = run_json(capsys, "fit", DEMO, "--bootstrap", "40", "--seed", "3", "--no-influence")
    b = run_json(capsys, "fit", DEMO, "--bootstrap", "40", "--seed", "3", "--no-influence")
    assert a["n_bootstrap"] == 40
    assert set(a["intervals"]) >= {"dD", "dP", "dH", "R0"}
    for k in ("dD", "dP", "dH", "R0"):
        lo, hi = a["intervals"][k]
        assert lo <= hi
    assert a["intervals"] == b["intervals"]
    assert "influence" not in a


def test_fit_reports_influence_by_default(capsys):
    d = run_json(capsys, "fit", DEMO)
    rows = d["influence"]
    assert rows and all({"name", "shift"} <= set(r) for r in rows)
    impacts = [r["impact"] for r in rows]
    assert impacts == sorted(impacts, reverse=True)


def test_rank_bootstrap_gives_p_good(capsys):
    d = run_json(capsys, "rank", DEMO, "--bootstrap", "30", "--top", "10")
    ps = [s["p_good"] for s in d["solvents"]]
    assert all(p is not None and 0.0 <= p <= 1.0 for p in ps)
    # the nearest solvents are inside nearly every resampled sphere
    assert ps[0] >= 0.5


def test_next_suggestions_contract(capsys):
    d = run_json(capsys, "next", DEMO, "--n", "3", "--bootstrap", "60", "--min-flash-point", "40")
    sugg = d["suggestions"]
    assert len(sugg) == 3
    for s in sugg:
        assert {"name", "p_good", "dD", "dP", "dH", "reason"} <= set(s)
        assert s["flash_point"] is not None and s["flash_point"] >= 40
    names = [s["name"] for s in sugg]
    assert len(set(names)) == 3


def test_graded_and_two_sphere_fits(capsys):
    g = run_json(capsys, "fit", DEMO, "--method", "graded", "--no-influence")
    assert g["method"] == "graded" and g["width"] > 0
    assert {"dD", "dP", "dH", "R0", "desirability", "n_good", "n_bad", "misfits",
            "warnings"} <= set(g)
    t = run_json(capsys, "fit", DEMO, "--spheres", "2", "--no-influence")
    assert t["two_spheres"]["n_spheres"] in (1, 2)


def test_bad_bootstrap_count(capsys):
    with pytest.raises(SystemExit) as exc:  # argparse usage errors exit 2 directly
        main(["fit", DEMO, "--bootstrap", "0"])
    err = capsys.readouterr().err
    assert exc.value.code == 2 and "--bootstrap" in err and len(err.strip().splitlines()) == 1


def test_fit_and_rank_with_posterior_samples(capsys):
    a = run_json(capsys, "fit", DEMO, "--posterior", "300", "--seed", "2", "--no-influence")
    b = run_json(capsys, "fit", DEMO, "--posterior", "300", "--seed", "2", "--no-influence")
    post = a["posterior"]
    assert post["n_samples"] == 300 and post["fit_method"] == "posterior"
    assert set(post["intervals"]) == {"dD", "dP", "dH", "R0", "width"}
    assert post["intervals"] == b["posterior"]["intervals"]  # seeded
    # converged by default: at least 1,000 effective samples, tau reported
    assert post["effective_samples"] >= 1000 and post["converged"] is True
    assert post["autocorr_time"] == max(post["autocorr_times"].values()) > 0
    assert post["bounds"] == [[12.0, 25.0], [0.0, 30.0], [0.0, 45.0]]  # the wide prior
    d = run_json(capsys, "rank", DEMO, "--posterior", "300", "--top", "5", "--pool", "common")
    ps = [s["p_good"] for s in d["solvents"]]
    assert all(p is not None and 0.0 <= p <= 1.0 for p in ps)
    code = main(["rank", DEMO, "--posterior", "300", "--top", "3"])
    out = capsys.readouterr().out
    assert code == 0 and "p_good" in out.splitlines()[1]  # the column in the text table


def test_next_reports_its_engine(capsys):
    d = run_json(capsys, "next", DEMO, "--n", "2", "--samples", "300")
    assert d["uncertainty"] == "posterior" and d["n_samples"] == 300
    assert d["filters"]["pool"] == "common solvents"
    e = run_json(capsys, "next", DEMO, "--n", "2", "--bootstrap", "40")
    assert e["uncertainty"] == "bootstrap" and e["n_samples"] == 40


def test_fit_compare_reports_a_recommendation(capsys):
    d = run_json(capsys, "fit", DEMO, "--compare", "--no-influence")
    cmp = d["model_comparison"]
    assert cmp["rows"][0]["label"].startswith("classic") and cmp["n_scored"] > 20
    assert sum(r["recommended"] for r in cmp["rows"]) == 1
    assert cmp["recommendation"] in {r["label"] for r in cmp["rows"]}
    assert main(["fit", DEMO, "--compare", "--no-influence"]) == 0
    assert "[[Which model?]]" in capsys.readouterr().out
