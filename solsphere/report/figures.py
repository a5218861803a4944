"""Plotly figures: the 3D map of Hansen space, the RED ladder (every tested solvent on a
RED axis), one 2D plane at a time (and the older three projections), and the standalone
share file.

Look (our own, see DEVELOPERS.md, "Conventions"): ColorBrewer Dark2 colours; dissolves = teal filled
circle, does not = burnt-orange x, partly = slate diamond, untried library solvents =
small light-grey dots, blends = mustard line + open circle, drying paths = brown dotted
line, the sphere = translucent grey surface with a thin mesh. The δD axis is drawn at
twice the scale of δP and δH so the Hansen sphere (whose δD semi-axis is R0/2) looks round.

The figures take plain dicts (``SphereFit.to_dict()``, ``Ranking.to_dict()``,
``BlendScreen.to_dict()``), so the app can draw straight from its stored JSON.
"""

from __future__ import annotations

import html

import numpy as np

from solsphere.formatting import blend_label

STYLE = {
    "good": {"color": "#1b9e77", "symbol": "circle", "label": "dissolves"},
    "bad": {"color": "#d95f02", "symbol": "x", "label": "does not"},
    "partial": {"color": "#7570b3", "symbol": "diamond", "label": "partly"},
}
UNTRIED = "#bbbbbb"
BLEND = "#e6ab02"
#: Drying paths: Dark2 brown, so a pair's path (which runs along its mustard segment)
#: stays visible on it.
DRYING = "#a6761d"
SPHERE = "#666666"
MISFIT_RING = "#222222"
AXIS = {"dD": "δD (MPa½)", "dP": "δP (MPa½)", "dH": "δH (MPa½)"}
OUTCOME_WORD = {k: v["label"] for k, v in STYLE.items()}


def _go():
    import plotly.graph_objects as go  # imported lazily: keeps `solsphere --help` fast
    return go


def _hover(name, p, red=None, outcome=None, extra=None) -> str:
    parts = [f"<b>{html.escape(str(name))}</b>",
             f"δD {p[0]:.1f}  δP {p[1]:.1f}  δH {p[2]:.1f} MPa½"]
    if red is not None:
        parts.append(f"RED {red:.2f}")
    if outcome:
        parts.append(html.escape(OUTCOME_WORD.get(outcome, str(outcome))))
    if extra:
        parts.append(html.escape(str(extra)))
    return "<br>".join(parts)


def sphere_wire(centre, R0: float, meridians: int = 6, parallels: int = 5, n: int = 49):
    """The Hansen sphere as a wireframe in real coordinates (δD semi-axis R0/2): the
    outlines of ``meridians`` meridians and ``parallels`` parallels, as x, y, z lists
    with None between the lines (one line trace).

    A wireframe rather than a shaded surface: it draws about a quarter faster in a
    browser without a graphics card (software WebGL; measured 1.5 s against 2.0 s for
    the demo's map in headless Chromium) and leaves the points inside visible.

    >>> x, y, z = sphere_wire((18.0, 5.0, 7.0), 6.0, meridians=2, parallels=1, n=5)
    >>> len(x), x.count(None)
    (18, 3)
    >>> max(v for v in z if v is not None), round(max(v for v in x if v is not None), 6)
    (13.0, 21.0)
    """
    t = np.linspace(0.0, 2.0 * np.pi, n)
    xs: list = []
    ys: list = []
    zs: list = []

    def add(u, v):
        xs.extend((centre[0] + (R0 / 2.0) * np.cos(u) * np.sin(v)).tolist() + [None])
        ys.extend((centre[1] + R0 * np.sin(u) * np.sin(v)).tolist() + [None])
        zs.extend((centre[2] + R0 * np.cos(v) * np.ones_like(t)).tolist() + [None])

    for k in range(meridians):  # great circles through the poles
        add(np.full_like(t, np.pi * k / meridians), t)
    for k in range(1, parallels + 1):  # circles of constant δH
        add(t, np.full_like(t, np.pi * k / (parallels + 1)))
    return xs, ys, zs


def _trial_groups(fit: dict):
    for outcome in ("good", "partial", "bad"):
        rows = [r for r in fit.get("table", []) if r.get("outcome") == outcome]
        if rows:
            yield outcome, rows


