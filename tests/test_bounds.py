"""Estimates on an end of their range: decided from the pairs, never from a floating error.

References are brute-force enumeration of the pairs of units (exact fractions) and scipy.
"""

from __future__ import annotations

import itertools
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

import rankfold
from rankfold.control_variable import gamma_homogeneity
from rankfold.measure_table import BOUND_NOTE
from rankfold.ordinal_measures import ORDINAL_MEASURES
from tables_for_tests import expand_table, random_tables

# A family of small random tables, many of them with no discordant (or no concordant) pair.
FAMILY = random_tables(seed=404, count=200, max_side=4, max_cell=4, zero_share=0.55)


def exact_by_enumeration(counts: np.ndarray) -> dict[str, Fraction] | None:
    """The pair-based measures as exact fractions by enumerating every pair of units
    (Goodman & Kruskal 1954; Somers 1962; Kendall 1945; Stuart 1953), None if undefined."""
    x, y = expand_table(counts)
    conc = disc = tied_x_only = tied_y_only = 0
    for a, b in itertools.combinations(range(len(x)), 2):
        sx, sy = np.sign(x[a] - x[b]), np.sign(y[a] - y[b])
        if sx * sy > 0:
            conc += 1
        elif sx * sy < 0:
            disc += 1
        elif sx == 0 and sy != 0:
            tied_x_only += 1
        elif sy == 0 and sx != 0:
            tied_y_only += 1
    n = len(x)
    m = min(len(set(x.tolist())), len(set(y.tolist())))
    if m < 2:
        return None
    s = conc - disc
    untied_x, untied_y = conc + disc + tied_y_only, conc + disc + tied_x_only
    return {
        "gamma": Fraction(s, conc + disc),
        "somers_d_col_given_row": Fraction(s, untied_x),
        "somers_d_row_given_col": Fraction(s, untied_y),
        "somers_d_symmetric": Fraction(2 * s, untied_x + untied_y),
        "tau_b_squared": Fraction(s * s, untied_x * untied_y),
        "tau_c": Fraction(2 * m * s, n * n * (m - 1)),
    }


@pytest.mark.parametrize("counts", FAMILY, ids=str)
def test_bound_note_exactly_where_the_measure_is_plus_or_minus_one(counts):
    exact = exact_by_enumeration(counts)
    with np.errstate(all="ignore"):
        frame = rankfold.table_from_counts(counts).measures()
    if exact is None:
        assert frame.loc[list(ORDINAL_MEASURES), "estimate"].isna().all()
        return
    x, y = expand_table(counts)
    exact["tau_b"] = exact.pop("tau_b_squared")  # |tau_b| = 1 iff tau_b^2 = 1
    # Spearman's rho with midranks is scipy's spearmanr on the records; |rho| = 1 iff the
    # midranks are an exact linear function of each other, as for tau-b (common practice).
    exact["spearman_rho"] = exact["tau_b"]
    rho = stats.spearmanr(x, y).statistic
    for key, value in exact.items():
        row = frame.loc[key]
        on_bound = abs(value) == 1
        assert (BOUND_NOTE in row["note"]) == on_bound, key
        if on_bound:
            assert abs(row["estimate"]) == 1.0 and row["std_error"] == 0.0, key
            assert np.isnan(row["ci_low"]) and np.isnan(row["ci_high"]), key
        else:
            # tau-c's first-order error can vanish inside its range (every non-empty cell
            # with the same C_ij - D_ij, e.g. [[3, 4, 0], [0, 0, 4], [0, 0, 3]], by hand);
            # the others' errors are positive off the bound.
            assert row["std_error"] > 0 or key == "tau_c", key
            assert not np.isnan(row["ci_low"]), key
    assert abs(frame.loc["spearman_rho", "estimate"] - rho) < 1e-12


