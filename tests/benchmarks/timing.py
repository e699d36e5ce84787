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


def best_of_each(repeats: int, runs: dict[str, Callable[[], object]]) -> dict[str, float]:
    """Seconds of the fastest call of each run, the runs taking turns (one call of each per
    round), so that a slow spell on a shared machine falls on all of them alike."""
    times: dict[str, list[float]] = {name: [] for name in runs}
    for _ in range(repeats):
        for name, run in runs.items():
            times[name].append(best_of(1, run))
    return {name: min(seconds) for name, seconds in times.items()}
