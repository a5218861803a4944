"""The `solsphere mixture` command, its API function and the real-mixture drying path."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from clirun import run_cli
from solsphere.library.table import load_library
from solsphere.mixtures.activity import ActivityModel
from solsphere.mixtures.drying import drying_paths, mixture_drying_path
from solsphere.mixtures.mixture import analyse_mixture
from solsphere.mixtures.vapour import VapourPressures, vapour_pressure_kpa

DEMO = "data/demo/varnish_binder.csv"


def _json(argv):
    rc, out, err = run_cli(list(argv) + ["--json"])
    assert rc == 0, err
    lines = [ln for ln in out.splitlines() if ln.strip()]
    assert len(lines) == 1
    return json.loads(lines[0])


def test_mixture_json_contract():
    d = _json(["mixture", "ethanol 10 + water 90"])
    assert {"flash_point", "vapour_pressure_kpa", "phases", "path"} <= set(d)
    assert isinstance(d["flash_point"], float) and d["phases"] == 1
    assert d["vapour_pressure_kpa"] > vapour_pressure_kpa(load_library().lookup("water"))
    assert d["path"]["residue"][1] > 0.99  # water is left
    assert d["flash_point_detail"]["activity_model"] == "Dortmund UNIFAC"


def test_mixture_of_one_and_a_non_flammable_liquid():
    d = _json(["mixture", "water"])
    assert d["flash_point"] is None and d["phases"] == 1
    assert d["flash_point_detail"]["notes"]
    e = _json(["mixture", "ethanol"])
    assert e["flash_point"] <= 12.0  # library value 12 °C, minus the safety margin


def test_temperature_and_humidity_move_the_answer():
    cold = _json(["mixture", "toluene 50 + ethanol 50", "--temperature", "10"])
    warm = _json(["mixture", "toluene 50 + ethanol 50", "--temperature", "40"])
    assert warm["vapour_pressure_kpa"] > 2 * cold["vapour_pressure_kpa"]
    assert cold["flash_point"] == warm["flash_point"]  # a property of the liquid
    dry = _json(["mixture", "water 90 + 2-butoxyethanol 10"])
    humid = _json(["mixture", "water 90 + 2-butoxyethanol 10", "--humidity", "60"])
    assert humid["path"]["residue"][0] > dry["path"]["residue"][0]


def test_material_says_when_the_path_leaves_the_sphere(tmp_path):
    d = _json(["mixture", "toluene 70 + ethanol 30", "--material", DEMO])
    assert d["material"]["R0"] > 0
    assert d["path"]["red"][0] is not None
    rc, out, err = run_cli(["mixture", "toluene 70 + ethanol 30", "--material", DEMO])
    assert rc == 0 and "RED" in out and "flash point" in out


@pytest.mark.parametrize("spec,word", [
    ("etanol 10 + water 90", "unknown solvent"),
    ("ethanol 10% + water 80%", "add up to 100"),
    ("ethanol -10 + water 90", "must be positive"),
    ("ethanol + water", "no volume part"),
    ("ethanol 10 + ethanol 90", "appears twice"),
])
def test_bad_specs_get_one_line_and_exit_2(spec, word):
    rc, out, err = run_cli(["mixture", spec])
    assert rc == 2 and out == ""
    assert len(err.strip().splitlines()) == 1 and word in err and "Traceback" not in err


@pytest.mark.parametrize("opt,val", [("--humidity", "120"), ("--temperature", "900")])
def test_bad_options_exit_2(opt, val):
    rc, _, err = run_cli(["mixture", "ethanol", opt, val])
    assert rc == 2 and opt in err and len(err.strip().splitlines()) == 1


def test_api_report_prints_and_converts():
    r = analyse_mixture("ethyl acetate 50 + water 50")
    assert r.phases.phases == 2 and "TWO liquid phases" in str(r)
    assert r.flash_point["estimate"] is not None
    json.dumps(r.to_dict(), allow_nan=False)
    frame = r.to_frame()
    assert list(frame["name"]) == ["ethyl acetate", "water"]


def test_shelf_vapour_pressure_scales_the_curve():
    import dataclasses
    lib = load_library()
    t = lib.lookup("toluene")
    mine = dataclasses.replace(t, vapour_pressure=2 * t.vapour_pressure)
    p = VapourPressures([t, mine]).kpa([25.0, 60.0])
    assert p[0, 1] == pytest.approx(2 * t.vapour_pressure, rel=1e-9)  # the shelf's value
    assert p[1, 1] / p[0, 1] == pytest.approx(p[1, 0] / p[0, 0], rel=1e-9)  # same curve
    # an own solvent with a 25 °C value and a boiling point: the two-point line
    own = dataclasses.replace(t, cas=None, name="my thinner")
    q = VapourPressures([own])
    assert q.methods[0].startswith("two-point")
    assert q.kpa(own.boiling_point)[0] == pytest.approx(101.325, rel=1e-9)


def test_batch_drying_equals_one_at_a_time():
    lib = load_library()
    pool = [lib.lookup(n) for n in ("toluene", "ethanol", "water", "acetone", "butyl acetate")]
    model, vp = ActivityModel(pool), VapourPressures(pool)
    idx = np.array([[0, 1], [2, 3], [4, 0], [1, 2]])
    phi = np.array([[0.7, 0.3], [0.5, 0.5], [0.4, 0.6], [0.2, 0.8]])
    centre, R0 = (17.0, 5.0, 6.0), 6.0
    batch = drying_paths(model, vp, idx, phi, centre, R0)
    for r in range(4):
        one = mixture_drying_path([pool[i] for i in idx[r]], phi[r], centre, R0)
        np.testing.assert_allclose(batch[r].compositions, one.compositions, atol=1e-9)
        assert (batch[r].leaves_at is None) == (one.leaves_at is None)


def test_drying_path_conserves_each_component():
    # mole balance: what is left plus what left equals what was there; the volume
    # evaporated grows monotonically and the path ends at the least volatile component
    lib = load_library()
    p = mixture_drying_path([lib.lookup("acetone"), lib.lookup("butyl acetate")], [0.5, 0.5])
    f = p.fractions_evaporated
    assert np.all(np.diff(f) > 0)
    left = (1 - f)[:, None] * p.compositions  # volume of each component left
    assert np.all(np.diff(left, axis=0) <= 1e-9)
    assert p.names[p.last_component] == "butyl acetate"
    assert p.film_temperature[0] < 25.0  # evaporative cooling


def test_blend_json_carries_real_mixture_facts(tmp_path):
    rc, out, err = run_cli(["fit", DEMO, "--save", tmp_path / "p.json", "--json"])
    assert rc == 0, err
    d = _json(["blend", tmp_path / "p.json", "--top", "5", "--pool", "common", "--drying"])
    for b in d["blends"]:
        assert b["phases"] in (1, 2)
        assert b["inside"] == (b["red"] <= 1.0 and b["phases"] == 1)
        fpe = b["flash_point_estimate"]
        if fpe is not None:
            assert "Liaw" in fpe["method"]
        if b["drying"] is not None:
            assert "activity coefficients" in b["drying"]["method"]
            assert all(math.isfinite(t) for t in b["drying"]["film_temperature"])


def test_blend_flags_a_blend_that_flashes_below_the_component_limit(tmp_path):
    # toluene (4 °C) and ethanol (12 °C) both pass a 0 °C limit; their blends are
    # estimated to flash lower (minimum-flash-point behaviour) and must say so
    shelf = tmp_path / "shelf.csv"
    shelf.write_text("solvent\ntoluene\nethanol\n", encoding="utf-8")
    rc, out, err = run_cli(["fit", DEMO, "--save", tmp_path / "p.json", "--json"])
    assert rc == 0, err
    d = _json(["blend", tmp_path / "p.json", "--candidates", shelf, "--min-flash-point", "0",
               "--top", "1"])
    b = d["blends"][0]
    assert b["flash_point_estimate"]["estimate"] < 0
    assert b["below_min_flash_point"] is True
    assert any("below the 0 °C limit" in n for n in d["notes"])
