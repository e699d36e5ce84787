"""Speed of the collapsing sweep against an outside baseline: a plain loop of
``scipy.stats.somersd`` (one measure, no standard error of ours) over the merged tables, each
merged with ``np.add.reduceat``.

Run: ``python tests/benchmarks/bench_sweep.py``. The loop is timed on a random subset of the
codings in the same run, taking turns with the sweep (best of as many rounds), and scaled to
all of them, so the ratio compares like with like on whatever machine runs it; the 10x10
time is printed beside its goal. It also prints what the paired changes (``changes=True``)
and the two latent measures add to the sweep, and the peak memory traced by
``tracemalloc``. The tables are
invented (seeded Poisson counts with an association).
"""

from __future__ import annotations

import tracemalloc
from collections.abc import Callable

import numpy as np
from scipy import stats
from timing import best_of

import rankfold

LOOP_SUBSET = 1000
GOAL_SECONDS = 2.0


def invented_table(side: int, seed: int) -> rankfold.OrdinalTable:
    rng = np.random.default_rng(seed)
    grid = np.outer(np.linspace(-1, 1, side), np.linspace(-1, 1, side))
    mean = rng.uniform(2, 40, size=(side, side)) * np.exp(0.8 * grid)
    return rankfold.table_from_counts(rng.poisson(mean))


def starts(cuts: int, size: int) -> np.ndarray:
    """First original category of each merged category (boundary k kept when bit k is set)."""
    return np.array([0] + [k + 1 for k in range(size - 1) if cuts >> k & 1])


def somersd_loop(table: rankfold.OrdinalTable, frame, seed: int) -> tuple[Callable, int]:
    """A run of scipy.stats.somersd over the tables of a random subset of the codings, each
    merged by np.add.reduceat, and the size of the subset."""
    rng = np.random.default_rng(seed)
    picks = rng.choice(len(frame), size=min(LOOP_SUBSET, len(frame)), replace=False)
    cuts = frame[["row_cuts", "col_cuts"]].to_numpy()[picks]
    counts = table.counts.to_numpy()
    rows, cols = counts.shape

    def loop() -> None:
        for row_cuts, col_cuts in cuts:
            merged = np.add.reduceat(counts, starts(int(row_cuts), rows), axis=0)
            merged = np.add.reduceat(merged, starts(int(col_cuts), cols), axis=1)
            stats.somersd(merged)

    return loop, len(picks)


def interleaved_best(repeats: int, runs: dict[str, Callable]) -> dict[str, float]:
    """The best of ``repeats`` rounds for each run, the runs taking turns within a round so
    that a busy spell of the machine touches them alike."""
    times: dict[str, list[float]] = {name: [] for name in runs}
    for _ in range(repeats):
        for name, run in runs.items():
            times[name].append(best_of(1, run))
    return {name: min(found) for name, found in times.items()}


def peak_memory(run) -> float:
    """Peak memory traced by tracemalloc (numpy's arrays included) during ``run()``, MiB."""
    tracemalloc.start()
    run()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak / 2**20


def main() -> None:
    print(f"goal: a 10x10 sweep within {GOAL_SECONDS:g} s; times are the best of several runs")
    for side, repeats in ((7, 7), (10, 5)):
        table = invented_table(side, seed=side)
        frame = rankfold.sweep(table)
        loop, looped = somersd_loop(table, frame, seed=side)
        best = interleaved_best(repeats, {
            "sweep": lambda t=table: rankfold.sweep(t),
            "changes": lambda t=table: rankfold.sweep(t, changes=True),
            "suggest": lambda t=table: rankfold.suggest_collapsing(t),
            "loop": loop,
        })
        swept, changed, suggested = best["sweep"], best["changes"], best["suggest"]
        per_coding = best["loop"] / looped
        loop_estimate = per_coding * len(frame)
        goal = f" (goal {GOAL_SECONDS:g} s)" if side == 10 else ""
        print(
            f"{side}x{side}: {len(frame):,} codings\n"
            f"   sweep, 5 measures with errors: {swept:.3f} s{goal}, "
            f"{swept / len(frame) * 1e6:.2f} us per coding\n"
            f"   loop of scipy.stats.somersd (one measure, no error) over the merged tables: "
            f"{per_coding * 1e3:.3f} ms per coding, timed on {looped:,} "
            f"random codings and scaled to all: about {loop_estimate:.1f} s; the sweep is "
            f"{loop_estimate / swept:,.1f}x faster\n"
            f"   sweep(changes=True): {changed:.3f} s ({changed / swept:.2f}x the sweep); "
            f"suggest_collapsing: {suggested:.3f} s"
        )
        if side == 7:
            latent = best_of(repeats, lambda t=table: rankfold.sweep(
                t, measures=(*rankfold.collapsing.DEFAULT_SWEEP_MEASURES,
                             *rankfold.collapsing.LATENT_MEASURES)))
            print(f"   with polychoric and cumulative_logit: {latent:.3f} s "
                  f"({latent / swept:.1f}x the sweep)")
    print(
        f"10x10 peak traced memory: sweep {peak_memory(lambda: rankfold.sweep(table)):.0f} MiB "
        f"(the frame itself {frame.memory_usage(deep=True).sum() / 2**20:.0f} MiB), "
        f"sweep(changes=True) "
        f"{peak_memory(lambda: rankfold.sweep(table, changes=True)):.0f} MiB, "
        f"sweep_chunks {peak_memory(lambda: list(map(len, rankfold.sweep_chunks(table)))):.0f} MiB"
    )


if __name__ == "__main__":
    main()
