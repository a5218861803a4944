"""Tests for solsphere.figures: the 3D map, the projections and the share page.

The look is our own and fixed in DEVELOPERS.md ("Conventions": the look of the plots): Dark2 colours,
dissolves = teal circle, does not = orange x, partly = slate diamond, untried = small
light-grey dots, blends = mustard segments + open circles, translucent grey sphere, δD
drawn at twice the scale. The fit dicts below are invented (the figures take plain
``SphereFitResult.to_dict()``-shaped dicts).
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest

from solsphere.report import figures

GOOD, BAD, PARTIAL = "#1b9e77", "#d95f02", "#7570b3"
UNTRIED, BLEND, SPHERE = "#bbbbbb", "#e6ab02", "#666666"


def row(name, p, outcome, red, agrees=True):
    return {"name": name, "dD": p[0], "dP": p[1], "dH": p[2], "outcome": outcome,
            "red": red, "Ra": red * 5.0, "agrees": agrees}


FIT = {"dD": 17.0, "dP": 6.0, "dH": 6.0, "R0": 5.0, "table": [
    row("toluene", (18.0, 1.4, 2.0), "good", 0.85),
    row("acetone", (15.5, 10.4, 7.0), "good", 1.12, agrees=False),
    row("swelly", (16.0, 9.0, 9.0), "partial", 0.9),
    row("ethanol", (15.8, 8.8, 19.4), "bad", 2.7),
    row("water", (15.5, 16.0, 42.3), "bad", 7.6),
    row("hexane", (14.9, 0.0, 0.0), "bad", 1.5),
]}
UNTRIED_ROWS = [{"name": "anisole", "dD": 17.8, "dP": 4.4, "dH": 6.9, "red": 0.4},
                {"name": "butyl acetate", "dD": 15.8, "dP": 3.7, "dH": 6.3, "red": 0.6}]
BLENDS = [{"solvents": ["toluene", "ethanol"], "volume_fractions": [0.7, 0.3],
           "dD": 17.34, "dP": 3.62, "dH": 7.22, "red": 0.55,
           "component_points": [[18.0, 1.4, 2.0], [15.8, 8.8, 19.4]]}]


def traces(fig, name):
    return [t for t in fig.data if t.name == name]


def one(fig, name):
    found = traces(fig, name)
    assert len(found) == 1, [t.name for t in fig.data]
    return found[0]


@pytest.fixture(scope="module")
def fig3():
    return figures.map3d(FIT, untried=UNTRIED_ROWS, blends=BLENDS)


def test_sphere_wireframe(fig3):
    s = [t for t in fig3.data if t.name == "sphere"]
    assert len(s) == 1
    s = s[0]
    assert s.type == "scatter3d" and s.mode == "lines" and s.line.color == SPHERE
    assert s.hoverinfo == "skip"
    x, y, z = (np.array([v for v in a if v is not None], dtype=float) for a in (s.x, s.y, s.z))
    assert list(s.x).count(None) == 11  # 6 meridians and 5 parallels, each its own line
    # an ellipsoid with δD semi-axis R0/2: in scaled space (2δD, δP, δH) every point is R0 away
    d = np.sqrt(4 * (x - 17.0) ** 2 + (y - 6.0) ** 2 + (z - 6.0) ** 2)
    assert np.allclose(d, 5.0)
    assert x.max() == pytest.approx(17.0 + 2.5) and x.min() >= 17.0 - 2.5 - 1e-9  # R0/2
    assert z.max() == pytest.approx(6.0 + 5.0) and z.min() == pytest.approx(6.0 - 5.0)


@pytest.mark.parametrize("word, outcome, colour, symbol", [
    ("dissolves", "good", GOOD, "circle"),
    ("does not", "bad", BAD, "x"),
    ("partly", "partial", PARTIAL, "diamond"),
])
def test_outcome_groups_colours_symbols_hover(fig3, word, outcome, colour, symbol):
    group = [t for t in traces(fig3, word) if t.x and any(v is not None for v in t.x)]
    assert len(group) == 1, [t.name for t in fig3.data]
    t = group[0]
    assert t.type == "scatter3d"
    if t.mode == "text":
        # a marker drawn as a glyph (plotly's 3D "x" is an emoji in many fonts): the
        # multiplication sign in our colour, and a legend entry with the real symbol
        assert t.text and set(t.text) == {"\u00d7"} and t.textfont.color == colour
        legend = [u for u in traces(fig3, word) if u.showlegend is not False and u is not t]
        assert legend and legend[0].marker.symbol == symbol and legend[0].marker.color == colour
    else:
        assert t.mode == "markers"
        assert t.marker.color == colour and t.marker.symbol == symbol
    rows = [r for r in FIT["table"] if r["outcome"] == outcome]
    assert list(t.x) == [r["dD"] for r in rows] and list(t.z) == [r["dH"] for r in rows]
    for r, h in zip(rows, t.hovertext):
        assert r["name"] in h and f"RED {r['red']:.2f}" in h and word in h


def test_untried_are_small_grey_dots_with_name_and_red(fig3):
    t = one(fig3, "untried")
    assert t.marker.color == UNTRIED and t.marker.size <= 3
    assert list(t.x) == [17.8, 15.8]
    assert "anisole" in t.hovertext[0] and "RED 0.40" in t.hovertext[0]


def test_blends_segments_and_points(fig3):
    seg = [t for t in fig3.data if getattr(t, "mode", None) == "lines" and t.line.color == BLEND]
    assert len(seg) == 1
    xs = [v for v in seg[0].x if v is not None]
    assert xs == [18.0, 15.8]  # from one component to the other
    # an open mustard circle (plotly colours 3D open glyphs by marker.color)
    pts = [t for t in fig3.data if getattr(t, "mode", None) == "markers"
           and t.marker.symbol == "circle-open" and BLEND in (t.marker.color, t.marker.line.color)]
    assert len(pts) == 1 and list(pts[0].x) == [17.34]
    h = pts[0].hovertext[0]
    assert "70% toluene" in h and "30% ethanol" in h and "RED 0.55" in h


def test_misfits_are_ringed(fig3):
    t = one(fig3, "misfits")
    assert list(t.x) == [15.5] and "acetone" in t.hovertext[0] and "misfit" in t.hovertext[0]


def test_axes_labels_and_double_scale_for_dD(fig3):
    sc = fig3.layout.scene
    assert sc.xaxis.title.text == "δD (MPa½)"
    assert sc.yaxis.title.text == "δP (MPa½)" and sc.zaxis.title.text == "δH (MPa½)"
    span = [a.range[1] - a.range[0] for a in (sc.xaxis, sc.yaxis, sc.zaxis)]
    ar = sc.aspectratio
    assert sc.aspectmode == "manual"
    assert ar.x / ar.y == pytest.approx(2 * span[0] / span[1], rel=1e-9)
    assert ar.x / ar.z == pytest.approx(2 * span[0] / span[2], rel=1e-9)
    # every tested solvent and the whole sphere are inside the axis ranges
    for r in FIT["table"]:
        for a, k in zip((sc.xaxis, sc.yaxis, sc.zaxis), ("dD", "dP", "dH")):
            assert a.range[0] <= r[k] <= a.range[1]
    assert sc.xaxis.range[0] <= 17.0 - 2.5 and sc.xaxis.range[1] >= 17.0 + 2.5


def test_empty_untried_partial_outcomes_no_misfits_no_blends():
    fit = dict(FIT, table=[r for r in FIT["table"] if r["outcome"] != "partial"
                           and r["agrees"]])
    fig = figures.map3d(fit, untried=[], blends=[])
    names = [t.name for t in fig.data]
    assert "untried" not in names and "partly" not in names and "misfits" not in names
    assert "dissolves" in names and "does not" in names
    assert not [t for t in fig.data if getattr(t, "mode", None) == "lines"
                and t.name != "sphere"]  # no blend segments, no drying paths
    json.loads(fig.to_json())


def test_from_a_real_fit_result():
    from solsphere.models.classic import SphereModel
    X = [[18, 6, 6], [17, 7, 5], [17.5, 5, 7], [16, 6, 6], [15, 16, 20], [19, 1, 1],
         [14, 0, 0], [20, 20, 20], [16.5, 9, 12]]  # invented
    o = ["good", "good", "good", "partial", "bad", "bad", "bad", "bad", "partial"]
    fd = SphereModel(partial="skip").fit(X, o, names=list("abcdefghi")).result_.to_dict()
    fig = figures.map3d(fd, untried=None)
    assert one(fig, "dissolves").marker.color == GOOD
    proj = figures.projections(fd)
    assert len([t for t in proj.data if t.name == "sphere"]) == 3


def test_highlight_cloud_paths_smoke():
    fig = figures.map3d(FIT, highlight=[{"name": "<b>mine</b>", "dD": 17, "dP": 5, "dH": 5}],
                        cloud=np.array([[17, 6, 6], [17.1, 6.1, 5.9]]),
                        paths=[{"points": [[17, 6, 6], [17.5, 5, 5]], "label": "drying"}])
    picked = one(fig, "picked")
    assert "<b>mine</b>" not in picked.text[0] and "&lt;b&gt;mine" in picked.text[0]
    assert one(fig, "drying").mode == "lines"


def test_hover_text_is_escaped():
    fit = dict(FIT, table=FIT["table"] + [row("<script>alert(1)</script>", (17, 6, 6), "good",
                                              0.0)])
    fig = figures.map3d(fit)
    h = " ".join(one(fig, "dissolves").hovertext)
    assert "<script>" not in h and "&lt;script&gt;alert(1)" in h


# ------------------------------------------------------------------------ projections

@pytest.fixture(scope="module")
def fig2():
    return figures.projections(FIT, blends=BLENDS)


def test_projections_three_planes_with_outlines(fig2):
    outlines = [t for t in fig2.data if t.name == "sphere"]
    assert len(outlines) == 3
    # planes in order: δP–δH, δD–δP, δD–δH; δD semi-axis R0/2, the others R0
    widths = [(np.ptp(np.asarray(t.x, float)), np.ptp(np.asarray(t.y, float)))
              for t in outlines]
    assert widths == [pytest.approx((10.0, 10.0), rel=1e-3),
                      pytest.approx((5.0, 10.0), rel=1e-3),
                      pytest.approx((5.0, 10.0), rel=1e-3)]
    lay = fig2.layout
    assert lay.xaxis.title.text == "δP (MPa½)" and lay.yaxis.title.text == "δH (MPa½)"
    assert lay.xaxis2.title.text == "δD (MPa½)" and lay.yaxis2.title.text == "δP (MPa½)"
    assert lay.xaxis3.title.text == "δD (MPa½)" and lay.yaxis3.title.text == "δH (MPa½)"


def test_projections_dD_at_twice_the_scale(fig2):
    lay = fig2.layout
    # scaleratio = pixels per unit of y / pixels per unit of x: 0.5 means a δD unit on x
    # is drawn twice as long as a δP or δH unit on y
    assert lay.yaxis.scaleanchor == "x" and lay.yaxis.scaleratio == 1.0
    assert lay.yaxis2.scaleanchor == "x2" and lay.yaxis2.scaleratio == 0.5
    assert lay.yaxis3.scaleanchor == "x3" and lay.yaxis3.scaleratio == 0.5


def test_projections_markers_and_misfit_outline(fig2):
    good = [t for t in fig2.data if t.name == "dissolves"]
    assert len(good) == 3 and sum(bool(t.showlegend) for t in good) == 1
    assert all(t.marker.color == GOOD and t.marker.symbol == "circle" for t in good)
    widths = list(good[0].marker.line.width)
    assert widths == [0, 2]  # acetone is a misfit
    bad = [t for t in fig2.data if t.name == "does not"]
    assert all(t.marker.color == BAD and t.marker.symbol == "x" for t in bad)
    assert "RED" in good[0].hovertext[0] and "toluene" in good[0].hovertext[0]
    blend_lines = [t for t in fig2.data if getattr(t, "mode", None) == "lines" and t.line.color == BLEND]
    assert len(blend_lines) == 3


def test_projections_without_blends_or_partials():
    fit = dict(FIT, table=[r for r in FIT["table"] if r["outcome"] != "partial"])
    fig = figures.projections(fit, blends=None)
    assert not [t for t in fig.data if t.name == "partly"]
    assert not [t for t in fig.data if getattr(t.line, "color", None) == BLEND]


# ------------------------------------------------------------------------ share page


def test_red_ladder_places_every_trial_at_its_red_by_outcome():
    fig = figures.red_ladder(FIT)
    good, bad, part = one(fig, "dissolves"), one(fig, "does not"), one(fig, "partly")
    assert sorted(good.y) == [0.85, 1.12] and sorted(bad.y) == [1.5, 2.7, 7.6]
    assert list(part.y) == [0.9]
    assert good.marker.color == GOOD and bad.marker.color == BAD and part.marker.color == PARTIAL
    assert good.marker.symbol == "circle" and bad.marker.symbol == "x"
    # one column per outcome: dissolves left of partly left of does not
    assert max(good.x) < min(part.x) <= max(part.x) < min(bad.x)
    line = one(fig, "RED 1 (boundary)")
    assert list(line.y) == [1, 1]
    assert fig.layout.yaxis.range[1] > 7.6  # nothing cut off
    # hover: name, coordinates, RED and outcome
    k = list(good.y).index(1.12)
    assert "acetone" in good.hovertext[k] and "RED 1.12" in good.hovertext[k]
    assert "δD 15.5" in good.hovertext[k] and "dissolves" in good.hovertext[k]


def test_red_ladder_rings_exactly_the_misfits():
    ring = one(figures.red_ladder(FIT), "misfits")
    assert list(ring.y) == [1.12] and ring.marker.symbol == "circle-open"
    clean = dict(FIT, table=[dict(r, agrees=True) for r in FIT["table"]])
    assert traces(figures.red_ladder(clean), "misfits") == []


def test_red_ladder_spreads_points_of_equal_red():
    tied = dict(FIT, table=[row(f"s{i}", (17, 6, 6), "good", 0.5) for i in range(4)])
    xs = list(one(figures.red_ladder(tied), "dissolves").x)
    assert len(set(xs)) == 4 and all(abs(x) < 0.5 for x in xs)


@pytest.mark.parametrize("choice,ix,iy", [("dP-dH", 1, 2), ("dD-dP", 0, 1), ("dD-dH", 0, 2)])
def test_one_plane_draws_the_chosen_axes(choice, ix, iy):
    fig = figures.plane(FIT, choice, blends=BLENDS)
    good = one(fig, "dissolves")
    pts = [r for r in FIT["table"] if r["outcome"] == "good"]
    assert list(good.x) == [(r["dD"], r["dP"], r["dH"])[ix] for r in pts]
    assert list(good.y) == [(r["dD"], r["dP"], r["dH"])[iy] for r in pts]
    # the misfit (acetone) carries a ring, the others none
    assert list(good.marker.line.width) == [0, 2]
    outline = one(fig, "sphere")
    semi = [FIT["R0"] / 2, FIT["R0"], FIT["R0"]]
    assert max(outline.x) - min(outline.x) == pytest.approx(2 * semi[ix], rel=1e-3)
    assert fig.layout.yaxis.scaleratio == (0.5 if ix == 0 else 1.0)
    assert figures.plane_label(figures.PLANE_CHOICES[choice]) in fig.layout.title.text
    assert traces(fig, "blends")
