"""CLI options for process conditions: three-solvent blends, fraction limits, drying,
temperature and substitution (on the invented demo file)."""

import json

import pytest

from solsphere.cli import main

DEMO = "data/demo/varnish_binder.csv"  # invented demo data


def run(capsys, *argv):
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_three_component_blends_respect_fraction_limit(capsys):
    code, out, _ = run(capsys, "blend", DEMO, "--components", "3", "--top", "5",
                       "--max-fraction", "toluene=0.2", "--json")
    assert code == 0
    blends = json.loads(out)["blends"]
    assert blends and all(len(b["solvents"]) == 3 for b in blends)
    for b in blends:
        assert sum(b["volume_fractions"]) == pytest.approx(1.0)
        for n, f in zip(b["solvents"], b["volume_fractions"]):
            if n == "toluene":
                assert f <= 0.2 + 1e-9
    reds = [b["red"] for b in blends]
    assert reds == sorted(reds)


def test_fraction_limit_needs_three_components(capsys):
    code, _, err = run(capsys, "blend", DEMO, "--max-fraction", "toluene=0.2")
    assert code == 2 and "--components 3" in err and "Traceback" not in err


@pytest.mark.parametrize("bad", ["toluene", "toluene=1.5", "=0.2", "toluene=x"])
def test_bad_fraction_limit(capsys, bad):
    code, _, err = run(capsys, "blend", DEMO, "--components", "3", "--max-fraction", bad)
    assert code == 2 and "NAME=F" in err and len(err.strip().splitlines()) == 1


def test_drying_and_flash_estimate_reported(capsys):
    code, out, _ = run(capsys, "blend", DEMO, "--top", "5", "--drying", "--json",
                       "--candidates", "tests/data/shelf_common.csv")
    assert code == 0
    blends = json.loads(out)["blends"]
    assert blends
    for b in blends:
        assert "drying" in b and "flash_point_estimate" in b
        d = b["drying"]
        if d is not None:
            assert d["leaves_at"] is None or 0.0 <= d["leaves_at"] <= 1.0


def test_temperature_shifts_candidates_down(capsys):
    # Hansen–Beerbower: every parameter falls as the temperature rises (handbook ch. 1).
    _, cold, _ = run(capsys, "rank", DEMO, "--top", "50", "--json")
    _, hot, _ = run(capsys, "rank", DEMO, "--top", "50", "--json", "--temperature", "60")
    cold = {s["name"]: s for s in json.loads(cold)["solvents"]}
    hot_d = json.loads(hot)
    assert hot_d["filters"]["temperature"] == 60
    moved = 0
    for s in hot_d["solvents"]:
        c = cold.get(s["name"])
        if c is not None and c["dD"] != s["dD"]:
            assert s["dD"] < c["dD"] and s["dP"] <= c["dP"] and s["dH"] <= c["dH"]
            moved += 1
    assert moved > 0
    assert all("chi" in s for s in hot_d["solvents"])


def test_replace_ranks_neighbours_and_leaves_target_out(capsys):
    code, out, _ = run(capsys, "replace", "NMP", "--top", "5", "--json")
    assert code == 0
    d = json.loads(out)
    names = [s["name"] for s in d["singles"]]
    assert d["target"]["name"] == "1-methyl-2-pyrrolidinone" and d["target"]["name"] not in names
    ras = [s["Ra"] for s in d["singles"]]
    assert ras == sorted(ras)
    assert "safety data sheet" in d["caution"]


def test_replace_for_material_marks_side(capsys):
    code, out, _ = run(capsys, "replace", "THF", "--for-material", DEMO, "--top", "5", "--json")
    assert code == 0
    d = json.loads(out)
    assert d["material"] is not None
    sides = [s["same_side"] for s in d["singles"]]
    assert sides == sorted(sides, reverse=True)


def test_replace_unknown_name(capsys):
    code, _, err = run(capsys, "replace", "tolune")
    assert code == 2 and "toluene" in err
