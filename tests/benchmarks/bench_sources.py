"""Counting 50 million records from Parquet: DuckDB out of core against pandas in memory.

Run: ``python tests/benchmarks/bench_sources.py`` (a few minutes on two cores; about 100 MB of
temporary disk, removed at the end; ``--rows`` makes it smaller). Prints, side by side and as
ratios, the time and the peak memory of

* ``rankfold.table("file.parquet", ...)``: DuckDB counts the file with one group-by and only
  the table comes back;
* ``pandas.read_parquet`` followed by ``rankfold.table(frame, ...)``: the records are read
  into memory and counted there.

Each way runs in its own fresh Python process, so its peak resident memory is its own (the
high-water mark ``VmHWM`` of ``/proc/self/status``, which starts afresh with the process image,
unlike ``ru_maxrss``, which Linux carries over from the parent; so this script needs Linux).
The memory at start (interpreter and imports, the same modules in both) is shown too. Time is
wall-clock from after the imports until the table is built. Both counts must give the same
table, which is checked.

The data are invented: a made-up panel of household survey answers (income band 1-7 against
a 1-5 satisfaction score) with survey weights from 200 weighting classes, generated in chunks
with a seeded generator and written with pyarrow chunk by chunk, so the generator never holds
more than one chunk.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time

import numpy as np

CHUNK = 5_000_000
CALL = dict(row="income_band", col="satisfaction", weight="weight", weight_kind="sampling")


def write_invented_file(path: str, rows: int, seed: int = 50) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(seed)
    classes = np.round(rng.uniform(0.3, 3.0, 200), 4)
    schema = pa.schema([("income_band", pa.int64()), ("satisfaction", pa.int64()),
                        ("weight", pa.float64())])
    with pq.ParquetWriter(path, schema) as writer:
        for start in range(0, rows, CHUNK):
            size = min(CHUNK, rows - start)
            band = rng.integers(1, 8, size)
            score = np.clip((band + 1) // 2 + rng.integers(-1, 2, size), 1, 5)
            weight = classes[rng.integers(0, 200, size)]
            writer.write_table(pa.table({"income_band": band, "satisfaction": score,
                                         "weight": weight}, schema=schema))


def weighted_query_overhead(path: str, repeats: int = 5) -> None:
    """rankfold's weighted DuckDB count against a minimal GROUP BY with count, sum w, sum w^2,
    taking turns (best of each)."""
    import duckdb
    from timing import best_of_each

    import rankfold

    best = best_of_each(repeats, {
        "minimal": lambda: duckdb.sql(
            f"SELECT income_band, satisfaction, count(*), sum(weight), sum(weight * weight) "
            f"FROM read_parquet('{path}') GROUP BY ALL").df(),
        "ours": lambda: rankfold.table(path, **CALL),
    })
    minimal, ours = best["minimal"], best["ours"]
    print(f"weighted count: rankfold.table {ours:.2f} s, minimal DuckDB GROUP BY {minimal:.2f} s "
          f"({ours / minimal:.2f}x the minimal query; goal at most 1.3x)\n")


def peak_rss_mib() -> float:
    """This process's peak resident memory so far, in MiB."""
    with open("/proc/self/status") as status:
        line = next(x for x in status if x.startswith("VmHWM:"))
    return int(line.split()[1]) / 1024


def measure(way: str, path: str) -> None:
    """Run in a child process: count one way, print JSON with time, memory and the table."""
    import duckdb  # noqa: F401  (imported by both ways, so the memory at start is comparable)
    import pandas as pd

    import rankfold

    start_mib = peak_rss_mib()
    start = time.perf_counter()
    if way == "duckdb":
        t = rankfold.table(path, **CALL)
    else:
        t = rankfold.table(pd.read_parquet(path), **CALL)
    seconds = time.perf_counter() - start
    print(json.dumps({"seconds": seconds, "start_mib": start_mib, "peak_mib": peak_rss_mib(),
                      "cells": t.cells.tolist(), "squared": t.squared_weights.tolist(),
                      "records": t.records.tolist()}))


def run_child(way: str, path: str) -> dict:
    done = subprocess.run([sys.executable, __file__, "--measure", way, path],
                          capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=50_000_000)
    parser.add_argument("--measure", nargs=2, metavar=("WAY", "PATH"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.measure:
        measure(*args.measure)
        return
    folder = tempfile.mkdtemp(prefix="rankfold-bench-")
    try:
        path = os.path.join(folder, "invented_survey.parquet")
        start = time.perf_counter()
        write_invented_file(path, args.rows)
        size = os.path.getsize(path) / 2**20
        print(f"wrote {args.rows:,} invented records to Parquet ({size:.0f} MiB) in "
              f"{time.perf_counter() - start:.1f} s")
        pandas_way, duckdb_way = run_child("pandas", path), run_child("duckdb", path)
        weighted_query_overhead(path)
    finally:
        shutil.rmtree(folder)
    for key in ("cells", "squared", "records"):
        np.testing.assert_allclose(duckdb_way[key], pandas_way[key], rtol=1e-9)
    print("both ways give the same table (counts, squared weights, records)\n")
    print(f"{'':34}{'pandas in memory':>18}{'DuckDB from file':>18}{'pandas / DuckDB':>17}")
    for label, key in (("time to the table (s)", "seconds"), ("peak memory (MiB)", "peak_mib")):
        a, b = pandas_way[key], duckdb_way[key]
        print(f"{label:34}{a:18.2f}{b:18.2f}{a / b:16.1f}x")
    a = pandas_way["peak_mib"] - pandas_way["start_mib"]
    b = duckdb_way["peak_mib"] - duckdb_way["start_mib"]
    print(f"{'peak memory above start (MiB)':34}{a:18.0f}{b:18.0f}{a / max(b, 1):16.1f}x")
    print(f"{'memory at start (MiB)':34}{pandas_way['start_mib']:18.0f}"
          f"{duckdb_way['start_mib']:18.0f}")
    print(f"\n{os.cpu_count()} cores; DuckDB uses all of them, pandas counting uses one "
          "(pyarrow reads with several).")


if __name__ == "__main__":
    main()
