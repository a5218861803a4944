"""Run the solsphere command line in-process and capture what it prints (test helper)."""

from __future__ import annotations

import contextlib
import io

from solsphere import cli


def run_cli(argv) -> tuple[int, str, str]:
    """Exit code, standard output and standard error of ``solsphere *argv``."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            rc = cli.main([str(a) for a in argv])
        except SystemExit as exc:
            rc = exc.code if isinstance(exc.code, int) else 2
    return rc, out.getvalue(), err.getvalue()