def _blend_segments(blends: list[dict]):
    """(segment xyz lists with None separators, blend points, hover texts)."""
    xs, ys, zs, pts, texts = [], [], [], [], []
    for b in blends:
        comps = b.get("component_points")
        if comps:
            for k in range(len(comps)):
                a, c = comps[k], comps[(k + 1) % len(comps)]
                if len(comps) == 2 and k == 1:
                    break
                xs += [a[0], c[0], None]
                ys += [a[1], c[1], None]
                zs += [a[2], c[2], None]
        p = (b["dD"], b["dP"], b["dH"])
        pts.append(p)
        texts.append(_hover(blend_label(b["solvents"], b["volume_fractions"]), p, b.get("red")))
    return xs, ys, zs, pts, texts


def _as_dicts(fit, untried=None, blends=None):
    """Result objects as the plain dicts the figures draw from (dicts pass through)."""
    if hasattr(fit, "to_dict"):
        fit = fit.to_dict()
    if hasattr(untried, "to_dict"):
        untried = untried.to_dict()["solvents"]
    if hasattr(blends, "to_dict"):
        blends = blends.to_dict()["blends"]
    return fit, untried, blends


def map3d(fit: dict, untried: list[dict] | None = None, blends: list[dict] | None = None,
          cloud=None, paths: list[dict] | None = None, highlight: list[dict] | None = None,
          show_untried: bool = True, height: int = 620):
    """The 3D map: tested solvents by outcome, the sphere, untried points, blends.

    Parameters
    ----------
    fit : dict or fit result
        A fit result (or its ``to_dict()``): needs dD, dP, dH, R0 and the per-trial
        ``table``.
    untried : Ranking, list of dict or None
        Ranked candidates (a :class:`~solsphere.design.ranking.Ranking` or its
        ``to_dict()["solvents"]``) drawn as faint dots.
    blends : BlendScreen, list of dict or None
        Blends (a screen, or its ``to_dict()["blends"]``) drawn as segments and points.
    cloud : array-like of shape (m, 3) or None
        Resampled sphere centres (uncertainty), drawn as a faint cloud.
    paths : list of dict or None
        Drying paths, each with ``points`` (m, 3) and a ``label``.
    highlight : list of dict or None
        Solvents to mark (e.g. one the user clicked), each with name, dD, dP, dH.
    """
    go = _go()
    fit, untried, blends = _as_dicts(fit, untried, blends)
    c = (fit["dD"], fit["dP"], fit["dH"])
    R0 = fit["R0"]
    fig = go.Figure()
    x, y, z = sphere_wire(c, R0)
    fig.add_trace(go.Scatter3d(x=x, y=y, z=z, mode="lines", name="sphere", hoverinfo="skip",
                               line={"color": SPHERE, "width": 2}, opacity=0.55))
    fig.add_trace(go.Scatter3d(x=[c[0]], y=[c[1]], z=[c[2]], mode="markers", name="centre",
                               marker={"size": 5, "color": SPHERE, "symbol": "cross"},
                               hovertext=[_hover("sphere centre", c, extra=f"R0 {R0:.1f} MPa½")],
                               hoverinfo="text"))
    if untried and show_untried:
        fig.add_trace(go.Scatter3d(
            x=[s["dD"] for s in untried], y=[s["dP"] for s in untried],
            z=[s["dH"] for s in untried], mode="markers", name="untried",
            marker={"size": 2, "color": UNTRIED, "opacity": 0.5},
            hovertext=[_hover(s["name"], (s["dD"], s["dP"], s["dH"]), s.get("red")) for s in untried],
            hoverinfo="text"))
    if cloud is not None and len(cloud):
        cl = np.asarray(cloud, dtype=float)
        fig.add_trace(go.Scatter3d(x=cl[:, 0], y=cl[:, 1], z=cl[:, 2], mode="markers",
                                   name="resampled centres", hoverinfo="skip",
                                   marker={"size": 1.5, "color": SPHERE, "opacity": 0.25}))
    for outcome, rows in _trial_groups(fit):
        st = STYLE[outcome]
        misfit = [r.get("agrees") is False for r in rows]
        xyz = {"x": [r["dD"] for r in rows], "y": [r["dP"] for r in rows],
               "z": [r["dH"] for r in rows]}
        hover = [_hover(r["name"], (r["dD"], r["dP"], r["dH"]), r.get("red"), outcome,
                        "misfit" if m else None) for r, m in zip(rows, misfit)]
        if st["symbol"] == "x":
            # plotly draws the 3D "x" marker as an emoji glyph (U+274C), which is missing
            # from many fonts (an empty box) or comes out in the emoji's own colour; the
            # multiplication sign is in every font and takes our colour. The legend entry
            # keeps the usual x symbol (drawn as SVG there).
            fig.add_trace(go.Scatter3d(x=[None], y=[None], z=[None], mode="markers",
                                       name=st["label"], legendgroup=outcome, hoverinfo="skip",
                                       marker={"size": 5, "color": st["color"], "symbol": "x"}))
            fig.add_trace(go.Scatter3d(**xyz, mode="text", text=["\u00d7"] * len(rows),
                                       name=st["label"], legendgroup=outcome, showlegend=False,
                                       textfont={"color": st["color"], "size": 20},
                                       hovertext=hover, hoverinfo="text"))
            continue
        fig.add_trace(go.Scatter3d(
            **xyz, mode="markers", name=st["label"], legendgroup=outcome,
            marker={"size": 5, "color": st["color"], "symbol": st["symbol"]},
            hovertext=hover, hoverinfo="text"))
    # scatter3d takes one marker line width per trace, so misfits get their own ring trace
    wrong = [r for r in fit.get("table", []) if r.get("agrees") is False]
    if wrong:
        fig.add_trace(go.Scatter3d(
            x=[r["dD"] for r in wrong], y=[r["dP"] for r in wrong], z=[r["dH"] for r in wrong],
            mode="markers", name="misfits",
            marker={"size": 11, "color": MISFIT_RING, "symbol": "circle-open"},
            hovertext=[_hover(r["name"], (r["dD"], r["dP"], r["dH"]), r.get("red"),
                              r.get("outcome"), "misfit") for r in wrong],
            hoverinfo="text"))
    if blends:
        xs, ys, zs, pts, texts = _blend_segments(blends)
        fig.add_trace(go.Scatter3d(x=xs, y=ys, z=zs, mode="lines", name="blend segments",
                                   line={"color": BLEND, "width": 6}, hoverinfo="skip"))
        fig.add_trace(go.Scatter3d(
            x=[p[0] for p in pts], y=[p[1] for p in pts], z=[p[2] for p in pts],
            mode="markers", name="blends", hovertext=texts, hoverinfo="text",
            # 3D open symbols are glyphs coloured by marker.color (marker.line is ignored)
            marker={"size": 9, "color": BLEND, "symbol": "circle-open"}))
    for path in paths or []:
        p = np.asarray(path["points"], dtype=float)
        fig.add_trace(go.Scatter3d(x=p[:, 0], y=p[:, 1], z=p[:, 2], mode="lines",
                                   name=path.get("label", "drying path"),
                                   line={"color": DRYING, "width": 5, "dash": "dot"},
                                   hoverinfo="name"))
    if highlight:
        fig.add_trace(go.Scatter3d(
            x=[h["dD"] for h in highlight], y=[h["dP"] for h in highlight],
            z=[h["dH"] for h in highlight], mode="markers+text", name="picked",
            text=[html.escape(h["name"]) for h in highlight], textposition="top center",
            marker={"size": 9, "color": "#333333", "symbol": "square-open"},
            hovertext=[_hover(h["name"], (h["dD"], h["dP"], h["dH"]), h.get("red")) for h in highlight],
            hoverinfo="text"))
    fig.update_layout(scene=_scene(fit, untried if show_untried else None), height=height,
                      margin={"l": 0, "r": 0, "t": 30, "b": 0}, legend={"itemsizing": "constant"},
                      scene_camera={"eye": {"x": 1.6, "y": 1.3, "z": 0.9}}, uirevision="map")
    return fig


