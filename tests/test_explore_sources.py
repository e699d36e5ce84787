"""The explorer on sources counted by other engines, and on a ready table ("table mode").

Counts shown are checked against ``pandas.crosstab`` of the same invented records; the
background count is held on an event so the test can look at the explorer while it runs.
"""

from __future__ import annotations

import threading
import time

import numpy as np
import pandas as pd
import pytest

import rankfold
import rankfold.sources
from rankfold.widgets import explorer as explorer_module

dd = pytest.importorskip("dask.dataframe")
duckdb = pytest.importorskip("duckdb")
pytest.importorskip("pyarrow")

SCORE = ["low", "middle", "high"]


@pytest.fixture(scope="module")
def visits() -> pd.DataFrame:
    """Invented scenario, not real data: visits to a made-up chain of climbing gyms."""
    rng = np.random.default_rng(11)
    n = 4000
    sessions = rng.integers(1, 6, n)
    return pd.DataFrame({
        "sessions_per_month": sessions,
        "route_grade": np.clip(sessions // 2 + rng.integers(0, 3, n), 0, 4),
        "years_member": rng.integers(0, 4, n),
        "gym": rng.choice(["east", "west", "river"], n),
        "mood": rng.choice(SCORE, n),
        "stay_minutes": rng.normal(90, 20, n).round(1),
        "weight": rng.uniform(0.5, 2.0, n),
    })


@pytest.fixture(scope="module")
def parquet_path(visits, tmp_path_factory) -> str:
    path = tmp_path_factory.mktemp("gyms") / "visits.parquet"
    visits.to_parquet(path, index=False)
    return str(path)


def crosstab(visits, row, col) -> list[list[int]]:
    # Outside reference: pandas' own cross-tabulation of the records.
    return pd.crosstab(visits[row], visits[col]).to_numpy().tolist()


def sources(visits, parquet_path) -> dict:
    pl = pytest.importorskip("polars")
    return {
        "files": parquet_path,
        "dask": dd.from_pandas(visits, npartitions=3),
        "polars": pl.from_pandas(visits),
        "duckdb relation": duckdb.connect().from_df(visits),
    }


@pytest.mark.parametrize("kind", ["files", "dask", "polars", "duckdb relation"])
def test_explorer_on_each_source(visits, parquet_path, kind):
    source = sources(visits, parquet_path)[kind]
    ex = rankfold.explore(source, "sessions_per_month", "route_grade")
    assert ex.table.counts.to_numpy().tolist() == crosstab(visits, "sessions_per_month",
                                                           "route_grade")
    ex.merge("rows", [[1, 2]])
    merged = pd.crosstab(visits["sessions_per_month"].clip(lower=2), visits["route_grade"])
    assert ex.table.counts.to_numpy().tolist() == merged.to_numpy().tolist()
    ex.set_variables(row="years_member")  # a scripted choice counts at once
    assert ex.table.counts.to_numpy().tolist() == crosstab(visits, "years_member",
                                                           "route_grade")


def test_pickers_list_the_source_columns_from_their_types(parquet_path):
    ex = rankfold.explore(parquet_path, "sessions_per_month", "route_grade")
    pickers = ex._pickers
    offered = list(pickers._row.options)
    # numbers can be put in order; text ('gym', 'mood') cannot without order=
    assert offered == ["sessions_per_month", "route_grade", "years_member", "stay_minutes",
                       "weight"]
    levels = [label for label, _ in pickers._control.options]
    assert levels == ["none", "sessions_per_month", "route_grade", "years_member", "gym", "mood"]
    weights = [value for _, value in pickers._weight.options]
    assert "weight" in weights and "gym" not in weights


def hold_counts(monkeypatch) -> tuple[threading.Event, threading.Event]:
    """Make every count wait for ``release``; ``started`` is set when one begins."""
    release, started = threading.Event(), threading.Event()
    count = rankfold.sources.tally_source

    def held_count(*args, **kwargs):
        started.set()
        assert release.wait(20), "the test never released the count"
        return count(*args, **kwargs)

    monkeypatch.setattr(rankfold.sources, "tally_source", held_count)
    return release, started


def test_choosing_a_pair_counts_in_the_background(visits, parquet_path, monkeypatch):
    ex = rankfold.explore(parquet_path, "sessions_per_month", "route_grade")
    release, started = hold_counts(monkeypatch)
    ex._pickers._row.value = "years_member"  # as a click in the row picker
    # Control came back while the count is held: the notebook is free for other cells.
    assert started.wait(20)
    assert "Counting years_member × route_grade with DuckDB" in ex._counting.widget.value
    assert ex.state.row == "sessions_per_month"
    release.set()
    ex.wait(20)
    assert ex._counting.widget.value == ""
    assert ex.state.row == "years_member"
    assert ex.table.counts.to_numpy().tolist() == crosstab(visits, "years_member",
                                                           "route_grade")


def test_a_failed_background_count_keeps_the_previous_table(parquet_path):
    ex = rankfold.explore(parquet_path, "sessions_per_month", "route_grade")
    ex._pickers._row.value = "stay_minutes"  # numeric, but far more than 30 values
    ex.wait(30)
    assert "stay_minutes" in ex._message.value and "bands" in ex._message.value
    assert ex.state.row == "sessions_per_month"
    assert ex._pickers._row.value == "sessions_per_month"
    assert ex._counting.widget.value == ""


def test_table_mode_works_from_the_counts(visits):
    table = rankfold.table(visits, "sessions_per_month", "mood", control="gym",
                           order={"mood": SCORE})
    ex = rankfold.explore(table)
    assert (ex.state.row, ex.state.col, ex.state.control) == ("sessions_per_month", "mood", "gym")
    assert list(ex._pickers._row.options) == ["sessions_per_month", "mood"]
    ex.exclude("cols", ["middle"])
    ex.swap()
    want = pd.crosstab(visits["mood"], visits["sessions_per_month"]).loc[["low", "high"]]
    assert ex.table.counts.to_numpy().tolist() == want.to_numpy().tolist()
    # every view draws from the counts alone
    for index in range(len(explorer_module.SECTIONS)):
        ex._tabs.selected_index = index
    assert "apply_steps" not in ex.to_code()
    namespace: dict = {}
    exec(ex.to_code(), namespace)
    assert namespace["table"].counts.to_numpy().tolist() == want.to_numpy().tolist()
    with pytest.raises(ValueError, match="holds counts, not records"):
        ex.coded_columns()


def test_table_mode_refuses_other_roles_in_the_widget(visits):
    table = rankfold.table_from_counts([[20, 5], [4, 18]], row_name="before", col_name="after")
    ex = rankfold.explore(table)
    ex._pickers._control.options = [("none", None), ("gym", "gym")]
    ex._pickers._control.value = "gym"
    assert "control variable and weight are fixed" in ex._message.value
    assert ex.state.control is None
    assert ex.table.counts.to_numpy().tolist() == [[20, 5], [4, 18]]


def test_unknown_data_is_refused():
    with pytest.raises(ValueError, match="cannot count a builtins.list"):
        rankfold.explore([[1, 2], [3, 4]])


def test_an_edit_made_while_a_count_runs_is_kept(visits, parquet_path, monkeypatch):
    ex = rankfold.explore(parquet_path, "sessions_per_month", "route_grade")
    release, started = hold_counts(monkeypatch)
    ex._pickers._row.value = "years_member"  # counted in the background ...
    assert started.wait(20)
    ex.merge("cols", [[3, 4]])  # ... while the reader merges on the variable that stays
    release.set()
    ex.wait(20)
    # The count's proposal landed on the state as it was by then: the merge is kept.
    assert (ex.state.row, ex.state.col) == ("years_member", "route_grade")
    assert [e.describe() for e in ex.state.edits] == ["route_grade: merge [3, 4]"]
    # pandas.crosstab of the records, with the two grades merged by hand
    merged = visits.assign(route_grade=visits["route_grade"].clip(upper=3))
    assert ex.table.counts.to_numpy().tolist() == crosstab(merged, "years_member", "route_grade")
    assert ex._message.value == ""
    ex.undo()  # each change is its own entry: the pair, then the merge
    assert (ex.state.row, [len(ex.state.edits)]) == ("sessions_per_month", [1])


def test_a_count_ending_while_the_explorer_draws_is_not_lost(parquet_path):
    ex = rankfold.explore(parquet_path, "sessions_per_month", "route_grade")
    wanted = ex.state.with_variables("years_member", "route_grade")
    with ex._lock:  # as if the explorer were drawing a state in the notebook's thread
        ex._syncing = True
        ex._pickers._row.value = "years_member"  # an echo of a state being shown: ignored
        assert ex._counting.widget.value == ""
        ex._counting.start(wanted, ex._cache.collected, ex._cache.data,
                           lambda error: ex._counted(
                               lambda s: s.with_variables("years_member", s.col), error))
        deadline = time.monotonic() + 30
        while wanted.table_key not in ex._cache._tables and time.monotonic() < deadline:
            time.sleep(0.02)  # the count ends while the drawing goes on
        time.sleep(0.1)
        ex._syncing = False
    ex.wait(30)
    assert ex.state.row == "years_member"  # its proposal waited for the drawing, not dropped
