"""Cumulative-logit (proportional-odds) model: statsmodels, direct likelihood maximisation,
simulation, bootstrap.

Outside references: statsmodels' ``OrderedModel(distr="logit")`` on the expanded records;
log-likelihoods written here from McCullagh (1980) and maximised with scipy.optimize; data
simulated from a latent logistic variable; a with-replacement bootstrap of weighted records.
"""

from __future__ import annotations

import itertools
import warnings

import numpy as np
import pandas as pd
import pytest
from scipy import optimize, special
from statsmodels.miscmodels.ordinal_model import OrderedModel
from statsmodels.tools.numdiff import approx_hess3

import rankfold
from rankfold.cumulative_logit import (
    cumulative_logit,
    cumulative_logit_arrays,
    cumulative_logit_frame,
)
from rankfold.ordinal_measures import Sampling


def associated_table(seed: int, rows: int = 4, cols: int = 5) -> np.ndarray:
    rng = np.random.default_rng(seed)
    grid = np.outer(np.arange(rows), np.arange(cols))
    return rng.poisson(rng.uniform(3, 30, (rows, cols)) * np.exp(0.3 * grid)).astype(float)


def statsmodels_fit(n: np.ndarray, x_scores: np.ndarray):
    """OrderedModel on the records the table stands for (np.repeat of the cells)."""
    rows, cols = np.indices(n.shape)
    x = np.repeat(x_scores[rows.ravel()], n.ravel().astype(int))
    y = np.repeat(cols.ravel(), n.ravel().astype(int))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = OrderedModel(pd.Series(pd.Categorical(y, ordered=True)), x[:, None],
                             distr="logit")
        return model.fit(method="bfgs", disp=False, gtol=1e-12, maxiter=10_000)


@pytest.mark.parametrize(("seed", "response", "scores"), [
    (1, "cols", None), (2, "rows", None), (3, "cols", "midranks"), (4, "cols", [0, 1, 3, 7]),
])
def test_slope_and_error_match_statsmodels(seed, response, scores):
    # Outside reference: statsmodels OrderedModel(distr="logit"), whose convention
    # logit P(Y <= j) = theta_j - x beta is ours; beta and its SE within 1e-4 relative.
    n = associated_table(seed)
    fit = cumulative_logit(n, response=response, scores=scores)
    table = n if response == "cols" else n.T
    margin = table.sum(axis=1)
    if scores is None:
        x = np.arange(1.0, table.shape[0] + 1)
    elif scores == "midranks":
        x = np.cumsum(margin) - margin / 2 + 0.5
    else:
        x = np.asarray(scores, dtype=float)
    ref = statsmodels_fit(table, x)
    assert fit.slope == pytest.approx(ref.params.iloc[0], rel=1e-4)
    assert fit.slope_se == pytest.approx(ref.bse.iloc[0], rel=1e-4)
    # statsmodels' first threshold is the first cut-point itself
    assert fit.cut_points[0, 0] == pytest.approx(ref.params.iloc[1], rel=1e-4)


def controlled_loglik(theta, n, x, separate=False):
    """Grouped log-likelihood written from McCullagh (1980), eq. 2.4, with level-specific
    cut-points alpha_kj and one slope (or one slope per cut-point)."""
    K, _, J = n.shape
    alpha = theta[: K * (J - 1)].reshape(K, J - 1)
    beta = theta[K * (J - 1):]
    eta = alpha[:, None, :] - x[None, :, None] * beta  # (K, I, J-1)
    F = np.concatenate([np.zeros((K, len(x), 1)), special.expit(eta),
                        np.ones((K, len(x), 1))], axis=-1)
    pi = np.diff(F, axis=-1)
    if np.any(pi[n > 0] <= 0):
        return -1e10
    return float((n[n > 0] * np.log(pi[n > 0])).sum())


def test_control_variable_matches_direct_maximisation():
    # Outside reference: the log-likelihood above maximised by scipy.optimize.minimize (BFGS),
    # SE from statsmodels' numerical Hessian of that log-likelihood (approx_hess3).
    n = np.stack([associated_table(5, 4, 4), associated_table(6, 4, 4) + 2,
                  associated_table(7, 4, 4)])
    x = np.arange(1.0, 5)
    fit = cumulative_logit(n)
    start = np.concatenate([np.tile([-1.0, 0.0, 1.0], 3), [0.0]])
    ref = optimize.minimize(lambda t: -controlled_loglik(t, n, x), start, method="BFGS",
                            options={"gtol": 1e-9})
    assert fit.slope == pytest.approx(ref.x[-1], rel=1e-4)
    np.testing.assert_allclose(fit.cut_points.ravel(), ref.x[:-1], rtol=1e-4)
    hess = approx_hess3(ref.x, lambda t: controlled_loglik(t, n, x))
    assert fit.slope_se == pytest.approx(np.sqrt(np.linalg.inv(-hess)[-1, -1]), rel=1e-4)


