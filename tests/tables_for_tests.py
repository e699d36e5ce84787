"""Seeded random tables and expansion of a table into records, shared by the core tests.

The reference libraries (scipy.stats, statsmodels) and brute-force checks work on one record
per unit, so a table of counts is expanded into two integer code arrays here.
"""

from __future__ import annotations

import numpy as np


def expand_table(counts) -> tuple[np.ndarray, np.ndarray]:
    """One (row position, column position) record per unit of an integer table."""
    counts = np.asarray(counts, dtype=np.int64)
    n_rows, n_cols = counts.shape
    rows = np.repeat(np.repeat(np.arange(n_rows), n_cols), counts.ravel())
    cols = np.repeat(np.tile(np.arange(n_cols), n_rows), counts.ravel())
    return rows, cols


def random_tables(seed: int, count: int, *, max_side: int = 5, max_cell: int = 6,
                  min_side: int = 2, zero_share: float = 0.25) -> list[np.ndarray]:
    """Small random integer tables of varied shape, some cells forced to zero."""
    rng = np.random.default_rng(seed)
    tables = []
    for _ in range(count):
        shape = rng.integers(min_side, max_side + 1, size=2)
        cells = rng.integers(0, max_cell + 1, size=shape)
        cells[rng.random(shape) < zero_share] = 0
        tables.append(cells)
    return tables


def associated_tables(seed: int, count: int) -> list[np.ndarray]:
    """Random tables with every row and column in use and a varied (often clear) association.

    Each table is a multinomial draw from a probability table tilted along its diagonal, so the
    reference statistics are far from their degenerate cases.
    """
    rng = np.random.default_rng(seed)
    tables = []
    while len(tables) < count:
        n_rows, n_cols = rng.integers(2, 7, size=2)
        tilt = rng.uniform(-1.5, 1.5)
        grid = np.outer(np.linspace(-1, 1, n_rows), np.linspace(-1, 1, n_cols))
        prob = rng.uniform(0.5, 1.5, size=(n_rows, n_cols)) * np.exp(tilt * grid)
        cells = rng.multinomial(int(rng.integers(30, 300)), (prob / prob.sum()).ravel())
        cells = cells.reshape(n_rows, n_cols)
        if (cells.sum(axis=0) > 0).all() and (cells.sum(axis=1) > 0).all():
            tables.append(cells)
    return tables


def brute_force_pairs(counts) -> tuple[int, int]:
    """Concordant and discordant pairs of units, visiting every pair of cells.

    Goodman & Kruskal (1954): a pair is concordant when one unit is higher on both variables,
    discordant when it is higher on one and lower on the other.
    """
    counts = np.asarray(counts)
    concordant = discordant = 0
    n_rows, n_cols = counts.shape
    for i in range(n_rows):
        for j in range(n_cols):
            for k in range(i + 1, n_rows):
                for m in range(n_cols):
                    if m > j:
                        concordant += int(counts[i, j] * counts[k, m])
                    elif m < j:
                        discordant += int(counts[i, j] * counts[k, m])
    return concordant, discordant
