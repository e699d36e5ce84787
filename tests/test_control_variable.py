"""Tables with a control variable: per-level counts and measures, partial gamma, homogeneity,
CMH correlation.

The data are invented (seeded): three clinics ("north", "south", "east") where the association
between a dose band (1-3) and a relief grade (1-4) differs by clinic.
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from statsmodels.stats.contingency_tables import StratifiedTable

import rankfold
from rankfold.control_variable import partial_gamma_arrays

LEVELS = ["north", "south", "east"]


def invented_clinics(seed: int = 7, size: int = 450) -> pd.DataFrame:
    """Invented records: dose 1-3 and relief 1-4, association strength differing by clinic."""
    rng = np.random.default_rng(seed)
    clinic = rng.choice(LEVELS, size=size, p=[0.4, 0.35, 0.25])
    dose = rng.integers(1, 4, size=size)
    slope = pd.Series(clinic).map({"north": 0.9, "south": 0.2, "east": -0.4}).to_numpy()
    latent = slope * dose + rng.normal(0, 1.2, size=size)
    relief = np.digitize(latent, np.quantile(latent, [0.25, 0.5, 0.75])) + 1
    return pd.DataFrame({"clinic": clinic, "dose": dose, "relief": relief})


@pytest.fixture(scope="module")
def clinics() -> pd.DataFrame:
    return invented_clinics()


@pytest.fixture(scope="module")
def controlled(clinics):
    return rankfold.table(clinics, "dose", "relief", control="clinic",
                          order={"clinic": LEVELS})


# ------------------------------------------------------------------- independent references
def brute_force_pairs(x: np.ndarray, y: np.ndarray) -> tuple[int, int]:
    """Concordant and discordant unordered pairs by enumerating every pair of records."""
    sx = np.sign(x[:, None] - x[None, :])
    sy = np.sign(y[:, None] - y[None, :])
    upper = np.triu(np.ones((len(x), len(x)), dtype=bool), k=1)
    s = (sx * sy)[upper]
    return int((s > 0).sum()), int((s < 0).sum())


def pairs_from_cells(cells: np.ndarray) -> tuple[float, float]:
    """P and Q (unordered, summed over levels) by looping over every pair of cells."""
    P = Q = 0.0
    for level in cells:
        n_i, n_j = level.shape
        for (i, j), (a, b) in itertools.product(np.ndindex(n_i, n_j), repeat=2):
            if a > i and b > j:
                P += level[i, j] * level[a, b]
            elif a > i and b < j:
                Q += level[i, j] * level[a, b]
    return P, Q


def partial_gamma_loops(cells: np.ndarray) -> float:
    P, Q = pairs_from_cells(cells)
    return (P - Q) / (P + Q)


def numerical_gradient(f, cells: np.ndarray, h: float = 1e-4) -> np.ndarray:
    """Central differences of f with respect to every cell count."""
    grad = np.zeros_like(cells, dtype=float)
    for idx in np.ndindex(cells.shape):
        up, down = cells.astype(float), cells.astype(float)
        up[idx] += h
        down[idx] -= h
        grad[idx] = (f(up) - f(down)) / (2 * h)
    return grad


def stratified_delta_se(cells, grad, squared=None, records=None) -> float:
    """sqrt(sum_k [sum s g^2 - (sum n g)^2 / m_k]): the delta method for independent
    multinomials, one per level (product-multinomial sampling, Bishop, Fienberg & Holland
    1975, ch. 14). s = n and m_k = n_k for counts; s = sum of squared weights and m_k =
    records of level k for survey weights (Woodruff 1971)."""
    s = cells if squared is None else squared
    total = 0.0
    for k in range(cells.shape[0]):
        m = cells[k].sum() if records is None else records[k]
        total += (s[k] * grad[k] ** 2).sum() - (cells[k] * grad[k]).sum() ** 2 / m
    return float(np.sqrt(total))


def whole_table_delta_se(cells, grad, squared=None, records=None) -> float:
    """sqrt(sum s g^2 - (sum n g)^2 / m) over every cell of the K x I x J table: the delta
    method for one multinomial (Bishop, Fienberg & Holland 1975, ch. 14), the level of each
    unit being random; with survey weights the linearisation over all records (Woodruff
    1971)."""
    s = cells if squared is None else squared
    m = cells.sum() if records is None else np.sum(records)
    return float(np.sqrt((s * grad**2).sum() - (cells * grad).sum() ** 2 / m))


# -------------------------------------------------------------------------- per-level views
def test_level_counts_match_pandas_crosstab(clinics, controlled):
    # Outside reference: pandas.crosstab of the raw records.
    expected = pd.crosstab([clinics["clinic"], clinics["dose"]], clinics["relief"])
    got = controlled.control_counts
    assert got.index.names == ["clinic", "dose"]
    for label in LEVELS:
        np.testing.assert_array_equal(got.xs(label, level=0).to_numpy(),
                                      expected.xs(label, level=0).to_numpy())
    # the pooled table is the sum over levels
    np.testing.assert_array_equal(controlled.counts.to_numpy(),
                                  pd.crosstab(clinics["dose"], clinics["relief"]).to_numpy())


def test_level_measures_equal_each_levels_own_table(clinics, controlled):
    frame = controlled.control_measures(confidence=0.9)
    assert frame.index.names == ["clinic", "measure"]
    assert list(frame.index.get_level_values(0).unique()) == LEVELS
    for label in LEVELS:
        own = rankfold.table(clinics[clinics["clinic"] == label], "dose", "relief",
                             order={"dose": [1, 2, 3], "relief": [1, 2, 3, 4]})
        pd.testing.assert_frame_equal(frame.xs(label, level=0), own.measures(confidence=0.9))
        # Outside reference for the estimate: brute-force enumeration of the level's pairs.
        sub = clinics[clinics["clinic"] == label]
        C, D = brute_force_pairs(sub["dose"].to_numpy(), sub["relief"].to_numpy())
        assert frame.loc[(label, "gamma"), "estimate"] == pytest.approx((C - D) / (C + D))


def test_level_views_need_a_level(clinics):
    plain = rankfold.table(clinics, "dose", "relief")
    for call in (lambda: plain.control_counts, plain.control_measures, plain.partial_measures):
        with pytest.raises(ValueError, match="control="):
            call()


# --------------------------------------------------------------------------- partial gamma
def test_partial_gamma_equals_brute_force_pairs(clinics, controlled):
    # Davis (1967): sum_k (C_k - D_k) / sum_k (C_k + D_k), pairs formed within levels only.
    C = D = 0
    for label in LEVELS:
        sub = clinics[clinics["clinic"] == label]
        c, d = brute_force_pairs(sub["dose"].to_numpy(), sub["relief"].to_numpy())
        C, D = C + c, D + d
    row = controlled.partial_measures().loc["partial_gamma"]
    assert row["estimate"] == pytest.approx((C - D) / (C + D), rel=1e-12)
    # and it is not the pooled gamma (the levels matter in this invented scenario)
    assert abs(row["estimate"] - controlled.measures().loc["gamma", "estimate"]) > 0.02


@pytest.mark.parametrize("control_totals", ["random", "fixed"])
def test_partial_gamma_standard_errors_equal_numerical_gradient(controlled, control_totals):
    cells = controlled.cells.astype(float)
    grad = numerical_gradient(partial_gamma_loops, cells)
    P, Q = pairs_from_cells(cells)

    def numerator_over_fixed_denominator(c):
        p, q = pairs_from_cells(c)
        return (p - q) / (P + Q)

    grad_null = numerical_gradient(numerator_over_fixed_denominator, cells)
    reference = whole_table_delta_se if control_totals == "random" else stratified_delta_se
    row = controlled.partial_measures(0.95, control_totals).loc["partial_gamma"]
    assert row["std_error"] == pytest.approx(reference(cells, grad), rel=1e-6)
    assert row["std_error_null"] == pytest.approx(reference(cells, grad_null), rel=1e-6)
    # Wald interval and normal z test (Agresti 2010, ch. 7)
    crit = stats.norm.ppf(0.975)
    assert row["ci_low"] == pytest.approx(row["estimate"] - crit * row["std_error"])
    z = row["estimate"] / row["std_error_null"]
    assert row["p_value"] == pytest.approx(2 * stats.norm.sf(abs(z)), rel=1e-9, abs=0)


def simulated_partial_gammas(cells: np.ndarray, control_totals: str, draws: int, seed: int):
    """Partial gamma of tables drawn the way each option says the data arose (simulation).

    "random": every unit's level, row and column come from one multinomial over the
    K x I x J table (the level of a respondent is random, as in an ordinary survey).
    "fixed": each level is a multinomial sample of its own, observed size (a stratified
    design). The probabilities are the observed proportions.
    """
    rng = np.random.default_rng(seed)
    if control_totals == "random":
        tables = rng.multinomial(int(cells.sum()), (cells / cells.sum()).ravel(), size=draws)
        tables = tables.reshape(draws, *cells.shape)
    else:
        tables = np.stack(
            [rng.multinomial(int(c.sum()), (c / c.sum()).ravel(), size=draws).reshape(
                draws, *c.shape) for c in cells], axis=1)
    return partial_gamma_arrays(tables.astype(float), control_totals=control_totals)


@pytest.mark.parametrize("control_totals", ["random", "fixed"])
def test_partial_gamma_standard_error_matches_simulation(controlled, control_totals):
    # Monte Carlo, 5,000 seeded draws made the way the option says the data arose: the
    # standard error on the observed table is within 3% of the spread of the estimates, and
    # the errors of the simulated tables average to it too.
    cells = controlled.cells.astype(float)
    found = simulated_partial_gammas(cells, control_totals, 5000, seed=20240501)
    spread = np.nanstd(found["estimate"], ddof=1)
    se = controlled.partial_measures(control_totals=control_totals).loc[
        "partial_gamma", "std_error"]
    assert se == pytest.approx(spread, rel=0.03)
    assert np.nanmean(found["std_error"]) == pytest.approx(spread, rel=0.03)


def test_partial_gamma_random_levels_error_is_larger_than_fixed_on_this_survey(controlled):
    # Conditioning on the level sizes removes their variation (Bishop, Fienberg & Holland
    # 1975, ch. 14: product-multinomial variances are never larger): here the levels' gammas
    # differ, so the default is clearly larger, and the simulation with random level sizes
    # rejects the fixed-size error.
    random_se, fixed_se = (
        controlled.partial_measures(control_totals=c).loc["partial_gamma", "std_error"]
        for c in ("random", "fixed"))
    assert random_se > 1.05 * fixed_se
    spread = np.nanstd(simulated_partial_gammas(controlled.cells.astype(float), "random",
                                                5000, seed=11)["estimate"], ddof=1)
    assert abs(fixed_se / spread - 1) > 0.05


def test_partial_gamma_weighted_error_follows_the_design(controlled):
    # Simulation of a survey with sampling weights, 3,000 seeded samples of 600 records: each
    # record's level, dose and relief drawn from the clinic proportions (level random), its
    # weight rising with the level and the relief. The default linearised error over all
    # records (Woodruff 1971) is within 5% of the spread of the weighted estimates; the
    # weighted error is the same as the unweighted one at constant weights.
    cells = controlled.cells.astype(float)
    rng = np.random.default_rng(99)
    draws, size = 3000, 600
    flat = rng.choice(cells.size, p=(cells / cells.sum()).ravel(), size=(draws, size))
    k, _, j = np.unravel_index(flat, cells.shape)
    weight = (1.0 + k) * (1.0 + 0.5 * j) * rng.uniform(0.5, 1.5, size=flat.shape)
    offsets = (np.arange(draws) * cells.size)[:, None]
    total = np.bincount((flat + offsets).ravel(), weight.ravel(), draws * cells.size)
    squared = np.bincount((flat + offsets).ravel(), (weight**2).ravel(), draws * cells.size)
    records = np.bincount((flat + offsets).ravel(), None, draws * cells.size)
    shape = (draws, *cells.shape)
    per_level = records.reshape(shape).sum(axis=(-2, -1))
    found = partial_gamma_arrays(
        total.reshape(shape), rankfold.ordinal_measures.Sampling(squared.reshape(shape),
                                                                 per_level))
    spread = np.nanstd(found["estimate"], ddof=1)
    assert np.nanmean(found["std_error"]) == pytest.approx(spread, rel=0.05)
    plain = partial_gamma_arrays(cells)
    constant = partial_gamma_arrays(
        cells * 3.0, rankfold.ordinal_measures.Sampling(cells * 9.0, cells.sum(axis=(-2, -1))))
    assert float(constant["std_error"]) == pytest.approx(float(plain["std_error"]), rel=1e-9)


def test_control_totals_must_be_random_or_fixed(controlled):
    with pytest.raises(ValueError, match="control_totals"):
        controlled.partial_measures(control_totals="stratified")


def test_partial_gamma_batch_equals_one_by_one(controlled):
    rng = np.random.default_rng(3)
    batch = rng.integers(0, 20, size=(5, 3, 3, 4)).astype(float)
    together = partial_gamma_arrays(batch)
    for b in range(5):
        # outside reference for the estimate: the cell-pair loops above
        assert together["estimate"][b] == pytest.approx(partial_gamma_loops(batch[b]))
        alone = partial_gamma_arrays(batch[b])
        assert together["std_error"][b] == pytest.approx(float(alone["std_error"]))


def test_empty_level_adds_nothing(clinics):
    # An unused category of the level (an ordered Categorical keeps it) must not turn the
    # partial values into NaN; it leaves them as without that level.
    frame = clinics.assign(clinic=pd.Categorical(clinics["clinic"], [*LEVELS, "west"]))
    with_empty = rankfold.table(frame, "dose", "relief", control="clinic")
    without = rankfold.table(clinics, "dose", "relief", control="clinic", order={"clinic": LEVELS})
    got = with_empty.partial_measures().loc["partial_gamma"]
    want = without.partial_measures().loc["partial_gamma"]
    for column in ("estimate", "std_error", "std_error_null"):
        assert got[column] == pytest.approx(want[column])
    assert with_empty.control_measures().loc[("west", "gamma"), "note"] == "the table is empty"
    assert "1 level(s) left out" in with_empty.tests().loc["gamma_homogeneity", "note"]


def test_partial_gamma_undefined_is_nan_with_reason():
    t = rankfold.table(
        pd.DataFrame({"x": [1, 1, 2, 2], "y": [1, 2, 1, 2], "z": ["a", "a", "b", "b"]}),
        "x", "y", control="z",
    )
    # within each level all units share x, so no pair is untied on both variables
    row = t.partial_measures().loc["partial_gamma"]
    assert np.isnan(row["estimate"]) and np.isnan(row["std_error"])
    assert "untied" in row["note"]


# --------------------------------------------------------------------- merges and exclusions
def test_merge_and_exclude_apply_to_every_level(clinics, controlled):
    changed = controlled.merge("rows", [[1, 2]]).exclude("cols", [4])
    # Outside reference: recode the raw records with pandas and cross-tabulate.
    recoded = clinics[clinics["relief"] != 4].assign(dose=clinics["dose"].clip(lower=2))
    expected = pd.crosstab([recoded["clinic"], recoded["dose"]], recoded["relief"])
    for label in LEVELS:
        np.testing.assert_array_equal(changed.control_counts.xs(label, level=0).to_numpy(),
                                      expected.xs(label, level=0).to_numpy())


# ------------------------------------------------------------------------ homogeneity test
def test_gamma_homogeneity_equals_independent_calculation(clinics, controlled):
    estimates, errors = [], []
    for k, label in enumerate(LEVELS):
        sub = clinics[clinics["clinic"] == label]
        C, D = brute_force_pairs(sub["dose"].to_numpy(), sub["relief"].to_numpy())
        estimates.append((C - D) / (C + D))
        one = controlled.cells[k : k + 1].astype(float)
        errors.append(stratified_delta_se(one, numerical_gradient(partial_gamma_loops, one)))
    g, se = np.array(estimates), np.array(errors)
    # Cochran (1954) heterogeneity statistic with inverse-variance weights (common practice)
    w = 1 / se**2
    mean = (w * g).sum() / w.sum()
    statistic = (w * (g - mean) ** 2).sum()
    row = controlled.tests().loc["gamma_homogeneity"]
    assert row["statistic"] == pytest.approx(statistic, rel=1e-6)
    assert row["df"] == 2
    assert row["p_value"] == pytest.approx(stats.chi2.sf(statistic, 2), rel=1e-5)
    assert f"{mean:.4f}" in row["note"]
    # the invented clinics disagree (slopes 0.9, 0.2, -0.4): the check must see it
    assert row["p_value"] < 0.01


# ---------------------------------------------------------------------- CMH correlation test
def test_cmh_equals_statsmodels_for_2x2xk():
    rng = np.random.default_rng(11)
    cells = rng.integers(3, 40, size=(4, 2, 2))
    records = [(k, i, j) for k, i, j in np.ndindex(cells.shape) for _ in range(cells[k, i, j])]
    df = pd.DataFrame(records, columns=["z", "x", "y"])
    row = rankfold.table(df, "x", "y", control="z").tests().loc["cmh_correlation"]
    # Outside reference: statsmodels' Mantel-Haenszel test without continuity correction.
    reference = StratifiedTable(np.moveaxis(cells, 0, -1).astype(float)).test_null_odds(
        correction=False)
    assert row["statistic"] == pytest.approx(reference.statistic, rel=1e-10)
    assert row["p_value"] == pytest.approx(reference.pvalue, rel=1e-8)
    assert row["df"] == 1


def landis_heyman_koch(cells: np.ndarray, u: np.ndarray, v: np.ndarray) -> float:
    """Generalized CMH correlation statistic in the matrix form of Landis, Heyman & Koch
    (1978, Int. Stat. Rev. 46:237): with p, q the level's row and column proportions,
    E_h = n_h (p kron q) and V_h = n_h^2 / (n_h - 1) [(D_p - p p') kron (D_q - q q')]."""
    b = np.kron(u, v)
    diff = var = 0.0
    for level in cells.astype(float):
        n = level.sum()
        p, q = level.sum(axis=1) / n, level.sum(axis=0) / n
        cov = n**2 / (n - 1) * np.kron(np.diag(p) - np.outer(p, p), np.diag(q) - np.outer(q, q))
        diff += b @ (level.ravel() - n * np.kron(p, q))
        var += b @ cov @ b
    return diff**2 / var


def test_cmh_equals_published_matrix_form(controlled):
    u, v = np.array([1.0, 2.0, 3.0]), np.array([1.0, 2.0, 3.0, 4.0])
    expected = landis_heyman_koch(controlled.cells, u, v)
    got = controlled.tests().loc["cmh_correlation", "statistic"]
    assert got == pytest.approx(expected, rel=1e-10)
    custom = ([0.0, 1.0, 5.0], [1.0, 2.0, 4.0, 8.0])
    expected = landis_heyman_koch(controlled.cells, *map(np.array, custom))
    got = controlled.tests(scores=custom).loc["cmh_correlation", "statistic"]
    assert got == pytest.approx(expected, rel=1e-10)


def test_cmh_midranks_are_taken_within_levels(controlled):
    # midrank scores from each level's own margins (Landis, Heyman & Koch 1978, "modified
    # ridit"-type scores): statistic = sum over levels, so compute level by level by hand.
    diff = var = 0.0
    for level in controlled.cells.astype(float):
        rows, cols = level.sum(axis=1), level.sum(axis=0)
        u = np.cumsum(rows) - rows / 2 + 0.5
        v = np.cumsum(cols) - cols / 2 + 0.5
        n = level.sum()
        p, q = rows / n, cols / n
        b = np.kron(u, v)
        cov = n**2 / (n - 1) * np.kron(np.diag(p) - np.outer(p, p), np.diag(q) - np.outer(q, q))
        diff += b @ (level.ravel() - n * np.kron(p, q))
        var += b @ cov @ b
    got = controlled.tests(scores="midranks").loc["cmh_correlation", "statistic"]
    assert got == pytest.approx(diff**2 / var, rel=1e-10)


def test_cmh_with_one_level_is_the_correlation_test(clinics):
    # With one level the statistic is (n - 1) r^2, r the Pearson correlation of the scores
    # (Mantel 1963); reference r from scipy on the records.
    t = rankfold.table(clinics.assign(one="all"), "dose", "relief", control="one")
    r = stats.pearsonr(clinics["dose"], clinics["relief"]).statistic
    expected = (len(clinics) - 1) * r**2
    assert t.tests().loc["cmh_correlation", "statistic"] == pytest.approx(expected, rel=1e-10)


def test_uncontrolled_tests_have_no_level_rows(clinics):
    index = rankfold.table(clinics, "dose", "relief").tests().index
    assert "cmh_correlation" not in index and "gamma_homogeneity" not in index


# ------------------------------------------------------------ the invented teaching scenario
def test_invented_clinic_scenario_reverses_within_clinics():
    df = rankfold.demo.clinic_waits(n=900, seed=11)
    assert "INVENTED" in df.attrs["note"]
    pd.testing.assert_frame_equal(df, rankfold.demo.clinic_waits(n=900, seed=11))  # seeded
    codes = {name: df[name].cat.codes.to_numpy() for name in ("wait", "satisfaction")}
    # Outside reference: brute-force pair enumeration, pooled and within each clinic.
    C, D = brute_force_pairs(codes["wait"], codes["satisfaction"])
    assert (C - D) / (C + D) > 0.2  # pooled: longer waits, happier patients
    within_c = within_d = 0
    for clinic in rankfold.demo.CLINICS:
        mask = (df["clinic"] == clinic).to_numpy()
        c, d = brute_force_pairs(codes["wait"][mask], codes["satisfaction"][mask])
        assert (c - d) / (c + d) < 0  # every clinic: longer waits, less happy patients
        within_c, within_d = within_c + c, within_d + d
    partial = rankfold.table(df, "wait", "satisfaction", control="clinic").partial_measures()
    assert partial.loc["partial_gamma", "estimate"] == pytest.approx(
        (within_c - within_d) / (within_c + within_d))
    # the weights restore each clinic's share of all visits (50%, 30%, 20%), by construction
    shares = df.groupby("clinic", observed=True)["visit_weight"].sum() / df["visit_weight"].sum()
    np.testing.assert_allclose(shares.to_numpy(), [0.5, 0.3, 0.2], atol=0.02)


def test_level_table_is_that_levels_records(clinics, controlled):
    # Outside reference: the level's records tabulated by pandas.
    one = controlled.control_table("south")
    own = clinics[clinics["clinic"] == "south"]
    np.testing.assert_array_equal(one.counts.to_numpy(),
                                  pd.crosstab(own["dose"], own["relief"]).to_numpy())
    assert one.control_name is None
    with pytest.raises(ValueError, match="not a category of the control variable 'clinic'"):
        controlled.control_table("west")
