"""Tables out (-o FILE.csv | .xlsx | .json on fit, rank, blend, next, replace), many
materials in one run (fit with a material column, --jobs, --save into a folder,
--material on rank/blend/next) and the packaged demo (fit --demo)."""

from __future__ import annotations

import csv
import io
import json

import pytest

openpyxl = pytest.importorskip("openpyxl")

from clirun import run_cli  # noqa: E402
from solsphere.batch import fit_materials, material_file_names  # noqa: E402
from solsphere.io import trials as T  # noqa: E402
from solsphere.io.project import load  # noqa: E402
from solsphere.io.tables import write_table  # noqa: E402

# invented results of two materials (not measured data)
MATERIALS = {
    "resin A": [("toluene", 1), ("xylene", 2), ("acetone", 3), ("ethyl acetate", 2),
                ("water", 6), ("methanol", 5), ("n-hexane", 6), ("ethanol", 5)],
    "resin B": [("toluene", 6), ("xylene", 5), ("acetone", 1), ("ethanol", 1),
                ("methanol", 2), ("water", 6), ("n-hexane", 6), ("ethyl acetate", 4)],
}


@pytest.fixture
def two_materials(tmp_path):
    p = tmp_path / "lab.csv"
    p.write_text("material,solvent,result\n" + "".join(
        f"{m},{s},{k}\n" for m, rows in MATERIALS.items() for s, k in rows))
    return p


def read_csv(path):
    return list(csv.DictReader(io.StringIO(path.read_text(encoding="utf-8-sig"))))


def read_xlsx(path):
    ws = openpyxl.load_workbook(path).active
    rows = list(ws.iter_rows(values_only=True))
    return [dict(zip(rows[0], r)) for r in rows[1:]]


@pytest.mark.parametrize("kind", ["csv", "xlsx", "json"])
def test_rank_table_matches_the_json_output(tmp_path, demo_path, kind):
    out = tmp_path / f"rank.{kind}"
    rc, text, err = run_cli(["rank", demo_path, "--top", "7", "-o", out])
    assert rc == 0, err and f"Table written to {out}" in text
    rc, js, err = run_cli(["rank", demo_path, "--top", "7", "--json"])
    expected = json.loads(js)["solvents"]
    if kind == "json":
        got = json.loads(out.read_text())["solvents"]
        assert [r["name"] for r in got] == [r["name"] for r in expected]
        return
    rows = read_csv(out) if kind == "csv" else read_xlsx(out)
    assert [r["name"] for r in rows] == [r["name"] for r in expected]
    assert [float(r["red"]) for r in rows] == pytest.approx([r["red"] for r in expected])


def test_fit_writes_the_per_trial_table(tmp_path, demo_path):
    out = tmp_path / "trials.xlsx"
    rc, _, err = run_cli(["fit", demo_path, "--no-influence", "-o", out])
    assert rc == 0, err
    rows = read_xlsx(out)
    demo = T.read_trials(demo_path)
    assert [r["name"] for r in rows] == demo.names
    assert {"red", "outcome", "predicted"} <= set(rows[0])


@pytest.mark.parametrize("argv", [
    ["blend", "{demo}", "--top", "3"],
    ["next", "{demo}", "--n", "3", "--samples", "200"],
    ["replace", "toluene", "--top", "3", "--pairs", "1"],
])
def test_other_commands_write_tables(tmp_path, demo_path, argv):
    out = tmp_path / "t.csv"
    rc, text, err = run_cli([a.replace("{demo}", str(demo_path)) for a in argv] + ["-o", out])
    assert rc == 0, err
    rows = read_csv(out)
    assert rows and all(len(r) == len(rows[0]) for r in rows)


