"""Building tables from DataFrames: order rules, exclusions, missing values, code, immutability."""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd
import pytest

import rankfold


def frame_hash(frame: pd.DataFrame) -> np.ndarray:
    return pd.util.hash_pandas_object(frame, index=True).to_numpy()


@pytest.fixture
def survey() -> pd.DataFrame:
    """Invented records: a banded dose and a rated relief, with gaps and a non-answer."""
    rng = np.random.default_rng(17)
    size = 400
    dose = rng.integers(1, 5, size=size)
    relief_levels = ["none", "some", "much", "full", "no answer"]
    relief = np.array(relief_levels)[np.clip(dose - 1 + rng.integers(-1, 2, size=size), 0, 4)]
    frame = pd.DataFrame({
        "dose": dose.astype(float),
        "relief": relief.astype(object),
        "clinic": pd.Categorical(rng.choice(["low", "mid", "high"], size=size),
                                 categories=["low", "mid", "high", "top"], ordered=True),
    })
    frame.loc[[3, 50, 77], "dose"] = np.nan
    frame.loc[[5, 50], "relief"] = None
    return frame


RELIEF_ORDER = ["none", "some", "much", "full", "no answer"]


def crosstab_counts(frame, row, col, rows, cols) -> np.ndarray:
    # Source: pandas.crosstab, an independent counting path, reindexed to the expected order.
    tab = pd.crosstab(frame[row], frame[col])
    return tab.reindex(index=rows, columns=cols, fill_value=0).to_numpy()


def test_counts_match_crosstab_and_missing_rows_are_recorded(survey):
    before = frame_hash(survey)
    t = rankfold.table(survey, "dose", "relief", order={"relief": RELIEF_ORDER})
    assert t.row_labels == (1.0, 2.0, 3.0, 4.0)
    assert t.col_labels == tuple(RELIEF_ORDER)
    expected = crosstab_counts(survey, "dose", "relief", [1.0, 2.0, 3.0, 4.0], RELIEF_ORDER)
    np.testing.assert_array_equal(t.counts.to_numpy(), expected)
    # Rows 3, 5, 50, 77 have a missing value (row 50 in both columns): 4 records dropped.
    assert t.n_missing == 4
    assert t.n == len(survey) - 4
    np.testing.assert_array_equal(frame_hash(survey), before)


def test_numeric_order_is_numeric_not_text():
    # Common practice: numbers sort by value (2 < 10 < 33), not as text ("10" < "2").
    frame = pd.DataFrame({"a": [10, 2, 33, 2, 10], "b": [True, False, True, True, False]})
    t = rankfold.table(frame, "a", "b")
    assert t.row_labels == (2, 10, 33)
    assert t.col_labels == (False, True)


def test_ordered_categorical_keeps_its_order_and_empty_categories(survey):
    t = rankfold.table(survey, "clinic", "dose")
    assert t.row_labels == ("low", "mid", "high", "top")
    # An unused category keeps its place as an empty row.
    assert t.counts.loc["top"].sum() == 0
    expected = crosstab_counts(survey, "clinic", "dose", ["low", "mid", "high", "top"],
                               [1.0, 2.0, 3.0, 4.0])
    np.testing.assert_array_equal(t.counts.to_numpy(), expected)


def test_order_argument_overrides_and_may_list_absent_categories(survey):
    order = ["top", "high", "mid", "low"]
    t = rankfold.table(survey, "clinic", "relief", order={"clinic": order, "relief": RELIEF_ORDER})
    assert t.row_labels == tuple(order)
    assert t.counts.loc["top"].sum() == 0
    frame = pd.DataFrame({"x": [1, 2, 2], "y": ["b", "a", "b"]})
    t = rankfold.table(frame, "x", "y", order={"y": ["a", "between", "b"]})
    assert t.col_labels == ("a", "between", "b")
    np.testing.assert_array_equal(t.counts.to_numpy(), [[0, 0, 1], [1, 0, 1]])


def test_unordered_text_without_order_is_refused_with_the_labels_found(survey):
    with pytest.raises(ValueError, match="order=") as info:
        rankfold.table(survey, "dose", "relief")
    for label in ("none", "some", "much"):
        assert label in str(info.value)


