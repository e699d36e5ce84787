"""The explorer's control and weight pickers and its within-levels view (small-multiple
heatmaps on one
colour scale, gamma per level beside partial gamma). Data: rankfold.demo.clinic_waits, an
invented, seeded survey of three imaginary clinics."""

from __future__ import annotations

import json
import re

import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold.widgets.within_levels_view import (
    WithinLevelsSection,
    level_heatmaps,
    within_levels_html,
)

ROW, COL, CONTROL = "wait", "satisfaction", "clinic"


@pytest.fixture(scope="module")
def visits() -> pd.DataFrame:
    return rankfold.demo.clinic_waits(n=600, seed=3)


@pytest.fixture(scope="module")
def controlled(visits):
    return rankfold.table(visits, ROW, COL, control=CONTROL)


def panels(spec: dict) -> list[dict]:
    """Per level: title, the cells' (row, col, value) and the colour scale domain."""
    out = []
    for panel in spec["concat"]:
        values = panel["data"]["values"]
        values = json.loads(values) if isinstance(values, str) else values
        rect = next(part for part in panel["layer"] if part["mark"]["type"] == "rect")
        out.append({"title": panel["title"]["text"],
                    "cells": {(v["row"], v["col"]): v["value"] for v in values
                              if "row_position" in v},  # the rest are margin totals
                    "domain": rect["encoding"]["color"]["scale"]["domain"]})
    return out


def brute_force_gamma(x: np.ndarray, y: np.ndarray) -> float:
    """(C - D) / (C + D) by enumerating every pair of records (Goodman & Kruskal 1954)."""
    s = np.sign(x[:, None] - x[None, :]) * np.sign(y[:, None] - y[None, :])
    return float(s[s > 0].size - s[s < 0].size) / float(s[s != 0].size)


def test_one_heatmap_per_level_with_each_levels_counts(visits, controlled):
    shown = panels(level_heatmaps(controlled, "count"))
    # Outside reference: pandas.crosstab of the records of each clinic.
    crosstabs = {c: pd.crosstab(g[ROW], g[COL], dropna=False)
                 for c, g in visits.groupby(CONTROL, observed=False)}
    assert [p["title"] for p in shown] == [f"{CONTROL} = {c}" for c in rankfold.demo.CLINICS]
    for panel, clinic in zip(shown, rankfold.demo.CLINICS, strict=True):
        table = crosstabs[clinic]
        for (r, c), value in panel["cells"].items():
            assert value == table.loc[r, c]
    # one colour scale: every panel spans 0 .. the largest count over all clinics
    largest = max(float(t.to_numpy().max()) for t in crosstabs.values())
    assert all(p["domain"] == [0, largest] for p in shown)


def test_diverging_scale_is_shared_and_symmetric(visits, controlled):
    shown = panels(level_heatmaps(controlled, "adjusted_residual"))
    # Haberman (1973) adjusted residuals computed here from each clinic's crosstab.
    largest = 0.0
    for _, group in visits.groupby(CONTROL, observed=True):
        n = pd.crosstab(group[ROW], group[COL]).to_numpy(dtype=float)
        total = n.sum()
        p_r, p_c = n.sum(axis=1) / total, n.sum(axis=0) / total
        m = total * np.outer(p_r, p_c)
        residual = (n - m) / np.sqrt(m * np.outer(1 - p_r, 1 - p_c))
        largest = max(largest, float(np.nanmax(np.abs(residual))))
    for panel in shown:
        assert panel["domain"] == pytest.approx([-largest, largest])


