"""Speed and memory of the computation core against scipy, measured in one run.

Run: ``python tests/benchmarks/bench_core.py`` (about 15 seconds on two cores). Prints

(a) 10 million records of two ordered categoricals: ``rankfold.table(...).measures()`` (the
    full measure set with both standard errors) against ``scipy.stats.kendalltau`` computing
    tau-b alone on the same category codes (goal: rankfold at least 10x faster);
(b) a 50 x 50 table: the full measure set against ``scipy.stats.somersd`` on that table
    (goal: at least 10x faster), as the public ``measures()`` DataFrame (with notes,
    intervals, polychoric, Cramér's V and the chi-square p-value), without its polychoric
    row (the fit replaced by an undefined result for the timing), the polychoric fit alone
    and the batched array kernel ``ordinal_measure_arrays`` (the seven ordinal measures with
    both standard errors);
(c) peak memory (tracemalloc) of counting the 10-million-record table against the frame size;
(d) counting by column type and weighting: see ``bench_counting.py``;
(e) a 5 x 7 table: ``measures()`` with and without its polychoric row, the polychoric fit
    alone, ``measures()`` called again on the same table (the kept result, copied) and the
    array kernel, against ``scipy.stats.somersd`` on the same table (goal:
    ``measures()`` at most 0.3 ms);
(f) per-level measures of 8 levels of 5 x 7 (``control_measures``, batched) against a loop
    of ``scipy.stats.somersd`` over the levels and a loop of ``measures()`` over each level's
    own table.

The data are invented: codes drawn from a seeded generator with a built-in association.
Tables keep their measures after the first call; every timing of ``measures()`` here but the
one labelled "again" clears what the table kept first, so it times the computation.
Each timing is the best of a few repeats (``time.perf_counter``), to damp noise from other
processes on a shared machine.
"""

from __future__ import annotations

import tracemalloc

import numpy as np
import pandas as pd
from scipy import stats
from timing import best_of

import rankfold
from rankfold.ordinal_measures import ordinal_measure_arrays


def best_time(func, repeats: int) -> float:
    return best_of(repeats, func)


def cold(*tables):
    """Forget the results the tables keep (``measures()`` is computed once per table and
    copied out after), so that a timing measures the computation."""
    for table in tables:
        table._kept.clear()


