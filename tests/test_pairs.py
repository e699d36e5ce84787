"""Pair counts checked against brute-force enumeration of every pair of units."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

import rankfold
from rankfold.concordance import cell_concordance
from tables_for_tests import expand_table, random_tables

PAIR_KEYS = ("concordant", "discordant", "tied_row_only", "tied_col_only", "tied_both")


def enumerate_pairs(counts) -> dict[str, int]:
    """Classify every unordered pair of units one by one (brute force, the definition itself)."""
    rows, cols = expand_table(counts)
    out = dict.fromkeys(PAIR_KEYS, 0)
    for a, b in itertools.combinations(range(rows.size), 2):
        dr, dc = np.sign(rows[a] - rows[b]), np.sign(cols[a] - cols[b])
        if dr == 0 and dc == 0:
            out["tied_both"] += 1
        elif dr == 0:
            out["tied_row_only"] += 1
        elif dc == 0:
            out["tied_col_only"] += 1
        elif dr == dc:
            out["concordant"] += 1
        else:
            out["discordant"] += 1
    out["total"] = rows.size * (rows.size - 1) // 2
    return out


@pytest.mark.parametrize("counts", random_tables(seed=11, count=25, min_side=1), ids=str)
def test_pair_counts_equal_enumeration(counts):
    # Source: brute-force enumeration of all pairs of units (definition, Goodman & Kruskal 1954).
    got = rankfold.table_from_counts(counts).pairs()
    assert got == enumerate_pairs(counts)
    assert all(type(v) is int for v in got.values())


def test_cell_concordance_equals_enumeration_per_cell():
    # Source: brute force; C_ij counts units strictly above-left or below-right of cell (i, j).
    counts = random_tables(seed=3, count=1, max_side=6)[0]
    conc, disc = cell_concordance(counts)
    n_rows, n_cols = counts.shape
    for i, j in itertools.product(range(n_rows), range(n_cols)):
        c = sum(counts[a, b] for a in range(n_rows) for b in range(n_cols)
                if (a - i) * (b - j) > 0)
        d = sum(counts[a, b] for a in range(n_rows) for b in range(n_cols)
                if (a - i) * (b - j) < 0)
        assert (conc[i, j], disc[i, j]) == (c, d)


def test_batched_concordance_equals_one_table_at_a_time():
    # Source: each table of a stacked batch checked against the brute-force enumeration above.
    tables = random_tables(seed=8, count=6, min_side=4, max_side=4)
    conc, disc = cell_concordance(np.stack(tables))
    for k, counts in enumerate(tables):
        pairs = enumerate_pairs(counts)
        assert (counts * conc[k]).sum() == 2 * pairs["concordant"]
        assert (counts * disc[k]).sum() == 2 * pairs["discordant"]


def test_pair_counts_exact_at_huge_counts():
    # Source: closed forms of the pair counts evaluated in Python integer arithmetic (exact):
    # for a 2 x 2 table C = n11 n22, D = n12 n21, tied_both = sum C(n_ij, 2) (common practice).
    big = 10**11
    cells = [[big + 1, big + 3], [big + 7, big + 11]]
    got = rankfold.table_from_counts(cells).pairs()
    (a, b), (c, d) = cells
    n = a + b + c + d
    assert got["concordant"] == a * d
    assert got["discordant"] == b * c
    assert got["tied_both"] == sum(x * (x - 1) // 2 for x in (a, b, c, d))
    assert got["tied_row_only"] == a * b + c * d
    assert got["tied_col_only"] == a * c + b * d
    assert got["total"] == n * (n - 1) // 2
    # float64 would lose these: the difference is 4 * 10^11 + 80 exactly, beyond 2^53 totals.
    assert got["concordant"] - got["discordant"] == (a * d) - (b * c)
    assert sum(got[k] for k in PAIR_KEYS) == got["total"]


def test_pair_counts_exact_on_a_larger_table_at_huge_counts():
    # Source: Python-integer evaluation of the definition C = sum over cell pairs strictly
    # above-left (independent double loop), compared with the cumulative-sum implementation.
    rng = np.random.default_rng(5)
    cells = (rng.integers(1, 1000, size=(4, 5)) * 10**8).tolist()
    concordant = sum(
        cells[i][j] * cells[a][b]
        for i, j, a, b in itertools.product(range(4), range(5), range(4), range(5))
        if a > i and b > j
    )
    discordant = sum(
        cells[i][j] * cells[a][b]
        for i, j, a, b in itertools.product(range(4), range(5), range(4), range(5))
        if a > i and b < j
    )
    got = rankfold.table_from_counts(cells).pairs()
    assert got["concordant"] == concordant
    assert got["discordant"] == discordant
    assert concordant > 2**63  # beyond int64: only exact integers get this right


def test_weighted_counts_give_float_pairs():
    # Source: the unordered pair formulas of Agresti (2010, ch. 7) applied by hand to a
    # 2 x 2 table with non-integer totals: C = n11 n22, D = n12 n21.
    got = rankfold.table_from_counts([[1.5, 2.0], [0.5, 3.0]]).pairs()
    assert got["concordant"] == pytest.approx(4.5)
    assert got["discordant"] == pytest.approx(1.0)
    assert isinstance(got["concordant"], float)
