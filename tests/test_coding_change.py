"""The paired standard error of the change between two codings of the same data."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold.coding_change import coding_change, expand_gradient
from rankfold.ordinal_measures import ordinal_measure_arrays
from rankfold.polychoric import polychoric_arrays

# An invented 6 x 5 table of a moderate positive association (about 1,200 units).
COLLECTED = np.array([
    [40, 25, 12, 6, 2],
    [30, 44, 30, 14, 5],
    [14, 36, 52, 33, 12],
    [6, 20, 41, 55, 30],
    [3, 8, 22, 40, 46],
    [2, 4, 9, 25, 60],
], dtype=float)
ROWS = ["r1", "r2", "r3", "r4", "r5", "r6"]
COLS = ["c1", "c2", "c3", "c4", "c5"]
CHECKED = ["gamma", "somers_d_col_given_row", "somers_d_row_given_col", "tau_b", "tau_c",
           "spearman_rho"]


def codings(table):
    """Merges, exclusions and both, each a coding of the same collected table."""
    merged = table.merge("rows", [["r1", "r2"], ["r5", "r6"]]).merge("cols", [["c4", "c5"]])
    excluded = table.exclude("rows", ["r6"]).exclude("cols", ["c1"])
    both = table.exclude("cols", ["c5"]).merge("rows", [["r2", "r3", "r4"]])
    return {"merged": merged, "excluded": excluded, "both": both}


def recode(counts: np.ndarray, coded: rankfold.OrdinalTable) -> np.ndarray:
    """Apply a coding to a batch of collected tables (..., I, J) by summing cells.

    Independent of the code under test: it only follows where each category went."""
    rows, cols = coded.coding_maps()
    out = np.zeros((*counts.shape[:-2], *coded.shape))
    for a, i in enumerate(rows):
        for b, j in enumerate(cols):
            if i >= 0 and j >= 0:
                out[..., i, j] += counts[..., a, b]
    return out


@pytest.fixture(scope="module")
def table():
    return rankfold.table_from_counts(COLLECTED, row_labels=ROWS, col_labels=COLS)


@pytest.mark.parametrize("name", ["merged", "excluded", "both"])
def test_gradient_of_the_change_equals_finite_differences(table, name):
    # Reference: central differences of the change computed from perturbed collected counts,
    # each recoded and measured from scratch (no gradient code involved).
    coded = codings(table)[name]
    rows, cols = coded.coding_maps()

    def change(counts):
        after = ordinal_measure_arrays(recode(counts, coded))
        before = ordinal_measure_arrays(counts)
        return np.array([after[k]["estimate"] - before[k]["estimate"] for k in CHECKED])

    step = 1e-4
    numeric = np.zeros((len(CHECKED), *COLLECTED.shape))
    for idx in np.ndindex(COLLECTED.shape):
        up, down = COLLECTED.copy(), COLLECTED.copy()
        up[idx] += step
        down[idx] -= step
        numeric[(slice(None), *idx)] = (change(up) - change(down)) / (2 * step)
    after = ordinal_measure_arrays(coded.cells.sum(axis=0).astype(float), gradients=True)
    before = ordinal_measure_arrays(COLLECTED, gradients=True)
    for k, key in enumerate(CHECKED):
        analytic = expand_gradient(after[key]["gradient"], rows, cols) - before[key]["gradient"]
        np.testing.assert_allclose(analytic, numeric[k], rtol=1e-6, atol=1e-9 * np.abs(
            numeric[k]).max())


@pytest.mark.parametrize("name", ["merged", "excluded", "both"])
def test_standard_error_matches_the_spread_of_multinomial_resamples(table, name):
    # Reference: simulation. 4,000 seeded multinomial resamples of the collected table (the
    # way a survey of fixed size arises), each recoded by summing cells; the SD of the change
    # must match the paired delta-method SE within 5%.
    coded = codings(table)[name]
    rng = np.random.default_rng(20261202)
    n = int(COLLECTED.sum())
    draws = rng.multinomial(n, (COLLECTED / n).ravel(), size=4000).reshape(-1, *COLLECTED.shape)
    draws = draws.astype(float)
    after = ordinal_measure_arrays(recode(draws, coded))
    before = ordinal_measure_arrays(draws)
    found = coding_change(table, coded)
    for key in CHECKED:
        spread = np.std(after[key]["estimate"] - before[key]["estimate"], ddof=1)
        assert found.loc[key, "change_se"] == pytest.approx(spread, rel=0.05), key
    poly_after = polychoric_arrays(recode(draws, coded))["estimate"]
    poly_before = polychoric_arrays(draws)["estimate"]
    spread = np.nanstd(poly_after - poly_before, ddof=1)
    assert found.loc["polychoric", "change_se"] == pytest.approx(spread, rel=0.05)


def test_sampling_weights_match_a_bootstrap_of_rows():
    # Reference: a with-replacement bootstrap of the records (2,000 seeded resamples) of an
    # invented weighted survey, each resample counted and coded from scratch by rankfold.table.
    rng = np.random.default_rng(7)
    size = 1500
    x = rng.integers(0, 5, size)
    y = np.clip(x + rng.integers(-2, 3, size), 0, 4)
    w = rng.gamma(2.0, 1.0, size) * (1 + 0.5 * (y > 2))
    frame = pd.DataFrame({"x": x, "y": y, "w": w})

    def coded_pair(data):
        t = rankfold.table(data, "x", "y", weight="w", weight_kind="sampling")
        return t, t.merge("rows", [[0, 1]]).exclude("cols", [4])

    before, after = coded_pair(frame)
    found = coding_change(before, after)
    changes = []
    for _ in range(2000):
        sample = frame.iloc[rng.integers(0, size, size)]
        b, a = coded_pair(sample)
        changes.append(a.measures().loc["gamma", "estimate"] - b.measures().loc["gamma",
                                                                                 "estimate"])
    assert found.loc["gamma", "change_se"] == pytest.approx(np.std(changes, ddof=1), rel=0.05)


def test_identity_coding_changes_nothing_with_no_error(table):
    found = coding_change(table, table.reorder("rows", ROWS))
    assert (found["change"] == 0).all() and (found["change_se"] == 0).all()
    assert found["change_p_value"].isna().all()


def test_unrelated_tables_get_no_paired_error(table):
    other = rankfold.table_from_counts(COLLECTED + 1, row_labels=ROWS, col_labels=COLS)
    found = coding_change(table, other)
    assert found["change_se"].isna().all()
    assert found["change_note"].str.contains("sum of the two variances").all()
    # the same data counted twice is the same collected table
    again = rankfold.table_from_counts(COLLECTED, row_labels=ROWS, col_labels=COLS)
    assert coding_change(table, again.merge("rows", [["r1", "r2"]]))["change_se"].gt(0).all()


def test_a_coding_that_makes_a_measure_undefined_gives_nan_with_a_note(table):
    one_row = table.merge("rows", [ROWS])  # a single row category: nothing is ordered
    found = coding_change(table, one_row)
    assert found.loc["gamma", ["change", "change_se"]].isna().all()
    assert "undefined in one of the codings" in found.loc["gamma", "change_note"]


def test_compare_measures_of_two_tables_adds_the_paired_columns(table):
    coded = codings(table)["both"]
    frame = rankfold.compare_measures(table, coded)
    direct = coding_change(table, coded)
    np.testing.assert_allclose(frame.loc[direct.index, "change_se"], direct["change_se"])
    assert frame.loc["gamma", "change"] == pytest.approx(
        coded.measures().loc["gamma", "estimate"] - table.measures().loc["gamma", "estimate"])
    # two measures tables carry no counts: no paired error, and the note says why
    plain = rankfold.compare_measures(table.measures(), coded.measures())
    assert plain["change_se"].isna().all()
    assert plain["change_note"].str.contains("pass the two tables").all()


def test_sweep_changes_equal_the_paired_change_of_each_coding(table):
    frame = rankfold.sweep(table, changes=True, measures=("gamma", "tau_b", "polychoric"))
    rng = np.random.default_rng(11)
    for k in rng.choice(len(frame), size=15, replace=False):
        row = frame.iloc[k]
        coded = rankfold.apply_coding(table, int(row["row_cuts"]), int(row["col_cuts"]))
        direct = coding_change(table, coded)
        for key in ("gamma", "tau_b", "polychoric"):
            assert row[f"{key}_change"] == pytest.approx(direct.loc[key, "change"], abs=1e-12)
            assert row[f"{key}_change_se"] == pytest.approx(direct.loc[key, "change_se"],
                                                            rel=1e-9, abs=1e-15)
    # the coding that merges nothing is the table itself: no change, no error
    whole = frame[(frame["n_rows"] == len(ROWS)) & (frame["n_cols"] == len(COLS))].iloc[0]
    assert whole["gamma_change"] == 0 and whole["gamma_change_se"] == pytest.approx(0, abs=1e-12)


def pairs_by_level(cells: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Concordant and discordant pairs within each level, from reversed cumulative sums
    (written here, independent of the package): (..., K, I, J) -> (..., K) each."""
    def below_right(x):  # sum over a > i, b > j
        s = np.flip(np.cumsum(np.cumsum(np.flip(x, (-2, -1)), -2), -1), (-2, -1))
        out = np.zeros_like(x)
        out[..., :-1, :-1] = s[..., 1:, 1:]
        return out

    concordant = (cells * below_right(cells)).sum(axis=(-2, -1))
    discordant = (cells * np.flip(below_right(np.flip(cells, -1)), -1)).sum(axis=(-2, -1))
    return concordant, discordant