def invented_records(size: int, seed: int = 2024) -> pd.DataFrame:
    """Two ordered categoricals (6 and 5 levels) with a moderate positive association."""
    rng = np.random.default_rng(seed)
    row_codes = rng.integers(0, 6, size=size, dtype=np.int8)
    col_codes = np.clip(row_codes * 4 // 6 + rng.integers(-1, 2, size=size, dtype=np.int8), 0, 4)
    rows = pd.Categorical.from_codes(row_codes, [f"band {k}" for k in range(1, 7)], ordered=True)
    cols = pd.Categorical.from_codes(col_codes.astype(np.int8),
                                     ["never", "rarely", "sometimes", "often", "always"],
                                     ordered=True)
    return pd.DataFrame({"band": rows, "frequency": cols})


def records_versus_kendalltau(size: int) -> None:
    frame = invented_records(size)
    x = frame["band"].cat.codes.to_numpy()
    y = frame["frequency"].cat.codes.to_numpy()

    def ours():
        return rankfold.table(frame, "band", "frequency").measures()

    ours_s = best_time(ours, repeats=3)
    theirs_s = best_time(lambda: stats.kendalltau(x, y, variant="b"), repeats=2)
    tau_ours = ours().loc["tau_b", "estimate"]
    tau_scipy = stats.kendalltau(x, y, variant="b").statistic
    print(f"(a) {size:,} records, 6 x 5 categories")
    print(f"    rankfold table + full measures : {ours_s:8.3f} s")
    print(f"    scipy.stats.kendalltau (tau-b) : {theirs_s:8.3f} s")
    print(f"    ratio scipy / rankfold         : {theirs_s / ours_s:8.1f}x  (goal >= 10x)")
    print(f"    tau-b agreement                : {abs(tau_ours - tau_scipy):.1e}")

    tracemalloc.start()
    rankfold.table(frame, "band", "frequency")
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    frame_bytes = frame.memory_usage(deep=True).sum()
    print(f"(c) peak memory while counting     : {peak / 2**20:8.1f} MiB")
    print(f"    frame size                     : {frame_bytes / 2**20:8.1f} MiB")
    print(f"    ratio peak / frame             : {peak / frame_bytes:8.1f}")


def table_versus_somersd(side: int) -> None:
    from rankfold.polychoric import polychoric_arrays

    rng = np.random.default_rng(7)
    grid = np.add.outer(np.arange(side), -np.arange(side))
    prob = np.exp(-(grid / (side / 4.0)) ** 2)
    counts = rng.multinomial(100_000, (prob / prob.sum()).ravel()).reshape(side, side)
    table = rankfold.table_from_counts(counts)
    cells = counts.astype(float)
    ours_s = best_time(lambda: (cold(table), table.measures()), repeats=30)
    without_s = without_polychoric(lambda: (cold(table), table.measures()), repeats=30)
    latent_s = best_time(lambda: polychoric_arrays(cells), repeats=30)
    kernel_s = best_time(lambda: ordinal_measure_arrays(cells), repeats=30)
    theirs_s = best_time(lambda: stats.somersd(counts), repeats=30)
    d_ours = table.measures().loc["somers_d_col_given_row", "estimate"]
    print(f"(b) {side} x {side} table, n = {counts.sum():,}")
    print(f"    scipy.stats.somersd            : {theirs_s * 1e3:8.2f} ms")
    print(f"    rankfold measures() DataFrame  : {ours_s * 1e3:8.2f} ms  "
          f"(somersd / ours {theirs_s / ours_s:5.1f}x, goal >= 10x)")
    print(f"    measures() without polychoric  : {without_s * 1e3:8.2f} ms  "
          f"(somersd / ours {theirs_s / without_s:5.1f}x)")
    print(f"    polychoric fit alone           : {latent_s * 1e3:8.2f} ms")
    print(f"    rankfold array kernel          : {kernel_s * 1e3:8.2f} ms  "
          f"(somersd / ours {theirs_s / kernel_s:5.1f}x)")
    print(f"    Somers' d agreement            : "
          f"{abs(d_ours - stats.somersd(counts).statistic):.1e}")


def without_polychoric(run, repeats: int) -> float:
    """Best time of ``run`` with the polychoric fit replaced by an undefined result, so the
    timing shows what the rest of ``measures()`` costs (the row is then NaN)."""
    from rankfold import measure_table, ordinal_table

    # measures_frames fits batches; a table fits its own once (shared with tests())
    fitting = (measure_table, ordinal_table)
    real = [module.polychoric_arrays for module in fitting]

    def undefined(counts, *_args, **_kw):
        batch = np.shape(counts)[:-2]
        return {"reason": np.full(batch, "not fitted in this timing", dtype=object),
                **{key: np.full(batch, np.nan)
                   for key in ("estimate", "std_error", "std_error_null")}}

    for module in fitting:
        module.polychoric_arrays = undefined
    try:
        return best_time(run, repeats)
    finally:
        for module, function in zip(fitting, real, strict=True):
            module.polychoric_arrays = function


def small_tables_versus_somersd() -> None:
    from rankfold.control_variable import control_measures
    from rankfold.polychoric import polychoric_arrays

    rng = np.random.default_rng(12)
    counts = rng.multinomial(800, rng.dirichlet(np.ones(35))).reshape(5, 7)
    table = rankfold.table_from_counts(counts)
    cells = counts.astype(float)
    full = best_time(lambda: (cold(table), table.measures()), 500)
    kept = best_time(table.measures, 500)
    kernel = best_time(lambda: ordinal_measure_arrays(cells), 500)
    latent = best_time(lambda: polychoric_arrays(cells), 500)
    without = without_polychoric(lambda: (cold(table), table.measures()), 500)
    theirs = best_time(lambda: stats.somersd(counts), 500)
    print("(e) 5 x 7 table, n = 800 (scipy.stats.somersd: one measure, its one error)")
    print(f"    scipy.stats.somersd            : {theirs * 1e3:8.3f} ms")
    print(f"    measures(), all rows           : {full * 1e3:8.3f} ms  "
          f"(goal <= 0.3 ms; somersd / ours {theirs / full:5.2f}x)")
    print(f"    measures() without polychoric  : {without * 1e3:8.3f} ms  "
          f"(goal <= 0.3 ms; somersd / ours {theirs / without:5.2f}x)")
    print(f"    polychoric fit alone           : {latent * 1e3:8.3f} ms")
    print(f"    measures() again, same table   : {kept * 1e3:8.3f} ms  (the kept result, copied)")
    print(f"    array kernel (7 measures)      : {kernel * 1e3:8.3f} ms  "
          f"(somersd / ours {theirs / kernel:5.2f}x)")
    levels = rng.multinomial(800, rng.dirichlet(np.ones(35)), size=8).reshape(8, 5, 7)
    frame = pd.DataFrame(
        [(k, i, j) for k, i, j in np.ndindex(*levels.shape) for _ in range(levels[k, i, j])],
        columns=["level", "x", "y"],
    )
    with_levels = rankfold.table(frame, "x", "y", control="level")
    singles = [with_levels.control_table(label) for label in with_levels.control_labels]
    ours = best_time(lambda: control_measures(with_levels), 50)
    per_level = best_time(lambda: [(cold(single), single.measures()) for single in singles], 50)
    loop = best_time(lambda: [stats.somersd(level) for level in levels], 50)
    print("(f) 8 levels of 5 x 7, n = 800 each")
    print(f"    loop of scipy.stats.somersd    : {loop * 1e3:8.3f} ms")
    print(f"    control_measures (batched)     : {ours * 1e3:8.3f} ms  "
          f"(somersd loop / ours {loop / ours:5.2f}x)")
    print(f"    loop of measures() per level   : {per_level * 1e3:8.3f} ms  "
          f"(batched is {per_level / ours:5.2f}x faster)")


if __name__ == "__main__":
    small_tables_versus_somersd()
    table_versus_somersd(50)
    records_versus_kendalltau(10_000_000)