def test_proportional_odds_test_matches_separate_slopes_fit():
    # Outside reference: the separate-slopes log-likelihood (a slope per cut-point) maximised
    # by scipy.optimize.minimize, started at the common-slope fit; LR statistic to 1e-4.
    n = associated_table(11)[None]
    x = np.arange(1.0, 5)
    fit = cumulative_logit(n)
    common = optimize.minimize(lambda t: -controlled_loglik(t, n, x),
                               np.r_[-1.0, -0.3, 0.3, 1.0, 0.0], method="BFGS",
                               options={"gtol": 1e-9})
    start = np.r_[common.x[:-1], np.repeat(common.x[-1], 4)]
    separate = optimize.minimize(lambda t: -controlled_loglik(t, n, x, separate=True), start,
                                 method="BFGS", options={"gtol": 1e-9})
    lr = 2 * (separate.fun * -1 - common.fun * -1)
    assert fit.proportional_odds_statistic == pytest.approx(lr, abs=1e-4)
    assert fit.proportional_odds_df == 3
    # deviance against the saturated model of the table (Agresti 2010, ch. 3)
    rows = n.sum(axis=-1)
    sat = (n[n > 0] * np.log((n / rows[..., None])[n > 0])).sum()
    assert fit.deviance == pytest.approx(2 * (sat + common.fun), abs=1e-4)
    assert fit.deviance_df == 4 * 4 - 5


def test_constant_sampling_weights_give_the_unweighted_fit():
    # Outside reference: with every weight equal the pseudo-likelihood is the likelihood times
    # a constant (same estimates), and the sandwich SE estimates the same variance as the
    # inverse information when the model holds (Binder 1983): within 5% on a table of ~1,400
    # (measured when written: 0.0457 against 0.0453).
    rng = np.random.default_rng(3)
    x = rng.integers(1, 5, size=1400)
    latent = 0.5 * x + rng.logistic(size=x.size)
    y = np.digitize(latent, [0.5, 1.5, 2.5, 3.2])
    n = np.zeros((4, 5))
    np.add.at(n, (x - 1, y), 1.0)
    plain = cumulative_logit(n)
    weighted = cumulative_logit(3.0 * n, sampling=Sampling(9.0 * n, n.sum()))
    assert weighted.slope == pytest.approx(plain.slope, rel=1e-8)
    assert weighted.slope_se == pytest.approx(plain.slope_se, rel=0.05)


def test_sampling_weight_errors_match_bootstrap():
    # Outside reference: a seeded with-replacement bootstrap of invented weighted records
    # (1,000 resamples); the linearised SE is within 10% of the bootstrap SD of the slope
    # (measured when written: 0.0538 against 0.0527).
    rng = np.random.default_rng(12)
    size = 1500
    x = rng.integers(0, 4, size=size)
    y = np.digitize(0.4 * x + rng.logistic(size=size), [0.0, 0.8, 1.6])
    weight = np.exp(rng.normal(0.3 * y, 0.6))  # weights depend on the response
    onehot = np.zeros((size, 16))
    onehot[np.arange(size), x * 4 + y] = weight
    totals = onehot.sum(axis=0).reshape(4, 4)
    squared = (onehot**2).sum(axis=0).reshape(4, 4)
    fit = cumulative_logit(totals, sampling=Sampling(squared, size))
    times = rng.multinomial(size, np.full(size, 1 / size), size=1000).astype(float)
    boot = cumulative_logit_arrays((times @ onehot).reshape(-1, 4, 4))["estimate"]
    assert fit.slope_se == pytest.approx(boot.std(ddof=1), rel=0.10)
    assert np.isnan(fit.deviance) and "sampling weights" in fit.test_note


