"""The worked formulas ("How it is computed") against pairs of units enumerated one by one.

Every pair count and the effect of a coding step are checked by visiting each pair of units of
the expanded table (Goodman & Kruskal 1954: a pair is concordant when one unit is higher on
both variables, discordant when higher on one and lower on the other, tied when it shares a
category); the measures are checked against scipy.stats on the same records.
"""

from __future__ import annotations

import itertools
import math
import re
from collections import Counter

import numpy as np
import pytest
from scipy import stats

import rankfold
from rankfold.widgets.computation_view import computation_html, number
from rankfold.worked_formulas import (
    replay_steps,
    step_change,
    table_before_last_step,
    worked_numbers,
)
from tables_for_tests import expand_table

# Ties on both variables: several units per cell, per row and per column.
TIED = np.array([[5, 3, 0, 2], [1, 4, 6, 2], [2, 2, 3, 7]])
ROWS, COLS = ["low", "mid", "high"], ["a", "b", "c", "d"]


def kind(a: tuple[int, int], b: tuple[int, int]) -> str:
    """The kind of the pair of units at table positions a and b (Goodman & Kruskal 1954)."""
    dr, dc = np.sign(b[0] - a[0]), np.sign(b[1] - a[1])
    if dr == 0 and dc == 0:
        return "tied_both"
    if dr == 0:
        return "tied_row_only"
    if dc == 0:
        return "tied_col_only"
    return "concordant" if dr == dc else "discordant"


def enumerate_pairs(counts: np.ndarray) -> Counter:
    """Each pair of distinct units visited once, by brute force."""
    rows, cols = expand_table(counts)
    units = list(zip(rows.tolist(), cols.tolist(), strict=True))
    found = Counter(kind(a, b) for a, b in itertools.combinations(units, 2))
    found["total"] = math.comb(len(units), 2)
    return found


def tied_table() -> rankfold.OrdinalTable:
    return rankfold.table_from_counts(TIED, row_labels=ROWS, col_labels=COLS,
                                      row_name="size", col_name="grade")


@pytest.mark.parametrize("merged", [False, True], ids=["ties-on-both", "merged"])
def test_pair_counts_and_measures_equal_enumeration_and_scipy(merged):
    table = tied_table()
    if merged:
        table = table.merge("rows", [["low", "mid"]]).merge("cols", [["c", "d"]])
    counts = table.counts.to_numpy()
    worked = worked_numbers(table)
    brute = enumerate_pairs(counts)
    for key in ("concordant", "discordant", "tied_row_only", "tied_col_only", "tied_both",
                "total"):
        assert worked["pairs"][key] == brute[key] == table.pairs()[key], key
    C, D = brute["concordant"], brute["discordant"]
    # gamma from the enumerated pairs (Goodman & Kruskal 1954), independent of scipy
    gamma = (C - D) / (C + D)
    assert worked["measures"]["gamma"]["value"] == pytest.approx(gamma, rel=1e-12)
    measures = table.measures()
    for key, value in worked["measures"].items():
        assert value["value"] == pytest.approx(measures.loc[key, "estimate"], rel=1e-12), key
    x, y = expand_table(counts)
    # scipy.stats: Kendall's tau-b and Stuart's tau-c, Somers' d(y | x)
    assert worked["measures"]["tau_b"]["value"] == pytest.approx(stats.kendalltau(x, y)[0])
    assert worked["measures"]["tau_c"]["value"] == pytest.approx(
        stats.kendalltau(x, y, variant="c")[0])
    assert worked["measures"]["somers_d_col_given_row"]["value"] == pytest.approx(
        stats.somersd(x, y).statistic)
    assert worked["measures"]["somers_d_row_given_col"]["value"] == pytest.approx(
        stats.somersd(y, x).statistic)
    # the view writes gamma's formula with the enumerated counts filled in
    page = computation_html(table, measures)
    filled = f"({C:,} − {D:,}) / ({C:,} + {D:,}) = "
    assert filled in page
    shown = re.search(r'data-measure="gamma">.*?rankfold-worked-value">([^<]+)<', page).group(1)
    assert shown == f"{gamma:.4f}"
    for key in ("tied_row_only", "tied_col_only", "tied_both"):
        assert f'data-pairs="{key}"><th scope="row">' in page
        assert f'rankfold-pair-count">{number(brute[key])}<' in page