def test_outputs_never_destroy(tmp_path, demo_path, two_materials):
    before = two_materials.read_bytes()
    rc, _, err = run_cli(["rank", two_materials, "--material", "resin A", "-o", two_materials])
    assert rc == 2 and "input file" in err and two_materials.read_bytes() == before
    # someone's own workbook or CSV given to -o by mistake is kept
    mine = tmp_path / "mine.xlsx"
    wb = openpyxl.Workbook()
    wb.active.append(["solvent", "outcome"])
    wb.save(mine)
    kept = mine.read_bytes()
    rc, _, err = run_cli(["rank", demo_path, "-o", mine])
    assert rc == 2 and "not overwriting" in err and mine.read_bytes() == kept
    other = tmp_path / "other.csv"
    other.write_text("solvent,outcome\ntoluene,good\n")
    rc, _, err = run_cli(["rank", demo_path, "-o", other])
    assert rc == 2 and other.read_text() == "solvent,outcome\ntoluene,good\n"
    # an earlier table of the same command is replaced
    out = tmp_path / "r.xlsx"
    for _ in range(2):
        rc, _, err = run_cli(["rank", demo_path, "-o", out])
        assert rc == 0, err
    rc, _, err = run_cli(["rank", demo_path, "-o", tmp_path / "r.txt"])
    assert rc == 2 and ".csv, .xlsx or .json" in err
    rc, _, err = run_cli(["rank", demo_path, "-o", tmp_path])  # a folder
    assert rc == 2


def test_write_table_flattens_lists(tmp_path):
    out = tmp_path / "b.csv"
    write_table([{"solvents": ["a", "b"], "volume_fractions": [0.25, 0.75],
                  "extra": {"k": 1}}], out)
    row = read_csv(out)[0]
    assert row == {"solvents": "a; b", "volume_fractions": "0.25; 0.75", "extra": '{"k": 1}'}


def test_formula_like_text_is_stored_as_text_in_workbooks(tmp_path):
    out = tmp_path / "x.xlsx"
    write_table([{"name": "=HYPERLINK(\"http://x\")"}], out)
    ws = openpyxl.load_workbook(out).active
    assert ws["A2"].data_type == "s" and ws["A2"].value.startswith("'=")


# ------------------------------------------------------------------ many materials


def test_fit_many_materials_json_text_and_table(tmp_path, two_materials):
    rc, out, err = run_cli(["fit", two_materials, "--json", "--jobs", "2", "--no-influence"])
    assert rc == 0, err
    mats = json.loads(out)["materials"]
    assert [m["material"] for m in mats] == ["resin A", "resin B"]
    for m in mats:  # each the same fit as the material alone
        rc, one, err = run_cli(["fit", two_materials, "--material", m["material"], "--json",
                                "--no-influence"])
        alone = json.loads(one)
        assert (m["dD"], m["dP"], m["dH"], m["R0"]) == pytest.approx(
            (alone["dD"], alone["dP"], alone["dH"], alone["R0"]))
        assert alone["material"] == m["material"]
    rc, text, err = run_cli(["fit", two_materials, "--jobs", "1", "--no-influence",
                             "-o", tmp_path / "all.csv"])
    assert rc == 0 and "[[2 materials]]" in text and "==== resin B ====" in text
    rows = read_csv(tmp_path / "all.csv")
    assert {r["material"] for r in rows} == {"resin A", "resin B"}
    assert len(rows) == sum(len(v) for v in MATERIALS.values())


