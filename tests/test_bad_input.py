"""Bad input gets a clear ValueError; undefined measures get NaN with a plain reason, silently."""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest

import rankfold

ORDINAL = ["gamma", "somers_d_col_given_row", "somers_d_row_given_col", "somers_d_symmetric",
           "tau_b", "tau_c", "spearman_rho"]


@pytest.mark.parametrize(
    ("counts", "words"),
    [
        ([[1, -2], [3, 4]], ["non-negative", "[0, 1]"]),
        ([[1, np.nan], [3, 4]], ["NaN or infinite"]),
        ([[1, 2], [np.inf, 4]], ["NaN or infinite"]),
        ([], ["2-D"]),
        ([[]], ["empty"]),
        ([1, 2, 3], ["2-D"]),
        ([["a", "b"], ["c", "d"]], ["numbers"]),
    ],
)
def test_bad_counts_are_refused_with_the_reason(counts, words):
    with pytest.raises(ValueError) as info:
        rankfold.table_from_counts(counts)
    for word in words:
        assert word in str(info.value)


def silent_measures(counts) -> pd.DataFrame:
    """Measures with every warning turned into an error: undefined cases must stay quiet."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        t = rankfold.table_from_counts(counts)
        t.tests()
        t.diagnostics()
        return t.measures()


def test_all_zero_table_gives_nan_with_reason():
    frame = silent_measures([[0, 0], [0, 0]])
    assert frame["estimate"].isna().all()
    assert (frame.loc[ORDINAL, "note"] == "the table is empty").all()


@pytest.mark.parametrize("counts", [[[1, 2, 3]], [[0, 0, 0], [4, 0, 5]], [[2, 0], [0, 0]]])
def test_one_used_row_makes_every_measure_nan_with_reason(counts):
    # Common practice: with a single row category there are no pairs untied on the row
    # variable, so no ordinal association can be measured.
    frame = silent_measures(counts)
    for key in [*ORDINAL, "cramers_v"]:
        assert np.isnan(frame.loc[key, "estimate"]), key
        assert np.isnan(frame.loc[key, "std_error"]), key
        assert "one row category" in frame.loc[key, "note"], key


def test_one_used_column_is_explained_as_well():
    frame = silent_measures([[3], [4], [0]])
    assert frame.loc[ORDINAL, "estimate"].isna().all()
    assert frame.loc[ORDINAL, "note"].str.contains("one column category").all()


def test_tests_need_two_categories_each():
    tests = rankfold.table_from_counts([[1, 2, 3]]).tests()
    assert tests["statistic"].isna().all()
    assert tests["note"].str.contains("two non-empty categories").all()


def test_perfect_association_is_flagged_not_hidden():
    # gamma = 1 with a zero delta-method error (Goodman & Kruskal 1963): no zero-width
    # interval shown as certainty; the note says the estimate is on its bound instead.
    frame = silent_measures([[5, 0], [0, 6]])
    assert frame.loc["gamma", "estimate"] == 1
    assert "at its bound" in frame.loc["gamma", "note"]
    assert np.isnan(frame.loc["gamma", ["ci_low", "ci_high"]].astype(float)).all()


def test_weighted_tiny_counts_with_rounding_stay_silent():
    # 1.4 + 1.4 + 0.7 is not exactly 3.5 in binary floating point; a one-row margin must still
    # give NaN with its reason, never a square root of a rounding-negative number.
    frame = silent_measures([[0.0, 0.0, 0.0, 0.0], [1.4, 0.0, 1.4, 0.7]])
    assert frame.loc[ORDINAL, "estimate"].isna().all()


@pytest.fixture
def frame() -> pd.DataFrame:
    return pd.DataFrame({
        "grade": ["low", "high", "mid", "low"],
        "score": [1, 2, 3, 3],
        "many": [0.5, 1.5, 2.5, 3.5],
    })


def test_unordered_text_column_asks_for_an_order(frame):
    with pytest.raises(ValueError) as info:
        rankfold.table(frame, "grade", "score")
    text = str(info.value)
    assert "'grade'" in text and "order=" in text
    assert all(label in text for label in ("low", "high", "mid"))


def test_too_many_numeric_levels_suggests_banding():
    values = pd.DataFrame({"age": np.arange(45) + 18, "score": np.arange(45) % 3})
    with pytest.raises(ValueError) as info:
        rankfold.table(values, "age", "score")
    text = str(info.value)
    assert "45 distinct values" in text and "pd.cut" in text and "pd.qcut" in text
    # 30 distinct values are still accepted (the limit is inclusive).
    assert rankfold.table(values.iloc[:30], "age", "score").shape == (30, 3)


def test_missing_column_names_it_and_lists_the_columns(frame):
    with pytest.raises(ValueError) as info:
        rankfold.table(frame, "grade", "size")
    text = str(info.value)
    assert "'size'" in text and "score" in text


def test_not_a_dataframe_is_refused():
    with pytest.raises(ValueError, match="DataFrame"):
        rankfold.table({"a": [1, 2]}, "a", "a")


def test_same_column_twice_is_refused(frame):
    with pytest.raises(ValueError, match="own column"):
        rankfold.table(frame, "score", "score")


@pytest.mark.parametrize("confidence", [0, 1, 1.5, -0.2])
def test_confidence_outside_zero_one_is_refused(confidence):
    with pytest.raises(ValueError, match="between 0 and 1"):
        rankfold.table_from_counts([[1, 2], [3, 4]]).measures(confidence=confidence)


def test_bad_coding_operations_say_what_is_wrong():
    t = rankfold.table_from_counts([[1, 2, 3], [4, 5, 6]], ["a", "b"], ["x", "y", "z"])
    with pytest.raises(ValueError, match="'rows' or 'cols'"):
        t.merge("columns", [["x", "y"]])
    with pytest.raises(ValueError, match=r"\['w'\] not among"):
        t.merge("cols", [["w", "x"]])
    with pytest.raises(ValueError, match="not neighbours"):
        t.merge("cols", [["x", "z"]])
    with pytest.raises(ValueError, match="no category"):
        t.exclude("rows", ["a", "b"])
    with pytest.raises(ValueError, match="missing"):
        t.reorder("cols", ["z", "y"])


def test_unknown_test_scores_are_refused():
    t = rankfold.table_from_counts([[1, 2], [3, 4]])
    with pytest.raises(ValueError, match="midranks"):
        t.tests(scores="ranks")
    with pytest.raises(ValueError, match="2 row scores"):
        t.tests(scores=([1, 2, 3], [1, 2]))
