"""Speed of rankfold.overview on 30 ordered columns and 100,000 records.

Run: ``python tests/benchmarks/bench_overview.py``. Printed next to it, measured in the same run
on the same pairs: a pandas loop of ``pd.crosstab`` (counting only, no measure) and a plain loop
of ``rankfold.table(...).measures()``. The data are invented: seeded answers to 30 rating items
of 5 to 7 categories driven by one latent trait.
"""

from __future__ import annotations

import time
from itertools import combinations

import numpy as np
import pandas as pd
from timing import best_of  # the scripts' own folder is first on the path when run

import rankfold

ROWS = 100_000
COLUMNS = 30


def invented_items(seed: int = 16) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    latent = rng.normal(size=ROWS)
    data = {}
    for k in range(COLUMNS):
        levels = 5 + k % 3
        x = rng.uniform(0.2, 0.8) * latent + rng.normal(size=ROWS)
        cuts = np.quantile(x, np.linspace(0, 1, levels + 1)[1:-1])
        data[f"item{k:02d}"] = pd.Categorical.from_codes(
            np.searchsorted(cuts, x), [f"answer {i + 1}" for i in range(levels)], ordered=True)
    return pd.DataFrame(data)


def main() -> None:
    df = invented_items()
    pairs = list(combinations(df.columns, 2))
    rankfold.overview(df)  # warm-up
    ours = best_of(5, lambda: rankfold.overview(df))

    def crosstabs():
        for a, b in pairs:
            pd.crosstab(df[a], df[b])

    def tables():
        for a, b in pairs:
            rankfold.table(df, a, b).measures()

    pandas_loop = best_of(1, crosstabs)
    table_loop = best_of(1, tables)
    print(f"{COLUMNS} ordered columns of 5-7 categories, {ROWS:,} records, {len(pairs)} pairs")
    print(f"  rankfold.overview (estimates, SEs, tests, flags)  {ours:8.3f} s")
    print(f"  pandas loop of pd.crosstab (counts only)           {pandas_loop:8.3f} s"
          f"   ratio {pandas_loop / ours:6.1f}x")
    print(f"  loop of rankfold.table(...).measures()            {table_loop:8.3f} s"
          f"   ratio {table_loop / ours:6.1f}x")
    few = df.columns[:6]
    start = time.perf_counter()
    frame = rankfold.overview(df, list(few), coding_ranges=True)
    ranges = time.perf_counter() - start
    print(f"  coding ranges of {len(frame)} pairs (one sweep each)           {ranges:8.3f} s"
          f"   ({ranges / len(frame):.3f} s per pair)")


if __name__ == "__main__":
    main()
