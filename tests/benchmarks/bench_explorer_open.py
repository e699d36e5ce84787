"""Time from ``explore(df)`` to a ready explorer on a wide frame, against ``DataFrame.nunique``.

Run: ``python tests/benchmarks/bench_explorer_open.py`` (about a minute on two cores). The frame
has 10 million invented records (seeded generator): 10 float columns of continuous values and 5
ordered categorical columns. The explorer offers columns from their types and cheap checks
(a sample of each long column), and examines a column's values only when it is counted.

Prints the time of ``explore(df)`` (best of a few; the first call of the process, which also
bundles the chart JavaScript, is printed apart) against ``df.nunique()`` on the same frame, the
scan of every column the explorer made before (goal: explorer shown within 2 s).
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from rankfold.widgets import explore


def wide_frame(size: int, seed: int = 5) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    columns = {f"measure_{k}": rng.normal(size=size) for k in range(10)}
    for k in range(5):
        codes = rng.integers(0, 5, size=size, dtype=np.int8)
        columns[f"rating_{k}"] = pd.Categorical.from_codes(
            codes, ["very low", "low", "middle", "high", "very high"], ordered=True)
    return pd.DataFrame(columns)


def timed(func) -> tuple[float, object]:
    start = time.perf_counter()
    result = func()
    return time.perf_counter() - start, result


if __name__ == "__main__":
    frame = wide_frame(10_000_000)
    first, explorer = timed(lambda: explore(frame))
    opens = [timed(lambda: explore(frame))[0] for _ in range(3)]
    scan, _ = timed(frame.nunique)
    print(f"10,000,000 records x 10 float + 5 categorical columns "
          f"(rows x cols shown: {explorer.table.row_name} x {explorer.table.col_name})")
    print(f"    explore(df), first call of the process : {first:7.2f} s")
    print(f"    explore(df), best of 3 later calls     : {min(opens):7.2f} s  (goal <= 2 s)")
    print(f"    df.nunique() (outside baseline)        : {scan:7.2f} s")
    print(f"    ratio nunique / explore                : {scan / min(opens):7.1f}x")