def test_panel_lists_each_levels_gamma_beside_partial(visits, controlled):
    html = within_levels_html(controlled, controlled.measures(), controlled.tests())
    codes = {v: visits[v].cat.codes.to_numpy() for v in (ROW, COL)}
    for clinic in rankfold.demo.CLINICS:
        mask = (visits[CONTROL] == clinic).to_numpy()
        expected = brute_force_gamma(codes[ROW][mask], codes[COL][mask])
        row = re.search(rf'data-level="{clinic}">.*?rankfold-estimate">([-0-9.]+)<', html)
        assert float(row.group(1)) == pytest.approx(expected, abs=5e-5)
    partial = re.search(r'data-measure="partial_gamma">.*?rankfold-estimate">([-0-9.]+)<', html)
    assert float(partial.group(1)) == pytest.approx(
        controlled.partial_measures().loc["partial_gamma", "estimate"], abs=5e-5)
    for key in ("gamma_homogeneity", "cmh_correlation"):
        assert f'data-test="{key}"' in html
    assert "not evidence of a cause" in html


def test_explorer_takes_level_and_weights(visits):
    before = visits.copy(deep=True)
    ex = rankfold.explore(visits, ROW, COL, control=CONTROL, weight="visit_weight",
                          weight_kind="sampling")
    assert (ex.table.control_name, ex.table.weight_kind) == (CONTROL, "sampling")
    assert "effective sample size (Kish)" in ex.measures.loc["gamma", "note"]
    ex.merge("cols", [["very unhappy", "unhappy"]])
    # merges reach every level: compare with pandas on recoded records (outside reference)
    recoded = visits.assign(**{COL: visits[COL].astype(str).replace("very unhappy", "unhappy")})
    for clinic in rankfold.demo.CLINICS:
        own = recoded[recoded[CONTROL] == clinic]
        expected = pd.crosstab(own[ROW], own[COL], values=own["visit_weight"], aggfunc="sum")
        expected = expected.fillna(0.0)
        got = ex.table.control_counts.xs(clinic, level=0)
        assert float(got.to_numpy().sum()) == pytest.approx(expected.to_numpy().sum())
        assert float(got.iloc[:, 0].sum()) == pytest.approx(float(expected["unhappy"].sum()))
    section = next(s for s in ex._sections if isinstance(s, WithinLevelsSection))
    section.show(ex._rendered)
    assert 'data-measure="partial_gamma"' in section._numbers.value
    pd.testing.assert_frame_equal(visits, before)


def test_pickers_change_roles_and_refuse_conflicts(visits):
    ex = rankfold.explore(visits, ROW, COL)
    pickers = ex._pickers
    pickers._control.value = CONTROL
    assert ex.state.control == CONTROL and ex.table.cells.shape[0] == 3
    pickers._control.value = ROW  # the row variable cannot also be the level
    assert ex.state.control == CONTROL and pickers._control.value == CONTROL
    assert "own column" in ex._message.value
    pickers._weight.value = "visit_weight"
    pickers._kind.value = "sampling"
    assert (ex.state.weight, ex.state.weight_kind) == ("visit_weight", "sampling")
    pickers._weight.label = "none"  # dropping the weight drops the sampling reading too
    assert (ex.state.weight, ex.state.weight_kind) == (None, "frequency")
    assert pickers._kind.disabled
    pickers._control.label = "none"
    section = next(s for s in ex._sections if isinstance(s, WithinLevelsSection))
    section.show(ex._rendered)
    assert "Choose a variable to control for" in section._numbers.value


def test_the_grid_puts_no_more_heatmaps_side_by_side_than_fit(controlled):
    from rankfold.widgets.heatmap import cell_width
    from rankfold.widgets.within_levels_view import GRID_WIDTH

    wide = level_heatmaps(controlled, "count")  # 5 satisfaction columns + totals
    assert cell_width(6) * 6 * 2 > GRID_WIDTH and wide["columns"] == 1
    narrow_table = controlled.merge("cols", [["very unhappy", "unhappy", "neutral"],
                                          ["happy", "very happy"]])
    narrow = level_heatmaps(narrow_table, "count")  # 2 columns + totals
    # two heatmaps of 3 cells and their row labels are wider than the grid: one per line
    assert (cell_width(3) * 3 + 120) * 2 > GRID_WIDTH
    assert narrow["columns"] == 1 and len(narrow["concat"]) == 3
    assert level_heatmaps(narrow_table, "count", columns=2)["columns"] == 2
