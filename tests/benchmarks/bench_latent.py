"""Speed of the polychoric and cumulative-logit fits over the 3,969 codings of a 7 x 7 sweep.

Run: ``python tests/benchmarks/bench_latent.py``. First the one fit the explorer makes after
every change, ``OrdinalTable.cumulative_logit()`` (slope, errors, deviance and the
likelihood-ratio test against separate slopes) on the invented demo survey's 5 x 6 table,
beside statsmodels' ``OrderedModel`` fitted to the same table's 20,000 records (the slope
alone, no test). Then the sweep: the merged tables of every pair of codings
(every way of merging adjacent categories into at least two, on both axes) are built with
prefix sums and fitted batched, one call per collapsed shape, as the sweep would. Beside them,
in the same run: the sweep of the existing measures alone, and a scipy-only loop (one
``minimize_scalar`` / ``minimize`` per table) timed on a random subset and scaled up.
The table is invented (seeded Poisson counts with an association).
"""

from __future__ import annotations

import itertools
import time

import numpy as np
from scipy import optimize, special

import rankfold
from rankfold.cumulative_logit import cumulative_logit_arrays
from rankfold.polychoric import bivariate_normal_cdf, polychoric_arrays

SIDE = 7
LOOP_SUBSET = 200


def invented_counts(side: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    grid = np.outer(np.linspace(-1, 1, side), np.linspace(-1, 1, side))
    return rng.poisson(rng.uniform(2, 40, size=(side, side)) * np.exp(0.8 * grid)).astype(float)


def codings(side: int) -> dict[int, np.ndarray]:
    """Boundaries of every merge of adjacent categories into >= 2 groups, by group count."""
    out: dict[int, list] = {}
    for mask in itertools.product([0, 1], repeat=side - 1):
        cuts = [i + 1 for i, m in enumerate(mask) if m]
        if cuts:
            out.setdefault(len(cuts) + 1, []).append([0, *cuts, side])
    return {k: np.array(v) for k, v in out.items()}


def merged_batches(counts: np.ndarray) -> list[np.ndarray]:
    prefix = np.zeros((counts.shape[0] + 1, counts.shape[1] + 1))
    prefix[1:, 1:] = counts.cumsum(0).cumsum(1)
    axis = codings(counts.shape[0])
    batches = []
    for rows in axis.values():
        for cols in axis.values():
            corners = prefix[rows[:, None, :, None], cols[None, :, None, :]]
            tables = np.diff(np.diff(corners, axis=-2), axis=-1)
            batches.append(tables.reshape(-1, *tables.shape[-2:]))
    return batches


def scipy_polychoric(n: np.ndarray) -> float:
    a = np.r_[-np.inf, special.ndtri(np.cumsum(n.sum(1))[:-1] / n.sum()), np.inf]
    b = np.r_[-np.inf, special.ndtri(np.cumsum(n.sum(0))[:-1] / n.sum()), np.inf]

    def minus(rho):
        pi = np.diff(np.diff(bivariate_normal_cdf(a[:, None], b[None, :], rho), axis=0), axis=1)
        return -(n * np.log(np.maximum(pi, 1e-300))).sum()

    return optimize.minimize_scalar(minus, bounds=(-0.999, 0.999), method="bounded").x


def scipy_cumulative_logit(n: np.ndarray) -> float:
    x = np.arange(1.0, n.shape[0] + 1)
    J = n.shape[1]

    def minus(t):
        alpha = np.cumsum(np.r_[t[0], np.exp(t[1:J - 1])])
        F = np.c_[np.zeros(len(x)), special.expit(alpha[None] - t[-1] * x[:, None]),
                  np.ones(len(x))]
        return -(n * np.log(np.maximum(np.diff(F, axis=1), 1e-300))).sum()

    return optimize.minimize(minus, np.r_[-1.0, np.zeros(J - 2), 0.0], method="BFGS").x[-1]


def explorer_fit() -> None:
    """``table.cumulative_logit()`` on the demo table vs statsmodels on its records."""
    import warnings

    import pandas as pd
    from statsmodels.miscmodels.ordinal_model import OrderedModel

    table = rankfold.table(rankfold.demo.transit_survey(n=20000, seed=1), "trip_length",
                           "service_rating")

    def ours() -> None:
        table._kept.clear()  # nothing kept from an earlier call
        table.cumulative_logit()

    ours()
    mine = min(timed(lambda: [ours() for _ in range(50)]) for _ in range(7)) / 50
    n = table.cells.sum(axis=0).astype(int)
    rows, cols = np.indices(n.shape)
    x = np.repeat(rows.ravel() + 1.0, n.ravel())
    y = pd.Series(pd.Categorical(np.repeat(cols.ravel(), n.ravel()), ordered=True))

    def reference() -> None:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            OrderedModel(y, x[:, None], distr="logit").fit(method="bfgs", disp=False)

    other = min(timed(reference) for _ in range(3))
    print(f"demo table {n.shape[0]} x {n.shape[1]}, {int(n.sum())} records")
    print(f"  table.cumulative_logit()           {mine * 1e3:7.2f} ms  (slope, errors, tests)")
    print(f"  statsmodels OrderedModel, records  {other * 1e3:7.2f} ms  "
          f"ratio {other / mine:5.1f}x (slope alone)")


def timed(run) -> float:
    start = time.perf_counter()
    run()
    return time.perf_counter() - start


def main() -> None:
    explorer_fit()
    counts = invented_counts(SIDE, seed=SIDE)
    table = rankfold.table_from_counts(counts.astype(int))
    batches = merged_batches(counts)
    total = sum(len(b) for b in batches)
    rankfold.sweep(table)  # warm-up
    base = min(timed(lambda: rankfold.sweep(table)) for _ in range(3))
    poly = min(timed(lambda: [polychoric_arrays(b) for b in batches]) for _ in range(3))
    logit = min(timed(lambda: [cumulative_logit_arrays(b) for b in batches]) for _ in range(3))
    flat = [t for b in batches for t in b]
    picks = np.random.default_rng(1).choice(len(flat), size=LOOP_SUBSET, replace=False)
    loop_poly = timed(lambda: [scipy_polychoric(flat[i]) for i in picks]) * total / LOOP_SUBSET
    loop_logit = (timed(lambda: [scipy_cumulative_logit(flat[i]) for i in picks])
                  * total / LOOP_SUBSET)
    print(f"{SIDE} x {SIDE} table, {total} codings, {len(batches)} collapsed shapes")
    print(f"  sweep, existing measures only      {base:7.3f} s")
    print(f"  polychoric, batched                {poly:7.3f} s")
    print(f"  cumulative logit, batched          {logit:7.3f} s")
    print(f"  sweep + both (sum)                 {base + poly + logit:7.3f} s")
    print(f"  polychoric, scipy loop (scaled)    {loop_poly:7.3f} s  "
          f"ratio {loop_poly / poly:5.1f}x")
    print(f"  cumulative logit, scipy loop       {loop_logit:7.3f} s  "
          f"ratio {loop_logit / logit:5.1f}x")


if __name__ == "__main__":
    main()