@pytest.mark.slow
def test_merging_response_categories_leaves_the_slope_unchanged_but_moves_gamma():
    # Outside reference: simulation from a latent logistic variable Y* = 0.6 x + e, x = 1..4,
    # cut into 6 response categories; 500 draws of 600 units. Merging neighbouring response
    # categories (6 -> 3) keeps the mean slope (measured when written: 0.6015 -> 0.6010, paired
    # mean difference -0.0006 with SE 0.0014; SD of the slope 0.068 against a mean SE of
    # 0.068) while gamma's mean moves (0.366 -> 0.419, SE of the difference 0.0009).
    rng = np.random.default_rng(30)
    draws, size = 500, 600
    x = rng.integers(0, 4, size=(draws, size))
    y = np.digitize(0.6 * x + rng.logistic(size=x.shape), [-0.5, 0.3, 1.0, 1.8, 2.6])
    cells = x * 6 + y + np.arange(draws)[:, None] * 24
    n = np.bincount(cells.ravel(), minlength=draws * 24).reshape(draws, 4, 6).astype(float)
    merged = np.stack([n[..., :2].sum(-1), n[..., 2], n[..., 3:].sum(-1)], axis=-1)
    base = cumulative_logit_arrays(n)["estimate"]
    other = cumulative_logit_arrays(merged)["estimate"]
    diff = other - base
    se_diff = diff.std(ddof=1) / np.sqrt(draws)
    assert abs(diff.mean()) < 3 * se_diff, (base.mean(), other.mean(), se_diff)
    assert abs(base.mean() - 0.6) < 0.02

    def gamma(tables):
        return np.array([rankfold.table_from_counts(t).measures().loc["gamma", "estimate"]
                         for t in tables])

    g_diff = gamma(merged) - gamma(n)
    assert abs(g_diff.mean()) > 10 * g_diff.std(ddof=1) / np.sqrt(draws), g_diff.mean()


def test_batch_equals_single_tables(rng):
    # Outside reference: the single-table fit on each table of the batch (<= 1e-8).
    tables = rng.poisson(rng.uniform(1, 20, size=(30, 4, 5))).astype(float)
    tables[2, :, 1] = 0.0  # an empty response category
    tables[5, 0] = 0.0  # an empty scored category
    for scores in (None, "midranks"):
        batch = cumulative_logit_arrays(tables, scores=scores)
        for t, table in enumerate(tables):
            single = cumulative_logit(table, scores=scores)
            np.testing.assert_allclose(batch["estimate"][t], single.slope, rtol=1e-8)
            np.testing.assert_allclose(batch["std_error"][t], single.slope_se, rtol=1e-8)


def test_undefined_cases_give_nan_with_reasons():
    # Common practice: no slope with one category, and none under perfect separation (no
    # discordant pairs: the likelihood rises without bound in beta; Agresti 2010, ch. 3).
    one = cumulative_logit(np.array([[5.0, 0], [7, 0]]))
    assert np.isnan(one.slope) and "response" in one.note
    perfect = cumulative_logit(np.array([[5.0, 3, 0], [0, 4, 6]]))
    assert np.isnan(perfect.slope) and "separation" in perfect.note
    frame = cumulative_logit_frame(np.array([[5.0, 3, 0], [0, 4, 6]]))
    assert np.isnan(frame.loc["slope", "estimate"]) and "separation" in frame.loc["slope", "note"]


def test_frame_layout():
    n = associated_table(9, 3, 4)
    frame = cumulative_logit_frame(n, col_labels=["low", "mid", "high", "top"], confidence=0.9)
    assert list(frame.index) == ["slope", "≤ low", "≤ mid", "≤ high"]
    assert list(frame.columns) == ["estimate", "std_error", "ci_low", "ci_high",
                                   "std_error_null", "z", "p_value", "note"]
    assert frame.attrs["proportional_odds_df"] == 2
    z = frame.loc["slope", "estimate"] / frame.loc["slope", "std_error"]
    assert frame.loc["slope", "z"] == pytest.approx(z)
    controlled = cumulative_logit_frame(np.stack([n, n + 1]), control_labels=["a", "b"])
    assert "b: ≤ 3" in controlled.index


def test_bad_input_is_refused():
    n = associated_table(1)
    with pytest.raises(ValueError, match="'rows' or 'cols'"):
        cumulative_logit(n, response="columns")
    with pytest.raises(ValueError, match="one number for each"):
        cumulative_logit(n, scores=[1, 2, 3])
    with pytest.raises(ValueError, match="strictly increasing"):
        cumulative_logit(n, scores=[1, 3, 2, 4])
    with pytest.raises(ValueError, match="'positions', 'midranks'"):
        cumulative_logit(n, scores="ranks")


# ------------------------------------------------------- the fast fit against first principles
def complex_loglik(theta, n, x, separate=False):
    """The grouped log-likelihood of ``controlled_loglik`` in complex arithmetic, so that its
    derivatives come from the complex step ``Im l(theta + i h e_p) / h`` (Squire & Trapp 1998,
    SIAM Review 40:110), exact to rounding; the logistic function written out."""
    K, _, J = n.shape
    alpha = theta[: K * (J - 1)].reshape(K, J - 1)
    beta = theta[K * (J - 1):]
    eta = alpha[:, None, :] - x[None, :, None] * beta
    F = 1 / (1 + np.exp(-eta))
    edge = np.zeros((K, len(x), 1), dtype=F.dtype)
    pi = np.diff(np.concatenate([edge, F, edge + 1], axis=-1), axis=-1)
    return (n[n > 0] * np.log(pi[n > 0])).sum()


