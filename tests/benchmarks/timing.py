"""The one timing rule of the benchmarks: the best of several runs (the least disturbed)."""

from __future__ import annotations

import time
from collections.abc import Callable


def best_of(repeats: int, run: Callable[[], object]) -> float:
    """Seconds of the fastest of ``repeats`` calls of ``run``."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        run()
        times.append(time.perf_counter() - start)
    return min(times)
