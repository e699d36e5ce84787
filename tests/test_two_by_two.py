"""2 x 2 tables: identities of the trade and comparisons with statsmodels."""

from __future__ import annotations

import numpy as np
import pandas as pd
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
    # Source: Haldane (1956) / Agresti (2013, ch. 3): with a zero cell, the odds ratio is
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


# ------------------------------------------------------------- sampling weights and gradients
TWO_BY_TWO = ("odds_ratio", "yules_q", "yules_y", "risk_difference", "relative_risk")


def invented_weighted_survey(seed: int = 5, size: int = 800) -> pd.DataFrame:
    """Invented records: a group (row) and a yes/no outcome (column), with survey weights that
    rise with the group and the outcome, as when one group and one answer were undersampled."""
    rng = np.random.default_rng(seed)
    group = rng.choice(["a", "b"], size=size, p=[0.45, 0.55])
    outcome = np.where(rng.random(size) < np.where(group == "a", 0.55, 0.3), "yes", "no")
    weight = (np.where(group == "a", 1.0, 2.5) * np.where(outcome == "yes", 1.6, 1.0)
              * rng.lognormal(0.0, 0.4, size=size))
    return pd.DataFrame({"group": group, "outcome": outcome, "w": weight})


def weighted_frame(data: pd.DataFrame, column: str = "w") -> pd.DataFrame:
    return rankfold.table(data, "group", "outcome", weight=column, weight_kind="sampling",
                          order={"group": ["a", "b"], "outcome": ["yes", "no"]}).measures()


def published_estimates(tables: np.ndarray) -> dict[str, np.ndarray]:
    """The quantities the errors refer to, straight from their definitions (Yule 1912;
    Agresti 2013, ch. 3): log OR, Q, Y, p1 - p2 and log(p1/p2), for a batch of 2 x 2 tables."""
    a, b, c, d = (tables[..., i, j] for i, j in ((0, 0), (0, 1), (1, 0), (1, 1)))
    root = np.sqrt(a * d / (b * c))
    return {
        "odds_ratio": np.log(a * d / (b * c)),
        "yules_q": (a * d - b * c) / (a * d + b * c),
        "yules_y": (root - 1) / (root + 1),
        "risk_difference": a / (a + b) - c / (c + d),
        "relative_risk": np.log(a / (a + b) / (c / (c + d))),
    }


def test_weighted_errors_do_not_change_when_weights_are_scaled():
    # Scale invariance of the linearised variance (Woodruff 1971): multiplying every sampling
    # weight by 1000 changes no estimate, standard error, null error or p-value.
    data = invented_weighted_survey()
    plain = weighted_frame(data).loc[list(TWO_BY_TWO)]
    scaled = weighted_frame(data.assign(w=data["w"] * 1000)).loc[list(TWO_BY_TWO)]
    for column in ("estimate", "std_error", "std_error_null", "p_value"):
        np.testing.assert_allclose(scaled[column], plain[column], rtol=1e-9)
    # and the 2 x 2 Yule's Q keeps the standard error of gamma, the same function of the cells
    assert plain.loc["yules_q", "std_error"] == pytest.approx(
        weighted_frame(data).loc["gamma", "std_error"], rel=1e-9)


def test_constant_sampling_weights_give_the_unweighted_errors():
    # Common practice: with every weight equal, the linearised errors are the multinomial ones
    # (here checked against statsmodels' Table2x2 log-scale errors for the ratios).
    data = invented_weighted_survey()
    weighted = weighted_frame(data.assign(w=3.7)).loc[list(TWO_BY_TWO)]
    table = rankfold.table(data, "group", "outcome",
                           order={"group": ["a", "b"], "outcome": ["yes", "no"]})
    unweighted = table.measures().loc[list(TWO_BY_TWO)]
    for column in ("estimate", "std_error", "std_error_null", "z"):
        np.testing.assert_allclose(weighted[column], unweighted[column], rtol=1e-9)
    reference = Table2x2(table.counts.to_numpy())
    assert unweighted.loc["odds_ratio", "std_error"] == pytest.approx(reference.log_oddsratio_se)
    assert unweighted.loc["relative_risk", "std_error"] == pytest.approx(
        reference.log_riskratio_se)