def _ranges(fit: dict, extra: list[dict] | None):
    pts = [(r["dD"], r["dP"], r["dH"]) for r in fit.get("table", [])]
    c = np.array([fit["dD"], fit["dP"], fit["dH"]])
    R0 = fit["R0"]
    pts += [tuple(c - [R0 / 2, R0, R0]), tuple(c + [R0 / 2, R0, R0])]
    a = np.array(pts, dtype=float)
    lo, hi = a.min(axis=0), a.max(axis=0)
    pad = np.maximum((hi - lo) * 0.05, 0.5)
    return lo - pad, hi + pad


def _scene(fit: dict, untried):
    lo, hi = _ranges(fit, untried)
    span = hi - lo
    ratio = np.array([2 * span[0], span[1], span[2]])
    ratio = ratio / ratio.max()
    return {"xaxis": {"title": {"text": AXIS["dD"]}, "range": [lo[0], hi[0]], "nticks": 5},
            "yaxis": {"title": {"text": AXIS["dP"]}, "range": [lo[1], hi[1]], "nticks": 6},
            "zaxis": {"title": {"text": AXIS["dH"]}, "range": [lo[2], hi[2]], "nticks": 6},
            "aspectmode": "manual",
            "aspectratio": {"x": float(ratio[0]), "y": float(ratio[1]), "z": float(ratio[2])}}


