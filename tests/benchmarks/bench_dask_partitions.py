"""One large Parquet file on a Dask cluster: one partition for the file, or one per row group.

Run: ``python tests/benchmarks/bench_dask_partitions.py`` (``--rows`` to change the size).
Writes an invented file (income band 1-7 against a 1-5 score, survey weights) with row groups
of 1 million records, then counts it with ``rankfold.table`` on a two-worker ``LocalCluster``
read two ways, and with pandas in this process as the outside baseline:

* ``dd.read_parquet(path)``: Dask's default partitioning of the file;
* ``dd.read_parquet(path, split_row_groups=True)``: one partition per row group, so both
  workers count at once.
"""

from __future__ import annotations

import argparse
import os
import shutil
import tempfile

import numpy as np
from timing import best_of

ROW_GROUP = 1_000_000


def write_file(path: str, rows: int, seed: int = 3) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(seed)
    band = rng.integers(1, 8, rows)
    score = np.clip((band + 1) // 2 + rng.integers(-1, 2, rows), 1, 5)
    weight = np.round(rng.uniform(0.3, 3.0, rows), 4)
    pq.write_table(pa.table({"income_band": band, "satisfaction": score, "weight": weight}),
                   path, row_group_size=ROW_GROUP)


def main() -> None:
    import dask.dataframe as dd
    import pandas as pd
    from distributed import Client, LocalCluster

    import rankfold

    parser = argparse.ArgumentParser()
    parser.add_argument("--rows", type=int, default=20_000_000)
    args = parser.parse_args()
    folder = tempfile.mkdtemp(prefix="rankfold-dask-")
    call = dict(row="income_band", col="satisfaction", weight="weight", weight_kind="sampling")
    try:
        path = os.path.join(folder, "one_file.parquet")
        write_file(path, args.rows)
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                               dashboard_address=None)
        with Client(cluster):
            default = dd.read_parquet(path)
            split = dd.read_parquet(path, split_row_groups=True)
            t_default = best_of(3, lambda: rankfold.table(default, **call))
            t_split = best_of(3, lambda: rankfold.table(split, **call))
        cluster.close()
        t_pandas = best_of(3, lambda: rankfold.table(pd.read_parquet(path), **call))
    finally:
        shutil.rmtree(folder)
    print(f"{args.rows:,} records in one Parquet file, row groups of {ROW_GROUP:,}")
    print(f"  Dask, default partitions ({default.npartitions}): {t_default:.2f} s")
    print(f"  Dask, one partition per row group ({split.npartitions}): {t_split:.2f} s "
          f"({t_default / t_split:.1f}x faster than the default)")
    print(f"  pandas read + count in one process: {t_pandas:.2f} s "
          f"(split Dask is {t_pandas / t_split:.1f}x that)")


if __name__ == "__main__":
    main()