def test_partial_gamma_change_matches_resamples_with_random_levels():
    # Reference: simulation drawing each unit's level at random (one multinomial over the
    # K x I x J cells of an invented three-level table), partial gamma from pair counts
    # (Davis 1967) written in this test.
    rng = np.random.default_rng(31)
    cells = np.stack([COLLECTED[:, :4] * f for f in (0.5, 0.3, 0.2)]).round()
    t = rankfold.table_from_counts(cells[0], row_labels=ROWS, col_labels=COLS[:4])
    frame = pd.DataFrame(
        [(lvl, r, c) for lvl in range(3) for i, r in enumerate(ROWS)
         for j, c in enumerate(COLS[:4]) for _ in range(int(cells[lvl, i, j]))],
        columns=["level", "row", "col"])
    t = rankfold.table(frame, "row", "col", control="level",
                       order={"row": ROWS, "col": COLS[:4]})
    coded = t.merge("rows", [["r1", "r2"]]).exclude("cols", ["c4"])
    found = coding_change(t, coded).loc["partial_gamma"]
    n = int(cells.sum())
    draws = rng.multinomial(n, (cells / n).ravel(), size=4000).reshape(-1, *cells.shape)
    rows, cols = coded.coding_maps()
    recoded = np.zeros((len(draws), 3, *coded.shape))
    for a, i in enumerate(rows):
        for b, j in enumerate(cols):
            if i >= 0 and j >= 0:
                recoded[:, :, i, j] += draws[:, :, a, b]

    def partial(x):
        p, q = pairs_by_level(x.astype(float))
        return (p.sum(-1) - q.sum(-1)) / (p.sum(-1) + q.sum(-1))

    spread = np.std(partial(recoded) - partial(draws), ddof=1)
    assert found["change_se"] == pytest.approx(spread, rel=0.05)
    assert rankfold.compare_measures(t, coded).loc["partial_gamma", "change_se"] == (
        pytest.approx(found["change_se"]))