def test_every_table_without_discordant_pairs_is_flagged():
    # Enumeration: of the family, each table with D = 0 (and a defined gamma) gets the note,
    # whatever floating residue its standard error would have had; none without it does.
    flagged = unflagged = 0
    for counts in FAMILY:
        exact = exact_by_enumeration(counts)
        if exact is None:
            continue
        with np.errstate(all="ignore"):
            note = rankfold.table_from_counts(counts).measures().loc["gamma", "note"]
        if abs(exact["gamma"]) == 1:
            assert BOUND_NOTE in note
            flagged += 1
        else:
            assert BOUND_NOTE not in note
            unflagged += 1
    assert flagged > 30 and unflagged > 30  # the family holds both kinds


def test_example_without_discordant_pairs():
    # [[13, 0], [4, 6]]: C = 13 * 6, D = 0 by enumeration, so gamma = 1 (Goodman & Kruskal).
    row = rankfold.table_from_counts([[13, 0], [4, 6]]).measures().loc["gamma"]
    assert row["estimate"] == 1.0 and row["std_error"] == 0.0
    assert BOUND_NOTE in row["note"] and np.isnan(row["ci_low"])
    assert "permutation test" in row["note"]


def test_weighted_bound_is_decided_from_the_pairs():
    # Sums of sampling weights leave floating residue in the error; the decision does not
    # depend on it: no discordant pair (enumeration of the cells' positions) means gamma = 1.
    counts = np.array([[1.1, 0.7, 0.0], [0.0, 0.3, 2.9], [0.0, 0.0, 0.1]])
    table = rankfold.table_from_counts(counts)
    row = table.measures().loc["gamma"]
    assert table.pairs()["discordant"] == 0
    assert row["estimate"] == 1.0 and BOUND_NOTE in row["note"]


def test_homogeneity_leaves_out_bound_levels_whatever_their_residue():
    # Cochran's (1954) heterogeneity statistic over the levels with a finite error: a level
    # with gamma = 1 is left out the same way whether its error came out as 0 or as 4e-17.
    estimates = np.array([0.42, 0.18, 1.0, -0.05])
    errors = np.array([0.11, 0.09, 0.0, 0.13])
    bound = np.array([False, False, True, False])
    exact = gamma_homogeneity(estimates, errors, bound)
    residue = gamma_homogeneity(estimates, errors + np.array([0, 0, 4e-17, 0]), bound)
    default = gamma_homogeneity(estimates, errors + np.array([0, 0, 4e-17, 0]))
    without = gamma_homogeneity(estimates[~bound], errors[~bound])
    for result in (residue, default):
        assert result["statistic"] == pytest.approx(exact["statistic"], rel=1e-12)
        assert result["p_value"] == pytest.approx(exact["p_value"], rel=1e-12)
    assert exact["statistic"] == pytest.approx(without["statistic"], rel=1e-12)
    w = 1 / errors[~bound] ** 2
    mean = (w * estimates[~bound]).sum() / w.sum()
    assert exact["weighted_mean"] == pytest.approx(mean)
    assert exact["statistic"] == pytest.approx((w * (estimates[~bound] - mean) ** 2).sum())
    assert "1 level(s) left out" in exact["note"]


def test_homogeneity_of_a_table_with_a_bound_level():
    # A level without discordant pairs (enumeration) is left out of tests()' homogeneity row.
    cells = np.array([[[13, 0], [4, 6]], [[9, 5], [4, 8]], [[7, 6], [5, 9]]])
    table = rankfold.table(
        _records(cells), "row", "col", control="level")
    row = table.tests().loc["gamma_homogeneity"]
    assert "1 level(s) left out" in row["note"]
    assert row["df"] == 1


def _records(cells: np.ndarray):
    """One record per unit of a K x I x J table of counts."""
    import pandas as pd

    rows = []
    for k, level in enumerate(cells):
        x, y = expand_table(level)
        rows.append(pd.DataFrame({"level": k, "row": x, "col": y}))
    return pd.concat(rows, ignore_index=True)
