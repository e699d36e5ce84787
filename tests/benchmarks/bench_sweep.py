"""Speed of the collapsing sweep against an outside baseline: a plain loop of
``scipy.stats.somersd`` (one measure, no standard error of ours) over the merged tables, each
merged with ``np.add.reduceat``.

Run: ``python tests/benchmarks/bench_sweep.py``. The loop is timed on a random subset of the
codings in the same run and scaled to all of them, so the ratio compares like with like on
whatever machine runs it. It also prints what the paired changes (``changes=True``) and the
two latent measures add to the sweep. The tables are invented (seeded Poisson counts with an
association).
"""

from __future__ import annotations

import time
import tracemalloc

import numpy as np
from scipy import stats
from timing import best_of

import rankfold

LOOP_SUBSET = 150


def invented_table(side: int, seed: int) -> rankfold.OrdinalTable:
    rng = np.random.default_rng(seed)
    grid = np.outer(np.linspace(-1, 1, side), np.linspace(-1, 1, side))
    mean = rng.uniform(2, 40, size=(side, side)) * np.exp(0.8 * grid)
    return rankfold.table_from_counts(rng.poisson(mean))


def starts(cuts: int, size: int) -> np.ndarray:
    """First original category of each merged category (boundary k kept when bit k is set)."""
    return np.array([0] + [k + 1 for k in range(size - 1) if cuts >> k & 1])


def loop_time_per_coding(table: rankfold.OrdinalTable, frame, seed: int) -> float:
    """scipy.stats.somersd on each merged table, merged by np.add.reduceat."""
    rng = np.random.default_rng(seed)
    picks = rng.choice(len(frame), size=min(LOOP_SUBSET, len(frame)), replace=False)
    cuts = frame[["row_cuts", "col_cuts"]].to_numpy()[picks]
    counts = table.counts.to_numpy()
    rows, cols = counts.shape
    start = time.perf_counter()
    for row_cuts, col_cuts in cuts:
        merged = np.add.reduceat(counts, starts(int(row_cuts), rows), axis=0)
        merged = np.add.reduceat(merged, starts(int(col_cuts), cols), axis=1)
        stats.somersd(merged)
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
            f"loop of scipy.stats.somersd over merged tables {per_coding * 1e3:.2f} ms per "
            f"coding (timed on {min(LOOP_SUBSET, len(frame))}), about {loop_estimate:.1f} s for "
            f"all: the sweep (5 measures with errors) is {loop_estimate / swept:,.1f}x faster"
        )
        if side == 7:
            changed = best_of(repeats, lambda t=table: rankfold.sweep(t, changes=True))
            latent = best_of(repeats, lambda t=table: rankfold.sweep(
                t, measures=(*rankfold.collapsing.DEFAULT_SWEEP_MEASURES,
                             *rankfold.collapsing.LATENT_MEASURES)))
            print(f"   with changes=True {changed:.3f} s ({changed / swept:.2f}x the sweep); "
                  f"with polychoric and cumulative_logit {latent:.3f} s "
                  f"({latent / swept:.1f}x the sweep)")
    print(f"10x10 sweep_chunks peak traced memory: {peak_streaming_memory(table):.0f} MiB")


if __name__ == "__main__":
    main()
