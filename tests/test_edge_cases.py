"""Awkward but realistic inputs: each case gives a right number, NaN with a
reason, or a ValueError that says what to fix; never a deep traceback or a warning."""

from __future__ import annotations

import math
import warnings
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

import rankfold


def quietly(action):
    """Run ``action`` with every warning turned into an error."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        return action()


def crosstab(frame: pd.DataFrame, row, col, table: rankfold.OrdinalTable) -> np.ndarray:
    # Source: pandas.crosstab, a counting path independent of rankfold's, in the table's order.
    tab = pd.crosstab(frame[row], frame[col], dropna=False)
    return tab.reindex(index=list(table.row_labels), columns=list(table.col_labels),
                       fill_value=0).to_numpy()


def rebuilt(table: rankfold.OrdinalTable, frame: pd.DataFrame) -> rankfold.OrdinalTable:
    namespace = {"df": frame}
    exec(table.to_code(), namespace)
    return namespace["table"]


@pytest.fixture
def ages() -> pd.DataFrame:
    """Invented records: an age banded with pd.cut and a 1-4 rating."""
    rng = np.random.default_rng(5)
    frame = pd.DataFrame({"age": rng.uniform(18, 80, 120), "rating": rng.integers(1, 5, 120)})
    frame["band"] = pd.cut(frame["age"], bins=[18, 30, 50, 80], include_lowest=True)
    return frame


# ------------------------------------------------------------------- to_code round trips
def test_to_code_runs_with_interval_labels_after_merge_and_exclude(ages):
    bands = rankfold.table(ages, "band", "rating").row_labels
    table = (rankfold.table(ages, "band", "rating", exclude={"rating": [np.int64(4)]})
             .merge("rows", [[bands[0], bands[1]]]).exclude("cols", [1]))
    again = rebuilt(table, ages)
    assert again.row_labels == table.row_labels
    # Source: pandas.crosstab of the raw records with the same coding done by hand.
    recoded = ages.assign(band=np.where(ages["band"] == bands[2], "late", "early"))
    recoded = recoded[~recoded["rating"].isin([1, 4])]
    expected = pd.crosstab(recoded["band"], recoded["rating"]).loc[["early", "late"], [2, 3]]
    np.testing.assert_array_equal(again.counts.to_numpy(), expected.to_numpy())


def test_merged_labels_of_ranges_stay_unambiguous_and_round_trip():
    """Labels that hold ranges ("2–5 km") merge into "first to last", never "a–b–c"."""
    lengths = ["under 2 km", "2–5 km", "5–10 km", "10–20 km", "over 20 km"]
    rng = np.random.default_rng(13)
    frame = pd.DataFrame({
        "length": pd.Categorical(rng.choice(lengths, 300), categories=lengths, ordered=True),
        "rating": rng.integers(1, 4, 300),
    })
    table = (rankfold.table(frame, "length", "rating")
             .merge("rows", [["under 2 km", "2–5 km"], ["10–20 km", "over 20 km"]]))
    assert table.row_labels == ("under 2 km to 2–5 km", "5–10 km", "10–20 km to over 20 km")
    # Unambiguous: splitting at the joiner gives back the first and last original label.
    for label in (table.row_labels[0], table.row_labels[2]):
        first, last = label.split(" to ")
        assert first in lengths and last in lengths
    again = rebuilt(table, frame)
    assert again.row_labels == table.row_labels
    coded = rankfold.apply_steps(frame["length"], table.steps)
    assert list(coded.cat.categories) == list(table.row_labels)
    # Source: pandas.crosstab of the records recoded by hand with a dict.
    by_hand = frame["length"].astype(str).map({
        "under 2 km": "near", "2–5 km": "near", "5–10 km": "mid", "10–20 km": "far",
        "over 20 km": "far"})
    expected = pd.crosstab(by_hand, frame["rating"]).loc[["near", "mid", "far"]]
    np.testing.assert_array_equal(again.counts.to_numpy(), expected.to_numpy())
    np.testing.assert_array_equal(
        pd.crosstab(coded, frame["rating"]).to_numpy(), expected.to_numpy())
    # labels= still overrides the default.
    named = rankfold.table(frame, "length", "rating").merge(
        "rows", [["10–20 km", "over 20 km"]], labels=["long"])
    assert named.row_labels[-1] == "long"


def test_to_code_runs_with_timestamp_labels():
    stamps = pd.to_datetime(["2021-03-01", "2020-01-01", "2021-03-01", "2022-06-30"])
    frame = pd.DataFrame({"when": stamps, "score": [1, 2, 2, 3]})
    table = rankfold.table(frame, "when", "score", order={"when": sorted(set(stamps))})
    again = rebuilt(table.merge("rows", [list(table.row_labels[1:])]), frame)
    np.testing.assert_array_equal(again.counts.to_numpy(), [[0, 1, 0], [1, 1, 1]])


# ---------------------------------------------------------------------------- coding steps
def test_exclude_takes_a_single_label_of_any_type():
    frame = pd.DataFrame({"x": [1, 2, 3, 2, 1, 3], "y": [1, 2, 3, 1, 2, 2]})
    table = rankfold.table(frame, "x", "y")
    single = table.exclude("cols", np.int64(1))
    kept = frame[frame["y"] != 1]
    np.testing.assert_array_equal(single.counts.to_numpy(), crosstab(kept, "x", "y", single))


def test_bare_string_labels_are_refused_not_split():
    table = rankfold.table_from_counts([[3, 1], [1, 3], [2, 2]], ["a", "b", "c"])
    with pytest.raises(ValueError, match="list"):
        table.merge("rows", [["a", "b"], ["c"]], labels="xy")
    with pytest.raises(ValueError, match="list"):
        rankfold.table_from_counts([[1, 2], [3, 4]], row_labels="ab")
    with pytest.raises(ValueError, match="list of labels"):
        rankfold.table_from_counts([[1, 2], [3, 4]], row_labels=["ab", "ba"]).reorder("rows", "ab")


def test_apply_steps_on_a_frame_with_integer_column_names():
    frame = pd.DataFrame({0: [1, 2, 3, 2, 1, 3], 1: [1, 2, 3, 1, 2, 2]})
    table = rankfold.table(frame, 0, 1).merge("rows", [[1, 2]])
    coded = rankfold.apply_steps(frame, table.steps)
    np.testing.assert_array_equal(table.counts.to_numpy(), crosstab(coded, 0, 1, table))


@pytest.mark.parametrize("merge", [False, True])
def test_apply_steps_keeps_missing_values_as_the_table_did(merge):
    frame = pd.DataFrame({"x": ["lo", "mid", None, "mid", "hi", None, "lo"],
                          "y": [1, 2, 3, 2, 3, 1, 1]})
    table = rankfold.table(frame, "x", "y", order={"x": ["lo", "mid", "hi"]}, dropna=False)
    if merge:
        table = table.merge("rows", [["hi", "(missing)"]])
    coded = rankfold.apply_steps(frame, table.steps)
    assert coded["x"].notna().all()
    np.testing.assert_array_equal(table.counts.to_numpy(), crosstab(coded, "x", "y", table))


def test_apply_steps_with_an_ordered_categorical_holding_missing_values():
    frame = pd.DataFrame({"x": pd.Categorical([1, 2, None, 2], categories=[1, 2], ordered=True),
                          "y": [1, 2, 1, 2]})
    table = rankfold.table(frame, "x", "y", dropna=False)
    coded = rankfold.apply_steps(frame["x"], table.steps)
    assert coded.tolist() == [1, 2, "(missing)", 2]


def test_apply_steps_with_foreign_values_raises_without_a_warning():
    frame = pd.DataFrame({"x": [1, 2, 3], "y": [1, 2, 1]})
    steps = rankfold.table(frame, "x", "y").steps
    with pytest.raises(ValueError, match=r"\['9'\]"):
        quietly(lambda: rankfold.apply_steps(pd.Series([1, 9], name="x"), steps))


# -------------------------------------------------------------------------- table() roles
@pytest.mark.parametrize(
    ("kwargs", "words"),
    [
        ({"row": ["x"], "col": "y"}, "single label"),
        ({"row": None, "col": "y"}, "row"),
        ({"row": "x", "col": "y", "order": ["a", "b"]}, "order"),
        ({"row": "x", "col": "y", "exclude": "b"}, "exclude"),
    ],
)
def test_roles_and_options_of_the_wrong_kind_are_refused(kwargs, words):
    frame = pd.DataFrame({"x": [1, 2, 1], "y": [1, 1, 2]})
    with pytest.raises(ValueError, match=words):
        rankfold.table(frame, **kwargs)


def test_a_column_name_used_twice_in_the_frame_is_refused():
    frame = pd.DataFrame([[1, 2, 3], [2, 1, 3]], columns=["x", "x", "y"])
    with pytest.raises(ValueError, match=r"more than one column named \['x'\]"):
        rankfold.table(frame, "x", "y")


# ------------------------------------------------------------------- arguments of methods
@pytest.mark.parametrize("confidence", ["0.95", None, [0.9]])
def test_confidence_must_be_a_number(confidence):
    frame = pd.DataFrame({"x": [1, 2, 1, 2], "y": [1, 2, 2, 1], "g": [1, 1, 2, 2]})
    table = rankfold.table(frame, "x", "y", control="g")
    for method in (table.measures, table.partial_measures, table.control_measures):
        with pytest.raises(ValueError, match="confidence"):
            method(confidence)


@pytest.mark.parametrize("bad", [np.nan, np.inf])
def test_test_scores_must_be_finite(bad):
    table = rankfold.table_from_counts([[5, 2, 1], [2, 4, 3], [0, 2, 6]])
    with pytest.raises(ValueError, match="finite"):
        quietly(lambda: table.tests(scores=[[1, bad, 3], [1, 2, 3]]))


@pytest.mark.parametrize("n_resamples", [99.5, "99", None, True])
def test_permutation_resamples_must_be_a_whole_number(n_resamples):
    table = rankfold.table_from_counts([[5, 2], [1, 6]])
    with pytest.raises(ValueError, match="n_resamples"):
        table.permutation_test(n_resamples=n_resamples)


def test_permutation_seed_of_the_wrong_kind_is_refused():
    table = rankfold.table_from_counts([[5, 2], [1, 6]])
    with pytest.raises(ValueError, match="seed"):
        table.permutation_test(n_resamples=9, seed="a")


@pytest.mark.parametrize("counts", [[[1, -1], [2, 3]], [[1, np.nan], [2, 3]]])
def test_pair_counts_refuses_negative_or_missing_counts(counts):
    with pytest.raises(ValueError, match="non-negative"):
        rankfold.pair_counts(np.array(counts))


# ------------------------------------------------------------------------ undefined cases
@pytest.mark.parametrize("counts", [[[0, 0], [3, 4]], [[0, 3], [0, 4]], [[1, 0], [0, 0]]])
def test_undefined_two_by_two_measures_carry_no_standard_error(counts):
    # Common practice: a measure that cannot be estimated has no standard error either.
    frame = quietly(lambda: rankfold.table_from_counts(counts).measures())
    undefined = frame[frame["estimate"].isna()]
    assert len(undefined) > 0
    assert undefined[["std_error", "std_error_null", "ci_low", "ci_high"]].isna().all().all()
    assert (undefined["note"].str.len() > 0).all()
    assert np.isfinite(frame[["std_error", "std_error_null"]].fillna(0).to_numpy()).all()


def test_a_level_whose_sampling_weights_are_all_zero_is_explained_quietly():
    rng = np.random.default_rng(3)
    frame = pd.DataFrame({"x": rng.integers(1, 4, 60), "y": rng.integers(1, 4, 60),
                          "g": np.repeat(["u", "v", "w"], 20), "w": rng.uniform(0.5, 3, 60)})
    frame.loc[frame["g"] == "w", "w"] = 0.0
    table = rankfold.table(frame, "x", "y", control="g", weight="w", weight_kind="sampling")
    level = quietly(table.control_measures).xs("w", level=0)
    assert level["estimate"].isna().all()
    assert level["note"].str.startswith("the table is empty").all()
    quietly(table.tests)


def test_log_scale_intervals_of_tiny_totals_stay_quiet():
    # Woolf's interval exp(log OR +/- 1.96 SE) with an SE in the thousands: the upper end is
    # beyond floating point, so +inf (common practice for an unbounded interval).
    frame = quietly(lambda: rankfold.table_from_counts([[1e-8, 1e-8], [1e-8, 2e-8]]).measures())
    assert frame.loc["odds_ratio", "estimate"] == pytest.approx(2.0)
    assert frame.loc["odds_ratio", "ci_high"] == np.inf


# -------------------------------------------------------------------------- huge counts
def concordance_by_definition(counts):
    """Units strictly above-left or below-right (C) and above-right or below-left (D) of each
    cell, in exact integers by the definition (Agresti 2010, ch. 7)."""
    rows, cols = len(counts), len(counts[0])
    cells = [(k, m, counts[k][m]) for k in range(rows) for m in range(cols)]
    conc = [[sum(x for k, m, x in cells if (k - i) * (m - j) > 0) for j in range(cols)]
            for i in range(rows)]
    disc = [[sum(x for k, m, x in cells if (k - i) * (m - j) < 0) for j in range(cols)]
            for i in range(rows)]
    return conc, disc


@pytest.mark.parametrize("counts", [[[10**15, 1], [1, 1]], [[10**15, 3], [2, 7]],
                                    [[5, 10**14], [10**14, 3]]])
def test_two_by_two_measures_are_exact_at_huge_counts(counts):
    (a, b), (c, d) = counts
    m = rankfold.table_from_counts(counts).measures()
    # Source: for a 2 x 2 table Somers' d (column given row) is the difference of
    # proportions (a d - b c) / ((a + b)(c + d)) (Agresti 2010, ch. 7), and tau-b and
    # Spearman's rho with midranks both equal phi = (a d - b c) / sqrt(r1 r2 c1 c2)
    # (common practice); evaluated here in exact rational arithmetic.
    somers = Fraction(a * d - b * c, (a + b) * (c + d))
    phi = (a * d - b * c) / math.sqrt((a + b) * (c + d) * (a + c) * (b + d))
    assert m.loc["somers_d_col_given_row", "estimate"] == pytest.approx(float(somers), rel=1e-12)
    assert m.loc["tau_b", "estimate"] == pytest.approx(phi, rel=1e-12)
    assert m.loc["spearman_rho", "estimate"] == pytest.approx(phi, rel=1e-12)


def test_null_standard_error_is_exact_at_huge_counts():
    counts = [[10**15, 3, 7], [2, 10**15, 1], [5, 4, 10**15]]
    conc, disc = concordance_by_definition(counts)
    # Source: Brown & Benedetti (1977, JASA 72:309), null SE of gamma
    # 2 / (P + Q) sqrt(sum n d^2 - (P - Q)^2 / n), d = C - D, evaluated in exact integers
    # and fractions with the concordance counts found by definition.
    cells = [(x, conc[i][j], disc[i][j]) for i, row in enumerate(counts) for j, x in enumerate(row)]
    n = sum(x for x, _, _ in cells)
    big_p = sum(x * c for x, c, _ in cells)
    big_q = sum(x * d for x, _, d in cells)
    spread = (Fraction(sum(x * (c - d) ** 2 for x, c, d in cells))
              - Fraction((big_p - big_q) ** 2, n))
    expected = 2 * math.sqrt(spread) / (big_p + big_q)
    got = rankfold.table_from_counts(counts).measures().loc["gamma", "std_error_null"]
    assert got == pytest.approx(expected, rel=1e-9, abs=0)  # values near 1e-15


def test_weighted_table_without_discordant_pairs_has_gamma_exactly_one():
    # Source: Goodman & Kruskal (1954, JASA 49:732): with no discordant pair gamma is 1, and
    # its delta-method standard error is 0 (Agresti 2010, ch. 7), which the note flags.
    counts = np.diag([12.37, 0.91, 33.3, 7.05])
    counts[0, 1], counts[2, 3] = 1.3, 2.71
    table = rankfold.table_from_counts(counts)
    gamma = table.measures().loc["gamma"]
    assert gamma["estimate"] == 1.0
    assert gamma["std_error"] == 0.0
    assert "at its bound" in gamma["note"]
    assert table.pairs()["discordant"] == 0.0


@pytest.mark.parametrize("scale", [1e-300, 1e-80, 1e80, 1e200])
def test_totals_beyond_floating_point_range_are_refused(scale):
    # Common practice: products such as n^4 (tau-b) must stay within double precision range.
    counts = np.array([[3.0, 1.0], [1.0, 4.0]]) * scale
    with pytest.raises(ValueError, match="add up to"):
        rankfold.table_from_counts(counts)
    frame = pd.DataFrame({"x": [1, 2, 1], "y": [1, 2, 2], "w": [scale] * 3})
    with pytest.raises(ValueError, match="add up to"):
        rankfold.table(frame, "x", "y", weight="w")


@pytest.mark.parametrize("scale", [1e-30, 1e-3, 1e15, 1e30])
def test_totals_within_range_give_scale_free_estimates_quietly(scale):
    # Source: gamma, Somers' d, tau-b and Spearman's rho are ratios of homogeneous functions of
    # equal degree of the counts, so they do not change when every count is scaled (common
    # practice); the reference is the same table at scale 1.
    counts = np.array([[3.0, 1.0, 2.0], [1.0, 4.0, 2.0], [0.0, 2.0, 5.0]])
    reference = rankfold.table_from_counts(counts).measures()["estimate"]
    scaled = quietly(lambda: rankfold.table_from_counts(counts * scale).measures()["estimate"])
    np.testing.assert_allclose(scaled, reference, rtol=1e-9)


def test_a_level_column_with_no_values_is_refused_with_the_reason():
    frame = pd.DataFrame({"x": [1, 2, 3, 2], "y": [1, 2, 3, 1], "g": [np.nan] * 4})
    with pytest.raises(ValueError, match="'g'.*no categor"):
        rankfold.table(frame, "x", "y", control="g")
    table = rankfold.table(frame, "x", "y", control="g", dropna=False)
    assert table.control_labels == ("(missing)",)


@pytest.mark.parametrize("kind", [tuple, np.array, pd.Index])
def test_order_may_be_any_ordered_list_like(kind):
    frame = pd.DataFrame({"x": ["lo", "hi", "mid", "lo", "hi"], "y": [1, 2, 2, 1, 1]})
    table = rankfold.table(frame, "x", "y", order={"x": kind(["lo", "mid", "hi"])})
    assert table.row_labels == ("lo", "mid", "hi")
    np.testing.assert_array_equal(table.counts.to_numpy(), crosstab(frame, "x", "y", table))
    rebuilt(table, frame)  # its code runs


def test_an_unordered_set_is_refused_as_an_order():
    frame = pd.DataFrame({"x": ["lo", "hi"], "y": [1, 2]})
    with pytest.raises(ValueError, match="list of labels in order"):
        rankfold.table(frame, "x", "y", order={"x": {"lo", "hi"}})


def test_compare_measures_takes_a_single_key_alone():
    before = rankfold.table_from_counts([[5, 2, 1], [2, 4, 3], [0, 2, 6]])
    after = before.merge("rows", [[1, 2]])
    one = rankfold.compare_measures(before.measures(), after.measures(), keys="gamma")
    # Source: the two measures() frames themselves; change = after - before by definition.
    gammas = before.measures().loc["gamma", "estimate"], after.measures().loc["gamma", "estimate"]
    assert list(one.index) == ["gamma"]
    assert one.loc["gamma", "change"] == pytest.approx(gammas[1] - gammas[0])
