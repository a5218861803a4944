"""The functions behind the app's callbacks, without a browser.

The app must not compute science itself: these tests check that what it shows equals
what the library returns for the same input (the CLI's path), and that its own
bookkeeping (rows <-> trials, marks, uploads, downloads) is right.
"""

from __future__ import annotations

import base64
import json

import pytest

from app import logic
from solsphere.errors import InputError
from solsphere.library import load_library


@pytest.fixture(scope="module")
def lib():
    return load_library()


@pytest.fixture(scope="module")
def demo(lib):
    st = logic.demo_state(lib)
    assert st is not None, "the invented demo file is not installed"
    return st


@pytest.fixture(scope="module")
def demo_result(demo, lib):
    return logic.compute_fit(demo["rows"], "good", lib)


def data_url(data: bytes, mime: str = "text/csv") -> str:
    return f"data:{mime};base64," + base64.b64encode(data).decode("ascii")


# ----------------------------------------------------------------------------- rows & fit

def test_demo_rows_use_display_words_and_round_trip(demo, lib):
    from solsphere import trials as T
    words = {r["outcome"] for r in demo["rows"]}
    assert words <= {"dissolves", "partly", "does not"}
    assert "invented" in demo["message"]
    again = T.from_rows(logic.clean_rows(demo["rows"]), library=lib)
    assert len(again) == len(demo["rows"])


def test_fit_equals_the_library_fit_of_the_same_file(demo_result, lib):
    """The app's fit is the CLI's fit (load_any + fit_project) of the demo file."""
    from importlib.resources import as_file, files
    from solsphere.project import load_any
    from solsphere.session import fit_project
    with as_file(files("solsphere.data.demo").joinpath(logic.DEMO_FILE)) as path:
        cli_fit = fit_project(load_any(path, library=lib), partial="good", library=lib)
    fit = demo_result["fit"]
    for k in ("dD", "dP", "dH", "R0", "desirability"):
        assert fit[k] == pytest.approx(getattr(cli_fit, k), abs=1e-12)
    assert demo_result["problems"] == []
    assert demo_result["trial_rows"] == list(range(len(fit["table"])))


def test_partial_setting_reaches_the_fit(demo, lib):
    skip = logic.compute_fit(demo["rows"], "skip", lib)["fit"]
    good = logic.compute_fit(demo["rows"], "good", lib)["fit"]
    assert skip["partial"] == "skip" and good["partial"] == "good"
    assert skip["n_counted_good"] < good["n_counted_good"]


def test_bad_cells_are_reported_with_row_column_and_suggestions(demo, lib):
    rows = logic.add_row(demo["rows"], "chlorofrom", "dissolves")
    rows = logic.add_row(rows, "toluene 70 + ethanol 30", "maybe")
    res = logic.compute_fit(rows, "good", lib)
    probs = {(p["row"], p["column"]): p for p in res["problems"]}
    n = len(demo["rows"])
    assert set(probs) == {(n, "solvent"), (n + 1, "outcome")}
    assert "chloroform" in probs[(n, "solvent")]["suggestions"]
    assert "Did you mean" not in probs[(n, "solvent")]["message"]  # shown as buttons instead
    assert res["fit"] is not None  # the rest still fits
    styles, tips, problems = logic.table_marks(res, len(rows))
    marked = {(s["if"]["row_index"], s["if"].get("column_id")) for s in styles}
    assert (n, "solvent") in marked and (n + 1, "outcome") in marked
    assert "chlorofrom" in tips[n]["solvent"]["value"]
    fixed = logic.apply_suggestion(rows, n, "solvent", "chloroform")
    assert fixed[n]["solvent"] == "chloroform" and rows[n]["solvent"] == "chlorofrom"
    res2 = logic.compute_fit(fixed, "good", lib)
    assert [(p["row"], p["column"]) for p in res2["problems"]] == [(n + 1, "outcome")]


