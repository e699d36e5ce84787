"""The explorer's codings view, driven without a browser on the invented demo survey.

The view only lays out numbers from the core, so its checks compare what it shows and what it
applies with the core's own results for the same coding (whose values test_sweep.py checks
against independent references), and the chart specification with the sweep frame.
"""

from __future__ import annotations

import ipywidgets as widgets
import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold.collapsing import coding_of, rule_met, sweep_ranges
from rankfold.widgets import explorer as explorer_module
from rankfold.widgets import sweep_view
from rankfold.widgets.chart_pane import CLICK


@pytest.fixture(scope="module")
def survey() -> pd.DataFrame:
    return rankfold.demo.transit_survey(n=900, seed=3)


def open_codings(explorer):
    """Select the Codings tab and return its section object."""
    titles = [title for title, _ in explorer_module.SECTIONS]
    index = titles.index("Codings")
    explorer._tabs.selected_index = index
    return explorer._sections[index]


def base_table(survey):
    return rankfold.table(survey, "trip_length", "service_rating").exclude("cols", ["no answer"])


def test_view_states_the_range_and_applies_the_suggestion(survey):
    before = pd.util.hash_pandas_object(survey, index=True).to_numpy().copy()
    explorer = rankfold.explore(survey, "trip_length", "service_rating")
    explorer.exclude("cols", ["no answer"])
    section = open_codings(explorer)
    base = base_table(survey)
    frame = rankfold.sweep(base)
    assert f"Across {len(frame):,} codings" in section._summary.value
    assert f"gamma runs from {frame['gamma'].min():.3f} to {frame['gamma'].max():.3f}" in (
        section._summary.value)
    assert "inflates false findings" in section._summary.value
    found = rankfold.suggest_collapsing(base)
    section._use.click()
    # The explorer now holds the core's suggested table, reached through merge steps.
    np.testing.assert_array_equal(explorer.table.counts.to_numpy(),
                                  found.table.counts.to_numpy())
    assert coding_of(base, explorer.table) == (found.row_cuts, found.col_cuts)
    assert section._use.disabled
    np.testing.assert_array_equal(pd.util.hash_pandas_object(survey, index=True).to_numpy(),
                                  before)


