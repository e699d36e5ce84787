"""The collapsing sweep, its coding helpers and the sparse-cell suggestion.

References used below: an independent enumeration of every coding (itertools over the kept
boundaries, blocks summed by hand with slices), the core's one-table path
(``table_from_counts(...).measures()``), scipy.stats (kendalltau, somersd, and
``contingency.expected_freq`` for expected counts) and binomial counting of compositions.
The small tables are invented for these tests.
"""

from __future__ import annotations

import importlib
import itertools
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.stats.contingency import expected_freq

import rankfold
from rankfold.collapsing import (
    coding_groups,
    coding_of,
    count_codings,
    range_sentence,
    rule_met,
    sweep_ranges,
)
from rankfold.merge_sweep_kernel import concordance_cells_first, one_thread_product
from tables_for_tests import expand_table

# An invented 5 x 4 table: ordered rows and columns, sparse corners, one empty cell pattern.
SMALL = np.array([[8, 3, 1, 0], [4, 6, 3, 1], [1, 4, 7, 2], [0, 1, 3, 5], [0, 0, 1, 2]])
MEASURES = ("gamma", "somers_d_col_given_row", "somers_d_row_given_col", "tau_b", "tau_c")


# ------------------------------------------------------------------ independent enumeration
def runs(size: int):
    """Every coding of an axis as runs [(start, stop), ...], by brute force over boundaries."""
    for kept in itertools.product((False, True), repeat=size - 1):
        starts = [0] + [k + 1 for k, keep in enumerate(kept) if keep]
        yield list(zip(starts, [*starts[1:], size], strict=True))


def collapse_by_hand(counts: np.ndarray, row_runs, col_runs) -> np.ndarray:
    return np.array([[counts[a:b, c:d].sum() for c, d in col_runs] for a, b in row_runs])


def sizes(runs_: list[tuple[int, int]]) -> str:
    return "+".join(str(stop - start) for start, stop in runs_)


def every_coding(counts: np.ndarray, min_categories: int = 2):
    """(row sizes, col sizes) -> collapsed table, for all codings keeping enough categories."""
    out = {}
    for row_runs in runs(counts.shape[0]):
        for col_runs in runs(counts.shape[1]):
            if min(len(row_runs), len(col_runs)) >= min_categories:
                out[sizes(row_runs), sizes(col_runs)] = collapse_by_hand(counts, row_runs, col_runs)
    return out


def by_sizes(frame: pd.DataFrame) -> pd.DataFrame:
    return frame.set_index([frame["row_sizes"].astype(str), frame["col_sizes"].astype(str)])


def sparse_by_hand(collapsed: np.ndarray) -> dict[str, float]:
    """Expected counts from scipy over non-empty rows and columns (as the diagnostics do)."""
    keep = collapsed[collapsed.sum(axis=1) > 0][:, collapsed.sum(axis=0) > 0]
    expected = expected_freq(keep)
    totals = np.concatenate([collapsed.sum(axis=1), collapsed.sum(axis=0)])
    return {
        "share_expected_below_5": float((expected < 5).mean()),
        "min_expected": float(expected.min()),
        "zero_cells": int((keep == 0).sum()),
        "smallest_category": float(totals.min()),
        "square_sum": float((totals**2).sum()),
    }


# ------------------------------------------------------------------------------ the values
def test_gamma_multiset_equals_independent_enumeration():
    frame = rankfold.sweep(rankfold.table_from_counts(SMALL))
    # Reference: itertools enumeration, blocks summed by hand, measures from the core's
    # one-table path.
    reference = [
        rankfold.table_from_counts(c).measures().loc["gamma", "estimate"]
        for c in every_coding(SMALL).values()
    ]
    assert len(frame) == len(reference)
    np.testing.assert_allclose(np.sort(frame["gamma"]), np.sort(reference), rtol=1e-12)