PLANES = (("dP", "dH"), ("dD", "dP"), ("dD", "dH"))
_IDX = {"dD": 0, "dP": 1, "dH": 2}


def projections(fit: dict, blends: list[dict] | None = None, height: int = 340):
    """The three 2D projections (δP–δH, δD–δP, δD–δH) with the sphere's outline.

    In the planes with δD the δD axis is drawn at twice the scale, so the outline
    (an ellipse with δD semi-axis R0/2) looks round.
    """
    go = _go()
    from plotly.subplots import make_subplots  # deferred: plotly is heavy to import

    fit, _, blends = _as_dicts(fit, None, blends)
    fig = make_subplots(rows=1, cols=3, horizontal_spacing=0.08,
                        subplot_titles=[f"{AXIS[a][:2]}–{AXIS[b][:2]}" for a, b in PLANES])
    c = np.array([fit["dD"], fit["dP"], fit["dH"]])
    R0 = fit["R0"]
    t = np.linspace(0, 2 * np.pi, 121)
    semi = np.array([R0 / 2, R0, R0])
    lo, hi = _ranges(fit, None)
    for k, (a, b) in enumerate(PLANES, start=1):
        ia, ib = _IDX[a], _IDX[b]
        fig.add_trace(go.Scatter(x=c[ia] + semi[ia] * np.cos(t), y=c[ib] + semi[ib] * np.sin(t),
                                 mode="lines", line={"color": SPHERE, "width": 1.5},
                                 fill="toself", fillcolor="rgba(102,102,102,0.10)",
                                 hoverinfo="skip", showlegend=False, name="sphere"), row=1, col=k)
        for outcome, rows in _trial_groups(fit):
            st = STYLE[outcome]
            fig.add_trace(go.Scatter(
                x=[(r["dD"], r["dP"], r["dH"])[ia] for r in rows],
                y=[(r["dD"], r["dP"], r["dH"])[ib] for r in rows], mode="markers",
                name=st["label"], legendgroup=outcome, showlegend=(k == 1),
                marker={"color": st["color"], "symbol": st["symbol"], "size": 8,
                        "line": {"width": [2 if r.get("agrees") is False else 0 for r in rows],
                                 "color": MISFIT_RING}},
                hovertext=[_hover(r["name"], (r["dD"], r["dP"], r["dH"]), r.get("red"), outcome)
                           for r in rows], hoverinfo="text"), row=1, col=k)
        if blends:
            for bl in blends:
                comps = bl.get("component_points") or []
                if comps:
                    cyc = comps + [comps[0]] if len(comps) > 2 else comps
                    fig.add_trace(go.Scatter(x=[p[ia] for p in cyc], y=[p[ib] for p in cyc],
                                             mode="lines", line={"color": BLEND, "width": 2},
                                             hoverinfo="skip", showlegend=False), row=1, col=k)
                p = (bl["dD"], bl["dP"], bl["dH"])
                fig.add_trace(go.Scatter(x=[p[ia]], y=[p[ib]], mode="markers", showlegend=False,
                                         marker={"symbol": "circle-open", "color": BLEND, "size": 10,
                                                 "line": {"width": 2}}, hoverinfo="skip"),
                              row=1, col=k)
        fig.update_xaxes(title_text=AXIS[a], row=1, col=k, range=[lo[ia], hi[ia]],
                         constrain="domain")
        fig.update_yaxes(title_text=AXIS[b], row=1, col=k, range=[lo[ib], hi[ib]],
                         constrain="domain", scaleanchor=f"x{k if k > 1 else ''}",
                         scaleratio=0.5 if a == "dD" else 1.0)
    fig.update_layout(height=height, margin={"l": 40, "r": 10, "t": 40, "b": 40},
                      legend={"orientation": "h", "y": -0.25}, uirevision="proj")
    return fig


PLANE_CHOICES = {"dP-dH": ("dP", "dH"), "dD-dP": ("dD", "dP"), "dD-dH": ("dD", "dH")}


def plane_label(axes) -> str:
    """'δP–δH' for ``("dP", "dH")``.

    >>> plane_label(("dD", "dH"))
    'δD–δH'
    """
    a, b = axes
    return f"{AXIS[a][:2]}–{AXIS[b][:2]}"


