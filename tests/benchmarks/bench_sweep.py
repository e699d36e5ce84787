"""Speed of the collapsing sweep against a plain loop over ``apply_coding(...).measures()``.

Run: ``python tests/benchmarks/bench_sweep.py``. The loop is timed on a random subset of the
codings in the same run and scaled to all of them, so the ratio compares like with like on
whatever machine runs it. The tables are invented (seeded Poisson counts with an association).
"""

from __future__ import annotations

import time
import tracemalloc

import numpy as np

import rankfold

LOOP_SUBSET = 150


def invented_table(side: int, seed: int) -> rankfold.OrdinalTable:
    rng = np.random.default_rng(seed)
    grid = np.outer(np.linspace(-1, 1, side), np.linspace(-1, 1, side))
    mean = rng.uniform(2, 40, size=(side, side)) * np.exp(0.8 * grid)
    return rankfold.table_from_counts(rng.poisson(mean))


def best_of(repeats: int, run) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        run()
        times.append(time.perf_counter() - start)
    return min(times)


def loop_time_per_coding(table: rankfold.OrdinalTable, frame, seed: int) -> float:
    rng = np.random.default_rng(seed)
    picks = rng.choice(len(frame), size=min(LOOP_SUBSET, len(frame)), replace=False)
    cuts = frame[["row_cuts", "col_cuts"]].to_numpy()[picks]
    start = time.perf_counter()
    for row_cuts, col_cuts in cuts:
        rankfold.apply_coding(table, int(row_cuts), int(col_cuts)).measures()
    return (time.perf_counter() - start) / len(picks)


def peak_streaming_memory(table: rankfold.OrdinalTable) -> float:
    tracemalloc.start()
    for _ in rankfold.sweep_chunks(table):
        pass
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak / 2**20


def main() -> None:
    for side, repeats in ((7, 5), (10, 1)):
        table = invented_table(side, seed=side)
        frame = rankfold.sweep(table)
        swept = best_of(repeats, lambda t=table: rankfold.sweep(t))
        suggested = best_of(repeats, lambda t=table: rankfold.suggest_collapsing(t))
        per_coding = loop_time_per_coding(table, frame, seed=side)
        loop_estimate = per_coding * len(frame)
        print(
            f"{side}x{side}: {len(frame):,} codings; sweep {swept:.3f} s "
            f"({swept / len(frame) * 1e6:.1f} us per coding); "
            f"suggest_collapsing {suggested:.3f} s; "
            f"loop over apply_coding().measures() {per_coding * 1e3:.2f} ms per coding "
            f"(timed on {min(LOOP_SUBSET, len(frame))}), about {loop_estimate:.0f} s for all: "
            f"sweep is {loop_estimate / swept:,.0f}x faster"
        )
    print(f"10x10 sweep_chunks peak traced memory: {peak_streaming_memory(table):.0f} MiB")


if __name__ == "__main__":
    main()