def test_each_coding_matches_its_collapsed_table():
    frame = by_sizes(rankfold.sweep(rankfold.table_from_counts(SMALL)))
    for key, collapsed in every_coding(SMALL).items():
        # Reference: the core's one-table path on the hand-collapsed table.
        expected = rankfold.table_from_counts(collapsed).measures()
        row = frame.loc[key]
        for measure in MEASURES:
            assert row[measure] == pytest.approx(expected.loc[measure, "estimate"], rel=1e-12)
            assert row[f"{measure}_std_error"] == pytest.approx(
                expected.loc[measure, "std_error"], rel=1e-10)


def test_rank_measures_match_scipy_on_records():
    table = rankfold.table_from_counts(SMALL)
    frame = by_sizes(rankfold.sweep(table))
    for key, collapsed in every_coding(SMALL).items():
        x, y = expand_table(collapsed)
        row = frame.loc[key]
        # Reference: scipy.stats.kendalltau (variants b and c) on one record per unit, and
        # scipy.stats.somersd on the table (rows = x, so its statistic is D(col | row)).
        assert row["tau_b"] == pytest.approx(stats.kendalltau(x, y).statistic, abs=1e-12)
        assert row["tau_c"] == pytest.approx(
            stats.kendalltau(x, y, variant="c").statistic, abs=1e-12)
        assert row["somers_d_col_given_row"] == pytest.approx(
            stats.somersd(collapsed).statistic, abs=1e-12)
        assert row["somers_d_row_given_col"] == pytest.approx(
            stats.somersd(collapsed.T).statistic, abs=1e-12)


def test_sparse_cell_figures_match_scipy_expected_counts():
    frame = by_sizes(rankfold.sweep(rankfold.table_from_counts(SMALL)))
    for key, collapsed in every_coding(SMALL).items():
        reference = sparse_by_hand(collapsed)  # scipy.stats.contingency.expected_freq
        row = frame.loc[key]
        for name in ("share_expected_below_5", "min_expected", "zero_cells", "smallest_category"):
            assert row[name] == pytest.approx(reference[name], rel=1e-12), name


def test_apply_coding_gives_the_hand_collapsed_table():
    table = rankfold.table_from_counts(SMALL, row_labels=list("abcde"), col_labels=list("wxyz"))
    frame = by_sizes(rankfold.sweep(table))
    for key, collapsed in every_coding(SMALL).items():
        row = frame.loc[key]
        recoded = rankfold.apply_coding(table, row["row_cuts"], row["col_cuts"])
        np.testing.assert_array_equal(recoded.counts.to_numpy(), collapsed)
        assert " | ".join(map(str, recoded.row_labels)) == row["row_groups"]
        assert " | ".join(map(str, recoded.col_labels)) == row["col_groups"]


def test_undefined_codings_are_nan_as_in_measures():
    # Rows 3 and 4 are empty, so coding the rows as (1-2 | 3-4) leaves one non-empty row.
    counts = np.array([[5, 2, 1], [1, 3, 6], [0, 0, 0], [0, 0, 0]])
    frame = by_sizes(rankfold.sweep(rankfold.table_from_counts(counts)))
    row = frame.loc[("2+2", "1+1+1")]
    reference = rankfold.table_from_counts(collapse_by_hand(counts, [(0, 2), (2, 4)],
                                                            [(0, 1), (1, 2), (2, 3)])).measures()
    for measure in MEASURES:
        # Reference: the core's one-table path says every measure is undefined here.
        assert np.isnan(reference.loc[measure, "estimate"])
        assert np.isnan(row[measure]) and np.isnan(row[f"{measure}_std_error"])


