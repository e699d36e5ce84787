"""Polychoric correlation: an independent ML fit, the bivariate normal CDF, simulations.

Outside references: scipy's ``multivariate_normal.cdf`` (Genz's algorithm) and
``minimize_scalar``; data simulated the way the model says real data arise (a latent
bivariate normal cut at thresholds); a with-replacement bootstrap of invented weighted records.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import optimize, special, stats

import rankfold
from rankfold.ordinal_measures import Sampling
from rankfold.polychoric import bivariate_normal_cdf, polychoric, polychoric_arrays


def reference_fit(n: np.ndarray) -> float:
    """Two-step ML written from Olsson (1979): thresholds Phi^-1 of the cumulative
    margins, then rho maximising sum n log pi with scipy's bivariate normal CDF."""
    n = np.asarray(n, dtype=float)
    n = n[n.sum(axis=1) > 0][:, n.sum(axis=0) > 0]
    a = np.r_[-np.inf, special.ndtri(np.cumsum(n.sum(1))[:-1] / n.sum()), np.inf]
    b = np.r_[-np.inf, special.ndtri(np.cumsum(n.sum(0))[:-1] / n.sum()), np.inf]

    def minus_loglik(rho: float) -> float:
        law = stats.multivariate_normal(cov=[[1, rho], [rho, 1]])
        corner = np.array([[law.cdf([x, y]) for y in b] for x in a])
        pi = np.diff(np.diff(corner, axis=0), axis=1)
        return -(n * np.log(np.maximum(pi, 1e-300))).sum()

    return optimize.minimize_scalar(minus_loglik, bounds=(-0.999, 0.999), method="bounded",
                                    options={"xatol": 1e-10}).x


def latent_tables(rng, rho, size, draws, row_cuts, col_cuts):
    """Counts of `draws` samples of `size` units from a bivariate normal cut at thresholds."""
    z = rng.multivariate_normal([0, 0], [[1, rho], [rho, 1]], size=(draws, size))
    r = np.digitize(z[..., 0], row_cuts)
    c = np.digitize(z[..., 1], col_cuts)
    cells = (r * (len(col_cuts) + 1) + c) + np.arange(draws)[:, None] * (
        (len(row_cuts) + 1) * (len(col_cuts) + 1))
    flat = np.bincount(cells.ravel(), minlength=draws * (len(row_cuts) + 1) * (len(col_cuts) + 1))
    return flat.reshape(draws, len(row_cuts) + 1, len(col_cuts) + 1).astype(float)


def test_cdf_matches_scipy_multivariate_normal(rng):
    # Outside reference: scipy.stats.multivariate_normal.cdf, including infinite limits and
    # limits exactly 0, where Owen's formula needs care.
    h = rng.normal(size=300) * 2
    k = rng.normal(size=300) * 2
    rho = rng.uniform(-0.995, 0.995, size=300)
    h[:20], k[10:30], h[40:50], k[45:55] = np.inf, -np.inf, 0.0, 0.0
    h[60:70], k[65:75] = -np.inf, np.inf
    expected = [stats.multivariate_normal(cov=[[1, r], [r, 1]]).cdf([x, y])
                for x, y, r in zip(h, k, rho, strict=True)]
    np.testing.assert_allclose(bivariate_normal_cdf(h, k, rho), expected, atol=1e-8)


def test_cdf_at_perfect_correlation():
    # Published limits (Johnson, Kotz & Balakrishnan 2000, ch. 46): Phi(min(h, k)) at rho = 1,
    # max(0, Phi(h) + Phi(k) - 1) at rho = -1.
    h, k = np.array([-0.3, 1.2]), np.array([0.4, -2.0])
    np.testing.assert_allclose(bivariate_normal_cdf(h, k, 1.0), special.ndtr(np.minimum(h, k)))
    np.testing.assert_allclose(bivariate_normal_cdf(h, k, -1.0),
                               np.maximum(special.ndtr(h) + special.ndtr(k) - 1, 0))


@pytest.mark.parametrize("seed", [1, 2, 3, 4])
def test_estimate_matches_independent_ml_fit(seed):
    # Outside reference: reference_fit above (scipy CDF + minimize_scalar).
    rng = np.random.default_rng(seed)
    rows, cols = rng.integers(2, 6, size=2)
    mean = rng.uniform(1, 30, (rows, cols)) * np.exp(0.3 * np.outer(np.arange(rows),
                                                                    np.arange(cols)))
    n = rng.poisson(mean).astype(float)
    if seed == 4:  # an empty category, to be dropped
        n = np.insert(n, 1, 0.0, axis=1)
    assert abs(polychoric(n).estimate - reference_fit(n)) <= 1e-4