def complex_score(theta, n, x, separate=False):
    step = 1e-30
    return np.array([complex_loglik(theta + 1j * step * e, n, x, separate).imag / step
                     for e in np.eye(theta.size)])


def first_principles_fit(n, x, separate=False):
    """Estimates as the root of the score equations (scipy.optimize.root, started from a BFGS
    maximum of the log-likelihood) and the information from central differences of the score:
    no code shared with rankfold."""
    K, _, J = n.shape
    slopes = J - 1 if separate else 1
    start = np.concatenate([np.tile(np.linspace(-1.5, 1.5, J - 1), K), np.zeros(slopes)])
    rough = optimize.minimize(lambda t: -controlled_loglik(t, n, x, separate), start,
                              method="BFGS", options={"gtol": 1e-8})
    root = optimize.root(complex_score, rough.x, args=(n, x, separate), tol=1e-13)
    assert np.abs(root.fun).max() < 1e-9 * n.sum(), root.fun  # a root, whatever the message
    h = 1e-5
    info = -np.array([(complex_score(root.x + h * e, n, x, separate)
                       - complex_score(root.x - h * e, n, x, separate)) / (2 * h)
                      for e in np.eye(root.x.size)])
    return root.x, (info + info.T) / 2, controlled_loglik(root.x, n, x, separate)


def invented_levels(seed: int, levels: int, rows: int = 4, cols: int = 5) -> np.ndarray:
    rng = np.random.default_rng(seed)
    grid = np.outer(np.arange(rows), np.arange(cols))
    tilt = rng.uniform(0.1, 0.4)
    return rng.poisson(rng.uniform(20, 80, (levels, rows, cols)) * np.exp(tilt * grid / 2))


@pytest.mark.parametrize(("seed", "levels"), [(21, 1), (22, 1), (23, 2), (24, 3)])
def test_fit_and_tests_equal_the_roots_of_the_score_equations(seed, levels):
    # Outside reference: the maximum likelihood estimates as the root of the score equations
    # of McCullagh (1980, eq. 2.4), the score by complex-step differentiation of the
    # log-likelihood written in this file, solved by scipy.optimize.root; the information by
    # central differences of that score. Estimates to 1e-8, errors to 1e-6 (the differences'
    # own error), the likelihood-ratio test and deviance to 1e-6 absolute. This is the check
    # that the fast Newton path (start values, stopping rule, batched state) changed nothing.
    n = invented_levels(seed, levels).astype(float)
    x = np.arange(1.0, n.shape[1] + 1)
    fit = cumulative_logit(n if levels > 1 else n[0])
    theta, info, common = first_principles_fit(n, x)
    np.testing.assert_allclose(fit.slope, theta[-1], rtol=1e-8)
    np.testing.assert_allclose(fit.cut_points.ravel(), theta[:-1], rtol=1e-8, atol=1e-10)
    se = np.sqrt(np.diag(np.linalg.inv(info)))
    np.testing.assert_allclose(fit.slope_se, se[-1], rtol=1e-6)
    np.testing.assert_allclose(fit.cut_point_se.ravel(), se[:-1], rtol=1e-6)
    _, _, separate = first_principles_fit(n, x, separate=True)
    assert fit.proportional_odds_statistic == pytest.approx(2 * (separate - common), abs=1e-6)
    rows = n.sum(axis=-1, keepdims=True)
    saturated = (n[n > 0] * np.log((n / rows)[n > 0])).sum()
    assert fit.deviance == pytest.approx(2 * (saturated - common), abs=1e-6)


