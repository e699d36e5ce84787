"""Core helpers behind the explorer's views: pair regions, per-cell figures, measure comparison.

Each is checked against something outside rankfold: brute-force enumeration of unit pairs,
pandas.crosstab, statsmodels' contingency tables.
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.contingency_tables import Table

import rankfold
from tables_for_tests import associated_tables, expand_table, random_tables


def brute_force_pairs_with_cell(counts: np.ndarray, i: int, j: int) -> dict[str, int]:
    """Enumerate every pair (unit in cell (i, j), any other unit) and classify it by where the
    other unit lies. Source: brute-force enumeration of the definition (Goodman & Kruskal 1954)."""
    rows, cols = expand_table(counts)
    found = dict.fromkeys(rankfold.pair_regions(counts, i, j).summary.index, 0)
    chosen = np.flatnonzero((rows == i) & (cols == j))
    for u in chosen:
        for v in range(len(rows)):
            if v == u or (v in chosen and v < u):  # pairs inside the cell once each
                continue
            dr, dc = rows[v] - i, cols[v] - j
            if dr == 0 and dc == 0:
                key = "same_cell"
            elif dr == 0:
                key = "same_row"
            elif dc == 0:
                key = "same_col"
            elif dr < 0:
                key = "above_left" if dc < 0 else "above_right"
            else:
                key = "below_right" if dc > 0 else "below_left"
            found[key] += 1
    return found


@pytest.mark.parametrize("counts", random_tables(seed=3, count=6, max_side=4, max_cell=4))
def test_pair_regions_match_enumeration(counts):
    for i, j in itertools.product(range(counts.shape[0]), range(counts.shape[1])):
        regions = rankfold.pair_regions(counts, i, j)
        expected = brute_force_pairs_with_cell(counts, i, j)  # source: brute-force enumeration
        assert regions.summary["pairs"].to_dict() == pytest.approx(expected)
        assert regions.concordant == expected["above_left"] + expected["below_right"]
        assert regions.discordant == expected["above_right"] + expected["below_left"]
        # every other unit lies in exactly one region
        assert regions.summary["units"].sum() == counts.sum()


def test_pair_regions_add_up_to_all_pairs():
    # Summed over all cells, each cell's concordant pairs count every concordant pair twice:
    # compare with the unordered pair counts found by enumerating all pairs of units.
    counts = np.array([[4, 2, 1], [1, 3, 2], [0, 1, 5]])
    rows, cols = expand_table(counts)
    conc = disc = 0
    for u, v in itertools.combinations(range(len(rows)), 2):  # source: brute-force enumeration
        s = (rows[u] - rows[v]) * (cols[u] - cols[v])
        conc += s > 0
        disc += s < 0
    cells = [rankfold.pair_regions(counts, i, j) for i in range(3) for j in range(3)]
    assert sum(r.concordant for r in cells) == 2 * conc
    assert sum(r.discordant for r in cells) == 2 * disc


def test_pair_regions_cell_map_and_bad_positions():
    regions = rankfold.pair_regions([[1, 1, 1], [1, 1, 1], [1, 1, 1]], 1, 1)
    # common practice (the definition): corners diagonal to the centre are concordant/discordant
    assert regions.cell_region[0, 0] == "above_left"
    assert regions.cell_region[2, 2] == "below_right"
    assert regions.cell_region[0, 2] == "above_right"
    assert regions.cell_region[2, 0] == "below_left"
    assert regions.cell_region[1, 0] == "same_row"
    with pytest.raises(ValueError, match="row must be a position from 0 to 2"):
        rankfold.pair_regions(np.ones((3, 3)), 3, 0)
    with pytest.raises(ValueError, match="2-D"):
        rankfold.pair_regions(np.ones(3), 0, 0)


def _frame_table(counts: np.ndarray):
    rows, cols = expand_table(counts)
    df = pd.DataFrame({"r": rows, "c": cols})
    return df, rankfold.table_from_counts(counts, row_name="r", col_name="c")


@pytest.mark.parametrize("counts", associated_tables(seed=5, count=5))
def test_cell_figures_match_pandas_and_statsmodels(counts):
    df, table = _frame_table(counts)
    figures = rankfold.cell_figures(table).set_index(["row_position", "col_position"])
    shape = counts.shape

    def grid(column: str) -> np.ndarray:
        return figures[column].to_numpy().reshape(shape)

    # source: pandas.crosstab with normalize="index" / "columns"
    by_row = pd.crosstab(df["r"], df["c"], normalize="index").to_numpy() * 100
    by_col = pd.crosstab(df["r"], df["c"], normalize="columns").to_numpy() * 100
    np.testing.assert_allclose(grid("row_percent"), by_row, rtol=1e-12)
    np.testing.assert_allclose(grid("col_percent"), by_col, rtol=1e-12)
    # source: statsmodels Table.standardized_resids (Haberman's adjusted residuals) and
    # Table.fittedvalues (expected counts under independence)
    reference = Table(counts.astype(float), shift_zeros=False)  # no 0.5 added to cells
    np.testing.assert_allclose(grid("adjusted_residual"), reference.standardized_resids,
                               rtol=1e-10)
    np.testing.assert_allclose(grid("expected"), reference.fittedvalues, rtol=1e-10)
    # source: pandas.crosstab margins
    margins = pd.crosstab(df["r"], df["c"], margins=True)
    np.testing.assert_array_equal(grid("row_total")[:, 0], margins["All"].to_numpy()[:-1])
    np.testing.assert_array_equal(grid("col_total")[0], margins.loc["All"].to_numpy()[:-1])


def test_cell_figures_pair_contribution_sums_to_p_minus_q():
    counts = np.array([[3, 1, 0], [2, 4, 1], [0, 2, 5]])
    _, table = _frame_table(counts)
    rows, cols = expand_table(counts)
    signs = [np.sign((rows[u] - rows[v]) * (cols[u] - cols[v]))
             for u, v in itertools.combinations(range(len(rows)), 2)]
    # source: brute-force enumeration; the cells sum ordered pairs, twice the unordered count
    assert rankfold.cell_figures(table)["pair_contribution"].sum() == 2 * sum(signs)


def test_cell_figures_empty_row_has_no_percentages():
    table = rankfold.table_from_counts([[2, 3], [0, 0], [1, 4]])
    figures = rankfold.cell_figures(table)
    empty = figures[figures["row_position"] == 1]
    # common practice: a share of nothing is undefined, not 0
    assert empty["row_percent"].isna().all()
    assert (empty["col_percent"] == 0).all()


def brute_force_gamma(counts: np.ndarray) -> float:
    rows, cols = expand_table(counts)
    signs = [np.sign((rows[u] - rows[v]) * (cols[u] - cols[v]))
             for u, v in itertools.combinations(range(len(rows)), 2)]
    conc, disc = sum(s > 0 for s in signs), sum(s < 0 for s in signs)
    return (conc - disc) / (conc + disc)


def test_compare_measures_change_is_difference_of_gammas():
    before = rankfold.table_from_counts([[6, 3, 1], [2, 5, 3], [1, 2, 7]])
    after = before.merge("rows", [[1, 2]])
    comparison = rankfold.compare_measures(before.measures(), after.measures())
    # source: gamma = (C - D) / (C + D) by enumerating pairs (Goodman & Kruskal 1954)
    g_before = brute_force_gamma(np.array([[6, 3, 1], [2, 5, 3], [1, 2, 7]]))
    g_after = brute_force_gamma(np.array([[8, 8, 4], [1, 2, 7]]))
    assert comparison.loc["gamma", "before_estimate"] == pytest.approx(g_before, rel=1e-12)
    assert comparison.loc["gamma", "after_estimate"] == pytest.approx(g_after, rel=1e-12)
    assert comparison.loc["gamma", "change"] == pytest.approx(g_after - g_before, rel=1e-12)
    assert list(comparison.index) == list(after.measures().index)


def test_compare_measures_rejects_unknown_keys():
    m = rankfold.table_from_counts([[3, 1], [1, 3]]).measures()
    with pytest.raises(ValueError, match="not in both results"):
        rankfold.compare_measures(m, m, ["gamma", "no_such_measure"])
    with pytest.raises(ValueError, match="columns"):
        rankfold.compare_measures(m[["estimate"]], m)