def test_fit_many_saves_a_folder_of_projects(tmp_path, two_materials):
    folder = tmp_path / "projects"
    rc, text, err = run_cli(["fit", two_materials, "--save", folder, "--no-influence"])
    assert rc == 0, err
    files = sorted(p.name for p in folder.iterdir())
    assert files == ["resin-A.json", "resin-B.json"]
    proj = load(folder / "resin-B.json")
    assert proj.settings["material"] == "resin B" and proj.fit is not None
    rc, out, err = run_cli(["rank", folder / "resin-B.json", "--json", "--top", "3"])
    assert rc == 0, err
    rc, out2, err = run_cli(["rank", two_materials, "--material", "resin B", "--json",
                             "--top", "3"])
    assert json.loads(out)["solvents"] == json.loads(out2)["solvents"]
    # a file where the folder should be is refused
    rc, _, err = run_cli(["fit", two_materials, "--save", two_materials])
    assert rc == 2
    # run again into the same (now existing) folder: the projects are replaced
    rc, _, err = run_cli(["fit", two_materials, "--save", folder, "--no-influence"])
    assert rc == 0, err
    assert sorted(p.name for p in folder.iterdir()) == ["resin-A.json", "resin-B.json"]
    # one material never goes into a folder
    rc, _, err = run_cli(["fit", two_materials, "--material", "resin B", "--save", folder])
    assert rc == 2 and len(err.strip().splitlines()) == 1


def test_csv_tables_keep_text_that_looks_like_a_formula_as_text(tmp_path):
    out = tmp_path / "t.csv"
    write_table([{"name": "=HYPERLINK(1)", "note": "-10", "x": -3.5}], out)
    rows = list(csv.reader(io.StringIO(out.read_text(encoding="utf-8-sig"))))
    assert rows[1] == ["'=HYPERLINK(1)", "-10", "-3.5"]


def test_rank_blend_next_need_a_material_when_there_are_several(two_materials):
    for cmd in (["rank"], ["blend"], ["next", "--samples", "100"]):
        rc, _, err = run_cli([cmd[0], two_materials, *cmd[1:]])
        assert rc == 2 and "2 materials" in err and "--material" in err, err
        rc, _, err = run_cli([cmd[0], two_materials, *cmd[1:], "--material", "Resin A",
                              "--top", "3"])
        assert rc == 0, err
    rc, _, err = run_cli(["rank", two_materials, "--material", "resin C"])
    assert rc == 2 and "'resin A', 'resin B'" in err


def test_a_material_that_cannot_be_fitted_does_not_stop_the_others(tmp_path):
    p = tmp_path / "m.csv"
    p.write_text("material,solvent,outcome\nA,toluene,good\nA,acetone,good\nA,water,bad\n"
                 "A,n-hexane,bad\nB,toluene,good\nB,acetone,good\n")
    rc, out, err = run_cli(["fit", p, "--json", "--no-influence"])
    assert rc == 2 and "B" in err
    mats = json.loads(out)["materials"]
    assert "error" not in mats[0] and "error" in mats[1]


def test_fit_materials_same_with_one_or_two_processes(two_materials, lib):
    groups = T.read_materials(two_materials, lib)
    one = fit_materials(groups, with_influence=True, jobs=1).to_dict()["materials"]
    two = fit_materials(groups, with_influence=True, jobs=2).to_dict()["materials"]
    assert one == two


def test_material_file_names_are_safe_and_distinct():
    names = material_file_names(["A/B", "a-b", "..", "", "résine 1"])
    assert names == ["A-B.json", "a-b-2.json", "material.json", "material-2.json",
                     "résine-1.json"]
    assert all("/" not in n for n in names)


def test_jobs_reaches_the_bootstrap(demo_path):
    rc, out, err = run_cli(["fit", demo_path, "--bootstrap", "40", "--jobs", "1", "--json",
                            "--no-influence"])
    assert rc == 0, err
    assert json.loads(out)["bootstrap"]["n_workers"] == 1
    rc, _, err = run_cli(["fit", demo_path, "--jobs", "0"])
    assert rc == 2 and "--jobs" in err


# ------------------------------------------------------------------ the packaged demo


def test_fit_demo_reads_the_packaged_file(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # not the repository
    rc, out, err = run_cli(["fit", "--demo", "--json", "--no-influence"])
    assert rc == 0, err
    assert json.loads(out)["n_trials"] > 10
    rc, _, err = run_cli(["fit", "--demo", "x.csv"])
    assert rc == 2 and "--demo" in err