def test_misfit_rows_are_shaded(lib):
    rows = [{"solvent": s, "outcome": o} for s, o in [
        ("acetone", "dissolves"), ("MEK", "dissolves"), ("ethyl acetate", "dissolves"),
        ("THF", "dissolves"), ("water", "does not"), ("n-hexane", "does not"),
        ("methanol", "does not"), ("ethylene glycol", "does not")]]
    # invented: two own solvents at the same point with opposite outcomes, so one of them
    # must be a misfit whatever the sphere; a blank row before them shifts the mapping
    rows += [logic.blank_row(),
             {"solvent": "thinner A", "outcome": "dissolves", "dD": 16.0, "dP": 9.0, "dH": 6.0},
             {"solvent": "thinner B", "outcome": "does not", "dD": 16.0, "dP": 9.0, "dH": 6.0}]
    res = logic.compute_fit(rows, "good", lib)
    assert res["trial_rows"][-2:] == [9, 10]
    misfit_rows = [res["trial_rows"][k] for k, r in enumerate(res["fit"]["table"])
                   if r["agrees"] is False]
    assert set(misfit_rows) & {9, 10}
    styles, tips, _ = logic.table_marks(res, len(rows))
    shaded = {s["if"]["row_index"] for s in styles if "column_id" not in s["if"]}
    assert shaded == set(misfit_rows)
    assert all("MISFIT" in tips[i]["solvent"]["value"] for i in misfit_rows)
    assert logic.summary(res)["misfits"]


def test_no_fit_yet_says_what_to_do(lib):
    res = logic.compute_fit([logic.blank_row()] * 3, "good", lib)
    assert res["fit"] is None and "No bench results" in res["fit_error"]
    res = logic.compute_fit([{"solvent": "acetone", "outcome": "dissolves"},
                             {"solvent": "MEK", "outcome": "dissolves"}], "good", lib)
    assert res["fit"] is None and "no outer boundary" in res["fit_error"]  # the FitError text
    assert logic.summary(res)["ok"] is False


def test_pasted_outcome_words_are_rewritten_in_display_words():
    rows = [{"solvent": "a", "outcome": "yes"}, {"solvent": "b", "outcome": "BAD"},
            {"solvent": "c", "outcome": "partly"}, {"solvent": "d", "outcome": "maybe"},
            {"solvent": "e", "outcome": None}]
    out = logic.normalise_outcomes(rows)
    assert [r["outcome"] for r in out] == ["dissolves", "does not", "partly", "maybe", None]
    assert rows[0]["outcome"] == "yes"  # the input is not modified
    assert logic.normalise_outcomes(out) is None  # nothing left to rewrite


def test_add_row_reuses_trailing_blank_rows():
    rows = [{"solvent": "acetone", "outcome": "dissolves"}, logic.blank_row(), logic.blank_row()]
    out = logic.add_row(rows, " MEK ", "partly", "")
    assert [r["solvent"] for r in out] == ["acetone", "MEK", None]
    assert out[1]["outcome"] == "partly" and out[1]["note"] is None
    assert len(logic.add_row(out[:2], "THF", "dissolves")) == 3


def test_type_ahead_covers_names_abbreviations_cas_and_synonyms(lib):
    opts = dict(logic.type_ahead_options(lib))
    assert "toluene" in opts and opts["MEK"] == lib.lookup("MEK").name
    tol = lib.lookup("toluene")
    assert opts[tol.cas] == "toluene"
    assert any(opts.get(s) == "toluene" for s in tol.synonyms)
    assert len({k.casefold() for k in opts}) == len(opts)


# ----------------------------------------------------------------------------- uploads

def test_upload_of_results_and_refusals(lib):
    st = logic.open_upload(data_url(b"solvent,outcome\nacetone,good\nwater,bad\n"), "r.csv", lib)
    assert st["kind"] == "results" and [r["outcome"] for r in st["rows"]] == ["dissolves", "does not"]
    with pytest.raises(InputError) as e:
        logic.open_upload(data_url(b"solvent,outcome\nacetone,good\nwater,maybe\n"), "bad.csv", lib)
    msg = str(e.value)
    assert msg.startswith("bad.csv, line 3, column outcome") and "solsphere-upload" not in msg
    with pytest.raises(InputError, match="limit"):
        logic.decode_upload(data_url(b"x" * (logic.UPLOAD_LIMIT + 10)), "big.csv")
    with pytest.raises(InputError, match="workbook"):
        logic.open_upload(data_url(b"PK\x03\x04junk"), "sheet.csv", lib)
    with pytest.raises(InputError):
        logic.decode_upload("not a data url", "x.csv")
    assert "limit is 5 MB" in logic.too_big_message("big.csv", 6e6)


