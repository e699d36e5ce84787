"""Answers off the scale ("don't know", "no answer", ...) are flagged by the core, named in the
measures' notes, and never excluded without the user's action; plain messages and totals."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold.non_substantive import NON_SUBSTANTIVE_PHRASES


@pytest.fixture(scope="module")
def answers() -> pd.DataFrame:
    """Invented records: a 3-point scale whose export kept two answers off the scale."""
    rng = np.random.default_rng(5)
    scale = ["low", "mid", "high", "Don’t know", "NO ANSWER"]
    return pd.DataFrame({
        "x": rng.integers(1, 4, 400),
        "y": pd.Categorical(rng.choice(scale, 400), categories=scale, ordered=True),
    })


def test_common_phrasings_are_flagged_whatever_their_case(answers):
    t = rankfold.table(answers, "x", "y")
    # common practice: these are answers off an ordered scale, whatever the capitals or the
    # kind of apostrophe
    assert t.non_substantive == {"rows": [], "cols": ["Don’t know", "NO ANSWER"]}
    assert "don't know" in NON_SUBSTANTIVE_PHRASES and "refused" in NON_SUBSTANTIVE_PHRASES
    # nothing is excluded: the counts are those of pandas' crosstab of every record
    reference = pd.crosstab(answers["x"], answers["y"]).to_numpy()
    np.testing.assert_array_equal(t.counts.to_numpy(), reference)


def test_the_note_names_them_until_they_are_left_out(answers):
    t = rankfold.table(answers, "x", "y")
    note = t.measures().loc["gamma", "note"]
    assert "'y': Don’t know, NO ANSWER" in note and "exclude()" in note
    cleaned = t.exclude("cols", ["Don’t know", "NO ANSWER"])
    assert cleaned.non_substantive == {"rows": [], "cols": []}
    assert "off the scale" not in cleaned.measures().loc["gamma", "note"]


def test_a_merged_category_covering_one_is_still_flagged(answers):
    t = rankfold.table(answers, "x", "y").merge("cols", [["high", "Don’t know"]])
    assert t.non_substantive["cols"] == ["high to Don’t know", "NO ANSWER"]


def test_labels_can_be_added_and_the_check_turned_off(answers):
    extra = rankfold.table(answers, "x", "y", non_substantive=[3])
    assert extra.non_substantive["rows"] == [3]
    assert extra.transpose().non_substantive["cols"] == [3]  # follows the variable
    off = rankfold.table(answers, "x", "y", non_substantive=False)
    assert off.non_substantive == {"rows": [], "cols": []}
    assert "off the scale" not in off.measures().loc["gamma", "note"]
    for table in (extra, off):  # the code of a table keeps the choice
        namespace = {"df": answers}
        exec(table.to_code(), namespace)
        assert namespace["table"].non_substantive == table.non_substantive
        pd.testing.assert_frame_equal(namespace["measures"], table.measures())
    with pytest.raises(ValueError, match="non_substantive must be a list"):
        rankfold.table(answers, "x", "y", non_substantive="no answer")


def test_the_demo_rating_puts_no_answer_above_very_good():
    t = rankfold.table(rankfold.demo.transit_survey(), "trip_length", "service_rating")
    assert t.col_labels[-1] == "no answer" and t.non_substantive["cols"] == ["no answer"]


def test_text_without_an_order_lists_values_alphabetically_and_says_to_order_them():
    df = pd.DataFrame({"a": [1, 2, 1, 2], "b": ["mid", "low", "high", "mid"]})
    with pytest.raises(ValueError) as caught:
        rankfold.table(df, "a", "b")
    text = str(caught.value)
    assert "['high', 'low', 'mid']" in text  # sorted, not in the order first seen
    assert "alphabetically" in text and "real order" in text


def test_weighted_totals_read_as_such():
    df = pd.DataFrame({"a": [1, 2, 1, 2, 2], "b": [1, 1, 2, 2, 2],
                       "w": [0.3, 1.7, 2.2, 0.9, 1.0000001]})
    t = rankfold.table(df, "a", "b", weight="w", weight_kind="sampling")
    head = repr(t).splitlines()[0]
    assert "weighted total=6.1, respondents=5" in head and "n=" not in head
    # Kish (1965, Survey Sampling, sec. 11.7): effective n = (sum w)^2 / sum w^2
    w = df["w"].to_numpy()
    kish = w.sum() ** 2 / (w**2).sum()
    assert f"effective sample size (Kish) = {kish:,.1f} respondents" in (
        t.measures().loc["gamma", "note"])


def test_explore_is_offered_by_tab_completion():
    assert "explore" in dir(rankfold) and "table" in dir(rankfold)