# ------------------------------------------------------------------------------ the counts
@pytest.mark.parametrize(
    ("n_rows", "n_cols", "min_categories", "axes"),
    [(5, 4, 2, "both"), (4, 6, 3, "both"), (6, 3, 2, "rows"), (3, 6, 4, "cols"), (2, 2, 2, "both")],
)
def test_scheme_counts(n_rows, n_cols, min_categories, axes):
    counts = np.arange(1, n_rows * n_cols + 1).reshape(n_rows, n_cols)
    frame = rankfold.sweep(rankfold.table_from_counts(counts), axes=axes,
                           min_categories=min_categories)

    # 2**(I-1) codings per axis, less those with fewer than m categories: a coding with g
    # categories keeps g - 1 of the I - 1 boundaries, C(I - 1, g - 1) ways (binomial counting).
    def admissible(size):
        return 2 ** (size - 1) - sum(math.comb(size - 1, g - 1) for g in range(1, min_categories))

    expected = ((admissible(n_rows) if axes in ("both", "rows") else 1)
                * (admissible(n_cols) if axes in ("both", "cols") else 1))
    assert len(frame) == expected
    assert count_codings(rankfold.table_from_counts(counts), axes=axes,
                         min_categories=min_categories) == expected
    assert not frame.duplicated(["row_cuts", "col_cuts"]).any()
    if axes in ("both", "rows"):
        assert frame["n_rows"].min() >= min_categories
    else:
        assert (frame["n_rows"] == n_rows).all()
    if axes == "rows":
        assert (frame["n_cols"] == n_cols).all()


def test_five_by_four_has_105_codings():
    # (2**4 - 1) row codings x (2**3 - 1) column codings with at least 2 categories each.
    assert len(rankfold.sweep(rankfold.table_from_counts(SMALL))) == 15 * 7


def test_chunks_and_progress_give_the_same_frame():
    table = rankfold.table_from_counts(SMALL)
    seen = []
    chunks = list(rankfold.sweep_chunks(table, chunk_size=7,
                                        progress=lambda done, total: seen.append((done, total))))
    assert all(len(c) <= 7 for c in chunks)
    whole = rankfold.sweep(table)
    pd.testing.assert_frame_equal(pd.concat(chunks, ignore_index=True), whole)
    done = [d for d, _ in seen]
    assert done == sorted(done) and seen[-1] == (len(whole), len(whole))


def test_one_axis_sweep_is_the_matching_part_of_the_full_sweep():
    table = rankfold.table_from_counts(SMALL)
    full = rankfold.sweep(table)
    rows_only = rankfold.sweep(table, axes="rows")
    part = full[full["col_cuts"] == 2 ** (SMALL.shape[1] - 1) - 1].reset_index(drop=True)
    pd.testing.assert_frame_equal(rows_only.reset_index(drop=True), part, check_categorical=False)


# ------------------------------------------------------------------ weights and control variables
def invented_survey(seed: int = 11, size: int = 400) -> pd.DataFrame:
    """Invented records: a 4-band exposure, a 4-point outcome, a site and a sampling weight."""
    rng = np.random.default_rng(seed)
    exposure = rng.choice(4, size=size, p=[0.1, 0.4, 0.4, 0.1])
    outcome = np.clip(exposure + rng.integers(-2, 3, size=size), 0, 3)
    return pd.DataFrame({
        "exposure": exposure,
        "outcome": outcome,
        "site": rng.choice(["east", "west"], size=size),
        "w": rng.uniform(0.5, 3.0, size=size),
    })


def test_sampling_weights_match_the_one_table_path():
    table = rankfold.table(invented_survey(), "exposure", "outcome", weight="w",
                           weight_kind="sampling")
    frame = rankfold.sweep(table)
    for _, row in frame.iterrows():
        # Reference: the core's one-table path (Taylor-linearised errors) on the recoded table.
        expected = rankfold.apply_coding(table, row["row_cuts"], row["col_cuts"]).measures()
        for measure in MEASURES:
            assert row[measure] == pytest.approx(expected.loc[measure, "estimate"], rel=1e-12)
            assert row[f"{measure}_std_error"] == pytest.approx(
                expected.loc[measure, "std_error"], rel=1e-9)


