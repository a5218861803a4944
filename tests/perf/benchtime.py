"""Timing for the benchmarks: wall times of repeated calls (medians, never one run)."""

from __future__ import annotations

import statistics
import time


def timed(fn, repeats: int):
    """Wall times [s] of ``repeats`` calls of ``fn`` and the last result."""
    times, out = [], None
    for _ in range(repeats):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return times, out


def median_time(fn, repeats: int):
    """Median wall time [s] of ``repeats`` calls of ``fn`` and the last result."""
    times, out = timed(fn, repeats)
    return statistics.median(times), out