def test_linearised_gradient_matches_numerical_differences():
    # Outside reference: central differences of the independent ML fit in each cell total, put
    # through the multinomial delta-method variance sum n (g - gbar)^2 (Agresti 2010, ch. 7).
    n = np.array([[30.0, 12, 5, 2], [14, 25, 16, 6], [3, 11, 22, 31]])
    step = 1e-3
    grad = np.zeros_like(n)
    for idx in np.ndindex(n.shape):
        up, down = n.copy(), n.copy()
        up[idx] += step
        down[idx] -= step
        grad[idx] = (reference_fit(up) - reference_fit(down)) / (2 * step)
    gbar = (n * grad).sum() / n.sum()
    expected = np.sqrt((n * (grad - gbar) ** 2).sum())
    assert polychoric(n).std_error == pytest.approx(expected, rel=1e-3)


@pytest.mark.slow
def test_simulation_mean_and_standard_error():
    # Outside reference: simulation the way the model says data arise, a latent bivariate normal
    # with rho = 0.5 cut at uneven thresholds, 600 seeded draws of 800 units. Measured when
    # written: mean 0.4996, SD 0.0314, mean SE 0.0313, mean G^2 11.13 (in a trial run with
    # another seed Olsson's thresholds-known SE 1/sqrt(-l'') was 0.0297 against an SD of
    # 0.0317, 6% short, which is why the linearised SE is used).
    rng = np.random.default_rng(20240612)
    n = latent_tables(rng, 0.5, 800, 600, [-1.2, -0.3, 0.9], [-0.5, 0.2, 0.6, 1.5])
    found = polychoric_arrays(n)
    estimates = found["estimate"]
    assert abs(estimates.mean() - 0.5) < 0.01
    assert found["std_error"].mean() == pytest.approx(estimates.std(ddof=1), rel=0.10)
    # the G^2 fit statistic is chi-square on IJ - I - J = 11 df when the model holds
    assert np.nanmean(found["fit_statistic"]) == pytest.approx(11, rel=0.10)
    assert (found["fit_df"] == 11).all()


def test_null_standard_error_by_simulation():
    # Outside reference: simulation under independence (rho = 0), 600 draws of 500 units:
    # the standard error at rho = 0 is the spread of the estimates there (measured when
    # written: SD 0.0546, mean null SE 0.0535, 4.2% of |z| > 1.96).
    rng = np.random.default_rng(77)
    n = latent_tables(rng, 0.0, 500, 600, [-0.8, 0.1, 1.1], [-1.0, 0.4])
    found = polychoric_arrays(n)
    assert found["std_error_null"].mean() == pytest.approx(found["estimate"].std(ddof=1),
                                                           rel=0.10)
    # the Wald-type z with the null SE rejects about 5% of the time at 5% (common practice)
    z = found["estimate"] / found["std_error_null"]
    assert 0.02 < np.mean(np.abs(z) > 1.96) < 0.08


def merge(n: np.ndarray, groups: list[list[int]], axis: int) -> np.ndarray:
    return np.stack([n.take(g, axis=axis).sum(axis=axis) for g in groups], axis=axis)


@pytest.mark.slow
def test_merging_neighbours_leaves_polychoric_unchanged_but_moves_gamma():
    # Outside reference: simulation from a latent normal (rho = 0.5, 6 x 6 uneven categories,
    # 500 draws of 600 units). Merging neighbours on either variable keeps the mean polychoric
    # correlation (measured when written: 0.4990 -> 0.4995 rows merged into 3, paired mean
    # difference 0.0006 with SE 0.0007; -> 0.5004 columns merged into 3, 0.0014 with SE
    # 0.0009) while gamma's mean moves (0.458 -> 0.503, SE of the difference 0.0006; -> 0.557,
    # SE 0.0012): merging turns pairs into ties, and gamma drops ties.
    rng = np.random.default_rng(8)
    cuts = [-1.4, -0.7, -0.1, 0.4, 1.2]
    n = latent_tables(rng, 0.5, 600, 500, cuts, [-1.1, -0.3, 0.2, 0.9, 1.5])
    merged_rows = merge(n, [[0, 1], [2, 3], [4, 5]], axis=1)
    merged_cols = merge(n, [[0], [1, 2, 3], [4, 5]], axis=2)

    def gamma(tables):
        return np.array([rankfold.table_from_counts(t).measures().loc["gamma", "estimate"]
                         for t in tables])

    base = polychoric_arrays(n)["estimate"]
    g_base = gamma(n)
    for other in (merged_rows, merged_cols):
        est = polychoric_arrays(other)["estimate"]
        diff = est - base
        se_diff = diff.std(ddof=1) / np.sqrt(len(diff))
        assert abs(diff.mean()) < 3 * se_diff + 1e-4
        g_diff = gamma(other) - g_base
        assert abs(g_diff.mean()) > 10 * g_diff.std(ddof=1) / np.sqrt(len(g_diff))
        assert abs(g_diff.mean()) > 0.02


