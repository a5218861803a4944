"""The share page's HTML: tables that fit the page, print styles, the figures inlined.

One self-contained file: plotly.js and the figures' JSON are inlined (no network). Every
user text (title, material, notes, solvent names, bench notes) is HTML-escaped; the
figures' JSON is made safe to embed in a script element. The look is our own: Dark2
colours for the outcomes (DEVELOPERS.md, "Conventions"), plain tables, a mustard-edged
caution box.

Tables fit the page: long names and cells wrap (``overflow-wrap: anywhere``), so no table
is wider than its column of text on screen or on paper. Printing (``@media print``, A4)
drops the interactive 3D map (WebGL does not print reliably; the 2D planes do), repeats
table headers on each page and keeps rows whole.
"""

from __future__ import annotations

import html

from solsphere import __version__

__all__ = ["render", "table_html", "CSS", "PLANES_WIDTH", "LADDER_WIDTH"]

#: Width of the 2D planes in CSS pixels: fits an A4 page with 12 mm margins (186 mm ≈ 703
#: px at 96 px per inch) and the screen column.
PLANES_WIDTH = 690

#: Width of the RED ladder in CSS pixels (beside nothing: it prints on any page).
LADDER_WIDTH = 520

#: Columns that hold numbers (right-aligned, tabular figures).
NUMERIC = {"RED", "p_good", "Ra to old", "RED (material)", "#"}

CSS = """
:root { --ink: #222; --muted: #5a5a5a; --rule: #d9d9d4; --head: #f1f1ec; }
* { box-sizing: border-box; }
body { font: 15px/1.45 system-ui, -apple-system, "Segoe UI", sans-serif; color: var(--ink);
       margin: 1.5em auto; max-width: 1040px; padding: 0 1em; }
h1 { font-size: 1.7em; margin: 0 0 .2em; }
h2 { font-size: 1.25em; margin: 1.6em 0 .4em; border-bottom: 2px solid var(--rule);
     padding-bottom: .15em; }
h3 { font-size: 1.05em; margin: 1.1em 0 .3em; }
.meta { color: var(--muted); margin: 0 0 .8em; }
.notes { white-space: pre-wrap; background: #f7f7f3; padding: .5em .8em; margin: .5em 0; }
.summary p { margin: .35em 0; }
.caution { border-left: 4px solid #e6ab02; background: #fffbea; padding: .5em 1em;
           margin: 1em 0; }
.caution ul { margin: .3em 0; padding-left: 1.2em; }
table.report { border-collapse: collapse; width: 100%; font-size: 13px; margin: .4em 0 1em;
               table-layout: auto; }
table.report th, table.report td { border-bottom: 1px solid var(--rule); padding: 3px 6px;
               text-align: left; vertical-align: top; overflow-wrap: break-word; }
table.report th { background: var(--head); font-weight: 600; overflow-wrap: normal;
                  word-break: normal; hyphens: auto; }
table.report td.num { text-align: right; font-variant-numeric: tabular-nums;
                      white-space: nowrap; }
td .line { display: block; }
.o-good { color: #1b9e77; font-weight: 600; }
.o-bad { color: #d95f02; font-weight: 600; }
.o-partial { color: #7570b3; font-weight: 600; }
tr.misfit td { background: #fbefe6; }
.small { font-size: 12.5px; color: var(--muted); }
#map3d { width: 100%; min-height: 560px; }
#planes { width: """ + str(PLANES_WIDTH) + """px; max-width: 100%; margin: 0 auto; }
#ladder { width: """ + str(LADDER_WIDTH) + """px; max-width: 100%; margin: 0 auto; }
details pre { background: #f6f6f4; padding: .8em; overflow-x: auto; font-size: 12.5px;
              white-space: pre-wrap; overflow-wrap: anywhere; }
.print-only { display: none; }
@media print {
  @page { size: A4; margin: 12mm; }
  body { max-width: none; margin: 0; padding: 0; font-size: 10pt; }
  h1 { font-size: 16pt; }
  h2 { font-size: 12.5pt; break-after: avoid; page-break-after: avoid; }
  h3 { break-after: avoid; page-break-after: avoid; }
  table.report { font-size: 8pt; }
  table.report th, table.report td { padding: 2px 4px; }
  thead { display: table-header-group; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  .screen-only, #map3d, details { display: none !important; }
  .print-only { display: block; }
  #planes, #ladder-section { break-inside: avoid; page-break-inside: avoid; }
  .caution { break-inside: avoid; }
  a { color: inherit; text-decoration: none; }
}
"""

