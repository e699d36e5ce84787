"""The levels and weights notebook in a real browser: JupyterLab in headless Chromium, offline.

Runs every cell, then opens the explorer's "Within each level" tab: one heatmap per clinic
must be drawn
(a concatenated chart, which the page draws only when told it is Vega-Lite), with each
clinic's weighted cells as pandas sums them, legends in swatches, and the gamma of each clinic
as the core computes it. Then drops the weight and the level in their pickers, which must read
"none" again, not go blank. The data are rankfold.demo.clinic_waits: invented, seeded.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

import rankfold

pytestmark = pytest.mark.browser

NOTEBOOK = Path(__file__).parents[2] / "example_notebooks" / "control_and_weights.ipynb"
ROW, COL, CONTROL, WEIGHT = "wait", "satisfaction", "clinic", "visit_weight"
LEVEL_CELLS = ".rankfold-within-heatmaps path[aria-roledescription='rect mark'][aria-label*=': ']"


def test_within_levels_tab_draws_every_clinic_and_pickers_return_to_none(open_notebook) -> None:
    from playwright.sync_api import expect

    notebook = open_notebook(NOTEBOOK)
    explorer = notebook.run_whole_explorer_in_view()

    explorer.locator(".rankfold-sections .lm-TabBar-tab",
                     has_text=re.compile(r"^Within each level$")).click()
    df = rankfold.demo.clinic_waits(n=900, seed=11)  # the notebook's data
    table = rankfold.table(df, ROW, COL, control=CONTROL, weight=WEIGHT, weight_kind="sampling")
    cells = explorer.locator(LEVEL_CELLS)
    expect(cells).to_have_count(table.cells.size)  # every cell of every clinic is drawn

    # Each drawn cell announces "<col>: a; <row>: b; counts: w"; as a multiset over the clinics
    # they equal the weighted sums pandas forms per clinic, row and column category.
    drawn = []
    for label in cells.evaluate_all("ps => ps.map((p) => p.getAttribute('aria-label'))"):
        fields = dict(part.split(": ", 1) for part in label.split("; "))
        drawn.append((fields[ROW], fields[COL], float(fields["counts"].replace(",", ""))))
    sums = df.groupby([CONTROL, ROW, COL], observed=False)[WEIGHT].sum()  # source: pandas
    expected = sorted((str(r), str(c), float(w)) for (_, r, c), w in sums.items())
    drawn.sort()
    assert [d[:2] for d in drawn] == [e[:2] for e in expected]
    np.testing.assert_allclose([d[2] for d in drawn], [e[2] for e in expected], atol=5e-4)
    # one swatch legend for the one colour scale the clinics share, no SVG gradient (gradient
    # ids clash between charts)
    assert explorer.locator(".rankfold-within-heatmaps linearGradient").count() == 0
    expect(explorer.locator(".rankfold-within-heatmaps .role-legend")).to_have_count(1)

    # Each clinic's gamma on the page is the core's, as the panel writes it.
    gammas = table.control_measures().xs("gamma", level=1)["estimate"]
    for clinic, value in gammas.items():
        shown = explorer.locator(f"tr[data-level='{clinic}'] td.rankfold-estimate")
        expect(shown).to_have_text(f"{value:.4f}")

    # Dropping the weight, then the level: both pickers read "none" again.
    for css in ("rankfold-weight-picker", "rankfold-control-picker"):
        explorer.locator(f".{css} select").select_option(label="none")
        expect(explorer.locator(f".{css} select option:checked")).to_have_text("none")
    expect(explorer.locator(".rankfold-within-measures-box")).to_contain_text(
        "Choose a variable to control for")
    expect(explorer.locator(".rankfold-measures-box")).not_to_contain_text("weighted by")
    expect(explorer.locator(".rankfold-message-error")).to_have_count(0)
    pooled = rankfold.table(df, ROW, COL).measures().loc["gamma", "estimate"]
    expect(explorer.locator("td.rankfold-estimate[data-measure='gamma']")).to_have_text(
        f"{pooled:.4f}")