def test_two_by_two_measures_change_between_two_codings():
    # A 2 x 3 table coded two ways into 2 x 2: the third column left out, or merged into the
    # second. Reference: 4,000 multinomial resamples, log odds ratio and Yule's Q computed
    # here from the cross-product ratio (Yule 1912).
    counts = np.array([[60.0, 35, 25], [30, 45, 55]])
    t = rankfold.table_from_counts(counts, row_labels=["a", "b"], col_labels=["x", "y", "z"])
    left_out, merged = t.exclude("cols", ["z"]), t.merge("cols", [["y", "z"]])
    found = coding_change(left_out, merged)
    rng = np.random.default_rng(5)
    n = int(counts.sum())
    draws = rng.multinomial(n, (counts / n).ravel(), size=4000).reshape(-1, 2, 3).astype(float)

    def log_odds(x):
        return np.log(x[:, 0, 0] * x[:, 1, 1] / (x[:, 0, 1] * x[:, 1, 0]))

    first = draws[:, :, :2]
    second = np.stack([draws[:, :, 0], draws[:, :, 1] + draws[:, :, 2]], axis=-1)
    spread = np.std(log_odds(second) - log_odds(first), ddof=1)
    assert found.loc["odds_ratio", "change_se"] == pytest.approx(spread, rel=0.05)
    q = [np.tanh(log_odds(x) / 2) for x in (first, second)]  # Q = (OR - 1)/(OR + 1)
    assert found.loc["yules_q", "change_se"] == pytest.approx(np.std(q[1] - q[0], ddof=1),
                                                              rel=0.05)
    assert "logarithm" in found.loc["odds_ratio", "change_note"]


def test_sweep_changes_of_partial_gamma_equal_the_paired_change():
    # a table with a control variable: each coding's partial gamma change from the sweep
    # equals coding_change of that coding measured alone (random level of each unit)
    cells = np.stack([COLLECTED[:4, :4] * f for f in (0.6, 0.4)]).round()
    frame = pd.DataFrame(
        [(lvl, r, c) for lvl in range(2) for i, r in enumerate(ROWS[:4])
         for j, c in enumerate(COLS[:4]) for _ in range(int(cells[lvl, i, j]))],
        columns=["level", "row", "col"])
    t = rankfold.table(frame, "row", "col", control="level",
                       order={"row": ROWS[:4], "col": COLS[:4]})
    swept = rankfold.sweep(t, changes=True, measures=("gamma", "partial_gamma"))
    for k in (1, 7, 20, len(swept) - 3):
        row = swept.iloc[k]
        coded = rankfold.apply_coding(t, int(row["row_cuts"]), int(row["col_cuts"]))
        direct = coding_change(t, coded)
        for key in ("gamma", "partial_gamma"):
            assert row[f"{key}_change_se"] == pytest.approx(direct.loc[key, "change_se"],
                                                            rel=1e-9, abs=1e-15)