@pytest.mark.parametrize("seed", [31, 32, 33])
def test_sampling_weight_errors_equal_the_linearisation_from_first_principles(seed):
    # Outside reference: the pseudo-likelihood estimates solve the score equations on the
    # weighted totals (Binder 1983), found as in the test above; their linearised variance is
    # sum_c q_c g_c^2 - (sum_c w_c g_c)^2 / m with g_c = I^-1 s_c the influence of one unit in
    # cell c, s_c = d log pi_c / d theta by complex steps, q_c the summed squared weights and
    # m the number of records (Woodruff 1971; Binder 1983, with-replacement design), written
    # here cell by cell. Estimates to 1e-8, errors to 1e-6.
    rng = np.random.default_rng(seed)
    levels = 1 + seed % 2
    records = invented_levels(seed, levels, 3, 4)
    weights = rng.gamma(4.0, 0.5, size=(*records.shape, 400))  # a weight per record
    mask = np.arange(400) < records[..., None]
    totals = (weights * mask).sum(axis=-1)
    squared = (weights**2 * mask).sum(axis=-1)
    m = float(records.sum())
    fit = cumulative_logit(totals if levels > 1 else totals[0],
                           sampling=Sampling(squared if levels > 1 else squared[0], m))
    x = np.arange(1.0, 4)
    theta, info, _ = first_principles_fit(totals, x)
    np.testing.assert_allclose(fit.slope, theta[-1], rtol=1e-8)
    np.testing.assert_allclose(fit.cut_points.ravel(), theta[:-1], rtol=1e-8, atol=1e-10)
    inverse = np.linalg.inv(info)
    variance = np.zeros(theta.size)
    weighted = np.zeros(theta.size)
    for k, i, j in itertools.product(*map(range, totals.shape)):
        one = np.zeros_like(totals)
        one[k, i, j] = 1.0
        unit = complex_score(theta, one, x)  # d log pi_kij / d theta
        g = inverse @ unit
        variance += squared[k, i, j] * g**2
        weighted += totals[k, i, j] * g
    se = np.sqrt(variance - weighted**2 / m)
    np.testing.assert_allclose(fit.slope_se, se[-1], rtol=1e-6)
    np.testing.assert_allclose(fit.cut_point_se.ravel(), se[:-1], rtol=1e-6)


@pytest.mark.parametrize("seed", [41, 42, 43, 44, 45])
def test_random_tables_match_statsmodels(seed):
    # Outside reference: statsmodels OrderedModel(distr="logit") on the records of invented
    # tables of random shape; slope and SE within 1e-5 with positions as scores, 1e-4 with
    # midranks (slopes per record, near 1e-4 here, where BFGS stops sooner in relative terms).
    rng = np.random.default_rng(seed)
    rows, cols = rng.integers(3, 6, size=2)
    n = invented_levels(seed, 1, rows, cols)[0].astype(float)
    for scores in (None, "midranks"):
        fit = cumulative_logit(n, scores=scores)
        margin = n.sum(axis=1)
        x = (np.arange(1.0, rows + 1) if scores is None
             else np.cumsum(margin) - margin / 2 + 0.5)
        ref = statsmodels_fit(n, x)
        tol = 1e-5 if scores is None else 1e-4
        assert fit.slope == pytest.approx(ref.params.iloc[0], rel=tol)
        assert fit.slope_se == pytest.approx(ref.bse.iloc[0], rel=tol)


def test_no_proportional_odds_test_where_separate_slopes_have_no_valid_maximum():
    # A sparse invented table (seeded) where the separate-slopes likelihood rises towards
    # crossing cumulative probabilities. Outside evidence: McCullagh's (1980) likelihood as
    # written above (it checks only the cells holding units) maximised by Nelder-Mead from the
    # common-slope fit reaches a stationary point whose fitted probabilities are negative in
    # some empty cell, so no valid model attains the supremum and the chi-square reference of
    # the likelihood-ratio statistic does not hold: the test must be NaN with its reason.
    rng = np.random.default_rng(5)
    n = rng.multinomial(120, rng.dirichlet(np.full(16, 0.5))).reshape(1, 4, 4).astype(float)
    x = np.arange(1.0, 5)
    fit = cumulative_logit(n)
    assert np.isfinite(fit.slope)  # the common slope is estimated as usual
    assert np.isnan(fit.proportional_odds_statistic) and np.isnan(fit.proportional_odds_p_value)
    assert "no maximum" in fit.test_note
    common = optimize.minimize(lambda t: -controlled_loglik(t, n, x), np.r_[-1.0, 0.0, 1.0, 0.0],
                               method="BFGS", options={"gtol": 1e-9})
    start = np.r_[common.x[:-1], np.repeat(common.x[-1], 3)]
    separate = optimize.minimize(lambda t: -controlled_loglik(t, n, x, separate=True), start,
                                 method="Nelder-Mead",
                                 options={"maxiter": 20000, "xatol": 1e-10, "fatol": 1e-12})
    alpha, beta = separate.x[:3], separate.x[3:]
    cumulative = special.expit(alpha[None, :] - x[:, None] * beta)
    pi = np.diff(np.c_[np.zeros(4), cumulative, np.ones(4)], axis=1)
    assert np.abs(complex_score(separate.x, n, x, separate=True)).max() < 1e-4  # stationary
    assert pi.min() < -0.01  # ... only with a negative probability