def transitions(counts: np.ndarray, row_map, col_map) -> Counter:
    """(kind before, kind after) of every pair of units when row and column positions are
    mapped to new ones (a merge or an exclusion, None = left out), by enumeration."""
    rows, cols = expand_table(counts)
    units = list(zip(rows.tolist(), cols.tolist(), strict=True))
    moved = Counter()
    for a, b in itertools.combinations(units, 2):
        new_a, new_b = (row_map[a[0]], col_map[a[1]]), (row_map[b[0]], col_map[b[1]])
        after = None if None in (*new_a, *new_b) else kind(new_a, new_b)
        moved[kind(a, b), after] += 1
    return moved


def test_merge_change_equals_enumerated_transitions():
    before = tied_table()
    after = before.merge("rows", [["mid", "high"]])
    change = step_change(before, after)
    moved = transitions(TIED, {0: 0, 1: 1, 2: 1}, {j: j for j in range(4)})
    into_row_ties = moved["concordant", "tied_row_only"], moved["discordant", "tied_row_only"]
    assert -change["change"]["concordant"] == into_row_ties[0] > 0
    assert -change["change"]["discordant"] == into_row_ties[1] > 0
    assert -change["change"]["tied_col_only"] == moved["tied_col_only", "tied_both"] > 0
    # a merge of neighbours moves pairs only into ties (common practice; Agresti 2010, 7.1)
    assert {(b, a) for (b, a), k in moved.items() if k and b != a} == {
        ("concordant", "tied_row_only"), ("discordant", "tied_row_only"),
        ("tied_col_only", "tied_both")}
    assert change["sentence"].startswith(
        f"This merge turned {into_row_ties[0]:,} concordant and {into_row_ties[1]:,} "
        "discordant pairs into ties on size")


def test_exclusion_change_equals_enumerated_removed_pairs():
    before = tied_table()
    after = before.exclude("cols", ["b"])
    change = step_change(before, after)
    moved = transitions(TIED, {i: i for i in range(3)}, {0: 0, 1: None, 2: 1, 3: 2})
    for key in ("concordant", "discordant", "tied_row_only", "tied_col_only", "tied_both"):
        assert -change["change"][key] == moved[key, None], key
    assert f"removed {TIED[:, 1].sum()} units" in change["sentence"]


def test_table_before_last_step_is_rebuilt_from_the_collected_table():
    collected = tied_table()
    current = (collected.exclude("cols", ["a"]).merge("rows", [["low", "mid"]],
                                                      labels=["not high"])
               .reorder("cols", ["d", "c", "b"]))
    before = table_before_last_step(collected, current)
    direct = collected.exclude("cols", ["a"]).merge("rows", [["low", "mid"]],
                                                    labels=["not high"])
    assert before.row_labels == direct.row_labels and before.col_labels == direct.col_labels
    np.testing.assert_array_equal(before.cells, direct.cells)
    assert before.steps == direct.steps
    assert table_before_last_step(collected, collected) is None
    assert replay_steps(collected, current.steps).col_labels == ("d", "c", "b")
    with pytest.raises(ValueError, match="not made from"):
        table_before_last_step(tied_table().exclude("rows", ["low"]), current)
    change = step_change(before, current)
    assert change["kind"] == "reorder"
    # reversing a column order swaps concordant and discordant pairs (enumeration)
    moved = transitions(direct.counts.to_numpy(), {0: 0, 1: 1}, {0: 2, 1: 1, 2: 0})
    assert change["change"]["concordant"] == (moved["discordant", "concordant"]
                                              - moved["concordant", "discordant"])


def test_weighted_table_formulas_equal_measures():
    # frequency weights: the same as repeating rows (rankfold's documented rule)
    df = rankfold.demo.transit_survey()
    table = rankfold.table(df, "trip_length", "service_rating", weight="survey_weight",
                           exclude={"service_rating": ["no answer"]})
    worked = worked_numbers(table)
    measures = table.measures()
    for key, value in worked["measures"].items():
        assert value["value"] == pytest.approx(measures.loc[key, "estimate"], rel=1e-9), key
    assert "sum of products of two weights" in computation_html(table, measures)