def test_controlled_table_pooled_and_partial_gamma():
    table = rankfold.table(invented_survey(), "exposure", "outcome", control="site")
    frame = rankfold.sweep(table, measures=("gamma", "partial_gamma"))
    for _, row in frame.iterrows():
        recoded = rankfold.apply_coding(table, row["row_cuts"], row["col_cuts"])
        # References: the pooled table's measures and the control_variable module's partial gamma.
        assert row["gamma"] == pytest.approx(recoded.measures().loc["gamma", "estimate"])
        partial = recoded.partial_measures().loc["partial_gamma"]
        assert row["partial_gamma"] == pytest.approx(partial["estimate"], rel=1e-12)
        assert row["partial_gamma_std_error"] == pytest.approx(partial["std_error"], rel=1e-9)


# --------------------------------------------------------------------------- the guidance
def sparse_table() -> np.ndarray:
    """An invented 6 x 5 table with thin extreme categories."""
    rng = np.random.default_rng(5)
    prob = np.outer([0.02, 0.15, 0.3, 0.3, 0.18, 0.05], [0.03, 0.2, 0.4, 0.3, 0.07])
    return rng.multinomial(180, prob.ravel()).reshape(6, 5)


def meets_by_hand(collapsed: np.ndarray, rule: str, threshold: float | None) -> bool:
    figures = sparse_by_hand(collapsed)
    if rule == "cochran":
        # Cochran (1954), Biometrics 10:417: no expected count below 1, at most 20% below 5.
        return figures["min_expected"] >= 1 and figures["share_expected_below_5"] <= 0.2
    if rule == "min_expected":
        return figures["min_expected"] >= threshold
    return figures["smallest_category"] >= threshold


@pytest.mark.parametrize(
    ("rule", "threshold"),
    [("cochran", None), ("min_expected", 5), ("min_expected", 2.5), ("min_category_size", 20)],
)
def test_suggestion_meets_its_rule_with_fewest_merges(rule, threshold):
    counts = sparse_table()
    table = rankfold.table_from_counts(counts)
    found = rankfold.suggest_collapsing(table, rule, threshold=threshold)
    meeting = {key: c for key, c in every_coding(counts).items()
               if meets_by_hand(c, rule, threshold)}
    assert found.meeting == len(meeting) and found.codings == len(every_coding(counts))
    assert found.table is not None
    chosen = found.table.counts.to_numpy()
    assert meets_by_hand(chosen, rule, threshold)
    most = max(sum(c.shape) for c in meeting.values())
    assert sum(chosen.shape) == most
    assert found.merges == sum(counts.shape) - most
    # Documented tie-break: among the most detailed, the smallest sum of squared totals.
    best_balance = min(sparse_by_hand(c)["square_sum"] for c in meeting.values()
                       if sum(c.shape) == most)
    assert sparse_by_hand(chosen)["square_sum"] == best_balance


def test_suggestion_ignores_the_association():
    counts = sparse_table()
    swapped = counts.copy()
    # Moving units between the corners of a 2 x 2 block keeps every margin, so every expected
    # count, while changing gamma.
    swapped[2, 2] += 3
    swapped[3, 3] += 3
    swapped[2, 3] -= 3
    swapped[3, 2] -= 3
    assert (swapped >= 0).all()
    one, two = (rankfold.table_from_counts(c) for c in (counts, swapped))
    assert one.measures().loc["gamma", "estimate"] != pytest.approx(
        two.measures().loc["gamma", "estimate"])
    first, second = rankfold.suggest_collapsing(one), rankfold.suggest_collapsing(two)
    assert (first.row_cuts, first.col_cuts) == (second.row_cuts, second.col_cuts)


def test_suggestion_never_computes_a_measure(monkeypatch):
    module = importlib.import_module("rankfold.collapsing")

    def refuse(*args, **kwargs):
        raise AssertionError("suggest_collapsing looked at a measure")

    monkeypatch.setattr(module, "ordinal_measure_arrays", refuse)
    monkeypatch.setattr(module, "sweep_measure_arrays", refuse)
    monkeypatch.setattr(module, "partial_gamma_arrays", refuse)
    assert rankfold.suggest_collapsing(rankfold.table_from_counts(sparse_table())).table is not None


def test_suggestion_when_nothing_meets_the_rule():
    found = rankfold.suggest_collapsing(rankfold.table_from_counts([[1, 0, 1], [0, 1, 0]]))
    assert found.table is None and found.meeting == 0
    assert "permutation test" in found.note


