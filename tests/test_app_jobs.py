"""The app's background jobs (app/jobs.py): the progress reporter passed to the
library's long computations, and the job manager's folder shared by the workers."""

from __future__ import annotations

import os

from solsphere.app import jobs, uncertainty
from solsphere.app.logic import compute_fit, demo_state
from solsphere.library.table import load_library


def test_reporter_scales_its_stage_and_always_reports_the_end(monkeypatch):
    seen = []
    r = jobs.Reporter(seen.append, "refits", start=80, stop=100)
    clock = iter([0.0, 0.01, 0.02, 1.0, 1.01])  # the first steps come faster than allowed
    monkeypatch.setattr(jobs.time, "monotonic", lambda: next(clock))
    for done in (1, 2, 3, 4):
        r(done, 10)
    r(10, 10)
    assert seen[0] == ("82", "1 of 10 refits")
    assert ("84", "2 of 10 refits") not in seen  # throttled: 0.01 s after the last one
    assert seen[-1] == ("100", "10 of 10 refits")  # the end is never dropped
    assert all(80 <= int(p) <= 100 for p, _ in seen)


def test_bootstrap_reports_its_progress_to_the_end():
    lib = load_library()
    result = compute_fit(demo_state(lib)["rows"], "good", lib)
    calls = []
    out = uncertainty.run_bootstrap(result, 40, "classic", progress=lambda d, t: calls.append((d, t)))
    assert "boot" in out and calls and calls[-1] == (40, 40)
    assert [d for d, _ in calls] == sorted(d for d, _ in calls)


def test_the_job_folder_is_made_once_and_removed_by_its_maker(tmp_path):
    m = jobs.manager(str(tmp_path / "jobs"))
    m.handle.set("probe", 1)
    assert os.path.isdir(tmp_path / "jobs") and m.handle.get("probe") == 1
    m2 = jobs.manager()  # a private temporary folder
    assert os.path.isdir(m2.handle.directory)
    assert os.path.basename(m2.handle.directory).startswith("solsphere-jobs-")
