"""The share page in real headless Chromium: its tables on screen, and printed to PDF
(``page.pdf()``) as a notebook page with no table cut at the right edge.

Screenshots and the PDF go to tests/artefacts/ (share-screen.png, share-print.png,
share.pdf): look at them after changing the page.
"""

from __future__ import annotations

import re
import shutil
import subprocess

import pytest

from solsphere.io.project import load_any
from solsphere.report.share import build_share
from solsphere.workflows import fit_project

pytestmark = pytest.mark.browser

#: A4 is 210 mm wide; the page's @page margins are 12 mm: 186 mm = 703 CSS px at 96 px/in.
A4_PRINT_WIDTH_PX = int(186 / 25.4 * 96)
TABLES = ("tested-table", "untried-table", "blends-table", "replace-singles", "replace-pairs")


@pytest.fixture(scope="module")
def share_file(lib, demo_path, artefacts):
    project = load_any(str(demo_path), library=lib)
    fit = fit_project(project, library=lib)
    report = build_share(project, fit, lib, material="BX-7 varnish binder (invented demo)",
                         notes="Judged by eye after 24 h at 25 °C.", top=12, n_blends=5,
                         replace="NMP", n_pairs=3)
    path = artefacts / "share.html"
    path.write_text(report.html(), encoding="utf-8")
    return path, report


class _Viewer:
    """A page that records console errors and page errors (none may occur)."""

    def __init__(self, page):
        self.page = page
        self.errors: list[str] = []
        page.on("console", lambda m: self.errors.append(m.text) if m.type == "error"
                and "GL Driver" not in m.text and "GPU stall" not in m.text else None)
        page.on("pageerror", lambda exc: self.errors.append(f"page error: {exc}"))

    def __getattr__(self, name):
        return getattr(self.page, name)


def _open(browser, path, width: int, height: int = 1000):
    ctx = browser.new_context(viewport={"width": width, "height": height})
    pg = _Viewer(ctx.new_page())
    pg.set_default_timeout(30_000)
    pg.goto(path.as_uri())
    pg.wait_for_selector("#planes .main-svg")
    pg.wait_for_selector("#map3d .gl-container canvas")
    pg.wait_for_selector("#ladder .main-svg")
    return ctx, pg


def _overflow(pg) -> list[str]:
    """Tables (and the page) wider than their room, as 'id: width > room' texts."""
    return pg.evaluate("""() => {
        const out = [];
        const room = document.documentElement.clientWidth;
        if (document.documentElement.scrollWidth > room + 1)
            out.push(`page: ${document.documentElement.scrollWidth} > ${room}`);
        for (const t of document.querySelectorAll('table.report')) {
            const r = t.getBoundingClientRect();
            const box = t.parentElement.clientWidth;
            if (r.right > room + 1 || t.scrollWidth > box + 1)
                out.push(`${t.id}: right ${r.right.toFixed(0)}, width ${t.scrollWidth} > ${box}`);
        }
        return out;
    }""")


def test_share_page_tables_on_screen(browser, share_file, artefacts):
    path, report = share_file
    ctx, pg = _open(browser, path, 1200)
    try:
        for tid in TABLES:
            assert pg.locator(f"#{tid}").is_visible(), tid
        assert pg.locator("#tested-table tbody tr").count() == len(report.tested)
        assert pg.locator("#untried-table tbody tr").count() == len(report.untried) == 12
        assert pg.locator("#blends-table tbody tr").count() == len(report.blends)
        head = pg.locator("#untried-table thead").inner_text()
        for col in ("flash point", "exposure limit (8 h)", "carcinogen",
                    "reprotoxic / restricted"):
            assert col in head
        assert pg.title() == report.title
        assert _overflow(pg) == []
        pg.screenshot(path=str(artefacts / "share-screen.png"), full_page=True)
        assert pg.errors == []
    finally:
        ctx.close()


def test_share_page_prints_to_a_clean_a4_pdf(browser, share_file, artefacts):
    path, report = share_file
    ctx, pg = _open(browser, path, A4_PRINT_WIDTH_PX)
    try:
        pg.emulate_media(media="print")
        # the print styles: the WebGL map gives way to the 2D planes and a note
        assert not pg.locator("#map3d").is_visible()
        assert pg.locator("#planes").is_visible() and pg.locator("#ladder").is_visible()
        assert pg.locator(".print-only").first.is_visible()
        assert not pg.locator("#technical").is_visible()
        assert pg.evaluate("getComputedStyle(document.querySelector('thead')).display") \
            == "table-header-group"
        # at the width of the printed column no table (and nothing else) is wider
        assert _overflow(pg) == [], _overflow(pg)
        for fig in ("#planes", "#ladder"):
            right = pg.evaluate(f"document.querySelector('{fig}').getBoundingClientRect().right")
            assert right <= A4_PRINT_WIDTH_PX + 1, fig
        pg.screenshot(path=str(artefacts / "share-print.png"), full_page=True)
        pdf_path = artefacts / "share.pdf"
        pdf = pg.pdf(path=str(pdf_path), prefer_css_page_size=True, print_background=True)
        assert pdf.startswith(b"%PDF-")
        pages = len(re.findall(rb"/Type\s*/Page[^s]", pdf))
        assert pages >= 3  # summary, map, tables: several A4 pages
        # A4 pages (595 x 842 pt), as the @page rule asks
        box = re.search(rb"/MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)\s*\]", pdf)
        assert box and abs(float(box.group(1)) - 595.9) < 2 and abs(float(box.group(2)) - 842.9) < 2
        if shutil.which("pdftotext"):  # poppler: the tables' text is in the PDF, whole
            text = subprocess.run(["pdftotext", "-layout", str(pdf_path), "-"],
                                  capture_output=True, text=True, check=True).stdout
            for words in ("Tested solvents", "Untried solvents to try", "Blends",
                          "Replacements for 1-methyl-2-pyrrolidinone", "Before you use any of this",
                          "reprotoxic /"):
                assert words in text, words
            # the last column of the widest table reached the page: its cells are printed
            assert text.count("none listed") >= len(report.untried)
        assert pg.errors == []
    finally:
        ctx.close()
