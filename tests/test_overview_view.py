"""The explorer's "All pairs" tab: the map of every pair, a click opens a pair, coding ranges
filled in the background."""

from __future__ import annotations

import importlib

import pytest

import rankfold
from rankfold.widgets import explorer as explorer_module
from rankfold.widgets import overview_view
from rankfold.widgets.charts import PAIR_CLICK

# The module, which the name rankfold.overview (the function) hides.
overview_module = importlib.import_module("rankfold.overview")


@pytest.fixture()
def opened(df, monkeypatch):
    monkeypatch.setattr(overview_view, "AUTO_FILL", False)  # each test starts the filling
    ex = rankfold.explore(df, "trip_length", "service_rating")
    titles = [title for title, _ in explorer_module.SECTIONS]
    ex._tabs.selected_index = titles.index("All pairs")
    section = next(s for s in ex._sections if isinstance(s, overview_view.AllPairsSection))
    return ex, section


def test_the_map_is_the_overview_of_the_frame(df, opened):
    _, section = opened
    # reference: rankfold.overview called directly on the same frame
    expected = rankfold.overview(df)
    assert section.frame[["var_a", "var_b"]].equals(expected[["var_a", "var_b"]])
    assert section.frame["estimate"].tolist() == pytest.approx(expected["estimate"].tolist())
    spec = section._pane.spec
    assert any(p.get("name") == PAIR_CLICK for p in spec.get("params", [])) or PAIR_CLICK in str(
        spec)
    assert "district" in section._summary.value  # a skipped column is named with its reason


def test_a_click_opens_the_pair_with_its_codings(df, opened):
    ex, section = opened
    ex.merge("rows", [["10–20 km", "over 20 km"]])
    section._clicked({"var_a": "age_band", "var_b": "service_rating"})
    assert (ex.state.row, ex.state.col) == ("age_band", "service_rating")
    section._clicked({"var_a": "trip_length", "var_b": "age_band"})
    assert (ex.state.row, ex.state.col) == ("trip_length", "age_band")
    # the trip_length coding came back with it (the state keeps a coding per variable)
    assert "10–20 km" not in ex.table.row_labels


def test_coding_ranges_fill_in_and_equal_the_overviews_own(df, opened):
    _, section = opened
    section.fill_ranges(wait=True)
    # reference: overview(..., coding_ranges=True), which sweeps each pair itself
    expected = rankfold.overview(df, coding_ranges=True)
    assert section.frame["coding_min"].tolist() == pytest.approx(
        expected["coding_min"].tolist(), nan_ok=True)
    assert section.frame["coding_max"].tolist() == pytest.approx(
        expected["coding_max"].tolist(), nan_ok=True)


def test_cancel_stops_filling_in(df, opened, monkeypatch):
    _, section = opened
    real = overview_module.coding_range

    def one_then_cancel(table, measure="gamma"):
        section._cancel.set()  # as if the cancel button were pressed during the first pair
        return real(table, measure)

    monkeypatch.setattr(overview_module, "coding_range", one_then_cancel)
    section.fill_ranges(wait=True)
    assert section.frame["coding_min"].notna().sum() == 1
    assert section._fill.layout.display is None  # the button is offered again


def test_opening_the_tab_starts_filling_in(df, monkeypatch):
    ex = rankfold.explore(df, "trip_length", "service_rating")
    titles = [title for title, _ in explorer_module.SECTIONS]
    ex._tabs.selected_index = titles.index("All pairs")
    section = next(s for s in ex._sections if isinstance(s, overview_view.AllPairsSection))
    section.fill_ranges(wait=True)  # waits for the filling the tab started
    assert section.frame["coding_min"].notna().any()
