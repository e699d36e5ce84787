"""The quickstart notebook in a real browser: JupyterLab in headless Chromium, offline.

Runs every cell through JupyterLab's Run menu, then works the explorer as a reader would: picks
another column variable in its dropdown, merges two neighbouring categories in the category
editor, reads the measures on the page, clicks a heatmap cell and follows the pair view. What
the page shows is checked against the core computed here and against references outside the
project (pandas' crosstab, pair counts by enumeration, scipy.stats).

``pytest -m browser`` runs these tests alone. To refresh the README's picture from the same run:
``python -m pytest tests/browser --readme-screenshot docs/explorer.png``.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import rankfold
from tables_for_tests import brute_force_pairs, expand_table

pytestmark = pytest.mark.browser

QUICKSTART = Path(__file__).parents[2] / "example_notebooks" / "quickstart.ipynb"
DASH = "–"
# Heatmap cells coloured by counts; Vega labels each one "<col>: a; <row>: b; counts: n".
COUNT_CELLS = (
    ".rankfold-heatmap .mark-rect path[aria-roledescription='rect mark'][aria-label*='; counts: ']"
)


def shown(value: float) -> str:
    """How the measures panel writes an estimate: 4 decimals, a dash when undefined."""
    return DASH if np.isnan(value) else f"{value:.4f}"


def heatmap_counts(explorer, row_name: str, col_name: str) -> pd.DataFrame:
    """The counts the heatmap's cells announce in their accessible labels, as a table."""
    labels = explorer.locator(COUNT_CELLS).evaluate_all(
        "paths => paths.map((p) => p.getAttribute('aria-label'))"
    )
    cells = []
    for label in labels:
        fields = dict(part.split(": ", 1) for part in label.split("; "))
        cells.append((fields[row_name], fields[col_name], float(fields["counts"].replace(",", ""))))
    return pd.DataFrame(cells, columns=["row", "col", "count"]).pivot(
        index="row", columns="col", values="count"
    )


def estimate_on_page(explorer, key: str) -> float:
    return float(explorer.locator(f"td.rankfold-estimate[data-measure='{key}']").inner_text())


def test_offline_and_console_guards_catch_what_they_must(guarded_context) -> None:
    """The guards can fail: a page that calls out and logs an error is caught."""
    with guarded_context() as (page, guard):
        page.set_content("<p>guard check</p>")
        page.evaluate(
            """async () => {
                await fetch('http://rankfold-offline-check.invalid/x').catch(() => null);
                const socket = new WebSocket('ws://rankfold-offline-check.invalid/socket');
                await new Promise((done) => { socket.onclose = done; socket.onerror = done; });
                console.error('rankfold guard check');
                console.warn('WARN Conflicting scale property "range" (rankfold guard check)');
                console.warn('an unrelated warning');
            }"""
        )
    assert guard.outside_requests == [
        "http://rankfold-offline-check.invalid/x",
        "ws://rankfold-offline-check.invalid/socket",
    ]
    assert any("rankfold guard check" in e for e in guard.console_errors)
    # Vega's warnings fail a test too; other warnings do not.
    assert any("Conflicting scale property" in e for e in guard.console_errors)
    assert not any("unrelated" in e for e in guard.console_errors)


