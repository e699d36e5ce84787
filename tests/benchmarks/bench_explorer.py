"""Interaction latency of the explorer on a 1 million record frame, measured in one run.

Run: ``python tests/benchmarks/bench_explorer.py`` (about a minute on two cores). Prints

(a) counting the frame once: ``rankfold.table`` against ``pandas.crosstab`` of the same two
    columns (the reference: what a user would otherwise run);
(b) one change (merge, exclusion, undo, colour choice) through the render pass alone: the
    table rebuilt from the cached count, measures, tests, diagnostics, cell figures, the
    comparison, and the heatmap's Vega-Lite specification built and serialised with Altair's
    full schema check, exactly as the on-screen chart does (goal: under 50 ms);
(c) the same changes through the explorer widget itself, which adds updating the controls, the
    measures panel and the chart widget.

Each change is timed many times; the median and the fastest are shown, and the ratio to the
crosstab time of (a). The data are invented (``rankfold.demo.transit_survey``, seeded).
"""

from __future__ import annotations

import statistics
import time
from dataclasses import replace

import pandas as pd

import rankfold
from rankfold.widgets.render import TableCache, render
from rankfold.widgets.state import Edit, ExplorerState

ROW, COL = "trip_length", "service_rating"
RECORDS = 1_000_000
ROUNDS = 15


def timed(func) -> float:
    start = time.perf_counter()
    func()
    return time.perf_counter() - start


def summary(label: str, seconds: list[float], reference: float) -> None:
    median, best = statistics.median(seconds), min(seconds)
    print(f"  {label:<34} median {median * 1e3:7.1f} ms   fastest {best * 1e3:7.1f} ms   "
          f"median / crosstab {median / reference:6.3f}")


def main() -> None:
    frame = rankfold.demo.transit_survey(n=RECORDS, seed=2024)
    print(f"(a) counting {RECORDS:,} records once")
    crosstab = min(timed(lambda: pd.crosstab(frame[ROW], frame[COL])) for _ in range(3))
    counting = min(timed(lambda: rankfold.table(frame, ROW, COL)) for _ in range(3))
    print(f"  pandas.crosstab {crosstab * 1e3:.1f} ms, rankfold.table {counting * 1e3:.1f} ms "
          f"(ratio {counting / crosstab:.2f})")

    base = ExplorerState(row=ROW, col=COL)
    states = {
        "exclude 'no answer'": base.with_edit(Edit("exclude", COL, ("no answer",))),
        "merge two rows": base.with_edit(Edit("exclude", COL, ("no answer",))).with_edit(
            Edit("merge", ROW, (("10–20 km", "over 20 km"),))),
        "undo (back to collected)": base,
        "colour by residuals": replace(base, colour_by="adjusted_residual"),
    }
    cache = TableCache(frame)
    render(base, cache)  # the one count per variable pair, cached from here on

    def render_pass(state: ExplorerState) -> None:
        render(state, cache).chart("heatmap").to_dict(validate=True)

    print("(b) one change, render pass with the heatmap specification")
    everything = []
    for label, state in states.items():
        seconds = [timed(lambda s=state: render_pass(s)) for _ in range(ROUNDS)]
        everything += seconds
        summary(label, seconds, crosstab)
    summary("all changes", everything, crosstab)

    print("(c) one change through the explorer widget")
    explorer = rankfold.explore(frame, ROW, COL)
    actions = {
        "exclude 'no answer'": lambda: explorer.exclude("cols", ["no answer"]),
        "merge two rows": lambda: explorer.merge("rows", [["10–20 km", "over 20 km"]]),
        "undo": explorer.undo,
        "reset": explorer.reset,
    }
    widget = {label: [] for label in actions}
    for _ in range(ROUNDS):
        for label, action in actions.items():
            widget[label].append(timed(action))
    for label, seconds in widget.items():
        summary(label, seconds, crosstab)
    summary("all changes", [s for v in widget.values() for s in v], crosstab)


if __name__ == "__main__":
    main()