def test_suggestion_keeps_a_table_that_already_meets_the_rule():
    counts = np.full((3, 3), 20)
    found = rankfold.suggest_collapsing(rankfold.table_from_counts(counts))
    assert found.merges == 0 and found.table.shape == (3, 3)


def test_rule_met_agrees_with_hand_rule_on_every_coding():
    counts = sparse_table()
    frame = by_sizes(rankfold.sweep(rankfold.table_from_counts(counts)))
    met = pd.Series(rule_met(frame), index=frame.index)
    for key, collapsed in every_coding(counts).items():
        assert met[key] == meets_by_hand(collapsed, "cochran", None)


# --------------------------------------------------------------------- inputs stay as given
def test_nothing_changes_the_table_or_the_frame():
    data = invented_survey()
    before = pd.util.hash_pandas_object(data, index=True).to_numpy().copy()
    table = rankfold.table(data, "exposure", "outcome", control="site", weight="w",
                           weight_kind="sampling")
    cells, squared = table.cells.copy(), table.squared_weights.copy()
    steps, labels = table.steps, (table.row_labels, table.col_labels)
    frame = rankfold.sweep(table)
    list(rankfold.sweep_chunks(table, chunk_size=3))
    rankfold.suggest_collapsing(table)
    rankfold.apply_coding(table, int(frame["row_cuts"].iloc[0]), int(frame["col_cuts"].iloc[0]))
    np.testing.assert_array_equal(table.cells, cells)
    np.testing.assert_array_equal(table.squared_weights, squared)
    assert table.steps == steps and (table.row_labels, table.col_labels) == labels
    np.testing.assert_array_equal(pd.util.hash_pandas_object(data, index=True).to_numpy(), before)


# ----------------------------------------------------------------------------- bad input
SMALL_TABLE = rankfold.table_from_counts(SMALL)


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (lambda: rankfold.sweep(SMALL), "OrdinalTable"),
        (lambda: rankfold.sweep(SMALL_TABLE, axes="diagonal"), "axes must be one of"),
        (lambda: rankfold.sweep(SMALL_TABLE, min_categories=1), "min_categories"),
        (lambda: rankfold.sweep(SMALL_TABLE, min_categories=True), "min_categories"),
        (lambda: rankfold.sweep(SMALL_TABLE, min_categories=5), "fewer than min_categories"),
        (lambda: rankfold.sweep(SMALL_TABLE, measures=("gamma", "kappa")), "measures must"),
        (lambda: rankfold.sweep(SMALL_TABLE, measures=()), "measures must"),
        (lambda: rankfold.sweep(SMALL_TABLE, measures=("partial_gamma",)),
         "with a control variable"),
        (lambda: rankfold.sweep(SMALL_TABLE, max_schemes=0), "max_schemes"),
        (lambda: rankfold.sweep(SMALL_TABLE, max_schemes=100), "axes='rows': 15 codings"),
        (lambda: list(rankfold.sweep_chunks(SMALL_TABLE, chunk_size=0)), "chunk_size"),
        (lambda: rankfold.suggest_collapsing(SMALL_TABLE, "fisher"), "rule must be one of"),
        (lambda: rankfold.suggest_collapsing(SMALL_TABLE, threshold=3), "leave threshold"),
        (lambda: rankfold.suggest_collapsing(SMALL_TABLE, "min_category_size"), "needs threshold"),
        (lambda: rankfold.suggest_collapsing(SMALL_TABLE, "min_expected", threshold=-1),
         "positive number"),
        (lambda: rankfold.apply_coding(SMALL_TABLE, 16, 0), "between 0"),
        (lambda: rankfold.apply_coding(SMALL_TABLE, 1.5, 0), "whole number"),
        (lambda: coding_groups(SMALL_TABLE, 0, -1), "between 0"),
        (lambda: rule_met({"min_expected": [1.0]}), "lacks the column"),
    ],
)
def test_bad_arguments_raise_clear_errors(call, message):
    with pytest.raises(ValueError, match=message):
        call()


