"""Standard errors: published closed forms, numerical gradients, and a Monte Carlo simulation."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy import stats

import rankfold
from rankfold.ordinal_measures import Sampling, delta_variance, ordinal_measure_arrays
from tables_for_tests import associated_tables

CONCORDANCE_KEYS = ["gamma", "somers_d_col_given_row", "somers_d_row_given_col",
                    "somers_d_symmetric", "tau_b", "tau_c"]
ALL_KEYS = [*CONCORDANCE_KEYS, "spearman_rho"]


def loop_concordance(n: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """C_ij and D_ij by direct summation over all other cells (definition, no cumulative sums)."""
    n_rows, n_cols = n.shape
    conc, disc = np.zeros_like(n), np.zeros_like(n)
    for i, j, a, b in itertools.product(range(n_rows), range(n_cols), range(n_rows), range(n_cols)):
        side = (a - i) * (b - j)
        if side > 0:
            conc[i, j] += n[a, b]
        elif side < 0:
            disc[i, j] += n[a, b]
    return conc, disc


def reference_estimates(n: np.ndarray) -> dict[str, float]:
    """The measures straight from their definitions (Agresti 2010, ch. 7; Stuart 1953)."""
    n = np.asarray(n, dtype=float)
    conc, disc = loop_concordance(n)
    P, Q, total = (n * conc).sum(), (n * disc).sum(), n.sum()
    w_r = total**2 - (n.sum(axis=1) ** 2).sum()
    w_c = total**2 - (n.sum(axis=0) ** 2).sum()
    m = min(n.shape)
    # Spearman's rho: weighted Pearson correlation of midrank scores (common practice).
    row_mid = np.cumsum(n.sum(axis=1)) - n.sum(axis=1) / 2
    col_mid = np.cumsum(n.sum(axis=0)) - n.sum(axis=0) / 2
    u = row_mid - (n.sum(axis=1) * row_mid).sum() / total
    v = col_mid - (n.sum(axis=0) * col_mid).sum() / total
    rho = (n * np.outer(u, v)).sum() / np.sqrt(
        (n.sum(axis=1) * u**2).sum() * (n.sum(axis=0) * v**2).sum())
    return {
        "gamma": (P - Q) / (P + Q),
        "somers_d_col_given_row": (P - Q) / w_r,
        "somers_d_row_given_col": (P - Q) / w_c,
        "somers_d_symmetric": (P - Q) / ((w_r + w_c) / 2),
        "tau_b": (P - Q) / np.sqrt(w_r * w_c),
        "tau_c": m * (P - Q) / (total**2 * (m - 1)),
        "spearman_rho": rho,
    }


TABLES = associated_tables(seed=202, count=8)


@pytest.mark.parametrize("counts", TABLES, ids=str)
def test_standard_errors_equal_the_published_closed_forms(counts):
    # Source: the closed forms of Goodman & Kruskal (1972), Brown & Benedetti (1977) and
    # Agresti (2010, ch. 7), evaluated here with loop-summed C_ij and D_ij.
    n = counts.astype(float)
    conc, disc = loop_concordance(n)
    d = conc - disc
    P, Q, total = (n * conc).sum(), (n * disc).sum(), n.sum()
    S = P - Q
    rows, cols = n.sum(axis=1), n.sum(axis=0)
    w_r, w_c = total**2 - (rows**2).sum(), total**2 - (cols**2).sum()
    w = np.sqrt(w_r * w_c)
    root_null = np.sqrt((n * d**2).sum() - S**2 / total)
    tau_b = S / w
    v = rows[:, None] * w_c + cols[None, :] * w_r
    m = min(n.shape)
    expected = {
        "gamma": (4 / (P + Q) ** 2 * np.sqrt((n * (Q * conc - P * disc) ** 2).sum()),
                  2 / (P + Q) * root_null),
        "somers_d_col_given_row": (
            2 / w_r**2 * np.sqrt((n * (w_r * d - S * (total - rows[:, None])) ** 2).sum()),
            2 / w_r * root_null),
        "somers_d_row_given_col": (
            2 / w_c**2 * np.sqrt((n * (w_c * d - S * (total - cols[None, :])) ** 2).sum()),
            2 / w_c * root_null),
        "tau_b": (1 / w**2 * np.sqrt((n * (2 * w * d + tau_b * v) ** 2).sum()
                                     - total**3 * tau_b**2 * (w_r + w_c) ** 2),
                  2 / w * root_null),
        "tau_c": (2 * m / ((m - 1) * total**2) * root_null,) * 2,
    }
    frame = rankfold.table_from_counts(counts).measures()
    for key, (se, se_null) in expected.items():
        assert frame.loc[key, "std_error"] == pytest.approx(se, rel=1e-9), key
        assert frame.loc[key, "std_error_null"] == pytest.approx(se_null, rel=1e-9), key


def numerical_gradient(func, n: np.ndarray, step: float = 1e-4) -> dict[str, np.ndarray]:
    """Central finite differences of each estimate with respect to each cell count."""
    grads = {key: np.zeros_like(n) for key in ALL_KEYS}
    for i, j in itertools.product(*map(range, n.shape)):
        up, down = n.copy(), n.copy()
        up[i, j] += step
        down[i, j] -= step
        hi, lo = func(up), func(down)
        for key in ALL_KEYS:
            grads[key][i, j] = (hi[key] - lo[key]) / (2 * step)
    return grads


@pytest.mark.parametrize("counts", TABLES, ids=str)
def test_delta_standard_errors_match_numerical_gradients(counts):
    # Source: the delta method (Agresti, Categorical Data Analysis, 3rd ed., 2013, sec. 16.1):
    # Var = sum n g^2 - (sum n g)^2 / n with g the gradient of the estimate; here g is a
    # central finite difference of estimates computed from their definitions, independent
    # of the core.
    n = counts.astype(float) + 0.5  # keep every cell away from 0 for the downward step
    grads = numerical_gradient(reference_estimates, n)
    arrays = ordinal_measure_arrays(n, gradients=True)
    for key in ALL_KEYS:
        fd_se = np.sqrt(delta_variance(n, grads[key], Sampling()))
        assert float(arrays[key]["std_error"]) == pytest.approx(fd_se, rel=1e-6), key
        # the gradient handed back for the delta method of several measures is the same one
        scale = np.abs(grads[key]).max()
        np.testing.assert_allclose(arrays[key]["gradient"], grads[key], rtol=0,
                                   atol=1e-6 * scale, err_msg=key)


@pytest.mark.parametrize("counts", TABLES[:4], ids=str)
def test_cramers_v_error_matches_numerical_gradient_of_scipy_v(counts):
    # Source: V = sqrt(X^2 / (n (m - 1))) with X^2 from scipy.stats.chi2_contingency (which
    # takes non-integer tables), differentiated numerically; the delta method as above.
    n = counts.astype(float) + 0.5
    m = min(n.shape)

    def v_of(table):
        chi2 = stats.chi2_contingency(table, correction=False).statistic
        return np.sqrt(chi2 / (table.sum() * (m - 1)))

    grad = np.zeros_like(n)
    for i, j in itertools.product(*map(range, n.shape)):
        up, down = n.copy(), n.copy()
        up[i, j] += 1e-4
        down[i, j] -= 1e-4
        grad[i, j] = (v_of(up) - v_of(down)) / 2e-4
    fd_se = np.sqrt(delta_variance(n, grad, Sampling()))
    frame = rankfold.table_from_counts(n).measures()
    assert frame.loc["cramers_v", "estimate"] == pytest.approx(v_of(n))
    assert frame.loc["cramers_v", "std_error"] == pytest.approx(fd_se, rel=1e-5)


# A fixed 4 x 5 probability table with a moderate positive association (invented).
PROBABILITIES = np.array([
    [0.06, 0.05, 0.03, 0.02, 0.01],
    [0.04, 0.06, 0.05, 0.03, 0.02],
    [0.02, 0.04, 0.06, 0.06, 0.04],
    [0.01, 0.02, 0.04, 0.08, 0.11],
])
PROBABILITIES = PROBABILITIES / PROBABILITIES.sum()


def simulate(probabilities: np.ndarray, size: int, replicates: int, seed: int):
    rng = np.random.default_rng(seed)
    draws = rng.multinomial(size, probabilities.ravel(), size=replicates)
    return ordinal_measure_arrays(draws.reshape(replicates, *probabilities.shape).astype(float))


def test_delta_method_errors_and_intervals_agree_with_simulation():
    # Source: Monte Carlo simulation (4000 multinomial tables of n = 400 from a fixed
    # probability table); the true values are the definitions evaluated at the probabilities.
    # With 4000 replicates the SD is estimated to about 1.1% and coverage to about 0.35%.
    arrays = simulate(PROBABILITIES, size=400, replicates=4000, seed=99)
    truth = reference_estimates(PROBABILITIES)
    crit = stats.norm.ppf(0.975)
    for key in ALL_KEYS:
        est, se = arrays[key]["estimate"], arrays[key]["std_error"]
        assert np.isfinite(est).all() and np.isfinite(se).all(), key
        ratio = se.mean() / est.std(ddof=1)
        assert 0.95 <= ratio <= 1.05, (key, ratio)
        covered = np.mean(np.abs(est - truth[key]) <= crit * se)
        assert 0.93 <= covered <= 0.97, (key, covered)


def test_null_standard_errors_agree_with_simulation_under_independence():
    # Source: Monte Carlo simulation from an outer-product (independence) probability table:
    # the null standard error should match the spread of each estimate around 0, and the
    # two-sided 5% z test should reject in about 5% of replicates.
    independent = np.outer(PROBABILITIES.sum(axis=1), PROBABILITIES.sum(axis=0))
    arrays = simulate(independent, size=400, replicates=4000, seed=123)
    for key in ALL_KEYS:
        est, se0 = arrays[key]["estimate"], arrays[key]["std_error_null"]
        ratio = se0.mean() / est.std(ddof=1)
        assert 0.95 <= ratio <= 1.05, (key, ratio)
        rejected = np.mean(np.abs(est / se0) > stats.norm.ppf(0.975))
        assert 0.03 <= rejected <= 0.07, (key, rejected)
