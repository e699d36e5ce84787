"""Counting 10 million records by column type and weighting, against np.bincount and pandas.

Run: ``python tests/benchmarks/bench_counting.py`` (two to four minutes on two cores;
``--rows`` makes it smaller, ``--only int8`` picks column types). For each column type
(ordered categorical, int8, int16, int64, boolean, text with ``order=`` as a NumPy object
column and as pandas' text type ``str``, backed by pyarrow where it is installed) and each
weighting (none, frequency weights, sampling weights) it prints

* ``ours``: ``rankfold.table(frame, "x", "y", ...)``, the whole call (checks, coding,
  counting, the bookkeeping of dropped records and the table object);
* ``bincount``: the least NumPy work that gives the same sums from ready codes: ``np.bincount``
  on ready int64 cell codes (``row * J + col``, made before timing, not timed) of the same rows.
  Without weights that is one bincount (records per cell); with frequency weights one weighted
  bincount (the weight sum per cell); with sampling weights the three sums rankfold keeps per
  cell, records, sum of w and sum of w², as three bincounts, w² computed from the weight column
  inside the timing (it is part of the work). The checks rankfold makes on the weights (no
  missing, infinite or negative value) are not in the baseline;
* ``ratio``: ours / bincount (goal: at most 2);
* ``pandas``: what a user would otherwise run on the same frame: ``groupby([x, y]).size()``
  (no weights) or the same group-by summing the weight column (frequency) or giving
  records, sum of w and sum of w² (sampling), ``observed=True``; for text columns without
  weights also ``DataFrame.value_counts`` and ``pd.crosstab``;
* ``peak``: the peak memory of ``rankfold.table`` (tracemalloc, which sees NumPy's and pandas'
  allocations, plus the peak of pyarrow's memory pool, read through a proxy pool) against the
  memory of the two columns plus the weight column (goal: at most 2). An object column's
  memory is its array of references plus each distinct string once (``memory_usage(deep=True)``
  would count a shared string at every row).

Each time is the best of several runs, ours and the bincount baseline taking turns
(``timing.best_of_each``) in the same process, to damp noise from other processes on a shared
machine; the slower pandas references are the best of two.
The data are invented: codes drawn from a seeded generator with a built-in association (6 row
and 5 column categories), plus integer weights 1..5 (frequency) and gamma-distributed ones
(sampling).
"""

from __future__ import annotations

import argparse
import sys
import tracemalloc

import numpy as np
import pandas as pd
from timing import best_of, best_of_each

import rankfold

BANDS = [f"band {k}" for k in range(1, 7)]
WORDS = ["never", "rarely", "sometimes", "often", "always"]