def test_clicking_a_coding_applies_it(survey):
    explorer = rankfold.explore(survey, "trip_length", "service_rating")
    explorer.exclude("cols", ["no answer"])
    explorer.merge("rows", [["under 2 km", "2–5 km"]])  # replaced by the chosen coding
    section = open_codings(explorer)
    base = base_table(survey)
    frame = rankfold.sweep(base)
    chosen = frame.iloc[len(frame) // 3]
    section._clicked({"row_cuts": int(chosen["row_cuts"]), "col_cuts": int(chosen["col_cuts"])})
    expected = rankfold.apply_coding(base, int(chosen["row_cuts"]), int(chosen["col_cuts"]))
    np.testing.assert_array_equal(explorer.table.counts.to_numpy(), expected.counts.to_numpy())
    assert explorer.measures.loc["gamma", "estimate"] == pytest.approx(chosen["gamma"])


def test_current_coding_is_marked_whatever_the_order_of_edits(survey):
    explorer = rankfold.explore(survey, "trip_length", "service_rating")
    explorer.merge("cols", [["good", "very good"]])
    explorer.exclude("cols", ["no answer"])
    section = open_codings(explorer)
    base = base_table(survey)
    # The same coding made by hand on the table without "no answer".
    expected = coding_of(base, base.merge("cols", [["good", "very good"]]))
    assert sweep_view.current_coding(base, explorer.table, explorer.state.edits) == expected
    assert "not one of these" not in section._summary.value
    explorer.exclude("cols", ["good to very good"])
    assert "not one of these" in section._summary.value
    # The exclusion of the merged category needs its merge, so the sweep leaves it out but
    # keeps the exclusion of "no answer".
    assert section._swept.table.col_labels == base.col_labels


def test_large_sweeps_wait_for_the_button(survey, monkeypatch):
    monkeypatch.setattr(sweep_view, "AUTO_LIMIT", 10)
    explorer = rankfold.explore(survey, "trip_length", "service_rating")
    explorer.exclude("cols", ["no answer"])
    section = open_codings(explorer)
    assert "Press the button" in section._summary.value
    assert isinstance(section._pane.widget.children[0], widgets.HTML)  # no chart yet
    section._run.click()
    assert "Across 225 codings" in section._summary.value
    assert section._bar.max == 225 and section._bar.value == 225


def test_point_chart_holds_every_coding_and_the_marks(survey):
    base = base_table(survey)
    frame = rankfold.sweep(base)
    marked = {"as collected": (15, 15), "current coding": (15, 7), "suggested": None}
    spec = sweep_view.sweep_chart(frame, base.row_name, base.col_name, marked).to_dict()
    values = pd.DataFrame(spec["data"]["values"])
    codings = values[values["kind"] == "coding"]
    assert len(codings) == len(frame)
    np.testing.assert_allclose(codings["gamma"].to_numpy(float),
                               frame["gamma"].round(4).to_numpy(), atol=1e-12)
    assert (codings["rule"] == sweep_view.MEETS).sum() == rule_met(frame).sum()
    marks = values[values["kind"] == "mark"]
    assert sorted(marks["role"]) == ["as collected", "current coding"]
    assert any(p["name"] == CLICK and p["select"]["fields"] == ["row_cuts", "col_cuts"]
               for p in spec["params"])


def test_range_chart_for_many_codings(survey, monkeypatch):
    monkeypatch.setattr(sweep_view, "POINT_LIMIT", 50)
    base = base_table(survey)
    frame = rankfold.sweep(base)
    spec = sweep_view.sweep_chart(frame, base.row_name, base.col_name,
                                  {"as collected": (15, 15)}).to_dict()
    values = pd.DataFrame(spec["data"]["values"])
    ranges = values[values["kind"] == "range"]
    expected = sweep_ranges(frame)
    assert len(ranges) == len(expected)
    np.testing.assert_allclose(np.sort(ranges["high"].to_numpy(float)),
                               np.sort(expected["high"].to_numpy()), rtol=1e-12)
    assert (values["kind"] == "mark").sum() == len(sweep_view._measures_in(frame))


def test_too_many_codings_give_a_message_not_a_run(survey, monkeypatch):
    monkeypatch.setattr(sweep_view, "DEFAULT_MAX_SCHEMES", 100)
    explorer = rankfold.explore(survey, "trip_length", "service_rating")
    explorer.exclude("cols", ["no answer"])
    section = open_codings(explorer)
    assert "too many to sweep here" in section._summary.value
    assert section._run.layout.display == "none" and section._swept is None


def test_codings_whose_change_exceeds_its_noise_are_ringed():
    # reference: the paired change of one coding computed on its own by compare_measures
    from rankfold.widgets.sweep_view import BEYOND, _point_data, swept_codings

    df = rankfold.demo.transit_survey()
    t = rankfold.table(df, "trip_length", "service_rating",
                       exclude={"service_rating": ["no answer"]})
    swept = swept_codings(t)
    frame = swept.frame
    data = _point_data(frame, {"gamma": "gamma"}, np.arange(len(frame), dtype=float),
                       np.ones(len(frame), dtype=bool), [])
    for k in (0, 5, 40, len(frame) - 2):
        row = frame.iloc[k]
        coded = rankfold.apply_coding(t, int(row["row_cuts"]), int(row["col_cuts"]))
        found = rankfold.compare_measures(t, coded).loc["gamma"]
        expected = abs(found["change"]) > 1.959964 * found["change_se"]
        assert bool(data.loc[k, f"gamma{BEYOND}"]) == bool(expected)