def plane(fit, axes=("dP", "dH"), blends: list[dict] | None = None, height: int = 360):
    """One 2D plane of Hansen space with the sphere's outline and the tested solvents.

    Parameters
    ----------
    fit : dict or fit result
        A fit result (or its ``to_dict()``) with dD, dP, dH, R0 and the per-trial ``table``.
    axes : pair of {"dD", "dP", "dH"}, default=("dP", "dH")
        The horizontal and vertical axes (also a key of :data:`PLANE_CHOICES`).
    blends : list of dict or None
        Blends drawn as segments (triangles) and open circles.
    height : int, default=360

    Returns
    -------
    plotly.graph_objects.Figure
        Misfits carry a dark ring; on a δD axis the scale is doubled so the outline
        (δD semi-axis R0/2) looks round.
    """
    go = _go()
    if isinstance(axes, str):
        axes = PLANE_CHOICES[axes]
    a, b = axes
    fit, _, blends = _as_dicts(fit, None, blends)
    ia, ib = _IDX[a], _IDX[b]
    c = np.array([fit["dD"], fit["dP"], fit["dH"]])
    R0 = fit["R0"]
    t = np.linspace(0, 2 * np.pi, 121)
    semi = np.array([R0 / 2, R0, R0])
    lo, hi = _ranges(fit, None)
    fig = go.Figure()
    fig.add_trace(go.Scatter(x=c[ia] + semi[ia] * np.cos(t), y=c[ib] + semi[ib] * np.sin(t),
                             mode="lines", line={"color": SPHERE, "width": 1.5},
                             fill="toself", fillcolor="rgba(102,102,102,0.10)",
                             hoverinfo="skip", name="sphere"))
    for outcome, rows in _trial_groups(fit):
        st = STYLE[outcome]
        fig.add_trace(go.Scatter(
            x=[(r["dD"], r["dP"], r["dH"])[ia] for r in rows],
            y=[(r["dD"], r["dP"], r["dH"])[ib] for r in rows], mode="markers",
            name=st["label"], legendgroup=outcome,
            marker={"color": st["color"], "symbol": st["symbol"], "size": 9,
                    "line": {"width": [2 if r.get("agrees") is False else 0 for r in rows],
                             "color": MISFIT_RING}},
            hovertext=[_hover(r["name"], (r["dD"], r["dP"], r["dH"]), r.get("red"), outcome,
                              "misfit" if r.get("agrees") is False else None)
                       for r in rows], hoverinfo="text"))
    for bl in blends or []:
        comps = bl.get("component_points") or []
        if comps:
            cyc = comps + [comps[0]] if len(comps) > 2 else comps
            fig.add_trace(go.Scatter(x=[p[ia] for p in cyc], y=[p[ib] for p in cyc],
                                     mode="lines", line={"color": BLEND, "width": 2},
                                     hoverinfo="skip", showlegend=False, name="blend segments"))
        p = (bl["dD"], bl["dP"], bl["dH"])
        fig.add_trace(go.Scatter(x=[p[ia]], y=[p[ib]], mode="markers", showlegend=False,
                                 name="blends", hoverinfo="text",
                                 hovertext=[_hover(blend_label(bl["solvents"],
                                                               bl["volume_fractions"]),
                                                   p, bl.get("red"))],
                                 marker={"symbol": "circle-open", "color": BLEND, "size": 11,
                                         "line": {"width": 2}}))
    # the ranges only grow (constrain="range") to keep the scale ratio: nothing is cut
    fig.update_xaxes(title_text=AXIS[a], range=[lo[ia], hi[ia]], constrain="range",
                     gridcolor="#eeeeee", zeroline=False)
    fig.update_yaxes(title_text=AXIS[b], range=[lo[ib], hi[ib]], constrain="range",
                     scaleanchor="x", scaleratio=0.5 if a == "dD" else 1.0,
                     gridcolor="#eeeeee", zeroline=False)
    fig.update_layout(height=height, margin={"l": 50, "r": 10, "t": 30, "b": 40},
                      title={"text": plane_label((a, b)), "x": 0.5, "font": {"size": 14}},
                      plot_bgcolor="white", legend={"orientation": "h", "y": -0.2},
                      uirevision="plane")
    return fig


#: Horizontal place of each outcome's column on the RED ladder.
LADDER_COLUMNS = {"good": 0, "partial": 1, "bad": 2}


