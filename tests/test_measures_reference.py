"""Estimates, p-values and tests compared with scipy.stats, statsmodels and a published example."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats
from scipy.stats import contingency
from statsmodels.stats.contingency_tables import Table

import rankfold
from tables_for_tests import associated_tables, expand_table, random_tables

TABLES = associated_tables(seed=101, count=12)
# Tables with empty rows or columns in the middle: references see only the used categories.
GAPPY = [t for t in random_tables(seed=7, count=200, max_side=6)
         if min(t.shape) > 2 and 0 in (t.sum(axis=0).min(), t.sum(axis=1).min())
         and min((t.sum(axis=0) > 0).sum(), (t.sum(axis=1) > 0).sum()) >= 2][:8]


def used(counts: np.ndarray) -> np.ndarray:
    """The table without its empty rows and columns."""
    return counts[counts.sum(axis=1) > 0][:, counts.sum(axis=0) > 0]


@pytest.mark.parametrize("counts", TABLES + GAPPY, ids=str)
def test_tau_b_tau_c_spearman_match_scipy_on_expanded_records(counts):
    frame = rankfold.table_from_counts(counts).measures()
    rows, cols = expand_table(counts)
    # Source: scipy.stats.kendalltau, variants 'b' and 'c', on one record per unit.
    assert frame.loc["tau_b", "estimate"] == pytest.approx(
        stats.kendalltau(rows, cols, variant="b").statistic, abs=1e-12)
    assert frame.loc["tau_c", "estimate"] == pytest.approx(
        stats.kendalltau(rows, cols, variant="c").statistic, abs=1e-12)
    # Source: scipy.stats.spearmanr (ranks with ties averaged = midranks) on the records.
    assert frame.loc["spearman_rho", "estimate"] == pytest.approx(
        stats.spearmanr(rows, cols).statistic, abs=1e-12)


@pytest.mark.parametrize("counts", TABLES + GAPPY, ids=str)
def test_somers_d_and_its_p_value_match_scipy_in_both_orientations(counts):
    # scipy.stats.somersd on a table treats rows as the independent variable, so its statistic
    # is d(col | row); its p-value is two-sided normal with z = (P - Q) / (2 sqrt(sum n_ij
    # d_ij^2 - (P - Q)^2 / n)), i.e. the test based on the standard error under independence
    # (scipy source, citing Brown & Benedetti 1977). Compare with our null-based z test.
    frame = rankfold.table_from_counts(counts).measures()
    forward, backward = stats.somersd(counts), stats.somersd(counts.T)
    assert frame.loc["somers_d_col_given_row", "estimate"] == pytest.approx(
        forward.statistic, abs=1e-12)
    assert frame.loc["somers_d_row_given_col", "estimate"] == pytest.approx(
        backward.statistic, abs=1e-12)
    assert frame.loc["somers_d_col_given_row", "p_value"] == pytest.approx(
        forward.pvalue, rel=1e-9, abs=1e-300)
    assert frame.loc["somers_d_row_given_col", "p_value"] == pytest.approx(
        backward.pvalue, rel=1e-9, abs=1e-300)


@pytest.mark.parametrize("counts", TABLES[:6], ids=str)
def test_somers_d_matches_scipy_on_raw_records(counts):
    # Source: scipy.stats.somersd(x, y) on records gives d(y | x).
    rows, cols = expand_table(counts)
    frame = rankfold.table_from_counts(counts).measures()
    assert frame.loc["somers_d_col_given_row", "estimate"] == pytest.approx(
        stats.somersd(rows, cols).statistic, abs=1e-12)


@pytest.mark.parametrize("counts", TABLES + GAPPY, ids=str)
def test_chi_square_and_likelihood_ratio_match_scipy(counts):
    tests = rankfold.table_from_counts(counts).tests()
    core = used(counts)  # scipy needs every expected count positive
    # Source: scipy.stats.chi2_contingency without continuity correction.
    pearson = stats.chi2_contingency(core, correction=False)
    assert tests.loc["pearson_x2", "statistic"] == pytest.approx(pearson.statistic)
    assert tests.loc["pearson_x2", "p_value"] == pytest.approx(
        pearson.pvalue, rel=1e-9, abs=0)  # p-values as small as 1e-49: no absolute floor
    assert tests.loc["pearson_x2", "df"] == pearson.dof
    # Source: scipy.stats.chi2_contingency with lambda_="log-likelihood" (G^2).
    deviance = stats.chi2_contingency(core, correction=False, lambda_="log-likelihood")
    assert tests.loc["likelihood_ratio_g2", "statistic"] == pytest.approx(deviance.statistic)
    assert tests.loc["likelihood_ratio_g2", "p_value"] == pytest.approx(
        deviance.pvalue, rel=1e-9, abs=0)


@pytest.mark.parametrize("counts", TABLES + GAPPY, ids=str)
def test_cramers_v_matches_scipy_and_carries_the_chi_square_p(counts):
    frame = rankfold.table_from_counts(counts).measures()
    # Source: scipy.stats.contingency.association(method="cramer") on the used categories.
    assert frame.loc["cramers_v", "estimate"] == pytest.approx(
        contingency.association(used(counts), method="cramer"), abs=1e-12)
    assert frame.loc["cramers_v", "p_value"] == pytest.approx(
        stats.chi2_contingency(used(counts), correction=False).pvalue, rel=1e-9, abs=0)


def midranks(margin: np.ndarray) -> np.ndarray:
    # Midrank of a category: units before it plus (its size + 1) / 2 (common practice).
    return np.cumsum(margin) - (margin - 1) / 2


@pytest.mark.parametrize("counts", TABLES + GAPPY, ids=str)
def test_linear_by_linear_matches_statsmodels(counts):
    t = rankfold.table_from_counts(counts)
    # Source: statsmodels Table.test_ordinal_association; its z is the permutation-moment
    # standardised sum of u_i v_j, so z^2 = (n - 1) r^2 = M^2 (Agresti 2010, ch. 2).
    # shift_zeros=False: statsmodels otherwise adds 0.5 to every cell of a table with a zero.
    reference = Table(counts, shift_zeros=False)
    by_position = reference.test_ordinal_association()
    assert t.tests().loc["trend_m2", "statistic"] == pytest.approx(by_position.zscore**2)
    assert t.tests().loc["trend_m2", "p_value"] == pytest.approx(
        by_position.pvalue, rel=1e-9, abs=0)
    row_mid, col_mid = midranks(counts.sum(axis=1)), midranks(counts.sum(axis=0))
    by_midrank = reference.test_ordinal_association(row_scores=row_mid, col_scores=col_mid)
    assert t.tests(scores="midranks").loc["trend_m2", "statistic"] == pytest.approx(
        by_midrank.zscore**2)
    user_rows = np.linspace(0, 10, counts.shape[0]) ** 1.5
    user_cols = np.sqrt(np.arange(counts.shape[1]) + 1.0)
    by_user = reference.test_ordinal_association(row_scores=user_rows, col_scores=user_cols)
    assert t.tests(scores=(user_rows, user_cols)).loc[
        "trend_m2", "statistic"] == pytest.approx(by_user.zscore**2)


@pytest.mark.parametrize("counts", TABLES, ids=str)
def test_spearman_null_z_squared_is_the_midrank_linear_by_linear_statistic(counts):
    # Source: statsmodels test_ordinal_association with midrank scores. With midranks the
    # linear-by-linear r is Spearman's rho, so (rho / SE0)^2 = (n - 1) rho^2 = M^2
    # (Agresti 2010, ch. 2).
    frame = rankfold.table_from_counts(counts).measures()
    row_mid, col_mid = midranks(counts.sum(axis=1)), midranks(counts.sum(axis=0))
    reference = Table(counts, shift_zeros=False).test_ordinal_association(
        row_scores=row_mid, col_scores=col_mid)
    assert frame.loc["spearman_rho", "z"] ** 2 == pytest.approx(reference.zscore**2)


@pytest.mark.parametrize("counts", TABLES[:6], ids=str)
def test_every_concordance_measure_shares_the_null_z(counts):
    # Source: Brown & Benedetti (1977): the null standard errors of gamma, the Somers' d, tau-b
    # and tau-c are 2/den sqrt(sum n d^2 - (P - Q)^2/n) for each measure's own denominator, so
    # all five z statistics equal scipy's somersd z (recovered from its two-sided p-value).
    frame = rankfold.table_from_counts(counts).measures()
    reference_z = stats.norm.isf(stats.somersd(counts).pvalue / 2)
    keys = ["gamma", "somers_d_col_given_row", "somers_d_row_given_col", "somers_d_symmetric",
            "tau_b", "tau_c"]
    for key in keys:
        assert abs(frame.loc[key, "z"]) == pytest.approx(reference_z, rel=1e-7), key


def test_published_income_by_job_satisfaction_example():
    # Published worked example, values from memory: Agresti, Categorical Data Analysis (2nd
    # ed., 2002), job satisfaction (columns, low to high) by income (rows, low to high):
    # C = 1331, D = 849, gamma = 0.221 with ASE 0.117; X^2 = 5.97 and G^2 = 6.76 on df = 9.
    counts = [[1, 3, 10, 6], [2, 3, 10, 7], [1, 6, 14, 12], [0, 1, 9, 11]]
    t = rankfold.table_from_counts(counts)
    assert t.pairs()["concordant"] == 1331
    assert t.pairs()["discordant"] == 849
    frame = t.measures()
    assert frame.loc["gamma", "estimate"] == pytest.approx(0.221, abs=5e-4)
    assert frame.loc["gamma", "std_error"] == pytest.approx(0.117, abs=5e-4)
    tests = t.tests()
    assert tests.loc["pearson_x2", "statistic"] == pytest.approx(5.97, abs=5e-3)
    assert tests.loc["likelihood_ratio_g2", "statistic"] == pytest.approx(6.76, abs=5e-3)
    assert tests.loc["pearson_x2", "df"] == 9


@pytest.mark.parametrize("confidence", [0.8, 0.95, 0.99])
def test_interval_is_estimate_plus_minus_normal_quantile_times_se(confidence):
    # Source: Wald interval (common practice) with the quantile from scipy.stats.norm.ppf,
    # clipped to the measure's range [-1, 1].
    frame = rankfold.table_from_counts(TABLES[0]).measures(confidence=confidence)
    crit = stats.norm.ppf(0.5 + confidence / 2)
    for key in ("gamma", "somers_d_col_given_row", "tau_b", "tau_c", "spearman_rho"):
        est, se = frame.loc[key, "estimate"], frame.loc[key, "std_error"]
        assert frame.loc[key, "ci_low"] == pytest.approx(max(-1.0, est - crit * se))
        assert frame.loc[key, "ci_high"] == pytest.approx(min(1.0, est + crit * se))
        # Source: scipy.stats.norm.sf for the two-sided p-value of z = estimate / SE0.
        z = est / frame.loc[key, "std_error_null"]
        assert frame.loc[key, "p_value"] == pytest.approx(2 * stats.norm.sf(abs(z)),
                                                          rel=1e-9, abs=0)


def test_interval_is_clipped_at_the_range_end():
    # Source: the measure's range [-1, 1] (definition); a strong table pushes est + 1.96 SE
    # of gamma past 1.
    frame = rankfold.table_from_counts([[20, 2, 0], [3, 15, 1], [0, 1, 9]]).measures()
    est, se = frame.loc["gamma", ["estimate", "std_error"]]
    assert est + 1.96 * se > 1
    assert frame.loc["gamma", "ci_high"] == 1.0


@pytest.mark.parametrize("counts", TABLES[:6], ids=str)
def test_diagnostics_match_statsmodels_and_the_pair_counts(counts):
    diagnostics = rankfold.table_from_counts(counts).diagnostics()
    # Source: statsmodels Table: fittedvalues (independence fit) and standardized_resids,
    # which are Haberman's adjusted residuals.
    reference = Table(counts, shift_zeros=False)
    np.testing.assert_allclose(diagnostics.expected.to_numpy(), reference.fittedvalues)
    np.testing.assert_allclose(diagnostics.adjusted_residuals.to_numpy(),
                               reference.standardized_resids)
    # Source: the brute-force-checked pair counts: the cells' shares add up to P - Q, with P
    # and Q counting ordered pairs (twice the unordered counts).
    pairs = rankfold.table_from_counts(counts).pairs()
    assert diagnostics.pair_contribution.to_numpy().sum() == pytest.approx(
        2 * (pairs["concordant"] - pairs["discordant"]))
    # Source: Cochran (1954) figures recomputed from statsmodels' expected counts.
    assert diagnostics.share_expected_below_5 == pytest.approx(
        (reference.fittedvalues < 5).mean())
    assert diagnostics.min_expected == pytest.approx(reference.fittedvalues.min())
