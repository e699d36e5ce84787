"""The "All pairs" tab in a real browser: JupyterLab in headless Chromium, offline.

Runs the quickstart, opens the map of every pair, checks one cell's estimate against
rankfold.overview, clicks the cell of another pair, and the pickers follow.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

import rankfold

pytestmark = pytest.mark.browser

NOTEBOOK = Path(__file__).parents[2] / "example_notebooks" / "quickstart.ipynb"


def test_all_pairs_map_opens_a_pair_on_click(open_notebook) -> None:
    from playwright.sync_api import expect

    notebook = open_notebook(NOTEBOOK)
    explorer = notebook.run_whole_explorer_in_view()
    explorer.locator(".rankfold-sections .lm-TabBar-tab",
                     has_text=re.compile(r"^All pairs$")).click()

    # reference: rankfold.overview on the notebook's own (seeded, invented) data
    frame = rankfold.overview(rankfold.demo.transit_survey())
    pair = frame[(frame["var_a"] == "service_rating") & (frame["var_b"] == "age_band")].iloc[0]
    # the top drawn rect of that cell (the matrix draws a background rect below each one)
    cell = explorer.locator(".rankfold-overview path[aria-roledescription='rect mark']"
                            "[aria-label*='var_a: service_rating'][aria-label*='var_b: age_band']")
    expect(cell.last).to_be_visible()
    label = cell.last.get_attribute("aria-label")
    shown = re.search(r"gamma: (\S+);", label).group(1).replace("\u2212", "-")
    assert float(shown) == pytest.approx(pair["estimate"], abs=1e-6)
    cell.last.click()
    expect(explorer.locator(".rankfold-row-picker select")).to_have_value(
        re.compile(r"^(service_rating|age_band)$"))
    expect(explorer.locator(".rankfold-col-picker select")).to_have_value(
        re.compile(r"^(service_rating|age_band)$"))