def invented_codes(size: int, seed: int = 11) -> tuple[np.ndarray, np.ndarray]:
    """Row codes 0..5 and column codes 0..4 with a moderate positive association."""
    rng = np.random.default_rng(seed)
    row = rng.integers(0, 6, size=size, dtype=np.int8)
    col = np.clip(row * 4 // 6 + rng.integers(-1, 2, size=size, dtype=np.int8), 0, 4)
    return row, col.astype(np.int8)


def typed_columns(row: np.ndarray, col: np.ndarray) -> dict[str, tuple[pd.Series, pd.Series, dict]]:
    """The same codes stored as each column type, with the options each type needs."""
    bands, words = np.array(BANDS, dtype=object), np.array(WORDS, dtype=object)
    order = {"order": {"x": BANDS, "y": WORDS}}
    return {
        "categorical": (pd.Series(pd.Categorical.from_codes(row, BANDS, ordered=True)),
                        pd.Series(pd.Categorical.from_codes(col, WORDS, ordered=True)), {}),
        "int8": (pd.Series(row), pd.Series(col), {}),
        "int16": (pd.Series(row.astype(np.int16) + 1000), pd.Series(col.astype(np.int16)), {}),
        "int64": (pd.Series(row.astype(np.int64) + 1960), pd.Series(col.astype(np.int64)), {}),
        "boolean": (pd.Series(row >= 3), pd.Series(col >= 2), {}),
        "text object": (pd.Series(bands[row], dtype=object), pd.Series(words[col], dtype=object),
                        order),
        "text str": (pd.Series(bands[row], dtype="str"), pd.Series(words[col], dtype="str"),
                     order),
    }


def ready_codes(kind: str, row: np.ndarray, col: np.ndarray) -> tuple[np.ndarray, int]:
    """int64 cell codes ``row * J + col`` of the same records, and the number of cells."""
    if kind == "boolean":
        row, col = (row >= 3).astype(np.int8), (col >= 2).astype(np.int8)
        return row.astype(np.int64) * 2 + col, 4
    return row.astype(np.int64) * 5 + col, 30


def column_bytes(series: pd.Series) -> int:
    """Memory of a column: its array, plus each distinct object once for object columns."""
    if series.dtype == object:
        values = series.to_numpy()
        distinct = {id(v): sys.getsizeof(v) for v in pd.unique(values)}
        return values.nbytes + sum(distinct.values())
    return int(series.memory_usage(deep=True, index=False))


def baseline(codes: np.ndarray, cells: int, weighting: str, w: np.ndarray | None):
    """The bincounts on ready codes that give the same sums as rankfold keeps per cell."""
    if weighting == "none":
        return lambda: np.bincount(codes, minlength=cells)
    if weighting == "frequency":
        return lambda: np.bincount(codes, w, minlength=cells)
    return lambda: (np.bincount(codes, minlength=cells), np.bincount(codes, w, minlength=cells),
                    np.bincount(codes, w * w, minlength=cells))


def pandas_way(frame: pd.DataFrame, weighting: str):
    """The group-by a pandas user would run for the same sums."""
    if weighting == "none":
        return lambda: frame.groupby(["x", "y"], observed=True).size()
    if weighting == "frequency":
        return lambda: frame.groupby(["x", "y"], observed=True)["w"].sum()
    return lambda: (frame.assign(w2=frame["w"] ** 2).groupby(["x", "y"], observed=True)
                    .agg(records=("w", "size"), total=("w", "sum"), squares=("w2", "sum")))


def peak_bytes(run) -> int:
    """Peak bytes allocated while ``run`` runs: NumPy's and pandas' (tracemalloc) plus pyarrow's
    own memory pool (its peak, through a proxy pool set as the default for the run)."""
    try:
        import pyarrow as pa
    except ImportError:
        pa = None
    if pa is not None:
        default = pa.default_memory_pool()
        proxy = pa.proxy_memory_pool(default)
        pa.set_memory_pool(proxy)
    tracemalloc.start()
    try:
        run()
        return tracemalloc.get_traced_memory()[1] + (proxy.max_memory() if pa else 0)
    finally:
        tracemalloc.stop()
        if pa is not None:
            pa.set_memory_pool(default)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=10_000_000)
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--only", nargs="*", help="column types to run (default: all)")
    args = parser.parse_args()
    row, col = invented_codes(args.rows)
    rng = np.random.default_rng(3)
    weights = {"none": None,
               "frequency": rng.integers(1, 6, size=args.rows).astype(float),
               "sampling": rng.gamma(4.0, 0.5, size=args.rows)}
    print(f"counting {args.rows:,} records; times in ms, best of {args.repeats}; "
          "ratios to baselines measured just before, in this process")
    print(f"{'columns':12s} {'weights':9s} {'ours':>8s} {'bincount':>8s} {'ratio':>6s} "
          f"{'pandas':>8s} {'p/ours':>6s} {'peak MiB':>8s} {'cols MiB':>8s} {'ratio':>6s}")
    for kind, (x, y, options) in typed_columns(row, col).items():
        if args.only and kind not in args.only:
            continue
        frame = pd.DataFrame({"x": x, "y": y})
        codes, cells = ready_codes(kind, row, col)
        two_columns = column_bytes(x) + column_bytes(y)
        for weighting, w in weights.items():
            data = frame if w is None else frame.assign(w=w)
            extra = {} if w is None else {"weight": "w", "weight_kind": weighting}
            ours_call = lambda d=data, o=options, e=extra: rankfold.table(d, "x", "y", **o, **e)  # noqa: E731
            expected = baseline(codes, cells, weighting, w)()
            got = ours_call()
            first = expected[1] if weighting == "sampling" else expected
            np.testing.assert_allclose(got.cells.ravel(), first, rtol=1e-9)  # the same table
            best = best_of_each(args.repeats, {"base": baseline(codes, cells, weighting, w),
                                               "ours": ours_call})
            base, ours = best["base"], best["ours"]
            theirs = best_of(2, pandas_way(data, weighting))
            memory = two_columns + (0 if w is None else w.nbytes)
            peak = peak_bytes(ours_call)
            print(f"{kind:12s} {weighting:9s} {ours * 1e3:8.1f} {base * 1e3:8.1f} "
                  f"{ours / base:5.2f}x {theirs * 1e3:8.1f} {theirs / ours:5.1f}x "
                  f"{peak / 2**20:8.1f} {memory / 2**20:8.1f} {peak / memory:5.2f}x", flush=True)
        if kind.startswith("text"):
            value_counts = best_of(2, lambda f=frame: f.value_counts())
            crosstab = best_of(2, lambda a=x, b=y: pd.crosstab(a, b))
            print(f"{'':12s} {'none':9s} pandas DataFrame.value_counts {value_counts * 1e3:.1f} ms,"
                  f" pd.crosstab {crosstab * 1e3:.1f} ms", flush=True)


if __name__ == "__main__":
    main()