def test_order_that_leaves_out_a_value_is_refused(survey):
    with pytest.raises(ValueError, match="leaves out"):
        rankfold.table(survey, "dose", "relief", order={"relief": ["none", "some", "much"]})


def test_exclude_drops_records_before_counting(survey):
    t = rankfold.table(survey, "dose", "relief", order={"relief": RELIEF_ORDER},
                       exclude={"relief": ["no answer"]})
    assert t.col_labels == tuple(RELIEF_ORDER[:-1])
    kept = survey[survey["relief"] != "no answer"]
    expected = crosstab_counts(kept, "dose", "relief", [1.0, 2.0, 3.0, 4.0], RELIEF_ORDER[:-1])
    np.testing.assert_array_equal(t.counts.to_numpy(), expected)
    assert t.n_excluded == int(((survey["relief"] == "no answer") & survey["dose"].notna()).sum())
    with pytest.raises(ValueError, match="no such value"):
        rankfold.table(survey, "dose", "relief", order={"relief": RELIEF_ORDER},
                       exclude={"relief": ["maybe"]})


def test_dropna_false_adds_a_last_missing_category(survey):
    t = rankfold.table(survey, "dose", "relief", order={"relief": RELIEF_ORDER}, dropna=False)
    assert t.row_labels[-1] == "(missing)" and t.col_labels[-1] == "(missing)"
    assert t.n == len(survey)
    # Source: pandas.crosstab with dropna=False counts the same missing records.
    assert t.counts.loc["(missing)"].sum() == survey["dose"].isna().sum()
    assert t.counts["(missing)"].sum() == survey["relief"].isna().sum()


def test_exclude_and_merge_and_reorder_on_the_table_sum_the_right_cells():
    counts = np.arange(1, 21).reshape(4, 5)
    t = rankfold.table_from_counts(counts, ["a", "b", "c", "d"], [1, 2, 3, 4, 5])
    merged = t.merge("cols", [[2, 3, 4]])
    assert merged.col_labels == (1, "2 to 4", 5)
    np.testing.assert_array_equal(merged.counts.to_numpy()[:, 1], counts[:, 1:4].sum(axis=1))
    dropped = t.exclude("rows", ["b"])
    np.testing.assert_array_equal(dropped.counts.to_numpy(), counts[[0, 2, 3]])
    flipped = t.reorder("rows", ["d", "c", "b", "a"])
    np.testing.assert_array_equal(flipped.counts.to_numpy(), counts[::-1])
    with pytest.raises(ValueError, match="not neighbours"):
        t.merge("rows", [["a", "c"]])


def test_merging_a_merged_band_is_named_by_the_categories_as_counted():
    counts = np.arange(1, 11).reshape(2, 5)
    t = rankfold.table_from_counts(counts, ["lo", "hi"], ["18", "40", "60", "70", "80"],
                                   col_name="age")
    # Naming rule (ours, documented in OrdinalTable.merge): "first to last" of the categories as
    # counted, however many merges the band went through; a band named by hand is traced too.
    twice = t.merge("cols", [["40", "60"], ["70", "80"]]).merge("cols", [["40 to 60", "70 to 80"]])
    assert twice.col_labels == ("18", "40 to 80")
    named = t.merge("cols", [["40", "60"]], labels=["middle"]).merge("cols", [["middle", "70"]])
    assert named.col_labels == ("18", "40 to 70", "80")
    # Source: the same bands summed by hand with numpy.
    np.testing.assert_array_equal(twice.counts.to_numpy()[:, 1], counts[:, 1:].sum(axis=1))
    # The printed code rebuilds the same labels (it names only the hand-named band).
    for table in (twice, named):
        namespace: dict = {}
        exec(table.to_code(), namespace)  # noqa: S102 - the point is that the printed code runs
        assert namespace["table"].col_labels == table.col_labels
    assert ", labels=['middle']" in named.to_code() and ", labels=" not in twice.to_code()