def test_project_file_round_trip_gives_the_same_fit(demo, lib):
    rows = [dict(r) for r in demo["rows"]]
    rows[0]["outcome"] = "partly"
    text = logic.project_file_text(rows, "bad", lib)
    doc = json.loads(text)
    assert doc["format"] == "solsphere-project" and doc["settings"]["partial"] == "bad"
    st = logic.open_upload(data_url(text.encode(), "application/json"), "p.json", lib)
    assert st["kind"] == "project" and st["partial"] == "bad"
    assert st["rows"] == logic.clean_rows(rows)
    res = logic.compute_fit(st["rows"], st["partial"], lib)
    assert logic.fit_matches(st["saved_fit"], res["fit"]) is True
    assert logic.fit_matches(st["saved_fit"], logic.compute_fit(rows, "good", lib)["fit"]) is False


def test_project_file_refuses_bad_cells(demo, lib):
    rows = logic.add_row(demo["rows"], "chlorofrom", "dissolves")
    with pytest.raises(InputError, match="chlorofrom"):
        logic.project_file_text(rows, "good", lib)


def test_share_page_is_the_library_page(demo, lib):
    page = logic.share_page_text(demo["rows"], "good", lib, title="BX-7 <test>")
    assert page.startswith("<!DOCTYPE html>") and "BX-7 &lt;test&gt;" in page
    assert "Plotly.newPlot" in page and "Predictions are guides" in page


def test_download_names():
    assert logic.download_name("varnish_binder.csv (invented demo)", ".json") == "varnish_binder.json"
    assert logic.download_name(None, "-sphere.html") == "solsphere-sphere.html"
    assert logic.download_name("../../etc/passwd", ".json") == "passwd.json"


# ----------------------------------------------------------------------------- shortlist, blends

def test_shortlist_is_the_library_ranking_with_filters(demo_result, lib):
    from solsphere.rank import rank_solvents
    from solsphere.session import candidate_pool
    out = logic.shortlist(demo_result, lib, min_flash_point=60, exclude="ethyl benzoate", top=10)
    fit = demo_result["fit"]
    pool, _ = candidate_pool(lib, exclude=["ethyl benzoate"], min_flash_point=60.0)
    ref = rank_solvents(pool, (fit["dD"], fit["dP"], fit["dH"]), fit["R0"], top=10,
                        tested=set(demo_result["tested"])).to_dict()["solvents"]
    assert [r["name"] for r in out["rows"]] == [r["name"] for r in ref]
    assert all(r["flash_point"] >= 60 for r in out["rows"])
    assert "ethyl benzoate" not in [r["name"] for r in out["rows"]]
    assert not set(r["name"] for r in out["rows"]) & set(demo_result["tested"])
    assert out["caution"].startswith("Predictions are guides")
    bad = logic.shortlist(demo_result, lib, exclude="no such solvent xyz")
    assert bad["rows"] == [] and "no such solvent xyz" in bad["message"]


def test_blend_designer_matches_screen_blends(demo_result, lib):
    from solsphere.blend import screen_blends
    from solsphere.session import candidate_pool
    fit = demo_result["fit"]
    out = logic.blend_designer(demo_result, lib, no_carcinogens=True, max_boiling_point=150,
                               top=5)
    pool, _ = candidate_pool(lib, max_boiling_point=150.0, exclude_carcinogens=True)
    ref = screen_blends(pool, (fit["dD"], fit["dP"], fit["dH"]), fit["R0"], top=5).to_dict()
    assert [b["solvents"] for b in out["blends"]] == [b["solvents"] for b in ref["blends"]]
    for b in out["blends"]:
        assert len(b["component_points"]) == 2
        assert all(x is not None for p in b["component_points"] for x in p)
        assert "%" in b["label"] and b["red"] >= 0
        assert all(bp <= 150 for bp in b["boiling_points"])


