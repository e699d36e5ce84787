"""2 x 2 tables: identities of the trade and comparisons with statsmodels."""

from __future__ import annotations

import numpy as np
import pytest
from statsmodels.stats.contingency_tables import Table2x2
from statsmodels.stats.proportion import confint_proportions_2indep, proportions_ztest

import rankfold
from tables_for_tests import random_tables

FULL = [t for t in random_tables(seed=31, count=80, min_side=2, max_side=2, max_cell=40,
                                 zero_share=0.0) if (t > 0).all()][:10]
WITH_ZERO = [np.array([[0, 9], [5, 7]]), np.array([[13, 0], [4, 6]]), np.array([[8, 3], [0, 11]])]


def frame_of(counts):
    return rankfold.table_from_counts(counts).measures()


@pytest.mark.parametrize("counts", FULL, ids=str)
def test_gamma_is_yules_q_and_d_is_the_difference_of_proportions(counts):
    (a, b), (c, d) = counts
    frame = frame_of(counts)
    # Common practice (Yule 1900; Goodman & Kruskal 1954): for a 2 x 2 table gamma is Yule's
    # Q = (ad - bc)/(ad + bc) = (OR - 1)/(OR + 1).
    q = (a * d - b * c) / (a * d + b * c)
    assert frame.loc["gamma", "estimate"] == pytest.approx(q)
    assert frame.loc["yules_q", "estimate"] == pytest.approx(q)
    # Both are delta-method errors of the same function of the cells, so they must agree.
    assert frame.loc["gamma", "std_error"] == pytest.approx(frame.loc["yules_q", "std_error"])
    # Common practice: Somers' d (column given row) is p1 - p2, the difference of the row
    # proportions in the first column category.
    diff = a / (a + b) - c / (c + d)
    assert frame.loc["somers_d_col_given_row", "estimate"] == pytest.approx(diff)
    assert frame.loc["risk_difference", "estimate"] == pytest.approx(diff)
    # Yule's Y = (sqrt(OR) - 1)/(sqrt(OR) + 1) (Yule 1912).
    root = np.sqrt(a * d / (b * c))
    assert frame.loc["yules_y", "estimate"] == pytest.approx((root - 1) / (root + 1))


def assert_ratio_row(row, estimate, log_se, interval):
    """One ratio measure row against reference values: estimate, log-scale SE, 95% interval."""
    expected = [estimate, log_se, *interval]
    assert row[["estimate", "std_error", "ci_low", "ci_high"]].tolist() == pytest.approx(expected)


@pytest.mark.parametrize("counts", FULL + WITH_ZERO, ids=str)
def test_odds_ratio_and_relative_risk_match_statsmodels(counts):
    frame = frame_of(counts)
    # Source: statsmodels Table2x2. Its shift_zeros=True replaces only the zero cells by 0.5
    # (its code, despite its docstring), so Haldane's rule (0.5 added to every cell when one
    # is zero) is applied here before handing the table over.
    haldane = counts + 0.5 if (counts == 0).any() else counts
    reference = Table2x2(haldane, shift_zeros=False)
    assert_ratio_row(frame.loc["odds_ratio"], reference.oddsratio, reference.log_oddsratio_se,
                     reference.oddsratio_confint(alpha=0.05))
    if (counts[:, 0] > 0).all():
        exact = Table2x2(counts, shift_zeros=False)
        assert_ratio_row(frame.loc["relative_risk"], exact.riskratio, exact.log_riskratio_se,
                         exact.riskratio_confint(alpha=0.05))


@pytest.mark.parametrize("counts", FULL, ids=str)
def test_risk_difference_interval_and_pooled_test_match_statsmodels(counts):
    (a, b), (c, d) = counts
    frame = frame_of(counts)
    # Source: statsmodels confint_proportions_2indep(method="wald", compare="diff").
    low, high = confint_proportions_2indep(a, a + b, c, c + d, method="wald", compare="diff")
    assert frame.loc["risk_difference", "ci_low"] == pytest.approx(max(low, -1.0))
    assert frame.loc["risk_difference", "ci_high"] == pytest.approx(min(high, 1.0))
    # Source: statsmodels proportions_ztest (pooled standard error under equal proportions).
    z, p = proportions_ztest([a, c], [a + b, c + d])
    assert frame.loc["risk_difference", "z"] == pytest.approx(z)
    assert frame.loc["risk_difference", "p_value"] == pytest.approx(p)
    # Multinomial and two-binomial delta methods agree for a function of p1 and p2 only.
    assert frame.loc["somers_d_col_given_row", "std_error"] == pytest.approx(
        frame.loc["risk_difference", "std_error"])


@pytest.mark.parametrize("counts", WITH_ZERO, ids=str)
def test_zero_cell_adds_one_half_to_every_cell_and_says_so(counts):
    frame = frame_of(counts)
    # Source: Haldane (1956) / Agresti (2013, sec. 3.1.1): with a zero cell, the odds ratio is
    # computed on the table plus 0.5 in every cell; the log-scale error is sqrt(sum 1/(n+0.5)).
    (a, b), (c, d) = counts + 0.5
    assert frame.loc["odds_ratio", "estimate"] == pytest.approx(a * d / (b * c))
    assert frame.loc["odds_ratio", "std_error"] == pytest.approx(np.sqrt(1/a + 1/b + 1/c + 1/d))
    assert "add 0.5 to every cell" in frame.loc["odds_ratio", "note"]
    # Yule (1912): Q and Y come from the unadjusted cross products, so with a zero cell they
    # sit on their bound (+/-1) and have no delta-method interval.
    for key in ("yules_q", "yules_y"):
        assert abs(frame.loc[key, "estimate"]) == 1.0
        assert "0.5" not in frame.loc[key, "note"]
        assert "at its bound" in frame.loc[key, "note"]
        assert np.isnan(frame.loc[key, "ci_low"])


def test_no_zero_cell_means_no_adjustment_note():
    # Source: statsmodels Table2x2 with shift_zeros=False on a table without zeros.
    counts = FULL[0]
    frame = frame_of(counts)
    assert "0.5" not in frame.loc["odds_ratio", "note"]
    assert frame.loc["odds_ratio", "estimate"] == pytest.approx(
        Table2x2(counts, shift_zeros=False).oddsratio)


def test_relative_risk_with_zero_first_column_cell_is_nan_with_reason():
    # Common practice: log(p1/p2) has no finite value or error when a first-column cell is 0.
    frame = frame_of([[0, 9], [5, 7]])
    assert np.isnan(frame.loc["relative_risk", "estimate"])
    assert "zero" in frame.loc["relative_risk", "note"]


def test_empty_row_makes_the_group_measures_undefined():
    # Common practice: a proportion of an empty group is 0/0.
    frame = frame_of([[4, 6], [0, 0]])
    for key in ("odds_ratio", "risk_difference", "relative_risk", "gamma"):
        assert np.isnan(frame.loc[key, "estimate"]), key
        assert frame.loc[key, "note"], key


def test_two_by_two_measures_only_for_two_by_two_tables():
    # Definition: odds ratios and risk measures are defined for two groups and two outcomes.
    assert "odds_ratio" not in frame_of([[1, 2, 3], [4, 5, 6]]).index
    assert "odds_ratio" in frame_of([[1, 2], [4, 5]]).index
