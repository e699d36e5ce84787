"""The explorer keeps the user's work: a coding per variable, a history of every change,
removal of any single step, checked scripting, and openings that never crash.

Every table the explorer shows is compared with the core's table for the same steps (the
core's counts and measures are checked against outside references in their own tests) and
counts with pandas.crosstab of the records.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from test_explorer import (
    COL,
    ROW,
    assert_same_table,
    category_row,
    find,
    message,
    one,
)

import rankfold
from rankfold.widgets import explorer as explorer_module


@pytest.fixture
def ex(df):
    return rankfold.explore(df, ROW, COL)


def quickstart_steps(ex) -> None:
    """The three steps the quickstart notebook leaves."""
    ex.exclude("cols", ["no answer"])
    ex.merge("rows", [["10–20 km", "over 20 km"]])
    ex.merge("cols", [["very poor", "poor"]])


def step_lines(ex) -> list[str]:
    return [line.children[0].value for line in find(ex, "rankfold-step")]


def test_the_middle_of_three_steps_is_removed_with_its_button(ex, df):
    quickstart_steps(ex)
    assert len(step_lines(ex)) == 3
    middle = find(ex, "rankfold-step")[1]
    assert "exclude no answer" in middle.children[0].value
    one(middle, "rankfold-remove-step").click()
    assert_same_table(ex, rankfold.table(df, ROW, COL).merge("rows", [["10–20 km", "over 20 km"]])
                      .merge("cols", [["very poor", "poor"]]))
    assert len(step_lines(ex)) == 2 and message(ex) == ""
    ex.undo()  # a removal is a change like any other
    assert len(ex.steps) == 3


def test_a_removal_a_later_step_depends_on_is_refused_and_named(ex, df):
    ex.merge("cols", [["very poor", "poor"]])
    ex.merge("cols", [["very poor to poor", "fair"]])  # names the category the first one made
    kept = ex.table
    with pytest.raises(ValueError, match="very poor to poor") as caught:
        ex.remove_step(0)
    assert "later step" in str(caught.value) and "service_rating: merge" in str(caught.value)
    assert ex.table is kept and "later step" in message(ex)
    one(find(ex, "rankfold-step")[0], "rankfold-remove-step").click()  # the button alike
    assert ex.table is kept and "later step" in message(ex)
    ex.remove_step(1)  # the later one can go
    assert_same_table(ex, rankfold.table(df, ROW, COL).merge("cols", [["very poor", "poor"]]))
    with pytest.raises(ValueError, match="no step 5"):
        ex.remove_step(5)


def test_split_and_bring_back(ex, df):
    ex.merge("cols", [["very poor", "poor"], ["good", "very good"]])
    ex.exclude("cols", ["no answer"])
    ex.exclude("rows", "under 2 km")  # a single label, as the core accepts
    split = one(category_row(ex, "cols", "very poor to poor"), "rankfold-split")
    assert split.layout.display is None  # shown for a merged category only
    assert one(category_row(ex, "cols", "fair"), "rankfold-split").layout.display == "none"
    split.click()  # the other group of the same merge stays merged
    assert_same_table(ex, rankfold.table(df, ROW, COL).exclude("rows", ["under 2 km"])
                      .merge("cols", [["good", "very good"]]).exclude("cols", ["no answer"]))
    left = one(one(ex, "rankfold-editor-cols"), "rankfold-left-out")
    assert "no answer" in left.children[1].children[0].value
    one(left, "rankfold-bring-back").click()
    assert_same_table(ex, rankfold.table(df, ROW, COL).exclude("rows", ["under 2 km"])
                      .merge("cols", [["good", "very good"]]))
    ex.bring_back("rows", "under 2 km")
    ex.split("cols", "good to very good")
    assert ex.codings == {} and ex.steps == ()
    with pytest.raises(ValueError, match="not a merged category"):
        ex.split("cols", "fair")


def test_a_flagged_answer_is_warned_about_and_left_out_on_request(ex, df):
    warning = one(one(ex, "rankfold-editor-cols"), "rankfold-non-substantive")
    assert "no answer" in warning.value and "off the scale" in warning.value
    assert not find(one(ex, "rankfold-editor-rows"), "rankfold-non-substantive")
    assert ex.table.col_labels[-1] == "no answer"  # nothing left out without the user
    assert "no answer" in ex.measures.loc["gamma", "note"]
    one(ex, "rankfold-leave-out-flagged").click()
    assert_same_table(ex, rankfold.table(df, ROW, COL).exclude("cols", ["no answer"]))
    assert not find(ex, "rankfold-non-substantive")


def test_scripting_checks_its_arguments_as_the_core_does(ex):
    with pytest.raises(ValueError, match="list of lists"):
        ex.merge("rows", ["under 2 km", "2–5 km"])  # flat: not a merge of letters
    assert "list of lists" in message(ex)
    with pytest.raises(ValueError, match="list of labels in order"):
        ex.reorder("rows", "dcba")
    assert "list of labels in order" in message(ex)
    with pytest.raises(ValueError, match="axis must be"):
        ex.exclude("colums", "no answer")
    assert "axis must be" in message(ex)
    with pytest.raises(TypeError):
        ex.merge("rows", 5)
    assert "TypeError" in message(ex)
    assert ex.steps == () and len(ex.history[0]) == 1


def test_codings_and_code_cover_every_coded_variable(ex, df):
    quickstart_steps(ex)
    ex.set_variables(row="age_band")
    ex.merge("rows", [["40–59", "60+"]])
    assert set(ex.codings) == {ROW, COL, "age_band"}
    single = ex.to_code()
    assert ROW not in single
    namespace = {"df": df}
    exec(ex.to_code(all_variables=True), namespace)
    pd.testing.assert_frame_equal(namespace["table"].counts, ex.table.counts, check_exact=True)
    coded = namespace["coded"]
    # pandas.crosstab of the coded columns gives back each coded table
    ex.set_variables(row=ROW)
    crossed = pd.crosstab(coded[ROW], coded[COL])
    np.testing.assert_array_equal(crossed.to_numpy(), ex.table.counts.to_numpy())
    banded = rankfold.table(df, "age_band", COL).merge("rows", [["40–59", "60+"]])
    assert list(coded["age_band"].cat.categories) == list(banded.row_labels)


def test_opening_never_crashes():
    with pytest.raises(ValueError, match="no rows"):
        rankfold.explore(pd.DataFrame({"a": pd.Series([], dtype=float),
                                       "b": pd.Series([], dtype=float)}))
    rng = np.random.default_rng(2)
    frame = pd.DataFrame({"empty": np.full(50, np.nan), "a": rng.integers(0, 3, 50),
                          "b": rng.integers(0, 4, 50), "one": np.ones(50)})
    ex = rankfold.explore(frame)  # the all-missing and the constant columns are passed over
    assert (ex.state.row, ex.state.col) == ("a", "b")
    # pandas.crosstab of the records
    np.testing.assert_array_equal(ex.table.counts.to_numpy(),
                                  pd.crosstab(frame["a"], frame["b"]).to_numpy())
    kept = ex.state
    with pytest.raises(ValueError, match="no category at all"):
        ex.set_variables(row="empty")
    assert ex.state == kept and "no category at all" in message(ex)
    with pytest.raises(ValueError, match="no category at all"):
        rankfold.explore(frame, "empty", "a")


def test_applying_a_coding_says_which_steps_could_not_be_replayed(df):
    ex = rankfold.explore(df, ROW, COL)
    ex.merge("cols", [["very poor", "poor"]])
    ex.exclude("cols", ["very poor to poor"])  # names a merged category: not on the swept table
    tabs = one(ex, "rankfold-sections")
    tabs.selected_index = [t for t, _ in explorer_module.SECTIONS].index("Codings")
    section = ex._sections[tabs.selected_index]
    frame, table = section._swept.frame, section._swept.table
    rows_kept = (1 << (table.shape[0] - 1)) - 1  # every boundary between rows kept
    chosen = frame[(frame["row_cuts"] == rows_kept) & (frame["n_cols"] == table.shape[1] - 1)]
    section._clicked({"row_cuts": rows_kept, "col_cuts": int(chosen["col_cuts"].iloc[0])})
    text = message(ex)
    assert "could not be replayed" in text and "exclude very poor to poor" in text
    ex.undo()
    assert [e.describe() for e in ex.state.edits] == [
        "service_rating: merge [very poor, poor]", "service_rating: exclude very poor to poor"]


def test_steps_of_a_pair_keep_their_variable_after_a_swap(ex, df):
    quickstart_steps(ex)
    ex.swap()
    ex.remove_step(0)  # now the row variable's first step: the exclusion of "no answer"
    assert_same_table(ex, rankfold.table(df, COL, ROW).merge("rows", [["very poor", "poor"]])
                      .merge("cols", [["10–20 km", "over 20 km"]]))


def test_a_pane_holding_its_chart_without_a_specification_draws_it_again(ex):
    from rankfold.widgets.chart_pane import ChartPane

    pane = ChartPane("rankfold-test-pane")
    chart = ex.chart("heatmap")
    pane.show(chart)
    expected = pane.spec
    pane._chart.spec = None  # as left by a drawing cut short
    pane.show(chart)  # the same chart object: Altair sees no change
    assert pane.spec == expected and "$schema" not in pane.spec


def test_a_tab_that_fails_to_draw_says_so(ex, monkeypatch):
    tabs = one(ex, "rankfold-sections")
    index = [t for t, _ in explorer_module.SECTIONS].index("Compare")

    def broken(rendered):
        raise RuntimeError("drawing failed")

    monkeypatch.setattr(ex._sections[index], "show", broken)
    tabs.selected_index = index
    assert "Unexpected problem (RuntimeError: drawing failed)" in message(ex)