def test_blend_designer_ticked_and_shelf_pools(demo_result, lib):
    out = logic.blend_designer(demo_result, lib, pool_choice="ticked",
                               ticked=["toluene", "ethanol", "acetone"], top=10)
    names = {n for b in out["blends"] for n in b["solvents"]}
    assert names and names <= {"toluene", "ethanol", "acetone"}
    few = logic.blend_designer(demo_result, lib, pool_choice="ticked", ticked=["toluene"])
    assert few["blends"] == [] and "two" in few["message"]
    shelf = {"filename": "shelf.csv",
             "contents": data_url(b"solvent\ntoluene\nethanol\nMEK\nwater\n")}
    out = logic.blend_designer(demo_result, lib, pool_choice="shelf", shelf=shelf, top=10)
    names = {n for b in out["blends"] for n in b["solvents"]}
    assert names and names <= {"toluene", "ethanol", lib.lookup("MEK").name, "water"}
    bad = {"filename": "myshelf.csv", "contents": data_url(b"solvent\nwatr\n")}
    msg = logic.blend_designer(demo_result, lib, pool_choice="shelf", shelf=bad)["message"]
    assert "myshelf.csv" in msg and "solsphere-upload" not in msg


def test_figures_draw_the_stored_fit(demo_result, lib):
    blend = logic.blend_designer(demo_result, lib, top=1)["blends"]
    fig3, fig2 = logic.figures_for(demo_result, lib, show_untried=True,
                                   picked=[{"name": "anisole", "dD": 17.8, "dP": 4.1,
                                            "dH": 6.7}], blends=blend)
    names = [t.name for t in fig3.data]
    assert {"sphere", "untried", "dissolves", "does not", "blend segments", "picked"} <= set(names)
    seg = next(t for t in fig3.data if t.name == "blend segments")
    assert list(seg.x[:2]) == [blend[0]["component_points"][0][0], blend[0]["component_points"][1][0]]
    fig3, _ = logic.figures_for(demo_result, lib, show_untried=False)
    assert "untried" not in [t.name for t in fig3.data]
    # after a refit the old blend's best mix no longer applies: it is not drawn
    stale = [dict(blend[0], for_fit=[0.0, 0.0, 0.0, 1.0])]
    fig3, _ = logic.figures_for(demo_result, lib, blends=stale)
    assert "blend segments" not in [t.name for t in fig3.data]
    empty3, _ = logic.figures_for({"fit": None, "fit_error": "No results"}, lib)
    assert "No results" in empty3.layout.annotations[0].text


# ----------------------------------------------------------------------------- server

def test_server_warns_off_loopback_and_builds_the_app(tmp_path, lib):
    from app import server
    assert server.network_warning("127.0.0.1", 8050) is None
    assert server.network_warning("localhost", 8050) is None
    assert server.network_warning("::1", 8050) is None
    w = server.network_warning("0.0.0.0", 8050)
    assert w and "anyone" in w and "network" in w
    f = tmp_path / "results.csv"
    f.write_text("solvent,outcome\nacetone,good\nwater,bad\nMEK,good\nhexane,bad\n", encoding="utf-8")
    st = server.initial_state(f, lib)
    assert st["source"] == "results.csv" and len(st["rows"]) == 4
    dash_app = server.create_app(f)
    text = json.dumps(dash_app.layout.to_plotly_json(), default=lambda o: o.to_plotly_json())
    assert "results.csv" in text
    with pytest.raises(InputError):
        server.initial_state(tmp_path / "missing.csv", lib)


def test_no_module_level_user_state():
    """Per-user state lives in the browser: the app modules hold no mutable globals."""
    import types
    import app.bench, app.blends, app.layout, app.logic, app.share, app.sphere, app.trynext  # noqa: E401
    for mod in (app.bench, app.blends, app.layout, app.logic, app.share, app.sphere,
                app.trynext):
        for name, value in vars(mod).items():
            if name.startswith("__") or isinstance(value, (types.ModuleType, types.FunctionType, type)):
                continue
            assert not isinstance(value, (list, dict, set)) or name.isupper(), (mod.__name__, name)