def test_weighted_errors_match_a_bootstrap_of_the_records():
    # Outside reference: the with-replacement bootstrap of the records (Efron & Tibshirani
    # 1993, ch. 6), 4,000 seeded resamples, each re-weighting the table and recomputing the
    # measures from their definitions; the linearised errors are within 5% of its spread.
    data = invented_weighted_survey()
    frame = weighted_frame(data)
    cell = (data["group"] == "b").to_numpy() * 2 + (data["outcome"] == "no").to_numpy()
    rng = np.random.default_rng(2024)
    size = len(data)
    picks = rng.integers(0, size, size=(4000, size))
    offsets = (np.arange(4000) * 4)[:, None]
    tables = np.bincount((cell[picks] + offsets).ravel(), data["w"].to_numpy()[picks].ravel(),
                         4000 * 4).reshape(4000, 2, 2)
    for key, values in published_estimates(tables).items():
        assert frame.loc[key, "std_error"] == pytest.approx(np.std(values, ddof=1), rel=0.05), key


def test_gradients_equal_numerical_differences():
    # Central differences of the definitions (common practice) against the gradients that the
    # variance rule uses, on a table without zeros.
    counts = np.array([[17.0, 8.0], [6.0, 21.0]])
    found = rankfold.two_by_two.two_by_two_measures(counts)
    h = 1e-6
    for key in TWO_BY_TWO:
        numeric = np.zeros((2, 2))
        for idx in np.ndindex(2, 2):
            up, down = counts.copy(), counts.copy()
            up[idx] += h
            down[idx] -= h
            numeric[idx] = (published_estimates(up)[key] - published_estimates(down)[key]) / (2 * h)
        np.testing.assert_allclose(found[key]["gradient"], numeric, rtol=1e-6, atol=1e-9)


@pytest.mark.parametrize(
    "counts", random_tables(seed=77, count=60, min_side=2, max_side=2, max_cell=12,
                            zero_share=0.2), ids=str)
def test_yules_q_is_gamma_on_every_two_by_two_table(counts):
    # Goodman & Kruskal (1954): gamma of a 2 x 2 table is Yule's Q, also with zero cells, so
    # estimate, error and z agree (Q from the unadjusted cross products, never 0.5-adjusted).
    frame = frame_of(counts)
    gamma, q = frame.loc["gamma"], frame.loc["yules_q"]
    if np.isnan(gamma["estimate"]):
        assert np.isnan(q["estimate"])
        return
    (a, b), (c, d) = counts
    assert q["estimate"] == pytest.approx((a * d - b * c) / (a * d + b * c), abs=1e-12)
    for column in ("estimate", "std_error", "ci_low", "ci_high"):
        assert q[column] == pytest.approx(gamma[column], abs=1e-12, nan_ok=True), column
    assert ("at its bound" in q["note"]) == ("at its bound" in gamma["note"]) == (b * c == 0
                                                                                or a * d == 0)


def test_weighted_zero_cell_adjustment_is_half_an_average_record():
    # Haldane's 0.5 is in units of records: with constant sampling weights the adjusted odds
    # ratio, its error and interval equal the unweighted ones (statsmodels Table2x2 on the
    # table plus 0.5), and multiplying the weights by 1000 changes nothing.
    records = pd.DataFrame({"g": ["a"] * 13 + ["b"] * 10,
                            "o": ["yes"] * 13 + ["yes"] * 4 + ["no"] * 6})

    def odds_row(w):
        return rankfold.table(records.assign(w=w), "g", "o", weight="w", weight_kind="sampling",
                              order={"g": ["a", "b"], "o": ["yes", "no"]}).measures().loc[
            "odds_ratio"]

    reference = Table2x2(np.array([[13, 0], [4, 6]]) + 0.5, shift_zeros=False)
    constant = odds_row(2.0)
    assert_ratio_row(constant, reference.oddsratio, reference.log_oddsratio_se,
                     reference.oddsratio_confint(alpha=0.05))
    assert "half an average record" in constant["note"]
    varied = records.index.to_numpy() % 3 + 1.0
    np.testing.assert_allclose(odds_row(varied * 1000)[["estimate", "std_error", "ci_low"]]
                               .astype(float), odds_row(varied)[["estimate", "std_error",
                                                                  "ci_low"]].astype(float),
                               rtol=1e-9)
