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


def test_fraction_limit_on_pairs_is_a_note_as_in_the_app(capsys):
    # one blend workflow: share limits on a two-solvent screen are noted, not used
    code, out, err = run(capsys, "blend", DEMO, "--max-fraction", "toluene=0.2", "--top", "3")
    assert code == 0 and "share limits apply to three-solvent blends only" in out


def test_fraction_limit_as_percent_as_in_the_app(capsys):
    # "toluene=30" and "toluene=30%" mean 30 % on the command line too
    outs = []
    for spec in ("toluene=30", "toluene=30%", "toluene=0.3"):
        code, out, err = run(capsys, "blend", DEMO, "--components", "3", "--max-fraction",
                             spec, "--top", "5", "--json")
        assert code == 0, err
        outs.append([b["volume_fractions"] for b in json.loads(out)["blends"]])
    assert outs[0] == outs[1] == outs[2]


@pytest.mark.parametrize("bad", ["toluene", "toluene=150", "=0.2", "toluene=x"])
def test_bad_fraction_limit(capsys, bad):
    code, _, err = run(capsys, "blend", DEMO, "--components", "3", "--max-fraction", bad)
    assert code == 2 and "--max-fraction" in err and len(err.strip().splitlines()) == 1


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


SHELF = "tests/data/shelf_common.csv"  # invented prices


def test_cost_ranking_puts_cheapest_inside_first(capsys):
    code, out, _ = run(capsys, "blend", DEMO, "--candidates", SHELF, "--rank-by", "cost",
                       "--top", "6", "--json")
    assert code == 0
    blends = json.loads(out)["blends"]
    inside = [b for b in blends if b["red"] <= 1.0]
    assert inside
    # price per litre is the volume-fraction weighted mean of the shelf prices
    prices = {"acetone": 3.1, "MEK": 3.5, "ethyl acetate": 2.8, "butyl acetate": 3.0,
              "toluene": 2.2, "p-xylene": 2.4, "ethanol": 2.0, "isopropanol": 2.3,
              "1-butanol": 2.9, "heptane": 2.1, "cyclohexanone": 4.2, "water": 0.1}
    for b in inside:
        if all(n in prices for n in b["solvents"]):
            assert b["price_per_litre"] == pytest.approx(
                sum(f * prices[n] for n, f in zip(b["solvents"], b["volume_fractions"])))
    mixable = [b for b in inside if not b["may_not_mix"]]
    ps = [b["price_per_litre"] for b in mixable]
    assert ps == sorted(ps)
    first_unmixable = next((k for k, b in enumerate(inside) if b["may_not_mix"]), len(inside))
    assert all(not b["may_not_mix"] for b in inside[:first_unmixable])


def test_cost_ranking_needs_prices(capsys):
    code, _, err = run(capsys, "blend", DEMO, "--rank-by", "cost")
    assert code == 2 and "price" in err


def test_drying_ranking_needs_drying(capsys):
    code, _, err = run(capsys, "blend", DEMO, "--candidates", SHELF, "--rank-by", "drying")
    assert code == 2 and "--drying" in err


def test_restricted_list_and_limits(capsys):
    code, out, _ = run(capsys, "rank", DEMO, "--restricted", "data/restricted_example.csv",
                       "--min-exposure-limit", "20", "--min-boiling-point", "100",
                       "--top", "40", "--json", "--include-tested")
    assert code == 0
    d = json.loads(out)
    banned = set(d["filters"]["restricted_names"])
    assert {"benzene", "n,n-dimethylformamide", "1,2-dichloroethane"} <= banned
    for s in d["solvents"]:
        assert s["name"] not in banned
        assert s["twa_ppm"] is None or s["twa_ppm"] >= 20
        assert s["boiling_point"] is not None and s["boiling_point"] >= 100
