"""The functions behind the app's callbacks, without a browser.

The app must not compute science itself: these tests check that what it shows equals
what the library returns for the same input (the CLI's path), and that its own
bookkeeping (rows <-> trials, marks, uploads, downloads) is right.
"""

from __future__ import annotations

import base64
import json

import pytest

from solsphere.workflows import parse_fraction_limits

from solsphere.app import blendlogic, logic, uncertainty
from solsphere.errors import InputError
from solsphere.library.table import load_library



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
    from solsphere.io import trials as T
    words = {r["outcome"] for r in demo["rows"]}
    assert words <= {"dissolves", "partly", "does not"}
    assert "invented" in demo["message"]
    again = T.from_rows(logic.clean_rows(demo["rows"]), library=lib)
    assert len(again) == len(demo["rows"])


def test_fit_equals_the_library_fit_of_the_same_file(demo_result, lib):
    """The app's fit is the CLI's fit (load_any + fit_project) of the demo file."""
    from importlib.resources import as_file, files
    from solsphere.io.project import load_any
    from solsphere.workflows import fit_project
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
    marks, problems = logic.table_marks(res, len(rows))
    marked = {(int(i), c) for i, m in marks.items() for c in m.get("bad", {})}
    assert marked == {(n, "solvent"), (n + 1, "outcome")}
    assert "chlorofrom" in marks[str(n)]["bad"]["solvent"]
    assert len(problems) == 2
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
    marks, _ = logic.table_marks(res, len(rows))
    shaded = {int(i) for i, m in marks.items() if m.get("misfit")}
    assert shaded == set(misfit_rows)
    assert all("MISFIT" in marks[str(i)]["red"] for i in misfit_rows)
    assert "MISFIT" not in marks["0"]["red"] and "8" not in marks  # the blank row: no mark
    assert logic.summary(res)["misfits"]