def test_quickstart_explorer_in_the_browser(open_notebook, lab_server, tmp_path,
                                            request) -> None:
    from playwright.sync_api import expect

    notebook = open_notebook(QUICKSTART)
    page = notebook.page
    page.set_viewport_size({"width": 1500, "height": 2000})  # the whole explorer in view
    notebook.close_left_sidebar()
    notebook.run_all_cells()

    # The notebook's explorer, drawn with its heatmap (an SVG Vega view), as the reader sees it.
    explorer = page.locator(".jp-OutputArea-output .rankfold-explorer").first
    explorer.locator(".rankfold-heatmap .mark-rect path").first.wait_for()
    explorer.screenshot(path=tmp_path / "explorer.png")
    readme_path = request.config.getoption("--readme-screenshot")
    if readme_path:
        Path(readme_path).parent.mkdir(parents=True, exist_ok=True)
        explorer.screenshot(path=readme_path)

    # The notebook left three steps. Picking another row variable keeps the column
    # variable's coding, and picking the first one again brings its own back.
    steps = explorer.locator(".rankfold-step-text")
    expect(steps).to_have_count(3)
    left = [re.sub(r"^\d+\. ", "", text) for text in steps.all_inner_texts()]
    row_picker = explorer.locator(".rankfold-row-picker select")
    first_row = row_picker.input_value()
    other_row = next(x for x in row_picker.locator("option").evaluate_all(
        "os => os.map((o) => o.value)") if x not in (first_row, "service_rating"))
    row_picker.select_option(other_row)
    expect(explorer.locator(".rankfold-editor-rows")).to_contain_text(
        f"down the side: {other_row}")
    expect(steps).to_have_count(2)
    row_picker.select_option(first_row)
    expect(steps).to_have_count(3)
    assert [re.sub(r"^\d+\. ", "", t) for t in steps.all_inner_texts()] == left

    # Undo and redo a picker change (the history holds every change, pickers included).
    row_picker.select_option(other_row)
    expect(steps).to_have_count(2)
    explorer.locator(".rankfold-undo").click()
    expect(row_picker).to_have_value(first_row)
    expect(steps).to_have_count(3)
    explorer.locator(".rankfold-redo").click()
    expect(row_picker).to_have_value(other_row)
    expect(explorer.locator(".rankfold-editor-rows")).to_contain_text(
        f"down the side: {other_row}")
    explorer.locator(".rankfold-undo").click()
    expect(row_picker).to_have_value(first_row)
    expect(steps).to_have_count(3)

    # Remove the middle step with its own button: the other two are replayed without it.
    explorer.locator(".rankfold-step").nth(1).locator(".rankfold-remove-step").click()
    expect(steps).to_have_count(2)
    assert [re.sub(r"^\d+\. ", "", t) for t in steps.all_inner_texts()] == [left[0], left[2]]
    expect(explorer.locator(".rankfold-message-error")).to_have_count(0)
    kept = (rankfold.table(rankfold.demo.transit_survey(), first_row, "service_rating")
            .merge("rows", [["10–20 km", "over 20 km"]]).merge("cols", [["very poor", "poor"]]))
    expect(explorer.locator("td.rankfold-estimate[data-measure='gamma']")).to_have_text(
        shown(kept.measures().loc["gamma", "estimate"]))

    # Back to the table as collected, coloured by counts (the notebook's cells left exclusions,
    # merges and another colouring in place), so the expected numbers follow from the page.
    reset = explorer.locator(".rankfold-reset")
    if reset.is_enabled():
        reset.click()
    expect(explorer.locator(".rankfold-step-list")).to_have_count(0)
    explorer.locator(".rankfold-colour-by button", has_text=re.compile(r"^counts$")).click()
    expect(explorer.locator(".rankfold-control-picker select")).to_have_value("none")
    expect(explorer.locator(".rankfold-weight-picker select")).to_have_value("none")

    # Pick another column variable in the page's dropdown.
    row_name = explorer.locator(".rankfold-row-picker select").input_value()
    col_picker = explorer.locator(".rankfold-col-picker select")
    offered = col_picker.locator("option").evaluate_all("os => os.map((o) => o.value)")
    col_name = next(x for x in offered if x not in (row_name, col_picker.input_value()))
    col_picker.select_option(col_name)
    expect(explorer.locator(".rankfold-editor-cols")).to_contain_text(f"across the top: {col_name}")

    # Merge its last two categories with the category editor's toggle.
    df = rankfold.demo.transit_survey()  # the quickstart's data
    collected = rankfold.table(df, row_name, col_name)
    upper, lower = collected.col_labels[-2:]
    explorer.locator(
        f".rankfold-editor-cols .rankfold-merge-toggle[title='Merge {upper} and {lower}']"
    ).click()
    table = collected.merge("cols", [[upper, lower]])
    expect(explorer.locator(".rankfold-step")).to_have_count(1)
    expect(explorer.locator(COUNT_CELLS)).to_have_count(table.shape[0] * table.shape[1])
    expect(explorer.locator(".rankfold-message-error")).to_have_count(0)

    # The heatmap shows the merged table, as pandas cross-tabulates it.
    row_labels = [str(x) for x in table.row_labels]
    col_labels = [str(x) for x in table.col_labels]
    merged = df[col_name].astype(object).replace({upper: col_labels[-1], lower: col_labels[-1]})
    reference = pd.crosstab(df[row_name].astype(object), merged)
    np.testing.assert_array_equal(
        heatmap_counts(explorer, row_name, col_name).loc[row_labels, col_labels].to_numpy(),
        reference.loc[row_labels, col_labels].to_numpy(),
    )

    # Every measure on the page is the core's value for this state, as the panel writes it ...
    for key, value in table.measures()["estimate"].items():
        expect(explorer.locator(f"td.rankfold-estimate[data-measure='{key}']")).to_have_text(
            shown(value)
        )
    # ... and the main ones match references outside the project (to the 4 decimals shown).
    counts = table.counts.to_numpy()
    concordant, discordant = brute_force_pairs(counts)
    # Goodman & Kruskal (1954): gamma = (C - D) / (C + D).
    assert estimate_on_page(explorer, "gamma") == pytest.approx(
        (concordant - discordant) / (concordant + discordant), abs=5e-5
    )
    rows, cols = expand_table(counts)
    assert estimate_on_page(explorer, "tau_b") == pytest.approx(  # scipy.stats, tau-b variant
        stats.kendalltau(rows, cols).statistic, abs=5e-5
    )
    assert estimate_on_page(explorer, "somers_d_col_given_row") == pytest.approx(
        stats.somersd(counts).statistic, abs=5e-5  # scipy.stats: a table gives D(column | row)
    )
    assert estimate_on_page(explorer, "pearson_x2") == pytest.approx(
        stats.chi2_contingency(counts, correction=False).statistic, abs=5e-5  # scipy.stats
    )

    # Click a heatmap cell and follow it in the pair view.
    i, j = 1, 1
    row_label, col_label = row_labels[i], col_labels[j]
    cell = explorer.locator(
        f"{COUNT_CELLS}[aria-label^='{col_name}: {col_label}; {row_name}: {row_label};']"
    )
    box = cell.bounding_box()  # includes the white outline: aim well inside, above the number
    cell.click(position={"x": box["width"] * 0.2, "y": box["height"] * 0.25})
    explorer.locator(".rankfold-sections .lm-TabBar-tab", has_text=re.compile(r"^Pairs$")).click()
    expect(explorer.locator(".rankfold-pair-view svg")).to_contain_text(
        f"Pairs with a unit in ({row_label}, {col_label})"
    )
    expect(explorer.locator(".rankfold-pair-cell select option:checked")).to_have_text(
        f"{row_label} × {col_label}"
    )
    # The pairs this cell forms, region by region, counted here by slicing the table.
    n = counts[i, j]
    by_region = {
        "above_left": n * counts[:i, :j].sum(),
        "below_right": n * counts[i + 1:, j + 1:].sum(),
        "above_right": n * counts[:i, j + 1:].sum(),
        "below_left": n * counts[i + 1:, :j].sum(),
    }
    for region, pairs in by_region.items():
        row = explorer.locator(f".rankfold-pair-table tr[data-region='{region}']")
        expect(row).to_have_attribute("data-pairs", f"{pairs:g}")
    explorer.screenshot(path=tmp_path / "pair_view.png")
    print(f"screenshots: {tmp_path / 'explorer.png'} and {tmp_path / 'pair_view.png'}")

    # Compare: the change with its paired interval, against the table as collected and then
    # against the previous step (here the same table: the one step is the merge).
    def open_section(title: str) -> None:
        explorer.locator(".rankfold-sections .lm-TabBar-tab",
                         has_text=re.compile(f"^{title}$")).click()

    open_section("Compare")
    expected = rankfold.compare_measures(collected, table).loc["gamma"]
    gamma_row = explorer.locator(".rankfold-comparison-table tr[data-measure='gamma']")
    expect(gamma_row.locator("td.rankfold-change")).to_have_text(f"{expected.change:.4f}")
    expect(gamma_row.locator("td.rankfold-change-interval")).to_have_text(
        f"[{expected.change_ci_low:.3f}, {expected.change_ci_high:.3f}]")
    expect(explorer.locator(".rankfold-choice-caution")).to_contain_text("after looking")
    expect(explorer.locator(".rankfold-comparison svg")).to_contain_text("Somers' d (symmetric)")
    explorer.locator(".rankfold-compare-baseline button",
                     has_text="against the previous step").click()
    expect(explorer.locator(".rankfold-compare-which")).to_contain_text(
        f"step 0: {col_name}: merge")
    expect(explorer.locator(".rankfold-comparison-table thead")).to_contain_text(
        "before the last step")
    expect(explorer.locator(".rankfold-comparison svg")).to_contain_text("Before the last step")

    # Export the measures table as Markdown through the page; the file lands in the default
    # folder beside the notebook, and the copy button puts the same text on the clipboard.
    open_section("Export")
    explorer.locator(".rankfold-export-table-format select").select_option(label="Markdown")
    explorer.locator(".rankfold-export-measures").click()
    message = explorer.locator(".rankfold-message")
    expect(message).to_contain_text("Saved the measures table to")
    written = lab_server.root / "rankfold-exports" / "rankfold-measures.md"
    text = written.read_text(encoding="utf-8")
    gamma_line = next(line for line in text.splitlines() if line.startswith("| gamma |"))
    assert f"| {table.measures().loc['gamma', 'estimate']:.4f} |" in gamma_line
    assert f"{col_name}: merge [{upper}, {lower}]" in text
    explorer.locator(".rankfold-export-measures").click()  # never overwritten: numbered
    expect(message).to_contain_text("rankfold-measures-2.md")
    page.context.grant_permissions(["clipboard-read", "clipboard-write"],
                                   origin=lab_server.url)
    copy = explorer.locator(".rankfold-copy-measures button")
    copy.click()
    expect(copy).to_have_text("copied")
    assert page.evaluate("navigator.clipboard.readText()") == text