TEMPLATE = """<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{title}</title>
<style>{css}</style>
<script type="text/javascript">{plotlyjs}</script>
</head><body>
<header>
<h1>{title}</h1>
{meta}
{notes}
</header>
<section class="summary" id="summary"><h2>Summary</h2>
{summary}
</section>
<section class="caution" id="cautions"><strong>Before you use any of this</strong>
<ul>{cautions}</ul></section>
<section id="figures"><h2>The map</h2>
<p class="small screen-only">Drag to turn the 3D map; hover a point for its name,
coordinates and RED. The δD axis is drawn at twice the scale so that the sphere looks
round. Tested solvents: dissolves (teal circles), partly (slate diamonds), does not (orange
crosses); misfits ringed; untried solvents are grey dots, blends mustard, drying paths
brown.</p>
<p class="small print-only">The interactive 3D map is in the HTML file; the three planes
below show the same sphere flat (δD drawn at twice the scale).</p>
<div id="map3d"></div>
<div id="planes"></div>
<div id="ladder-section"><h3>How cleanly the results separate</h3>
<p class="small">Every tested solvent on a RED axis, one column per outcome, with the
boundary at RED 1: solvents that dissolve the material belong below the line, the others
above it; a ringed point is on the wrong side (a misfit).</p>
<div id="ladder"></div></div>
</section>
<section id="tested"><h2>Tested solvents</h2>
{tested}
</section>
<section id="untried"><h2>Untried solvents to try</h2>
<p>{pool}</p>
{untried}
</section>
{blends}
{replacement}
<section id="technical" class="screen-only"><h2>Technical details</h2>
<details><summary>The fit report as printed by the command line</summary>
<pre>{technical}</pre></details>
</section>
<section class="caution" id="cautions-end"><ul>{cautions}</ul></section>
<footer class="small"><p>Made with solsphere {version}. Hansen parameters from published
compilations (see the solvent library's README). Invented demo data are labelled as
such.</p></footer>
<script type="text/javascript">
var f3 = {fig3d};
var f2 = {fig2d};
var fl = {figladder};
Plotly.newPlot("map3d", f3.data, f3.layout, {{responsive: true, displaylogo: false}});
Plotly.newPlot("planes", f2.data, f2.layout, {{displaylogo: false}});
Plotly.newPlot("ladder", fl.data, fl.layout, {{displaylogo: false}});
</script>
</body></html>
"""


def _esc(x) -> str:
    return html.escape(str(x))


def _cell(value) -> str:
    if isinstance(value, (list, tuple)):
        return "".join(f'<span class="line">{_esc(v)}</span>' for v in value)
    return _esc(value)


