"""Waiting in the browser tests for what a background job shows.

A job's answer comes after a process start and a few polls, so on a machine busy with
the other test worker (or a served load test of the slow set) it can take much longer
than a click's answer. These waits are long, and when one runs out it says what the
page shows instead, so a refusal or a wrong line is named rather than a bare timeout.
"""

from __future__ import annotations

#: Longest wait for what a background job shows [ms].
JOB_START_MS = 120_000
#: Where the page says why it did not do something (refusals, failures).
NOTICE = "#notice"


def wait_text(page, selector: str, text: str, shown: tuple[str, ...] = (),
              timeout: int = JOB_START_MS) -> None:
    """Until ``selector`` shows ``text``; on timeout, fail with what ``selector``,
    ``shown`` and the notice area show."""
    from playwright.sync_api import TimeoutError as PlaywrightTimeout
    try:
        page.wait_for_selector(f"{selector}:has-text({text!r})", timeout=timeout)
    except PlaywrightTimeout:
        seen = {sel: page.inner_text(sel) if page.locator(sel).count() else "(not in the page)"
                for sel in (selector, *shown, NOTICE)}
        raise AssertionError(f"{selector} never said {text!r}; the page shows {seen}") from None