# ------------------------------------------------------------------ helpers for the view
def test_coding_of_reads_hand_made_merges():
    table = rankfold.table_from_counts(SMALL, row_labels=list("abcde"), col_labels=list("wxyz"))
    merged = table.merge("rows", [["a", "b"]]).merge("rows", [["a to b", "c"]]).merge(
        "cols", [["y", "z"]])
    cuts = coding_of(table, merged)
    # The groups written by hand above, read back through the cuts.
    assert coding_groups(table, *cuts) == {"rows": (("a", "b", "c"), ("d",), ("e",)),
                                           "cols": (("w",), ("x",), ("y", "z"))}
    assert coding_of(table, table) == (15, 7)
    excluded = table.exclude("rows", ["e"])
    assert coding_of(table, excluded) is None


def test_sweep_ranges_match_numpy_quantiles():
    frame = rankfold.sweep(rankfold.table_from_counts(sparse_table()))
    ranges = sweep_ranges(frame, ["gamma", "tau_b"]).set_index(
        ["measure", "categories", "meets_rule"])
    met = rule_met(frame)
    for (measure, categories, meets), row in ranges.iterrows():
        chosen = frame.loc[((frame["n_rows"] + frame["n_cols"]) == categories) & (met == meets),
                           measure]
        values = chosen.dropna().to_numpy()
        # Reference: numpy's min, quantiles (linear interpolation) and max of the group.
        assert row["codings"] == len(chosen) and row["defined"] == len(values)
        np.testing.assert_allclose(
            row[["low", "lower_quartile", "median", "upper_quartile", "high"]].to_numpy(float),
            [values.min(), *np.quantile(values, [0.25, 0.5, 0.75]), values.max()], rtol=1e-12)
    assert ranges["codings"].groupby("measure").sum().eq(len(frame)).all()


def test_range_sentence_states_the_extremes_and_the_caution():
    frame = rankfold.sweep(rankfold.table_from_counts(SMALL))
    sentence = range_sentence(frame, "dose", "relief", ["gamma", "tau_b"])
    assert sentence.startswith(f"Across {len(frame):,} codings, ")
    assert f"gamma runs from {frame['gamma'].min():.3f} to {frame['gamma'].max():.3f}" in sentence
    assert f"tau-b runs from {frame['tau_b'].min():.3f} to {frame['tau_b'].max():.3f}" in sentence
    assert "inflates false findings" in sentence


def test_sampling_weights_judge_sparseness_by_records():
    # Population-scale survey weights must not make sparse codings look well filled: the rule
    # counts records. Reference: the same records without weights (constant weights change no
    # proportion), whose sweep and suggestion the weighted ones must match exactly.
    rng = np.random.default_rng(11)
    frame = pd.DataFrame({"a": rng.integers(0, 4, size=80), "b": rng.integers(0, 4, size=80)})
    plain = rankfold.table(frame, "a", "b")
    survey = rankfold.table(frame.assign(w=500.0), "a", "b", weight="w", weight_kind="sampling")
    columns = ["share_expected_below_5", "min_expected", "zero_cells", "smallest_category"]
    swept_plain, swept_survey = rankfold.sweep(plain), rankfold.sweep(survey)
    np.testing.assert_allclose(swept_survey[columns].to_numpy(dtype=float),
                               swept_plain[columns].to_numpy(dtype=float), rtol=1e-12)
    assert swept_plain["min_expected"].min() < 5  # so the check has something to catch
    chosen_plain = rankfold.suggest_collapsing(plain)
    chosen_survey = rankfold.suggest_collapsing(survey)
    assert (chosen_survey.row_cuts, chosen_survey.col_cuts) == (
        chosen_plain.row_cuts, chosen_plain.col_cuts)


# ------------------------------------------------- the batched kernel against one coding at a time
ALL_MEASURES = rankfold.ordinal_measures.ORDINAL_MEASURES


