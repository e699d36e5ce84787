"""Kernel time of one explorer change at 1 and 10 million records, beside outside baselines.

Run: ``python tests/benchmarks/bench_explorer.py`` (about three minutes on two cores; the 10
million record frame takes about 1.5 GB while it is made). For each size it prints

(a) counting the frame once: ``rankfold.table`` beside ``pandas.crosstab`` of the same two
    columns (what a user would otherwise run; it grows with the records, a change must not);
(b) the outside baseline of one change: ``scipy.stats.somersd`` on the current table (one
    measure, no interval for the other measures, no chart), and the core's own numbers of a
    new coding (``measures``, ``tests``, ``cumulative_logit``, ``diagnostics``,
    ``cell_figures``) called directly;
(c) each change through the explorer widget itself (``rankfold.explore`` and its scripting
    methods, the Heatmap tab showing): the table rebuilt from the cached count, the numbers,
    the controls, the measures panel and the heatmap's specification handed to the page. A
    merge or an exclusion is timed as a new coding (the explorer first forgets the numbers of
    the pair's codings with a step, so they are computed); a colour choice, an undo, a reset
    and picking a variable counted (and shown with that coding) before come back to numbers
    computed before (the explorer keeps those of the last 32 codings; beyond, such a change
    costs as much as a new coding).

Each figure is the median and the fastest of many runs, with the median's ratio to somersd
and the goal of 15 ms per change. The data are invented (``rankfold.demo.transit_survey``,
seeded).
"""

from __future__ import annotations

import itertools
import statistics
import time
from collections.abc import Callable

import pandas as pd
import scipy.stats

import rankfold

ROW, COL, OTHER = "trip_length", "service_rating", "age_band"
SIZES = (1_000_000, 10_000_000)
ROUNDS = 15
GOAL = 0.015  # seconds


def timed(run: Callable[[], object]) -> float:
    start = time.perf_counter()
    run()
    return time.perf_counter() - start


def line(label: str, seconds: list[float], somersd: float, goal: bool = True) -> None:
    median, best = statistics.median(seconds), min(seconds)
    mark = ("meets" if median <= GOAL else "misses") + " 15 ms" if goal else ""
    print(f"  {label:<40} median {median * 1e3:7.2f} ms  fastest {best * 1e3:7.2f} ms  "
          f"median/somersd {median / somersd:7.1f}  {mark}")


def forget_codings(explorer: rankfold.widgets.Explorer) -> None:
    """Make the explorer forget the numbers of every coding of the pair (ROW, COL) with a step,
    so that the next merge or exclusion is a new coding (the table as collected and the other
    pair stay remembered)."""
    numbers = getattr(explorer._cache, "_numbers", None)  # absent before that memory existed
    for key in [key for key in numbers or () if key[0][:2] == (ROW, COL) and key[1]]:
        del numbers[key]


def core_numbers(table: rankfold.OrdinalTable) -> None:
    """What the explorer asks of the core for a new coding, called directly."""
    table.measures()
    table.tests()
    table.cumulative_logit()
    table.diagnostics()
    rankfold.cell_figures(table)


def one_size(records: int) -> None:
    frame = rankfold.demo.transit_survey(n=records, seed=2024)
    print(f"\n{records:,} records")
    crosstab = min(timed(lambda: pd.crosstab(frame[ROW], frame[COL])) for _ in range(3))
    counting = min(timed(lambda: rankfold.table(frame, ROW, COL)) for _ in range(3))
    print(f"(a) counting once: pandas.crosstab {crosstab * 1e3:.0f} ms, rankfold.table "
          f"{counting * 1e3:.0f} ms (ratio {counting / crosstab:.2f})")

    explorer = rankfold.explore(frame, ROW, COL)
    explorer.set_variables(row=OTHER)  # count the second pair once: picking it is a change
    explorer.set_variables(row=ROW)
    collected = explorer.table

    def coded() -> rankfold.OrdinalTable:  # a new table each time: nothing kept from before
        return collected.exclude("cols", ["no answer"]).merge("rows", [["10–20 km",
                                                                        "over 20 km"]])

    counts = coded().counts.to_numpy()
    somersd = statistics.median(
        timed(lambda: scipy.stats.somersd(counts)) for _ in range(200))
    print(f"(b) outside baseline: scipy.stats.somersd on the current table, median "
          f"{somersd * 1e3:.3f} ms")
    tables = [coded() for _ in range(ROUNDS)]
    line("the core's numbers of a new coding", [timed(lambda t=t: core_numbers(t))
                                                 for t in tables], somersd, goal=False)

    print("(c) one change through the explorer widget (Heatmap tab showing)")
    # each round's undo takes the colour back to counts, so every choice below is a change
    colours = itertools.cycle(["row_percent", "adjusted_residual", "col_percent",
                               "pair_contribution"])

    def new_coding(change: Callable[[], None]) -> Callable[[], None]:
        def run() -> None:
            forget_codings(explorer)
            start = time.perf_counter()
            change()
            return time.perf_counter() - start
        return run

    steps = [
        ("exclude 'no answer' (new coding)",
         new_coding(lambda: explorer.exclude("cols", ["no answer"]))),
        ("merge two rows (new coding)",
         new_coding(lambda: explorer.merge("rows", [["10–20 km", "over 20 km"]]))),
        ("colour choice", lambda: timed(lambda: explorer.set_view(colour_by=next(colours)))),
        ("undo", lambda: timed(explorer.undo)),
        ("pick a variable counted before", lambda: timed(
            lambda: explorer.set_variables(row=OTHER))),
        ("pick a variable counted before", lambda: timed(
            lambda: explorer.set_variables(row=ROW))),
        ("reset", lambda: timed(explorer.reset)),
    ]
    seconds: dict[str, list[float]] = {label: [] for label, _ in steps}
    for _ in range(ROUNDS):
        for label, run in steps:
            seconds[label].append(run())
    for label, values in seconds.items():
        line(label, values, somersd)
    line("every change", [s for values in seconds.values() for s in values], somersd)


def main() -> None:
    for records in SIZES:
        one_size(records)


if __name__ == "__main__":
    main()