def table_html(rows: list[dict], table_id: str, empty: str = "Nothing to list.") -> str:
    """Rows (column -> text or list of lines) as an escaped HTML table; columns whose
    name starts with ``_`` are hidden (``_outcome`` and ``_agrees`` style the row).

    >>> print(table_html([{"solvent": "a<b", "RED": "0.52"}], "t"))
    <table class="report" id="t"><thead><tr><th>solvent</th><th>RED</th></tr></thead><tbody><tr><td>a&lt;b</td><td class="num">0.52</td></tr></tbody></table>
    """
    if not rows:
        return f'<p class="small" id="{table_id}">{_esc(empty)}</p>'
    cols = [c for c in rows[0] if not c.startswith("_")]
    head = "".join(f"<th>{_esc(c)}</th>" for c in cols)
    body = []
    for r in rows:
        cls = ' class="misfit"' if r.get("_agrees") is False else ""
        cells = []
        for c in cols:
            attr = ' class="num"' if c in NUMERIC else ""
            if c == "outcome" and r.get("_outcome"):
                attr = f' class="o-{_esc(r["_outcome"])}"'
            cells.append(f"<td{attr}>{_cell(r.get(c, ''))}</td>")
        body.append(f"<tr{cls}>{''.join(cells)}</tr>")
    return (f'<table class="report" id="{table_id}"><thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(body)}</tbody></table>")


def _json_for_script(obj_json: str) -> str:
    """JSON made safe inside <script> (no closing tag, no HTML comment)."""
    return (obj_json.replace("<", "\\u003c").replace(">", "\\u003e")
            .replace("&", "\\u0026").replace("\u2028", "\\u2028").replace("\u2029", "\\u2029"))


def _blends_html(report) -> str:
    if not report.blends and not report.blend_notes:
        return ""
    notes = "".join(f"<li>{_esc(n)}</li>" for n in report.blend_notes)
    return ('<section id="blends"><h2>Blends</h2>\n'
            "<p>Blends from the same candidates, in the documented order: feasible first "
            "(inside the sphere, one liquid phase, limits met), then robust (a wide range of "
            "fractions inside), then the chosen priority, then RED. Flash points are "
            "estimates of the real mixture (activity coefficients), not measurements; the "
            "drying column says whether the liquid stays inside the sphere as it "
            "evaporates.</p>\n"
            + table_html(report.blends, "blends-table", "No blend lands inside the sphere.")
            + (f'<ul class="small">{notes}</ul>' if notes else "") + "</section>")


def _replacement_html(report) -> str:
    r = report.replacement
    if not r:
        return ""
    target = r["target_facts"]
    facts_line = "; ".join(f"{k} {v}" for k, v in target.items())
    left = "".join(f"<li>{_esc(k)} ({len(v)}): {_esc(', '.join(v[:20]))}"
                   f"{' …' if len(v) > 20 else ''}</li>" for k, v in r["left_out"].items())
    worse = ("Candidates worse than the old solvent on a hazard were allowed (--allow-worse)."
             if r["allow_worse"] else
             "No candidate is worse than the old solvent on carcinogen class, reprotoxic or "
             "regulatory listing, or flammability category.")
    return (f'<section id="replacement"><h2>Replacements for {_esc(r["target"])}</h2>\n'
            f"<p>{_esc(r['target'])}: {_esc(facts_line)}. {_esc(worse)}</p>\n"
            "<h3>Single solvents</h3>\n"
            + table_html(r["singles"], "replace-singles", "No single solvent qualifies.")
            + "<h3>Pairs</h3>\n"
            + table_html(r["pairs"], "replace-pairs", "No pair qualifies.")
            + (f'<p class="small">Left out:</p><ul class="small">{left}</ul>' if left else "")
            + "</section>")


def render(report) -> str:
    """The page of a :class:`solsphere.report.share.ShareReport`."""
    from plotly.offline import get_plotlyjs  # deferred: plotly is heavy to import

    meta = []
    if report.material:
        meta.append(f"Material: <strong>{_esc(report.material)}</strong>")
    if report.source:
        meta.append(f"Bench results: {_esc(report.source)}")
    meta_html = f'<p class="meta">{" · ".join(meta)}</p>' if meta else ""
    notes = f'<div class="notes">{_esc(report.notes)}</div>' if report.notes else ""
    summary = "\n".join(f"<p>{_esc(p)}</p>" for p in report.paragraphs)
    cautions = "".join(f"<li>{_esc(c)}</li>" for c in report.cautions)
    planes = report.figure_planes
    planes.update_layout(width=PLANES_WIDTH, autosize=False)
    ladder = report.figure_ladder
    ladder.update_layout(width=LADDER_WIDTH, autosize=False)
    return TEMPLATE.format(
        title=_esc(report.title), css=CSS, plotlyjs=get_plotlyjs(), meta=meta_html,
        notes=notes, summary=summary, cautions=cautions,
        tested=table_html(report.tested, "tested-table"),
        pool=_esc(report.pool_text),
        untried=table_html(report.untried, "untried-table", "No untried candidate to list."),
        blends=_blends_html(report), replacement=_replacement_html(report),
        technical=_esc(report.technical), version=_esc(__version__),
        fig3d=_json_for_script(report.figure_map.to_json()),
        fig2d=_json_for_script(planes.to_json()),
        figladder=_json_for_script(ladder.to_json()))