def gappy_table() -> np.ndarray:
    """An invented 7 x 6 table with empty rows and columns (one of each last) and thin
    corners, so that some codings have empty categories and some leave a single non-empty
    one (merging all but the last row)."""
    rng = np.random.default_rng(23)
    grid = np.outer(np.linspace(-1, 1, 7), np.linspace(-1, 1, 6))
    counts = rng.poisson(3 * np.exp(1.2 * grid))
    counts[[2, 6]] = 0
    counts[:, [3, 5]] = 0
    counts[0, :] = [4, 0, 0, 0, 0, 0]  # a first row that is concordant with everything below
    return counts


def sampled_codings(frame: pd.DataFrame, size: int, seed: int) -> list[int]:
    """A random sample of rows, plus every row with an undefined or bounded gamma (if any)."""
    rng = np.random.default_rng(seed)
    special = np.flatnonzero(frame["gamma"].isna().to_numpy()
                             | (frame["gamma"].abs() == 1).to_numpy())
    picks = rng.choice(len(frame), size=size, replace=False)
    return sorted(set(picks.tolist()) | set(special[:: max(1, len(special) // 20)].tolist()))


def close(value: float, reference: float) -> bool:
    if np.isnan(reference):
        return bool(np.isnan(value))
    return value == pytest.approx(reference, rel=1e-12, abs=1e-14)


def test_every_column_equals_the_one_coding_path_on_a_sample():
    table = rankfold.table_from_counts(gappy_table())
    frame = rankfold.sweep(table, measures=ALL_MEASURES, changes=True)
    picked = sampled_codings(frame, 80, seed=3)
    assert frame.loc[picked, "gamma"].isna().any()  # undefined codings are in the sample
    assert (frame.loc[picked, "gamma"].abs() == 1).any()  # and codings on gamma's bound
    for k in picked:
        row = frame.iloc[k]
        coded = rankfold.apply_coding(table, int(row["row_cuts"]), int(row["col_cuts"]))
        # References: the core's one-table path on the recoded table (measures(), and the
        # paired change of coding_change), and scipy's expected counts for the sparse figures.
        expected = coded.measures()
        paired = rankfold.coding_change.coding_change(table, coded)
        for key in ALL_MEASURES:
            estimate = expected.loc[key, "estimate"]
            assert close(row[key], estimate), (k, key)
            assert close(row[f"{key}_std_error"], expected.loc[key, "std_error"]), (k, key)
            assert close(row[f"{key}_change"], paired.loc[key, "change"]), (k, key)
            assert close(row[f"{key}_change_se"], paired.loc[key, "change_se"]), (k, key)
            if np.isnan(estimate):  # undefined: NaN here, the reason in measures()' note
                assert expected.loc[key, "note"]
        hand = sparse_by_hand(coded.counts.to_numpy())
        for name in ("share_expected_below_5", "min_expected", "zero_cells", "smallest_category"):
            assert close(row[name], hand[name]), (k, name)


def test_sampling_weights_on_a_sample_equal_the_one_coding_path():
    data = invented_survey(seed=4, size=300)
    data["band"] = (data["exposure"] * 2 + (data["w"] > 1.7)).astype(int)  # 8 bands
    table = rankfold.table(data, "band", "outcome", weight="w", weight_kind="sampling")
    frame = rankfold.sweep(table, changes=True)
    for k in sampled_codings(frame, 40, seed=5):
        row = frame.iloc[k]
        coded = rankfold.apply_coding(table, int(row["row_cuts"]), int(row["col_cuts"]))
        # Reference: the core's one-table path (Taylor-linearised errors, Woodruff 1971).
        expected = coded.measures()
        paired = rankfold.coding_change.coding_change(table, coded)
        for key in MEASURES:
            assert close(row[key], expected.loc[key, "estimate"]), (k, key)
            assert close(row[f"{key}_std_error"], expected.loc[key, "std_error"]), (k, key)
            assert close(row[f"{key}_change_se"], paired.loc[key, "change_se"]), (k, key)


def pairs_by_brute_force(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """C_ij and D_ij by looping over every other cell (no running sums)."""
    rows, cols = counts.shape
    conc, disc = np.zeros(counts.shape), np.zeros(counts.shape)
    for i, j, a, b in itertools.product(range(rows), range(cols), range(rows), range(cols)):
        sign = np.sign(a - i) * np.sign(b - j)
        if sign > 0:
            conc[i, j] += counts[a, b]
        elif sign < 0:
            disc[i, j] += counts[a, b]
    return conc, disc


def test_ten_by_ten_sample_matches_scipy_and_the_published_gamma_error():
    rng = np.random.default_rng(8)
    grid = np.outer(np.linspace(-1, 1, 10), np.linspace(-1, 1, 10))
    counts = rng.poisson(rng.uniform(1, 12, size=(10, 10)) * np.exp(0.7 * grid))
    frame = rankfold.sweep(rankfold.table_from_counts(counts))
    assert len(frame) == 511 * 511  # 2**9 - 1 codings of each axis keep 2 or more categories
    for k in rng.choice(len(frame), size=25, replace=False):
        row = frame.iloc[k]
        starts = [[0] + [b + 1 for b in range(9) if int(row[f"{axis}_cuts"]) >> b & 1]
                  for axis in ("row", "col")]
        merged = np.add.reduceat(np.add.reduceat(counts, starts[0], axis=0), starts[1], axis=1)
        # Reference: scipy.stats.somersd on the table merged by numpy's reduceat.
        assert row["somers_d_col_given_row"] == pytest.approx(
            stats.somersd(merged).statistic, abs=1e-12)
        assert row["somers_d_row_given_col"] == pytest.approx(
            stats.somersd(merged.T).statistic, abs=1e-12)
        # Reference: the closed form of gamma's delta-method error, 4/(P+Q)^2 *
        # sqrt(sum n (Q C - P D)^2) (Goodman & Kruskal 1972, JASA 67:415; Agresti 2010,
        # ch. 7), with C and D counted cell by cell.
        conc, disc = pairs_by_brute_force(merged)
        P, Q = (merged * conc).sum(), (merged * disc).sum()
        se = 4 / (P + Q) ** 2 * np.sqrt((merged * (Q * conc - P * disc) ** 2).sum())
        assert row["gamma"] == pytest.approx((P - Q) / (P + Q), rel=1e-12)
        assert row["gamma_std_error"] == pytest.approx(se, rel=1e-10)


def test_kernel_pair_counts_equal_brute_force_enumeration():
    rng = np.random.default_rng(12)
    for shape in ((2, 2), (3, 5), (6, 4)):
        cells = rng.integers(0, 4, size=(*shape, 30)) * (rng.random((*shape, 30)) < 0.5)
        weighted = cells * rng.uniform(0.3, 3.0, size=cells.shape)
        for counts in (cells.astype(float), weighted):
            conc, disc = concordance_cells_first(counts)
            for b in range(counts.shape[-1]):
                # Reference: every other cell visited in a loop (enumeration of cell pairs).
                ref_conc, ref_disc = pairs_by_brute_force(counts[..., b])
                np.testing.assert_allclose(conc[..., b], ref_conc, rtol=1e-14)
                np.testing.assert_allclose(disc[..., b], ref_disc, rtol=1e-14)
                # a region without units gives exactly 0, also for weighted totals
                assert ((conc[..., b] == 0) == (ref_conc == 0)).all()
                assert ((disc[..., b] == 0) == (ref_disc == 0)).all()


@pytest.mark.parametrize("shape", [(5, 3, 4), (700, 10, 700), (3000, 10, 2)])
def test_product_in_one_thread_slices_equals_numpy_matmul(shape):
    rows, inner, cols = shape
    rng = np.random.default_rng(rows)
    a, b = rng.integers(0, 2, size=(rows, inner)).astype(float), rng.uniform(size=(inner, cols))
    # Reference: numpy's matmul in one call (0/1 times numbers: the sums of the same terms).
    np.testing.assert_allclose(one_thread_product(a, b), a @ b, rtol=1e-15)
