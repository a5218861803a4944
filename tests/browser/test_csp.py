"""The content-security policy holds in a real Chromium: the app (Dash, plotly's 3D map,
the clientside callbacks) renders with no console error under it, and a script the app
did not ship is refused by the browser (so the first check can fail)."""

from __future__ import annotations

import urllib.request

import pytest

pytestmark = pytest.mark.browser


def test_the_page_sends_the_policy(server):
    with urllib.request.urlopen(server) as r:
        csp = r.headers["Content-Security-Policy"]
        assert "frame-ancestors 'none'" in csp and "script-src 'self' 'sha256-" in csp
        assert "unsafe-eval" not in csp and r.headers["X-Frame-Options"] == "DENY"


def test_every_screen_renders_under_the_policy(page):
    page.click("#demo-button")
    page.wait_for_selector("#centre-text:has-text('δD')")
    page.wait_for_selector("#map3d .gl-container canvas")
    for tab in ("Try next", "Blends", "Replace a solvent", "Share", "Bench results"):
        page.click(f"text={tab}")
        page.wait_for_timeout(700)
    page.wait_for_selector("#map3d .gl-container canvas")
    assert page.errors == [], page.errors


def test_a_foreign_inline_script_is_refused(page):
    page.evaluate("""() => { const s = document.createElement('script');
                             s.textContent = 'window.__injected = 1';
                             document.body.appendChild(s); }""")
    page.wait_for_timeout(300)
    assert page.evaluate("() => window.__injected === undefined")
    assert any("Content Security Policy" in e for e in page.errors), page.errors
