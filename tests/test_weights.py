"""Frequency and sampling (survey) weights: counting, standard errors, checks on bad weights.

All data are invented (seeded): a made-up survey of trip length (1-3) and a service rating
(1-4), with unequal selection weights that depend on the trip length.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold.ordinal_measures import Sampling, ordinal_measure_arrays

ERROR_COLUMNS = ["std_error", "std_error_null"]
CHECKED = ["gamma", "somers_d_col_given_row", "somers_d_row_given_col", "tau_b", "tau_c",
           "spearman_rho"]


def invented_survey(seed: int = 5, size: int = 1500) -> pd.DataFrame:
    """Invented records with lognormal weights that grow with trip length (so weighting matters)."""
    rng = np.random.default_rng(seed)
    trip = rng.integers(1, 4, size=size)
    latent = 0.5 * trip + rng.normal(0, 1, size=size)
    rating = np.digitize(latent, [0.4, 1.0, 1.6]) + 1
    weight = np.exp(rng.normal(0.3 * trip, 0.7))
    region = rng.choice(["coast", "hills"], size=size)
    return pd.DataFrame({"trip": trip, "rating": rating, "w": weight, "region": region})


@pytest.fixture(scope="module")
def survey() -> pd.DataFrame:
    return invented_survey()


# ----------------------------------------------------------------------- frequency weights
def test_frequency_weights_equal_expanded_rows(survey):
    rng = np.random.default_rng(1)
    frame = survey.assign(times=rng.integers(0, 4, size=len(survey)))  # zeros allowed
    # Outside reference: the records repeated `times` times (rows with 0 disappear).
    expanded = frame.loc[frame.index.repeat(frame["times"])]
    weighted = rankfold.table(frame, "trip", "rating", control="region", weight="times")
    plain = rankfold.table(expanded, "trip", "rating", control="region")
    np.testing.assert_array_equal(weighted.cells, plain.cells)
    pd.testing.assert_frame_equal(weighted.measures(), plain.measures())
    pd.testing.assert_frame_equal(weighted.tests(), plain.tests())
    pd.testing.assert_frame_equal(weighted.control_measures(), plain.control_measures())
    pd.testing.assert_frame_equal(weighted.partial_measures(), plain.partial_measures())
    assert weighted.pairs() == plain.pairs()


# ------------------------------------------------------------------------ sampling weights
def bootstrap_estimates(frame: pd.DataFrame, rng: np.random.Generator, draws: int,
                        strata: str | None = None) -> dict[str, np.ndarray]:
    """Weighted measures on `draws` with-replacement resamples of the records.

    Each resample is a vector of multiplicities per record; with one-hot cell indicators the
    weighted tables of all resamples are one matrix product. With `strata`, records are
    resampled within each stratum (level) separately and the tables are (draws, K, I, J).
    """
    rows = np.searchsorted([1, 2, 3], frame["trip"].to_numpy())
    cols = np.searchsorted([1, 2, 3, 4], frame["rating"].to_numpy())
    onehot = np.zeros((len(frame), 12))
    onehot[np.arange(len(frame)), rows * 4 + cols] = frame["w"].to_numpy()
    groups = [np.arange(len(frame))] if strata is None else [
        np.flatnonzero(frame[strata].to_numpy() == label)
        for label in sorted(frame[strata].unique())
    ]
    tables = []
    for members in groups:
        times = rng.multinomial(len(members), np.full(len(members), 1 / len(members)), size=draws)
        tables.append((times @ onehot[members]).reshape(draws, 3, 4))
    cells = np.stack(tables, axis=1)
    if strata is None:
        return {key: value["estimate"][:, 0]
                for key, value in ordinal_measure_arrays(cells).items()}
    return {"partial_gamma": rankfold.control_variable.partial_gamma_arrays(cells)["estimate"]}


def test_sampling_weight_errors_match_bootstrap(survey):
    # Monte Carlo check of the Taylor-linearised errors (Woodruff 1971): resample records with
    # replacement, recompute the weighted estimates, compare their spread.
    t = rankfold.table(survey, "trip", "rating", weight="w", weight_kind="sampling")
    spread = bootstrap_estimates(survey, np.random.default_rng(99), 3000)
    measures = t.measures()
    for key in CHECKED:
        assert measures.loc[key, "std_error"] == pytest.approx(np.std(spread[key], ddof=1),
                                                               rel=0.10), key
    # The check has power: treating the weighted totals (rescaled to the number of records)
    # as plain counts misses the spread by far more than 10% with these unequal weights.
    naive_cells = t.counts.to_numpy() * len(survey) / t.counts.to_numpy().sum()
    naive = float(ordinal_measure_arrays(naive_cells)["gamma"]["std_error"])
    assert abs(naive / np.std(spread["gamma"], ddof=1) - 1) > 0.10


def test_sampling_weight_partial_gamma_matches_stratified_bootstrap(survey):
    # Levels are independent samples: resample records within each level.
    t = rankfold.table(survey, "trip", "rating", control="region", weight="w",
                       weight_kind="sampling")
    spread = bootstrap_estimates(survey, np.random.default_rng(7), 3000, strata="region")
    se = t.partial_measures().loc["partial_gamma", "std_error"]
    assert se == pytest.approx(np.std(spread["partial_gamma"], ddof=1), rel=0.10)


def test_constant_sampling_weights_give_unweighted_errors(survey):
    # With every weight equal to c, the linearised variance reduces to the multinomial one
    # (Woodruff 1971; common practice), whatever c is; exclusions made before or after
    # counting must keep this (their records leave the variance too).
    frame = survey.assign(c=2.5)
    for build in (
        lambda **kw: rankfold.table(frame, "trip", "rating", exclude={"rating": [4]}, **kw),
        lambda **kw: rankfold.table(frame, "trip", "rating", **kw).exclude("cols", [4]),
        lambda **kw: rankfold.table(frame, "trip", "rating", **kw).merge("rows", [[1, 2]]),
    ):
        weighted, plain = build(weight="c", weight_kind="sampling"), build()
        pd.testing.assert_frame_equal(weighted.measures().loc[CHECKED, ERROR_COLUMNS],
                                      plain.measures().loc[CHECKED, ERROR_COLUMNS])
    controlled = rankfold.table(frame, "trip", "rating", control="region", weight="c",
                             weight_kind="sampling")
    plain = rankfold.table(frame, "trip", "rating", control="region")
    pd.testing.assert_frame_equal(controlled.partial_measures()[ERROR_COLUMNS],
                                  plain.partial_measures()[ERROR_COLUMNS])
    pd.testing.assert_frame_equal(
        controlled.control_measures().loc[(slice(None), CHECKED), ERROR_COLUMNS],
        plain.control_measures().loc[(slice(None), CHECKED), ERROR_COLUMNS])


def test_kish_effective_size_in_notes(survey):
    t = rankfold.table(survey, "trip", "rating", control="region", weight="w",
                       weight_kind="sampling")
    w = survey["w"]
    # Kish (1965, Survey Sampling): n_eff = (sum w)^2 / sum w^2
    kish = w.sum() ** 2 / (w**2).sum()
    assert f"effective sample size (Kish) = {kish:,.1f} respondents" in (
        t.measures().loc["gamma", "note"])
    for label, part in survey.groupby("region")["w"]:
        note = t.control_measures().loc[(label, "gamma"), "note"]
        assert f"effective sample size (Kish) = {part.sum() ** 2 / (part**2).sum():,.1f}" in note


def test_count_based_tests_refuse_sampling_weights(survey):
    t = rankfold.table(survey, "trip", "rating", control="region", weight="w",
                       weight_kind="sampling")
    tests = t.tests()
    for key in ("pearson_x2", "likelihood_ratio_g2", "trend_m2", "cmh_correlation"):
        assert np.isnan(tests.loc[key, "statistic"])
        assert "sampling weights" in tests.loc[key, "note"]
    assert np.isfinite(tests.loc["gamma_homogeneity", "statistic"])
    with pytest.raises(ValueError, match="sampling weights"):
        t.permutation_test(n_resamples=10, seed=1)


# -------------------------------------------------------------------------------- bad input
@pytest.mark.parametrize(
    ("values", "what"),
    [([-1.0, 2.0, -0.5], "2 negative"), ([np.nan, 1.0, np.nan], "2 missing"),
     ([np.inf, 1.0, -np.inf], "2 infinite"), (["a", 1.0, 2.0], "1 missing or non-numeric")],
)
def test_bad_weights_raise_naming_rows_and_column(values, what):
    frame = pd.DataFrame({"x": [1, 2, 3] * 3, "y": [1, 2, 2] * 3, "wt": values * 3})
    count = int(what.split()[0]) * 3
    for kind in ("frequency", "sampling"):
        with pytest.raises(ValueError, match=rf"'wt'.*{count} {what.split()[1]}.*{count} row"):
            rankfold.table(frame, "x", "y", weight="wt", weight_kind=kind)


def test_zero_weights_are_allowed():
    frame = pd.DataFrame({"x": [1, 1, 2, 2, 3], "y": [1, 2, 2, 3, 3],
                          "w": [1.0, 0.0, 2.0, 1.0, 0.0]})
    t = rankfold.table(frame, "x", "y", weight="w", weight_kind="sampling")
    assert t.n == pytest.approx(4.0)
    assert int(t.records.sum()) == 5  # zero-weight records are still sampled records


def test_sampling_needs_a_weight_column():
    frame = pd.DataFrame({"x": [1, 2], "y": [1, 2]})
    with pytest.raises(ValueError, match="weight="):
        rankfold.table(frame, "x", "y", weight_kind="sampling")


def test_dataframe_is_untouched(survey):
    frame = survey.copy()
    frame.loc[3, "rating"] = np.nan
    before = frame.copy(deep=True)
    t = rankfold.table(frame, "trip", "rating", control="region", weight="w",
                       weight_kind="sampling", exclude={"trip": [3]})
    t.measures(), t.control_measures(), t.partial_measures(), t.tests(), t.control_counts
    t.merge("cols", [[1, 2]]).partial_measures()
    pd.testing.assert_frame_equal(frame, before)
    assert list(frame.columns) == list(before.columns)


def test_sampling_weight_diagnostics_count_respondents_not_weighted_totals():
    # Sparseness is about how many units were observed (Cochran 1954 states the rule for counts),
    # so population-scale survey weights must not hide sparse cells. Reference: the same records
    # without weights (constant weights leave every proportion unchanged), and pandas.crosstab
    # for the records per cell.
    rng = np.random.default_rng(7)
    frame = pd.DataFrame({
        "a": rng.integers(0, 4, size=60),
        "b": rng.integers(0, 3, size=60),
    })
    weighted = frame.assign(w=1000.0)
    plain = rankfold.table(frame, "a", "b").diagnostics()
    survey = rankfold.table(weighted, "a", "b", weight="w", weight_kind="sampling").diagnostics()
    records = pd.crosstab(frame["a"], frame["b"]).to_numpy()
    expected = np.outer(records.sum(axis=1), records.sum(axis=0)) / records.sum()
    assert survey.min_expected == pytest.approx(expected.min(), rel=1e-12, abs=0)
    assert survey.share_expected_below_5 == pytest.approx((expected < 5).mean(), rel=1e-12, abs=0)
    assert survey.min_expected < 5  # weighted totals (x1000) would have hidden this
    np.testing.assert_allclose(
        survey.adjusted_residuals.to_numpy(), plain.adjusted_residuals.to_numpy(), rtol=1e-10
    )
    assert any("count records" in w for w in survey.warnings)
    # the expected counts reported stay on the scale of the weighted table
    np.testing.assert_allclose(survey.expected.to_numpy(), plain.expected.to_numpy() * 1000)


@pytest.mark.parametrize("steep", [False, True])
def test_weighted_spearman_null_error_holds_its_level(steep):
    # Simulation under independence, drawn as a weighted survey arises: 4,000 seeded samples
    # of 300 records, row and column categories independent, sampling weights rising with
    # the row category (with noise, or steeply). The z test with the linearised null error
    # rejects in [4%, 6%] of samples at the 5% level.
    rng = np.random.default_rng(3 if steep else 8)
    draws, size, n_rows, n_cols = 4000, 300, 4, 5
    x = rng.choice(n_rows, p=[0.3, 0.3, 0.2, 0.2], size=(draws, size))
    y = rng.choice(n_cols, p=[0.1, 0.2, 0.3, 0.25, 0.15], size=(draws, size))
    w = np.exp(0.8 * x) if steep else (1 + 1.5 * x) * rng.lognormal(0, 0.3, size=x.shape)
    flat = (x * n_cols + y + (np.arange(draws) * n_rows * n_cols)[:, None]).ravel()
    shape = (draws, n_rows, n_cols)
    cells = np.bincount(flat, w.ravel(), draws * n_rows * n_cols).reshape(shape)
    squared = np.bincount(flat, (w * w).ravel(), draws * n_rows * n_cols).reshape(shape)
    rho = ordinal_measure_arrays(cells, Sampling(squared, np.full(draws, float(size))))[
        "spearman_rho"]
    rejected = np.mean(np.abs(rho["estimate"] / rho["std_error_null"]) > 1.959964)
    assert 0.04 <= rejected <= 0.06


def test_constant_weights_give_the_permutation_error_of_spearman():
    # Common practice: 1/sqrt(n - 1) is the permutation standard deviation of a correlation;
    # constant sampling weights must give it exactly.
    counts = np.array([[5.0, 3, 1], [2, 6, 4], [1, 2, 7]])
    rho = ordinal_measure_arrays(counts * 2.5, Sampling(counts * 6.25, counts.sum()))
    assert float(rho["spearman_rho"]["std_error_null"]) == pytest.approx(
        1 / np.sqrt(counts.sum() - 1), rel=1e-12)