def _ladder_offsets(reds) -> list[float]:
    """Small sideways offsets so points of nearly equal RED do not hide each other:
    neighbours (in RED order) closer than 0.04 step out left and right in turn."""
    order = sorted(range(len(reds)), key=lambda i: reds[i])
    out = [0.0] * len(reds)
    run = 0
    for k, i in enumerate(order):
        close = k > 0 and abs(reds[i] - reds[order[k - 1]]) < 0.04
        run = run + 1 if close else 0
        step = (run + 1) // 2 * 0.12
        out[i] = step if run % 2 else -step
    return out


def red_ladder(fit, height: int = 560):
    """The RED ladder: every tested solvent as a point on a RED axis, in one column per
    outcome, with the boundary at RED 1 and misfits ringed.

    How cleanly the results separate shows at a glance: dissolving solvents below the
    line, the others above it; a ringed point sits on the wrong side.

    Parameters
    ----------
    fit : dict or fit result
        A fit result (or its ``to_dict()``) with the per-trial ``table`` (name, dD, dP,
        dH, red, outcome, agrees).
    height : int, default=560

    Returns
    -------
    plotly.graph_objects.Figure
        Hover gives each solvent's name, δD/δP/δH, RED and outcome.

    Examples
    --------
    >>> fit = {"dD": 17, "dP": 6, "dH": 6, "R0": 5, "table": [
    ...     {"name": "toluene", "dD": 18, "dP": 1.4, "dH": 2, "red": 0.85,
    ...      "outcome": "good", "agrees": True},
    ...     {"name": "water", "dD": 15.5, "dP": 16, "dH": 42.3, "red": 7.6,
    ...      "outcome": "bad", "agrees": True}]}
    >>> [t.name for t in red_ladder(fit).data]
    ['RED 1 (boundary)', 'dissolves', 'does not']
    """
    go = _go()
    fit, _, _ = _as_dicts(fit)
    fig = go.Figure()
    rows_all = [r for r in fit.get("table", []) if r.get("red") is not None]
    top = max([1.5] + [float(r["red"]) * 1.06 for r in rows_all])
    fig.add_trace(go.Scatter(x=[-0.5, 2.5], y=[1, 1], mode="lines", name="RED 1 (boundary)",
                             line={"color": SPHERE, "width": 1.5, "dash": "dash"},
                             hoverinfo="skip", showlegend=False))
    ringed = []
    for outcome, rows in _trial_groups(fit):
        rows = [r for r in rows if r.get("red") is not None]
        if not rows:
            continue
        st = STYLE[outcome]
        reds = [float(r["red"]) for r in rows]
        xs = [LADDER_COLUMNS[outcome] + d for d in _ladder_offsets(reds)]
        fig.add_trace(go.Scatter(
            x=xs, y=reds, mode="markers", name=st["label"], legendgroup=outcome,
            showlegend=False, marker={"color": st["color"], "symbol": st["symbol"], "size": 10},
            hovertext=[_hover(r["name"], (r["dD"], r["dP"], r["dH"]), r["red"], outcome,
                              "misfit" if r.get("agrees") is False else None) for r in rows],
            hoverinfo="text"))
        ringed += [(x, r) for x, r in zip(xs, rows) if r.get("agrees") is False]
    if ringed:
        fig.add_trace(go.Scatter(
            x=[x for x, _ in ringed], y=[float(r["red"]) for _, r in ringed], mode="markers",
            name="misfits", showlegend=False,
            marker={"symbol": "circle-open", "color": MISFIT_RING, "size": 20,
                    "line": {"width": 2}},
            hovertext=[_hover(r["name"], (r["dD"], r["dP"], r["dH"]), r["red"],
                              r.get("outcome"), "misfit") for _, r in ringed],
            hoverinfo="text"))
    fig.update_xaxes(range=[-0.5, 2.5], tickvals=list(LADDER_COLUMNS.values()),
                     ticktext=[STYLE[k]["label"] for k in LADDER_COLUMNS], showgrid=False,
                     zeroline=False, fixedrange=True)
    fig.update_yaxes(title_text="RED (distance / R0)", range=[0, top], zeroline=False,
                     gridcolor="#eeeeee")
    fig.add_annotation(x=2.45, y=1, text="boundary", showarrow=False, yshift=9,
                       xanchor="right", font={"size": 11, "color": SPHERE})
    fig.update_layout(height=height, margin={"l": 55, "r": 8, "t": 30, "b": 40},
                      title={"text": "RED ladder", "x": 0.5, "font": {"size": 14}},
                      plot_bgcolor="white", uirevision="ladder")
    return fig
