"""Timing helper shared by the benchmark scripts (they print ratios; nothing is asserted)."""
from __future__ import annotations

import time


def best_of(fn, repeats: int):
    """Shortest wall time of ``repeats`` calls of ``fn`` [s], and the last result."""
    times = []
    out = None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out