def test_a_numerical_complaint_of_the_fit_is_a_warning_line_not_a_trace(demo, lib, monkeypatch,
                                                                       capfd):
    import threading

    import numpy as np

    real = logic.fit_project

    def complaining_fit(*args, **kwargs):
        np.array([1.0]) / np.array([0.0])  # as a degenerate step inside the fit would
        return real(*args, **kwargs)

    monkeypatch.setattr(logic, "fit_project", complaining_fit)
    got = {}
    # in a thread, as the app's server answers requests
    t = threading.Thread(target=lambda: got.update(r=logic.compute_fit(demo["rows"], "good", lib)))
    t.start()
    t.join()
    r = got["r"]
    assert r["fit"] is not None
    assert "a numerical step reported: divide by zero; check the results it concerns" in r["warnings"]
    assert any("divide by zero" in w for w in logic.summary(r)["warnings"])
    assert "RuntimeWarning" not in capfd.readouterr().err


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
    assert logic.clean_rows(st["rows"]) == logic.clean_rows(rows)  # (plus each row's line)
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
    from solsphere.design.ranking import rank_solvents
    from solsphere.workflows import candidate_pool
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
    from solsphere.design.pairs import screen_blends
    from solsphere.workflows import candidate_pool
    fit = demo_result["fit"]
    out = blendlogic.blend_designer(demo_result, lib, no_carcinogens=True, max_boiling_point=150,
                                    rank_by="red",
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
    out = blendlogic.blend_designer(demo_result, lib, pool_choice="ticked",
                               ticked=["toluene", "ethanol", "acetone"], top=10)
    names = {n for b in out["blends"] for n in b["solvents"]}
    assert names and names <= {"toluene", "ethanol", "acetone"}
    few = blendlogic.blend_designer(demo_result, lib, pool_choice="ticked", ticked=["toluene"])
    assert few["blends"] == [] and "two" in few["message"]
    shelf = {"filename": "shelf.csv",
             "contents": data_url(b"solvent\ntoluene\nethanol\nMEK\nwater\n")}
    out = blendlogic.blend_designer(demo_result, lib, pool_choice="shelf", shelf=shelf, top=10)
    names = {n for b in out["blends"] for n in b["solvents"]}
    assert names and names <= {"toluene", "ethanol", lib.lookup("MEK").name, "water"}
    bad = {"filename": "myshelf.csv", "contents": data_url(b"solvent\nwatr\n")}
    msg = blendlogic.blend_designer(demo_result, lib, pool_choice="shelf", shelf=bad)["message"]
    assert "myshelf.csv" in msg and "solsphere-upload" not in msg


def test_figures_draw_the_stored_fit(demo_result, lib):
    blend = blendlogic.blend_designer(demo_result, lib, top=1)["blends"]
    fig3, ladder, plane = logic.figures_for(demo_result, lib, show_untried=True,
                                   picked=[{"name": "anisole", "dD": 17.8, "dP": 4.1,
                                            "dH": 6.7}], blends=blend)
    names = [t.name for t in fig3.data]
    assert {"sphere", "untried", "dissolves", "does not", "blend segments", "picked"} <= set(names)
    assert {"dissolves", "does not", "RED 1 (boundary)"} <= {t.name for t in ladder.data}
    assert "blends" in {t.name for t in plane.data} and plane.layout.title.text == "δP–δH"
    _, _, other = logic.figures_for(demo_result, lib, plane="dD-dH")
    assert other.layout.title.text == "δD–δH"
    seg = next(t for t in fig3.data if t.name == "blend segments")
    assert list(seg.x[:2]) == [blend[0]["component_points"][0][0], blend[0]["component_points"][1][0]]
    fig3, *_ = logic.figures_for(demo_result, lib, show_untried=False)
    assert "untried" not in [t.name for t in fig3.data]
    # after a refit the old blend's best mix no longer applies: it is not drawn
    stale = [dict(blend[0], for_fit=[0.0, 0.0, 0.0, 1.0])]
    fig3, *_ = logic.figures_for(demo_result, lib, blends=stale)
    assert "blend segments" not in [t.name for t in fig3.data]
    empty3, *_ = logic.figures_for({"fit": None, "fit_error": "No results"}, lib)
    assert "No results" in empty3.layout.annotations[0].text


# ----------------------------------------------------------------------------- server

def test_server_warns_off_loopback_and_builds_the_app(tmp_path, lib):
    from solsphere.app import server
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


def test_bootstrap_and_suggestions_run_only_on_their_buttons():
    """The refit-on-every-edit path never starts a resampling: the callbacks that write
    the bootstrap and the suggestions are triggered by their buttons alone (the fit is
    only read, as State)."""
    from solsphere.app import ids
    from solsphere.app.server import create_app
    dash_app = create_app()
    found = 0
    for key, cb in dash_app.callback_map.items():
        if any(f"{name}.data" in key.split("..") or key == f"{name}.data"
               for name in (ids.BOOT, ids.NEXT)):
            found += 1
            triggers = {f"{i['id']}.{i['property']}" for i in cb["inputs"]}
            assert triggers in ({"boot-button.n_clicks"}, {"next-trials-button.n_clicks"}), key
            assert f"{ids.FIT}.data" in {f"{s['id']}.{s['property']}" for s in cb["state"]}
    assert found == 2


def test_no_module_level_user_state():
    """Per-user state lives in the browser: the app modules hold no mutable globals."""
    import types
    import solsphere.app.bench, app.blends, app.blendlogic, app.layout, app.logic, app.nexttrials  # noqa: E401
    import solsphere.app.replace, app.share, app.sphere, app.trynext, app.uncertainty  # noqa: E401
    for mod in (app.bench, app.blends, app.blendlogic, app.layout, app.logic, app.nexttrials,
                app.replace, app.share, app.sphere, app.trynext, app.uncertainty):
        for name, value in vars(mod).items():
            if name.startswith("__") or isinstance(value, (types.ModuleType, types.FunctionType, type)):
                continue
            assert not isinstance(value, (list, dict, set)) or name.isupper(), (mod.__name__, name)


# ----------------------------------------------------------------------------- blends: 3 components, constraints, drying

def test_three_component_designer_is_the_triple_screen_of_the_shortlist(demo_result, lib):
    from solsphere.workflows import candidate_pool
    from solsphere.design.triples import screen_triples, triple_shortlist
    fit = demo_result["fit"]
    centre = (fit["dD"], fit["dP"], fit["dH"])
    out = blendlogic.blend_designer(demo_result, lib, components=3, top=5, rank_by="red")
    pool, _ = candidate_pool(lib)
    short = triple_shortlist(pool, centre, fit["R0"])
    ref = screen_triples(short, centre, fit["R0"], top=5).to_dict()["blends"]
    assert [b["solvents"] for b in out["blends"]] == [b["solvents"] for b in ref]
    assert any("nearest the sphere centre" in n for n in out["notes"])  # the cut is said
    for b in out["blends"]:
        assert b["n_components"] == 3 and len(b["component_points"]) == 3
        assert b["label"].count("%") == 3 and "triangle" in b["window_text"]
        assert b["drying_text"]  # a verdict for every row ("no data" when data are missing)
    # the map draws the triangle: three edges, each followed by a gap
    fig3, *_ = logic.figures_for(demo_result, lib, blends=[blendlogic.map_entry(out["blends"][0])])
    seg = next(t for t in fig3.data if t.name == "blend segments")
    assert len(seg.x) == 9 and list(seg.x[2::3]) == [None] * 3


def test_share_limits_hold_and_bad_limits_say_how_to_write_them(demo_result, lib):
    # the one parser of share limits, shared with the command line
    names = ["toluene", "ethanol"]
    assert parse_fraction_limits("toluene=30%, ethanol 0.5", lib, names) == \
        {"toluene": 0.3, "ethanol": 0.5}
    assert parse_fraction_limits("MEK: 20", lib, [], "min_fraction") == \
        {lib.lookup("MEK").name: 0.2}
    with pytest.raises(InputError, match="toluene=30%") as info:
        parse_fraction_limits("toluene", lib, names)
    assert info.value.setting == "max_fraction"
    with pytest.raises(InputError, match="between 0 and 100"):
        parse_fraction_limits("toluene=130%", lib, names)
    out = blendlogic.blend_designer(demo_result, lib, components=3, pool_choice="ticked",
                                    ticked=["toluene", "ethanol", "acetone", "water", "MEK"],
                                    max_fraction="toluene=20%", min_fraction="ethanol=10%",
                                    top=20)
    assert out["blends"]
    for b in out["blends"]:
        share = dict(zip(b["solvents"], b["volume_fractions"]))
        assert share.get("toluene", 0.0) <= 0.2 + 1e-9
        assert "ethanol" not in share or share["ethanol"] >= 0.1 - 1e-9
    bad = blendlogic.blend_designer(demo_result, lib, components=3, max_fraction="toluene")
    assert bad["blends"] == [] and "toluene=30%" in bad["message"]


def test_constraints_restricted_list_and_temperature(demo_result, lib):
    restricted = {"filename": "banned.csv",
                  "contents": data_url(b"solvent\ntoluene\nMEK\n")}
    ticked = ["toluene", "ethanol", "acetone", "MEK", "ethyl acetate"]
    out = blendlogic.blend_designer(demo_result, lib, pool_choice="ticked", ticked=ticked,
                                    restricted=restricted, top=20)
    names = {n for b in out["blends"] for n in b["solvents"]}
    assert names and not names & {"toluene", lib.lookup("MEK").name}
    out = blendlogic.blend_designer(demo_result, lib, restricted=restricted, min_boiling_point=80,
                                    min_exposure_limit=50, top=10)
    for b in out["blends"]:
        assert not set(b["solvents"]) & {"toluene", lib.lookup("MEK").name}
        assert all(bp is not None and bp >= 80 for bp in b["boiling_points"])
        assert all(t is None or t >= 50 for t in b["twa_ppm"])
    typo = {"filename": "banned.csv", "contents": data_url(b"solvent\nwatr\n")}
    msg = blendlogic.blend_designer(demo_result, lib, restricted=typo)["message"]
    assert "banned.csv" in msg and "water" in msg and "solsphere-upload" not in msg
    hot = blendlogic.blend_designer(demo_result, lib, pool_choice="ticked", ticked=ticked,
                                    temperature=60, top=3)
    cold = blendlogic.blend_designer(demo_result, lib, pool_choice="ticked", ticked=ticked, top=3)
    assert any("60 °C" in n for n in hot["notes"]) and not cold["notes"]
    pts = {tuple(p) for b in hot["blends"] for p in b["component_points"]}
    assert pts.isdisjoint({tuple(p) for b in cold["blends"] for p in b["component_points"]})


def test_drying_column_and_path_are_the_library_drying(demo_result, lib):
    from solsphere.design.pairs import screen_blends
    from solsphere.library.table import Library
    from solsphere.workflows import add_safety_and_drying, candidate_pool
    fit = demo_result["fit"]
    centre = (fit["dD"], fit["dP"], fit["dH"])
    ticked = ["toluene", "ethanol", "acetone", "ethyl acetate", "1-butanol", "p-xylene"]
    out = blendlogic.blend_designer(demo_result, lib, pool_choice="ticked", ticked=ticked,
                                    rank_by="drying", top=10)
    pool, _ = candidate_pool(Library.from_records([lib.lookup(n) for n in ticked]),
                             liquid_only=False)
    screen = screen_blends(pool, centre, fit["R0"], top=None)
    ref = add_safety_and_drying(screen, pool, centre, fit["R0"], drying=True, rank_by="red")
    # the documented order with drying as the priority (feasible -> robust -> drying ->
    # RED), diverse: no solvent in more than two blends
    from solsphere.design.ordering import MAX_USES, order_blends
    keep = order_blends(ref, {s.name: s for s in pool}, "drying", 10, MAX_USES)
    ref = [ref[k] for k in keep]
    assert [b["solvents"] for b in out["blends"]] == [b["solvents"] for b in ref]
    with_path = 0
    for b, r in zip(out["blends"], ref):
        d = r["drying"]
        assert b["drying_text"] == blendlogic.drying_text(d)
        if d is not None:
            with_path += 1
            assert b["drying_points"][-1] == pytest.approx(d["points"][-1], abs=1e-3)
        assert b["fp_text"] == blendlogic.flash_text(r["flash_point_estimate"])
        assert b["mix_text"] == ("may not mix" if r["may_not_mix"] else "")
    assert with_path  # these common solvents have vapour-pressure data
    assert blendlogic.drying_text({"starts_inside": True, "leaves_at": 0.38}) == \
        "leaves at 38 % evaporated"
    assert blendlogic.drying_text({"starts_inside": True, "leaves_at": None,
                                   "max_fraction_evaporated": 1.0}) == "stays inside to dryness"
    # the clicked blend's drying path is drawn on the map
    b = next(b for b in out["blends"] if b.get("drying_points"))
    fig3, *_ = logic.figures_for(demo_result, lib, blends=[blendlogic.map_entry(b)])
    path = [t for t in fig3.data if (t.name or "").startswith("drying path")]
    assert len(path) == 1 and len(path[0].x) == len(b["drying_points"])


def test_rank_by_cost_needs_prices_and_ranks_cheapest_inside_first(demo_result, lib):
    msg = blendlogic.blend_designer(demo_result, lib, rank_by="cost")["message"]
    assert "price" in msg and "shelf" in msg
    shelf = {"filename": "priced.csv", "contents": data_url(
        b"solvent,price\ntoluene,3.0\nethanol,2.0\nacetone,2.5\nethyl acetate,4.0\n"
        b"1-butanol,3.5\nMEK,5.0\n")}
    out = blendlogic.blend_designer(demo_result, lib, pool_choice="shelf", shelf=shelf,
                                    rank_by="cost", top=10)
    assert out["has_price"] and out["blends"]
    inside = [b for b in out["blends"] if b["red"] <= 1 and not b["may_not_mix"]]
    # the documented order: feasible first, then robustness (window width in steps of
    # 0.1), then the price, then RED
    from solsphere.design.ordering import robustness_bin
    keys = [(-robustness_bin(b["window_width"]), b["price_per_litre"]) for b in inside]
    assert keys == sorted(keys)
    b = inside[0]  # price = volume-fraction weighted shelf prices (invented prices)
    own = {"toluene": 3.0, "ethanol": 2.0, "acetone": 2.5, "ethyl acetate": 4.0,
           "1-butanol": 3.5, lib.lookup("MEK").name: 5.0}
    assert b["price_per_litre"] == pytest.approx(
        sum(f * own[n] for n, f in zip(b["solvents"], b["volume_fractions"])))


# ----------------------------------------------------------------------------- replace

def test_replace_is_find_substitutes_and_for_material_uses_the_fit(demo_result, lib):
    from solsphere.workflows import candidate_pool
    from solsphere.design.substitution import find_substitutes
    fit = demo_result["fit"]
    out = blendlogic.substitutes(demo_result, lib, "toluene", top=5, n_pairs=3)
    pool, _ = candidate_pool(lib)
    ref = find_substitutes(lib.lookup("toluene"), pool, top=5, n_pairs=3).to_dict()
    assert [s["name"] for s in out["singles"]] == [s["name"] for s in ref["singles"]]
    assert [p["solvents"] for p in out["pairs"]] == [p["solvents"] for p in ref["pairs"]]
    assert all(s["side_text"] == "—" and s["red"] is None for s in out["singles"])
    mat = blendlogic.substitutes(demo_result, lib, "toluene", for_material=True, top=5)
    ref = find_substitutes(lib.lookup("toluene"), pool, top=5,
                           material=((fit["dD"], fit["dP"], fit["dH"]), fit["R0"])).to_dict()
    assert [s["name"] for s in mat["singles"]] == [s["name"] for s in ref["singles"]]
    assert "for this material" in mat["message"]
    assert {s["side_text"] for s in mat["singles"]} <= {"same", "other"}
    assert mat["caution"].startswith("Predictions are guides")
    safe = blendlogic.substitutes(demo_result, lib, "toluene", min_flash_point=30, top=5)
    assert all(s["flash_point"] >= 30 for s in safe["singles"])
    typo = blendlogic.substitutes(demo_result, lib, "tolune")
    assert typo["singles"] == [] and "toluene" in typo["message"]


# ----------------------------------------------------------------------------- uncertainty, next trials

def _demo_trials(lib):
    from importlib.resources import as_file, files
    from solsphere.io.project import load_any
    with as_file(files("solsphere.data.demo").joinpath(logic.DEMO_FILE)) as path:
        return load_any(path, library=lib).trials


@pytest.fixture(scope="module")
def boot(demo_result):
    return uncertainty.run_bootstrap(demo_result, 40)


def test_bootstrap_in_the_app_is_the_library_bootstrap_of_the_trials(demo, demo_result, boot, lib):
    """Same numbers as confidence.bootstrap on the validated trials (the CLI's path)."""
    from solsphere.uncertainty import bootstrap as confidence
    trials = _demo_trials(lib)  # the CLI's path: `solsphere fit --bootstrap 40` on the file
    ref = confidence.bootstrap(trials, n_bootstrap=40, seed=uncertainty.SEED, partial="good",
                               bounds=demo_result["fit"]["bounds"], n_jobs=1)
    d = boot["boot"]
    for k in ("dD", "dP", "dH", "R0"):
        assert d["intervals"][k] == pytest.approx(ref.intervals[k], abs=1e-9)
    assert len(d["centres"]) == 40 and len(d["radii"]) == 40
    assert d["dD"] == pytest.approx(demo_result["fit"]["dD"], abs=1e-9)  # the fit shown
    fit = demo_result["fit"]
    iv = uncertainty.interval_texts(boot, fit)
    lo, hi = ref.intervals["dD"]
    # the classic bootstrap's ranges are named for what they are (not confidence intervals)
    assert iv["centre"].startswith("95 % stability range: δD") and f"{lo:.1f}–{hi:.1f}" in iv["centre"]
    assert iv["R0"].startswith("95 % stability range") and "40 resamples" in iv["about"]
    assert "not confidence intervals" in iv["about"]
    assert any("not confidence intervals" in w for w in iv["warnings"])  # the measured caveat
    assert any("resamples" in w for w in iv["warnings"])  # fewer than advised: said so
    assert len(uncertainty.cloud(boot, fit)) == 40
    b = uncertainty.bootstrap_of(boot, fit)
    rows = logic.shortlist(demo_result, lib, top=8, bootstrap=b)["rows"]
    p = ref.p_good([[r["dD"], r["dP"], r["dH"]] for r in rows])
    assert [r["p_good"] for r in rows] == pytest.approx(p, abs=0.03)  # stored centres rounded
    assert all(r["p_text"] == f"{r['p_good']:.2f}" for r in rows)
    assert all(r["p_good"] is None for r in logic.shortlist(demo_result, lib, top=3)["rows"])


def test_posterior_intervals_in_the_app_are_the_library_posterior(demo_result, lib):
    """'How sure?' with the posterior: the library's samples of the same trials."""
    from solsphere.app import trynext
    from solsphere.uncertainty.posterior import Posterior, sample_posterior
    fit = demo_result["fit"]
    store = uncertainty.run_bootstrap(demo_result, 300, "posterior")
    ref = sample_posterior(_demo_trials(lib), n_samples=300, seed=uncertainty.SEED, partial="good")
    d = store["boot"]
    assert d["fit_method"] == "posterior" and d["n_samples"] == 300
    for k in ("dD", "dP", "dH", "R0"):
        assert d["intervals"][k] == pytest.approx(ref.intervals[k], abs=1e-9)
    iv = uncertainty.interval_texts(store, fit)
    assert "300 spheres sampled" in iv["about"] and "credible" in iv["about"]
    post = uncertainty.bootstrap_of(store, fit)
    assert isinstance(post, Posterior) and len(post.radii) == 300
    assert "300 sampled spheres (posterior" in trynext.p_note(store)
    rows = logic.shortlist(demo_result, lib, top=5, bootstrap=post)["rows"]
    p = ref.p_good([[r["dD"], r["dP"], r["dH"]] for r in rows])
    assert [r["p_good"] for r in rows] == pytest.approx(p, abs=0.03)  # stored centres rounded


def test_an_edit_makes_the_intervals_stale_not_wrong(demo, demo_result, boot, lib):
    rows = [dict(r) for r in demo["rows"]]
    rows[0]["outcome"] = "does not" if rows[0]["outcome"] != "does not" else "dissolves"
    other = logic.compute_fit(rows, "good", lib)["fit"]
    assert uncertainty.trials_key(other) != uncertainty.trials_key(demo_result["fit"])
    assert uncertainty.interval_texts(boot, other)["stale"] is True
    assert uncertainty.cloud(boot, other) is None
    assert uncertainty.bootstrap_of(boot, other) is None
    # a row waiting for its outcome does not change the results
    pending, added = logic.add_pending(demo["rows"], ["o-xylene"])
    same = logic.compute_fit(pending, "good", lib)["fit"]
    assert added == ["o-xylene"]
    assert uncertainty.trials_key(same) == uncertainty.trials_key(demo_result["fit"])


def test_next_trials_are_the_library_suggestions_and_recheck_the_influence(demo_result, lib):
    from solsphere.uncertainty import bootstrap as confidence
    from solsphere.uncertainty import nexttrials as nexttrial
    from solsphere.workflows import candidate_pool
    out = uncertainty.next_trials(demo_result, lib, n=3, n_samples=400, min_flash_point=23)
    fit = demo_result["fit"]
    trials = _demo_trials(lib)  # the CLI's path: `solsphere next` on the demo file
    pool, _ = candidate_pool(lib, min_flash_point=23.0, pool="common")  # as `next` does
    ref = nexttrial.suggest_next(trials, candidates=pool, n=3, n_samples=400,
                                 seed=uncertainty.SEED, partial="good", n_jobs=1)
    assert [s["name"] for s in out["suggestions"]] == ref.names
    assert [s["p_good"] for s in out["suggestions"]] == \
        pytest.approx([s.p_good for s in ref.suggestions])
    assert all(s["flash_point"] >= 23 and s["reason"] for s in out["suggestions"])
    assert not {s["name"] for s in out["suggestions"]} & set(demo_result["tested"])
    infl = confidence.influence(trials, partial="good", bounds=fit["bounds"], n_jobs=1)
    assert [r["name"] for r in out["recheck"]] == [r["name"] for r in infl.top(5)]
    assert "centre moves" in out["recheck"][0]["text"]
    assert out["key"] == uncertainty.trials_key(fit) and "p_good" in out["caution"]


def test_adding_a_suggestion_leaves_a_row_waiting_for_its_outcome(demo, lib):
    n = len(demo["rows"])
    rows, added = logic.add_pending(demo["rows"], ["o-xylene", "toluene", "o-xylene"], "suggested")
    assert added == ["o-xylene"]  # toluene is in the table already; no duplicates
    assert len(rows) == n + 1 and rows[n] == {"solvent": "o-xylene", "outcome": None, "dD": None,
                                              "dP": None, "dH": None, "note": "suggested"}
    res = logic.compute_fit(rows, "good", lib)
    pend = [p for p in res["problems"] if p.get("pending")]
    assert [(p["row"], p["column"]) for p in pend] == [(n, "outcome")]
    s = logic.summary(res)
    assert any("waits for its outcome" in w for w in s["warnings"])
    assert not any("need" in w and "fixing" in w for w in s["warnings"])
    marks, _ = logic.table_marks(res, len(rows))
    assert set(marks[str(n)]) == {"pending"}  # waiting, not bad
    assert "Waiting for the result" in marks[str(n)]["pending"]["outcome"]


def test_share_limits_for_names_with_commas(demo_result, lib):
    # "1,2-dichlorobenzene=10%" is one limit, not a bad item "1" and another
    assert parse_fraction_limits("1,2-dichlorobenzene=10%, toluene 30", lib) == \
        {"1,2-dichlorobenzene": 0.1, "toluene": 0.3}
    out = blendlogic.blend_designer(demo_result, lib, components=3, top=10,
                                    max_fraction="1,2-dichlorobenzene=10%")
    assert out["blends"], out["message"]
    for b in out["blends"]:
        share = dict(zip(b["solvents"], b["volume_fractions"]))
        assert share.get("1,2-dichlorobenzene", 0.0) <= 0.1 + 1e-9


def test_blend_order_default_is_the_cli_default(demo_result, lib):
    """The Blends screen starts in the workflows' order, the same as `solsphere blend`
    (once the app's default was RED while the CLI's was hazard)."""
    import inspect
    from solsphere import cli
    from solsphere.workflows import DEFAULT_RANK, design_blends
    from solsphere.app import blends
    assert inspect.signature(blendlogic.blend_designer).parameters["rank_by"].default == DEFAULT_RANK
    assert inspect.signature(design_blends).parameters["rank_by"].default == DEFAULT_RANK
    parser = cli.build_parser() if hasattr(cli, "build_parser") else None
    if parser is not None:
        args = parser.parse_args(["blend", "x.csv"])
        assert args.rank_by == DEFAULT_RANK
    assert next(iter(blendlogic.RANK_CHOICES)) == DEFAULT_RANK
    radio = blends.panel(lib).children[1].children[3]
    assert radio.id == "blend-rank" and radio.value == DEFAULT_RANK
    out = blendlogic.blend_designer(demo_result, lib, top=5)
    assert "least hazardous" in out["message"] and "working solvents" in out["message"]
    pool = {s.name for s in lib.working()}
    assert all(n in pool for b in out["blends"] for n in b["solvents"])


def test_pool_selector_and_allow_worse_reach_the_workflows(demo_result, lib):
    working = blendlogic.substitutes(demo_result, lib, "NMP", top=10)
    everything = blendlogic.substitutes(demo_result, lib, "NMP", top=10, pool="all")
    assert "working solvents" in working["message"] and "all library" in everything["message"]
    pool = {s.name for s in lib.working()}
    assert all(s["name"] in pool for s in working["singles"])
    # outside the working pool corrosivity / acute toxicity is not assessed, so by default
    # such candidates are left out for lack of data; 'allow worse' lets them in
    assert all(s["vs_tox"] != "worse" for s in everything["singles"])
    loose_all = blendlogic.substitutes(demo_result, lib, "NMP", top=10, pool="all",
                                       allow_worse=True)
    assert any(s["name"] not in pool for s in loose_all["singles"])
    # never worse than NMP by default; 'allow worse' lifts the rule
    assert all("worse" not in (s["vs_carc"], s["vs_repro"], s["vs_tox"], s["vs_flam"])
               for s in working["singles"])
    loose = blendlogic.substitutes(demo_result, lib, "NMP", top=40, pool="all", allow_worse=True)
    assert any("worse" in (s["vs_carc"], s["vs_repro"], s["vs_flam"]) for s in loose["singles"])
    assert "allow worse" in loose["message"]
    # the name as resolved, as the CLI shows it
    pm = blendlogic.substitutes(demo_result, lib, "PM acetate", top=3)
    assert "PM acetate → 1-methoxy-2-propyl acetate" in pm["message"]
    short_all = logic.shortlist(demo_result, lib, top=50, pool="all")["rows"]
    assert any(r["name"] not in pool for r in short_all)
    assert all(r["name"] in pool for r in logic.shortlist(demo_result, lib, top=50)["rows"])


def test_warnings_name_the_same_file_line_as_the_cli(lib):
    """A file with comment lines: the app once said 'line 6' where `solsphere fit` said
    'line 10' (the app numbered table rows); rows now keep their file line."""
    from solsphere.io.project import load_any
    from solsphere.workflows import fit_project
    from importlib.resources import files
    path = files("solsphere.data.demo").joinpath("varnish_binder.csv")
    project = load_any(str(path), library=lib)
    cli_warnings = fit_project(project, library=lib).warnings
    st = logic.demo_state(lib)
    app_warnings = logic.compute_fit(st["rows"], "good", lib)["fit"]["warnings"]
    assert [w for w in cli_warnings if "line" in w] == [w for w in app_warnings if "line" in w]
    assert any("(line 10)" in w for w in app_warnings)  # cyclohexanone, after 3 comments
    # a row added in the app has no file line and keeps its table row number
    rows = [dict(r) for r in st["rows"]] + [logic.blank_row()]
    rows[-1].update(solvent="PnB", outcome="dissolves")
    res = logic.compute_fit(rows, "good", lib)
    assert "PnB → 1-butoxy-2-propanol" in res["resolved"]
    assert "Table now: 36 trials counted" in logic.table_status(res, "x.csv")
