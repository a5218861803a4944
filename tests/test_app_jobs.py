"""The app's background jobs (app/jobs.py): the progress reporter passed to the
library's long computations, and the job manager's folder shared by the workers."""

from __future__ import annotations

import functools
import os
import threading
import time

import psutil

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


def _write_progress_and_result(cache, key, progress_key, _args, _context):
    cache.set(progress_key, ["50", "half way"])
    cache.set(key, "done")


def test_jobs_forked_beside_polling_threads_all_answer(tmp_path):
    """Jobs forked while other threads of the server read and write the jobs' folder
    (progress polls) all write their progress and result. Before SharedCache, about one
    job in twenty forked this way waited for an SQLite lock nobody held, for good or until
    it died without an answer (the page: a progress bar without text, for ever)."""
    m = jobs.manager(str(tmp_path / "jobs"), max_jobs=1000)
    stop = threading.Event()

    def poll(i):
        n = 0
        while not stop.is_set():
            m.handle.get(f"poll{i}")
            n += 1
            if n % 10 == 0:
                m.handle.set(f"poll{i}", n)
            time.sleep(0.002)

    threads = [threading.Thread(target=poll, args=(i,), daemon=True) for i in range(4)]
    for t in threads:
        t.start()
    job = functools.partial(_write_progress_and_result, m.handle)
    pids = []
    try:
        for i in range(80):
            pids.append(m.call_job_fn(f"job{i}", job, (), {}))
            deadline = time.monotonic() + 30
            while m.handle.get(f"job{i}") is None and time.monotonic() < deadline:
                time.sleep(0.01)
            assert m.handle.get(f"job{i}") == "done", f"job {i} of 80 never answered"
            assert m.handle.get(f"job{i}-progress") == ["50", "half way"]
    finally:
        stop.set()
        for t in threads:
            t.join(timeout=5)
        for pid in pids:
            try:
                psutil.Process(pid).kill()
            except psutil.Error:
                pass


def test_the_shared_cache_opens_its_own_connection_in_a_forked_process(tmp_path):
    shared = jobs.SharedCache(str(tmp_path))
    shared.set("from parent", 1)
    parent_cache = shared.cache
    r, w = os.pipe()
    pid = os.fork()
    if pid == 0:  # the child: a new connection, and the parent's value through it
        try:
            ok = shared.get("from parent") == 1 and shared.cache is not parent_cache
            shared.set("from child", 2)
            os.write(w, b"1" if ok else b"0")
        finally:
            os._exit(0)
    os.close(w)
    assert os.read(r, 1) == b"1"
    os.waitpid(pid, 0)
    assert shared.get("from child") == 2 and shared.cache is parent_cache
    free = []  # the fork let go of the lock in the parent: another thread can take it

    def take_and_give_back():
        free.append(jobs.FORK_GUARD.lock.acquire(timeout=5))
        if free[-1]:
            jobs.FORK_GUARD.lock.release()

    t = threading.Thread(target=take_and_give_back)
    t.start()
    t.join()
    assert free == [True]