def test_table_is_immutable_and_operations_return_new_tables():
    counts = np.array([[3, 1], [2, 5]])
    t = rankfold.table_from_counts(counts)
    with pytest.raises(dataclasses.FrozenInstanceError):
        t.row_name = "other"
    with pytest.raises(ValueError):
        t.cells[0, 0, 0] = 99  # read-only array
    view = t.counts
    view.iloc[0, 0] = 1000
    assert t.counts.iloc[0, 0] == 3
    counts[0, 0] = 77  # the caller's array is copied, not shared
    assert t.counts.iloc[0, 0] == 3
    merged = t.merge("rows", [[1, 2]])
    assert t.shape == (2, 2) and merged.shape == (1, 2)
    assert len(merged.steps) == len(t.steps) + 1


def test_to_code_runs_and_rebuilds_the_same_table(survey):
    t = (
        rankfold.table(survey, "dose", "relief", order={"relief": RELIEF_ORDER},
                       exclude={"relief": ["no answer"]})
        .merge("rows", [[1.0, 2.0]])
        .merge("cols", [["much", "full"]], labels=["much or full"])
        .reorder("cols", ["much or full", "some", "none"])
        .exclude("rows", [4.0])
    )
    namespace = {"df": survey}
    exec(t.to_code(), namespace)  # noqa: S102 - the point is that the printed code runs
    rebuilt = namespace["table"]
    assert rebuilt.row_labels == t.row_labels and rebuilt.col_labels == t.col_labels
    np.testing.assert_array_equal(rebuilt.counts.to_numpy(), t.counts.to_numpy())
    pd.testing.assert_frame_equal(namespace["measures"], t.measures())
    # Source: the same table computed by hand with pandas from the records.
    kept = survey[survey["relief"].isin(["none", "some", "much", "full"])
                  & survey["dose"].isin([1.0, 2.0, 3.0])]
    rows = kept["dose"].map({1.0: "low", 2.0: "low", 3.0: "high"})
    cols = kept["relief"].replace({"much": "m/f", "full": "m/f"})
    expected = pd.crosstab(rows, cols).reindex(index=["low", "high"],
                                               columns=["m/f", "some", "none"])
    np.testing.assert_array_equal(t.counts.to_numpy(), expected.to_numpy())


def test_to_code_of_a_table_from_counts_runs():
    t = rankfold.table_from_counts([[4, 1, 0], [2, 6, 3]], ["lo", "hi"], ["x", "y", "z"],
                                   row_name="grade", col_name="score").merge("cols", [["y", "z"]])
    namespace: dict = {}
    exec(t.to_code(), namespace)  # noqa: S102
    np.testing.assert_array_equal(namespace["table"].counts.to_numpy(), [[4, 1], [2, 9]])
    assert namespace["table"].row_name == "grade"


def test_apply_steps_returns_new_ordered_column_and_leaves_data_alone(survey):
    before, dtype = frame_hash(survey), survey["relief"].dtype
    t = (rankfold.table(survey, "dose", "relief", order={"relief": RELIEF_ORDER},
                        exclude={"relief": ["no answer"]})
         .merge("cols", [["none", "some"]]))
    recoded = rankfold.apply_steps(survey["relief"], t.steps)
    assert recoded.cat.ordered
    assert list(recoded.cat.categories) == list(t.col_labels)
    assert recoded[survey["relief"] == "no answer"].isna().all()
    assert (recoded[survey["relief"].isin(["none", "some"])] == "none to some").all()
    np.testing.assert_array_equal(frame_hash(survey), before)
    assert survey["relief"].dtype == dtype


def test_nothing_the_core_does_changes_the_frame(survey):
    before = frame_hash(survey)
    dtypes = survey.dtypes.copy()
    t = rankfold.table(survey, "clinic", "relief", order={"relief": RELIEF_ORDER}, dropna=False)
    t.measures()
    t.tests()
    t.diagnostics()
    rankfold.apply_steps(survey, t.merge("rows", [["low", "mid"]]).steps)
    np.testing.assert_array_equal(frame_hash(survey), before)
    pd.testing.assert_series_equal(survey.dtypes, dtypes)