def test_sampling_weight_errors_match_bootstrap():
    # Outside reference: a seeded with-replacement bootstrap of invented weighted records
    # (1,000 resamples): the linearised SE is within 10% of the bootstrap SD (measured when
    # written: 0.0363 against 0.0370).
    rng = np.random.default_rng(21)
    size = 1200
    z = rng.multivariate_normal([0, 0], [[1, 0.4], [0.4, 1]], size=size)
    r = np.digitize(z[:, 0], [-0.6, 0.3, 1.0])
    c = np.digitize(z[:, 1], [-0.9, 0.0, 0.8])
    weight = np.exp(rng.normal(0.4 * r, 0.6))  # weights depend on the row variable
    cell = r * 4 + c
    onehot = np.zeros((size, 16))
    onehot[np.arange(size), cell] = weight
    totals = onehot.sum(axis=0).reshape(4, 4)
    squared = (onehot**2).sum(axis=0).reshape(4, 4)
    result = polychoric(totals, Sampling(squared, size))
    times = rng.multinomial(size, np.full(size, 1 / size), size=1000).astype(float)
    boot = polychoric_arrays((times @ onehot).reshape(-1, 4, 4))["estimate"]
    assert result.std_error == pytest.approx(boot.std(ddof=1), rel=0.10)
    assert np.isnan(result.fit_statistic) and "sampling weights" in result.fit_note


def test_constant_sampling_weights_give_the_unweighted_errors():
    # Outside reference: the Taylor-linearised variance with every weight c equals the
    # multinomial one of the unweighted counts (Woodruff 1971).
    n = np.array([[20.0, 9, 3], [8, 15, 11], [2, 7, 25]])
    plain = polychoric(n)
    weighted = polychoric(2.5 * n, Sampling(2.5**2 * n, n.sum()))
    assert weighted.estimate == pytest.approx(plain.estimate, abs=1e-10)
    assert weighted.std_error == pytest.approx(plain.std_error, rel=1e-8)
    assert weighted.std_error_null == pytest.approx(plain.std_error_null, rel=1e-8)


def test_batch_equals_single_tables(rng):
    # Outside reference: the single-table function (which drops empty categories) on each table.
    tables = rng.poisson(rng.uniform(0.5, 20, size=(40, 4, 5))).astype(float)
    tables[3, 1] = 0.0  # an empty row category
    tables[7, :, 0] = 0.0
    batch = polychoric_arrays(tables)
    for t, table in enumerate(tables):
        single = polychoric(table)
        for key, value in (("estimate", single.estimate), ("std_error", single.std_error),
                           ("std_error_null", single.std_error_null)):
            np.testing.assert_allclose(batch[key][t], value, rtol=1e-8, atol=1e-12)


def test_undefined_cases_give_nan_with_reasons():
    # Common practice: one category, or the likelihood maximal at rho = +-1 (no discordant
    # pairs: the table equals the comonotone table of its margins, Olsson 1979).
    one_row = polychoric(np.array([[5.0, 3, 2], [0, 0, 0]]))
    assert np.isnan(one_row.estimate) and "two non-empty categories" in one_row.note
    perfect = polychoric(np.array([[10.0, 2, 0], [0, 5, 0], [0, 3, 9]]))
    assert np.isnan(perfect.estimate) and "perfectly ordered" in perfect.note
    assert np.isnan(perfect.std_error) and np.isnan(perfect.fit_statistic)
    reverse = polychoric(np.array([[0.0, 4], [6, 0]]))
    assert np.isnan(reverse.estimate) and "no concordant" in reverse.note
    two_by_two = polychoric(np.array([[20.0, 10], [8, 22]]))
    assert np.isfinite(two_by_two.estimate) and np.isnan(two_by_two.fit_df)
    assert "2 x 2" in two_by_two.fit_note


def test_empty_category_changes_nothing():
    # Common practice: an empty category carries no threshold; dropping it is the same table.
    n = np.array([[12.0, 5, 3], [6, 14, 8], [2, 6, 17]])
    padded = np.insert(np.insert(n, 2, 0.0, axis=0), 0, 0.0, axis=1)
    a, b = polychoric(n), polychoric(padded)
    assert b.estimate == pytest.approx(a.estimate, abs=1e-12)
    assert b.fit_df == a.fit_df == 3  # IJ - I - J with I = J = 3


def test_bad_input_is_refused():
    with pytest.raises(ValueError, match="2-D table"):
        polychoric(np.ones((2, 2, 2)))
    with pytest.raises(ValueError, match="non-negative"):
        polychoric(np.array([[1.0, -1], [2, 3]]))


def test_cells_too_small_to_compute_give_nan_with_a_reason_and_no_warning():
    # A cell holding 1e-15 of the units needs bivariate normal probabilities to ~15 digits,
    # beyond double precision (about 16 digits, common practice): no number rather than a
    # wrong one.
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        found = polychoric(np.array([[1e15, 1.0], [1.0, 1.0]]))
    assert np.isnan(found.estimate) and "enough digits" in found.note
