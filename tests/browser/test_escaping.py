"""Hostile names stay text: in the app and in the share file, in a real Chromium.

A results file (invented) holds an own solvent named ``<script>alert(1)</script>`` with
its own coordinates and a note ``<img src=x onerror=alert(2)>``; the file itself is named
like an image tag and the share page gets a title with an event handler. The app must
show all of it as text (table cell, hover label), the share file likewise, and no
dialog may open anywhere (``page.on("dialog")`` records any).
"""

from __future__ import annotations

import pytest

from benchgrid import cell, column

pytestmark = pytest.mark.browser

EVIL_NAME = "<script>alert(1)</script>"
EVIL_NOTE = "<img src=x onerror=alert(2)>"
EVIL_FILE = "<img src=x onerror=alert(3)>.csv"
EVIL_TITLE = "<b onmouseover=alert(4)>binder</b>"
CSV = ("solvent,outcome,dD,dP,dH,note\n"
       f'"{EVIL_NAME}",good,17.2,5.5,6.5,"{EVIL_NOTE}"\n'
       "toluene,good,,,,\nacetone,good,,,,\nethyl acetate,good,,,,\ntetrahydrofuran,good,,,,\n"
       "water,bad,,,,\nn-hexane,bad,,,,\nmethanol,bad,,,,\nethanol,bad,,,,\n").encode()

#: page-side check: nothing the user wrote became an element or a handler
NOTHING_INJECTED = """() => ({
    scripts: [...document.scripts].filter(s => s.textContent.trim().startsWith('alert(')).length,
    handlers: document.querySelectorAll('[onerror],[onmouseover],[onload]').length,
    imgs: [...document.images].filter(i => (i.getAttribute('src') || '') === 'x').length,
})"""

HOVER_PLANES = """(name) => {
    const gd = document.querySelector('%s');
    for (let k = 0; k < gd.data.length; k++) {
        const ht = gd.data[k].hovertext || [];
        for (let j = 0; j < ht.length; j++) {
            if (String(ht[j]).includes(name)) {
                Plotly.Fx.hover(gd, [{curveNumber: k, pointNumber: j}], 'xy');
                const layer = gd.querySelector('.hoverlayer');
                return {raw: String(ht[j]), shown: layer ? layer.textContent : null};
            }
        }
    }
    return null;
}"""


def watch_dialogs(page) -> list[str]:
    """Record every dialog the page opens; checked to work with a probe alert."""
    seen: list[str] = []

    def on_dialog(dialog):
        seen.append(f"{dialog.type}: {dialog.message}")
        dialog.dismiss()

    page.on("dialog", on_dialog)
    page.evaluate("() => window.alert('probe')")
    assert seen == ["alert: probe"], seen  # the listener works
    seen.clear()
    return seen


def assert_nothing_injected(page):
    assert page.evaluate(NOTHING_INJECTED) == {"scripts": 0, "handlers": 0, "imgs": 0}


def test_hostile_names_show_as_text_in_the_app_and_the_share_file(page, browser, artefacts):
    dialogs = watch_dialogs(page.page)
    page.set_input_files("#open-upload input[type=file]",
                         files=[{"name": EVIL_FILE, "mimeType": "text/csv", "buffer": CSV}])
    page.wait_for_selector("#centre-text:has-text('δD')")
    page.wait_for_selector("#map3d .js-plotly-plot .gl-container canvas")
    page.wait_for_selector("#plane .js-plotly-plot .main-svg")
    page.wait_for_selector("#ladder .js-plotly-plot .main-svg")

    # the table shows the name and the note exactly as typed, as text
    row = column(page, "solvent").index(EVIL_NAME)
    assert cell(page, row, "solvent").inner_text().strip() == EVIL_NAME  # drawn as text
    assert cell(page, row, "note").inner_text().strip() == EVIL_NOTE
    assert EVIL_FILE in page.inner_text("#notice")  # the file name, as text

    # the hover label of the 2D projection shows the name as text
    for graph in ("#plane", "#ladder"):  # the chosen plane and the RED ladder
        hover = page.evaluate(HOVER_PLANES % f"{graph} .js-plotly-plot", "&lt;script&gt;")
        assert hover is not None, f"the trial is missing from {graph}"
        assert EVIL_NAME not in hover["raw"]  # escaped in the data plotly gets
        assert hover["shown"] is not None and EVIL_NAME in hover["shown"]  # shown as text
    assert_nothing_injected(page)

    # the share file, downloaded and opened like a colleague would
    page.click("text=Share")
    page.fill("#share-title", EVIL_TITLE)
    page.press("#share-title", "Enter")
    with page.expect_download(timeout=60_000) as dl:
        page.click("#download-html-button")
    path = artefacts / "escaping-share.html"
    dl.value.save_as(path)
    text = path.read_text(encoding="utf-8")
    for raw in (EVIL_NAME, EVIL_NOTE, EVIL_TITLE):
        assert raw not in text

    viewer = browser.new_page(viewport={"width": 1300, "height": 900})
    viewer.goto("about:blank")
    viewer_dialogs = watch_dialogs(viewer)
    errors: list[str] = []
    viewer.on("pageerror", lambda e: errors.append(str(e)))
    viewer.goto(path.as_uri())
    viewer.wait_for_selector("#map3d.js-plotly-plot .gl-container canvas")
    viewer.wait_for_selector("#planes.js-plotly-plot .main-svg")
    assert viewer.title() == EVIL_TITLE
    assert viewer.inner_text("h1") == EVIL_TITLE
    shared = viewer.evaluate(HOVER_PLANES % "#planes", "&lt;script&gt;")
    assert shared is not None and EVIL_NAME in (shared["shown"] or "")
    viewer.mouse.move(200, 100)  # over the title: an injected handler would fire
    viewer.wait_for_timeout(300)
    assert_nothing_injected(viewer)
    viewer.screenshot(path=str(artefacts / "escaping-share.png"))
    viewer.close()

    assert errors == []
    assert dialogs == [] and viewer_dialogs == [], dialogs + viewer_dialogs
    assert page.errors == [], page.errors
