"""The explorer driven without a browser: controls are found by their CSS classes and operated
programmatically; every result must equal what the core gives for the same steps."""

from __future__ import annotations

import json
import re

import altair as alt
import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold.widgets import heatmap as heatmap_module

ROW, COL = "trip_length", "service_rating"


# ----------------------------------------------------------------------------- helpers
def find(root, css: str) -> list:
    """Widgets carrying a CSS class, in document order."""
    found, stack = [], [root]
    while stack:
        widget = stack.pop()
        if css in getattr(widget, "_dom_classes", ()):
            found.append(widget)
        stack.extend(reversed(getattr(widget, "children", ())))
    return found


def one(root, css: str):
    (widget,) = find(root, css)
    return widget


def category_row(ex, axis: str, label: str):
    editor = one(ex, f"rankfold-editor-{axis}")
    for row in find(editor, "rankfold-category"):
        if f"rankfold-category-label'>{label}<" in row.children[0].value:
            return row
    raise AssertionError(f"no category {label!r} on {axis}")


def leave_out(ex, axis: str, label: str) -> None:
    one(category_row(ex, axis, label), "rankfold-exclude").click()


def merge_toggle(ex, upper: str, lower: str):
    (toggle,) = [t for t in find(ex, "rankfold-merge-toggle")
                 if t.tooltip == f"Merge {upper} and {lower}"]
    return toggle


def open_tab(ex, title: str) -> None:
    tabs = one(ex, "rankfold-sections")
    tabs.selected_index = list(tabs.titles).index(title)


def message(ex) -> str:
    return one(ex, "rankfold-message").value


def chart_spec(ex, css: str) -> dict:
    pane = one(ex, css)
    (chart,) = pane.children
    return chart.spec


def frame_fingerprint(df: pd.DataFrame) -> tuple:
    return (pd.util.hash_pandas_object(df, index=True).to_numpy().tobytes(),
            tuple(map(str, df.dtypes)), tuple(df.columns), dict(df.attrs))


def assert_same_table(ex, expected: rankfold.OrdinalTable) -> None:
    """Counts, labels and measures equal the core's, exactly."""
    pd.testing.assert_frame_equal(ex.table.counts, expected.counts, check_exact=True)
    pd.testing.assert_frame_equal(ex.measures, expected.measures(), check_exact=True)
    assert ex.steps == expected.steps[expected.initial_steps:]


@pytest.fixture
def ex(df):
    return rankfold.explore(df, ROW, COL)


# ------------------------------------------------------------------------------- tests
def test_defaults_pick_the_first_two_orderable_columns(df):
    ex = rankfold.explore(df)
    assert (ex.state.row, ex.state.col) == (ROW, COL)
    options = list(one(ex, "rankfold-row-picker").options)
    assert "district" not in options and "survey_weight" not in options  # cannot be ordered
    assert "trips_per_week" in options
    assert_same_table(ex, rankfold.table(df, ROW, COL))


def test_buttons_and_toggles_match_the_core(ex, df):
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "10–20 km", "over 20 km").value = True
    merge_toggle(ex, "very poor", "poor").value = True
    # the steps list shows the row variable's coding, then the column variable's
    expected = (rankfold.table(df, ROW, COL).merge("rows", [["10–20 km", "over 20 km"]])
                .exclude("cols", ["no answer"]).merge("cols", [["very poor", "poor"]]))
    assert_same_table(ex, expected)
    lines = [line.children[0].value for line in find(ex, "rankfold-step")]
    assert len(lines) == 3 and "exclude no answer" in lines[1]
    assert message(ex) == ""


def test_to_code_runs_and_reproduces_the_numbers(ex, df):
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "5–10 km", "10–20 km").value = True
    namespace = {"df": df}
    exec(ex.to_code(), namespace)
    pd.testing.assert_frame_equal(namespace["measures"], ex.measures, check_exact=True)
    pd.testing.assert_frame_equal(namespace["table"].counts, ex.table.counts, check_exact=True)
    # The coded columns tabulate back to the table; source: pandas.crosstab
    coded = namespace["coded"]
    crossed = pd.crosstab(coded[ROW], coded[COL])
    np.testing.assert_array_equal(crossed.to_numpy(), ex.table.counts.to_numpy())
    assert list(crossed.index) == list(ex.table.row_labels)
    pd.testing.assert_frame_equal(ex.coded_columns(), coded)


def test_the_users_frame_is_never_modified(df):
    before = frame_fingerprint(df)
    ex = rankfold.explore(df, ROW, COL)
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "10–20 km", "over 20 km").value = True
    one(ex, "rankfold-swap").click()
    one(ex, "rankfold-row-picker").value = "age_band"
    ex.coded_columns()
    ex.reset()
    assert frame_fingerprint(df) == before


def test_a_single_category_is_refused_and_the_state_kept(ex):
    merge_toggle(ex, "very poor", "poor").value = True
    merge_toggle(ex, "very poor to poor", "fair").value = True
    merge_toggle(ex, "very poor to fair", "good").value = True
    merge_toggle(ex, "very poor to good", "very good").value = True
    kept = ex.table
    last = merge_toggle(ex, "very poor to very good", "no answer")
    last.value = True
    assert "single category" in message(ex)
    assert ex.table is kept and len(ex.steps) == 4
    assert last.value is False  # the boundary shows as still open
    # each toggle names the merged category by the first and last category as collected
    assert ex.table.col_labels == ("very poor to very good", "no answer")


def test_excluding_every_unit_is_refused(df):
    padded = df.assign(trip_length=df[ROW].cat.add_categories(["over 50 km", "over 90 km"]))
    ex = rankfold.explore(padded, ROW, COL)
    for label in ("under 2 km", "2–5 km", "5–10 km", "10–20 km"):
        leave_out(ex, "rows", label)
    kept = ex.table
    leave_out(ex, "rows", "over 20 km")
    assert "no units" in message(ex)
    assert ex.table is kept and ex.table.n > 0


def test_scripting_errors_raise_show_and_keep_state(ex):
    ex.exclude("cols", "no answer")
    with pytest.raises(ValueError, match="not neighbours"):
        ex.merge("rows", [["under 2 km", "5–10 km"]])
    assert "not neighbours" in message(ex)
    assert len(ex.steps) == 1
    with pytest.raises(ValueError, match="axis must be 'rows' or 'cols'"):
        ex.merge("columns", [["poor", "fair"]])
    ex.merge("cols", [["poor", "fair"]])
    assert message(ex) == ""  # a successful change clears the message


def test_swap_keeps_edits_with_their_variables(ex, df):
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "10–20 km", "over 20 km").value = True
    one(ex, "rankfold-swap").click()
    expected = (rankfold.table(df, COL, ROW).exclude("rows", ["no answer"])
                .merge("cols", [["10–20 km", "over 20 km"]]))
    assert_same_table(ex, expected)
    assert one(ex, "rankfold-row-picker").value == COL


def test_every_variable_keeps_its_coding_when_another_is_picked(ex, df):
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "10–20 km", "over 20 km").value = True
    merge_toggle(ex, "very poor", "poor").value = True
    full = (rankfold.table(df, ROW, COL).merge("rows", [["10–20 km", "over 20 km"]])
            .exclude("cols", ["no answer"]).merge("cols", [["very poor", "poor"]]))
    one(ex, "rankfold-row-picker").value = "age_band"
    assert_same_table(ex, rankfold.table(df, "age_band", COL).exclude("cols", ["no answer"])
                      .merge("cols", [["very poor", "poor"]]))
    assert ex.codings[ROW] == ex.state.coding(ROW) and len(ex.codings[ROW]) == 1
    one(ex, "rankfold-row-picker").value = ROW  # picked again: its merge is back
    assert_same_table(ex, full)
    one(ex, "rankfold-col-picker").value = ROW  # the other axis's variable: a swap
    assert (ex.state.row, ex.state.col) == (COL, ROW)
    assert_same_table(ex, rankfold.table(df, COL, ROW).exclude("rows", ["no answer"])
                      .merge("rows", [["very poor", "poor"]])
                      .merge("cols", [["10–20 km", "over 20 km"]]))


def test_undo_and_redo_walk_every_change(ex, df):
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "10–20 km", "over 20 km").value = True
    merge_toggle(ex, "very poor", "poor").value = True
    full = (rankfold.table(df, ROW, COL).merge("rows", [["10–20 km", "over 20 km"]])
            .exclude("cols", ["no answer"]).merge("cols", [["very poor", "poor"]]))
    one(ex, "rankfold-row-picker").value = "age_band"
    one(ex, "rankfold-undo").click()  # the picker change is undone, the pair comes back whole
    assert (ex.state.row, ex.state.col) == (ROW, COL)
    assert one(ex, "rankfold-row-picker").value == ROW
    assert_same_table(ex, full)
    one(ex, "rankfold-redo").click()
    assert ex.state.row == "age_band" and one(ex, "rankfold-redo").disabled
    ex.undo()
    ex.undo()  # the last coding edit: the "very poor"/"poor" merge, not another one
    assert_same_table(ex, rankfold.table(df, ROW, COL).merge("rows", [["10–20 km", "over 20 km"]])
                      .exclude("cols", ["no answer"]))
    ex.set_view(colour_by="row_percent")  # a new change drops the redo tail
    assert one(ex, "rankfold-redo").disabled
    ex.redo()
    assert "Nothing to redo" in message(ex) and ex.state.colour_by == "row_percent"


def test_reset_takes_back_every_coding_and_can_be_undone(ex, df):
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "very poor", "poor").value = True
    one(ex, "rankfold-row-picker").value = "age_band"
    merge_toggle(ex, "40–59", "60+").value = True
    one(ex, "rankfold-reset").click()
    assert_same_table(ex, rankfold.table(df, "age_band", COL))
    assert ex.codings == {}
    one(ex, "rankfold-undo").click()
    assert len(ex.codings[COL]) == 2 and len(ex.codings["age_band"]) == 1
    assert one(ex, "rankfold-reset").disabled is False


def test_reorder_buttons_only_without_a_declared_order(df):
    ex = rankfold.explore(df, "trips_per_week", COL)
    first = find(one(ex, "rankfold-editor-rows"), "rankfold-move-down")[0]
    first.click()
    expected = rankfold.table(df, "trips_per_week", COL)
    order = list(expected.row_labels)
    order[0], order[1] = order[1], order[0]
    assert_same_table(ex, expected.reorder("rows", order))
    declared = find(one(ex, "rankfold-editor-cols"), "rankfold-move-down")
    assert all(b.layout.display == "none" for b in declared)


def test_clicking_a_heatmap_cell_explains_its_pairs(ex):
    ex.exclude("cols", ["no answer"])
    (chart,) = one(ex, "rankfold-heatmap").children
    # what the page sends back after a click on the cell in row 1, column 3
    chart._vl_selections = {"cell": {"value": {"vlPoint": {"or": [
        {"row_position": 1, "col_position": 3}]}}, "store": []}}
    assert ex.state.chosen_cell == ("2–5 km", "good")
    regions = rankfold.pair_regions(ex.table.counts.to_numpy(), 1, 3)
    open_tab(ex, "Pairs")
    summary = one(ex, "rankfold-pair-summary").value
    for key, pairs in regions.summary["pairs"].items():
        assert f'data-region="{key}" data-pairs="{pairs:g}"' in summary
    assert one(ex, "rankfold-pair-cell").value == ("2–5 km", "good")
    # an empty selection (a redrawn chart) is not a click
    chart._vl_selections = {"cell": {"value": None, "store": []}}
    assert ex.state.chosen_cell == ("2–5 km", "good")


def test_pair_cell_dropdown_and_a_vanished_cell(ex):
    open_tab(ex, "Pairs")  # tabs are drawn when opened
    cell = one(ex, "rankfold-pair-cell")
    cell.value = ("over 20 km", "poor")
    assert ex.state.chosen_cell == ("over 20 km", "poor")
    assert "rankfold-pair-table" in one(ex, "rankfold-pair-summary").value
    merge_toggle(ex, "10–20 km", "over 20 km").value = True
    assert ex.state.chosen_cell == ("over 20 km", "poor")  # kept in the state ...
    assert ex.chart("pairs") is None  # ... but no longer a cell of the table
    assert cell.value is None and one(ex, "rankfold-pair-summary").value == ""


def test_every_colour_choice_draws_the_table_and_no_chart_holds_a_url(ex):
    ex.set_view(chosen_cell=("2–5 km", "good"))
    colour = one(ex, "rankfold-colour-by")
    for key in [value for _, value in colour.options]:
        colour.value = key
        assert ex.state.colour_by == key
        spec = chart_spec(ex, "rankfold-heatmap")
        cells = [c for c in json.loads(spec["data"]["values"]) if "row_position" in c]
        expected = rankfold.cell_figures(ex.table)[key].to_numpy(dtype=float)
        shown = np.array([np.nan if c["value"] is None else c["value"] for c in cells])
        np.testing.assert_array_equal(shown, expected)
        assert not re.search(r"https?://", json.dumps(spec))
    for title, css in (("Pairs", "rankfold-pair-view"), ("Compare", "rankfold-comparison")):
        open_tab(ex, title)
        assert not re.search(r"https?://", json.dumps(chart_spec(ex, css)))
    for name in ("heatmap", "pairs", "comparison"):
        ex.chart(name).to_dict(validate=True)  # a valid Vega-Lite specification


def test_measures_panel_shows_estimates_warnings_and_cautions(ex, df):
    panel = one(ex, "rankfold-measures-box").value
    for key, estimate in ex.measures["estimate"].items():
        shown = "–" if np.isnan(estimate) else f"{estimate:.4f}"
        assert f'<td class="rankfold-estimate" data-measure="{key}">{shown}</td>' in panel
    assert f"Somers&#x27; d ({COL} | {ROW})" in panel
    assert 'data-measure="pearson_x2"' in panel
    assert "not evidence that one variable causes" in panel
    # the demo's raw table is sparse (Cochran's rule fails); merging the rare extremes fixes it
    assert ex.table.diagnostics().warnings and "rankfold-warning" in panel
    leave_out(ex, "cols", "no answer")
    merge_toggle(ex, "10–20 km", "over 20 km").value = True
    merge_toggle(ex, "very poor", "poor").value = True
    assert not ex.table.diagnostics().warnings
    assert "rankfold-warning" not in one(ex, "rankfold-measures-box").value


def shown_change(html: str, key: str) -> tuple[str, str, str, str, str]:
    row = re.search(rf'<tr data-measure="{key}">(.*?)</tr>', html).group(1)
    before, after = re.findall(r"<td>([^<]*)</td>", row)[:2]
    change = re.search(r'rankfold-change">([^<]*)<', row).group(1)
    interval = re.search(r'rankfold-change-interval">([^<]*)<', row).group(1)
    p = re.search(r'rankfold-change-p">([^<]*)<', row).group(1)
    return before, after, change, interval, p


def test_comparison_against_collected_and_previous_step(ex, df):
    leave_out(ex, "cols", "no answer")
    ex.merge("rows", [["10–20 km", "over 20 km"]])
    open_tab(ex, "Compare")
    # the earlier tables built again through the core, independently of the explorer
    collected = rankfold.table(df, ROW, COL)
    merged = collected.merge("rows", [["10–20 km", "over 20 km"]])
    current = merged.exclude("cols", ["no answer"])  # steps list order: rows' coding first
    toggle = one(ex, "rankfold-compare-baseline")
    for baseline, before in (("collected", collected), ("previous", merged)):
        toggle.value = baseline
        html = one(ex, "rankfold-comparison-summary").value
        expected = rankfold.compare_measures(before, current)
        for key in ("gamma", "somers_d_symmetric", "tau_b"):
            r = expected.loc[key]
            assert shown_change(html, key) == (
                f"{r.before_estimate:.4f}", f"{r.after_estimate:.4f}", f"{r.change:.4f}",
                f"[{r.change_ci_low:.3f}, {r.change_ci_high:.3f}]",
                "&lt; 0.0001" if r.change_p_value < 0.0001 else f"{r.change_p_value:.4f}")
            # a paired interval: centred on the change (common practice: estimate +- z SE)
            assert r.change_ci_low < r.change < r.change_ci_high
        assert "chosen after looking" in html and "rankfold-choice-caution" in html
        spec = chart_spec(ex, "rankfold-comparison")
        shown = json.dumps(spec)
        assert "Somers' d (symmetric)" in shown and "paired interval" in shown
    assert "step 1: service_rating: exclude no answer" in one(ex, "rankfold-compare-which").value
    # the toggle is a view of this tab only: no history entry, no change of state
    assert len(ex.history[0]) == 3


def test_comparison_before_any_step_says_so(ex):
    open_tab(ex, "Compare")
    one(ex, "rankfold-compare-baseline").value = "previous"
    assert "No coding step yet" in one(ex, "rankfold-compare-which").value
    html = one(ex, "rankfold-comparison-summary").value
    # identity coding: change 0 with standard error 0 (the paired delta method's own identity)
    assert shown_change(html, "gamma")[2] == "0.0000"


def test_export_files(ex, tmp_path, monkeypatch):
    ex.exclude("cols", ["no answer"])
    ex.save_chart("heatmap", str(tmp_path / "h.json"))
    assert json.loads((tmp_path / "h.json").read_text())["layer"]
    ex.save_chart("comparison", str(tmp_path / "c.svg"))
    assert (tmp_path / "c.svg").read_text().lstrip().startswith("<svg")
    ex.save_chart("heatmap", str(tmp_path / "h.png"))
    assert (tmp_path / "h.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature
    with pytest.raises(ValueError, match="end the file name"):
        ex.save_chart("heatmap", str(tmp_path / "h.gif"))
    # the Export tab's buttons write next to the notebook and say where
    monkeypatch.chdir(tmp_path)
    open_tab(ex, "Export")
    one(ex, "rankfold-export-name").value = "demo"
    one(ex, "rankfold-export-columns").click()
    assert "Saved the coded columns" in message(ex)
    folder = tmp_path / "rankfold-exports"  # the default folder, beside the notebook
    saved = pd.read_csv(folder / "demo-coded-columns.csv", index_col=0)
    assert saved[COL].isna().sum() == (ex.coded_columns()[COL].isna()).sum()
    one(ex, "rankfold-export-html").click()
    page = (folder / "demo-heatmap.html").read_text()
    assert not re.search(r"<script[^>]+src=", page)  # the Vega libraries are inside the page
    assert "demo-heatmap.html" in message(ex)


def test_an_unexpected_failure_is_a_message_not_a_traceback(ex, monkeypatch):
    def broken(*args, **kwargs):
        raise RuntimeError("drawing failed")

    monkeypatch.setattr(heatmap_module, "heatmap_spec", broken)
    one(ex, "rankfold-colour-by").value = "row_percent"
    assert "Unexpected problem (RuntimeError: drawing failed)" in message(ex)
    assert ex.state.colour_by == "count"
    assert ex.history == ((ex.state,), 0)  # the failed change left no entry to undo


def test_a_text_column_with_a_given_order_can_be_reordered(df):
    districts = ["Harbourside", "Old Mill", "Eastfield", "Upper Terrace"]
    ex = rankfold.explore(df, "district", COL, order={"district": districts})
    assert "district" in one(ex, "rankfold-row-picker").options
    find(one(ex, "rankfold-editor-rows"), "rankfold-move-up")[2].click()  # Eastfield up
    expected = rankfold.table(df, "district", COL, order={"district": districts}).reorder(
        "rows", ["Harbourside", "Eastfield", "Old Mill", "Upper Terrace"])
    assert_same_table(ex, expected)
    namespace = {"df": df}
    exec(ex.to_code(), namespace)
    pd.testing.assert_frame_equal(namespace["measures"], ex.measures, check_exact=True)
    with pytest.raises(ValueError, match="no_such_column"):
        ex.set_variables(row="no_such_column")
    assert "no_such_column" in message(ex) and ex.state.row == "district"


def test_toggles_and_code_name_a_twice_merged_band_alike(df):
    by_toggles = rankfold.explore(df, ROW, COL)
    merge_toggle(by_toggles, "5–10 km", "10–20 km").value = True
    merge_toggle(by_toggles, "5–10 km to 10–20 km", "over 20 km").value = True
    by_code = rankfold.explore(df, ROW, COL)
    by_code.merge("rows", [["5–10 km", "10–20 km"]])
    by_code.merge("rows", [["5–10 km to 10–20 km", "over 20 km"]])
    # "first to last" of the categories as counted, the core's rule for both ways in
    expected = ("under 2 km", "2–5 km", "5–10 km to over 20 km")
    assert by_toggles.table.row_labels == by_code.table.row_labels == expected
    # Source: the merged band counted by hand with pandas from the records.
    far = df[ROW].isin(["5–10 km", "10–20 km", "over 20 km"])
    expected_counts = df.loc[far, COL].value_counts().reindex(list(by_code.table.col_labels))
    np.testing.assert_array_equal(by_code.table.counts.loc["5–10 km to over 20 km"].to_numpy(),
                                  expected_counts.to_numpy())


def test_refused_roles_keep_the_pickers_on_none(df):
    signed = df.assign(score=np.linspace(-1.0, 1.0, len(df)))
    ex = rankfold.explore(signed, ROW, COL)
    control, weight = one(ex, "rankfold-control-picker"), one(ex, "rankfold-weight-picker")
    kept = ex.table
    weight.label = "score"  # negative weights are refused ...
    assert "negative value" in message(ex) and "score" in message(ex)
    assert ex.table is kept and ex.state.weight is None
    # ... and the picker shows "none" again (a Dropdown value of None would show it blank)
    assert (weight.index, weight.label) == (0, "none")
    control.label = ROW  # the row variable cannot also be the level
    assert f"&#x27;{ROW}&#x27; cannot be both the row and the control variable" in message(ex)
    assert (control.index, control.label) == (0, "none") and ex.table is kept
    control.label = "district"
    assert ex.table.control_name == "district" and message(ex) == ""
    control.label = "none"
    assert ex.table.control_name is None and (control.index, control.label) == (0, "none")


def test_chart_panes_say_their_charts_are_vega_lite(df):
    # The panes drop "$schema" (no address in the page), so the page must be told the kind of
    # specification: from its keys alone the within-levels view's concatenated chart passes for Vega
    # and draws nothing.
    ex = rankfold.explore(df, ROW, COL, control="age_band")
    panes = {"Heatmap": "rankfold-heatmap", "Compare": "rankfold-comparison",
             "Codings": "rankfold-sweep", "Within each level": "rankfold-within-heatmaps"}
    for title, css in panes.items():
        open_tab(ex, title)
        (chart,) = one(ex, css).children
        assert isinstance(chart, alt.JupyterChart) and "$schema" not in chart.spec
        assert chart.embed_options["mode"] == "vega-lite"
    assert "concat" in chart.spec  # the within-levels view


def test_a_note_every_measure_shares_is_written_once(df):
    ex = rankfold.explore(df, ROW, COL, weight="survey_weight", weight_kind="sampling")
    panel = one(ex, "rankfold-measures-box").value
    caution = "Taylor-linearised errors"
    assert all(caution in note for note in ex.measures["note"])  # the core's note on every row
    assert panel.count(caution) == 1 and "Every measure above: sampling weights" in panel
    assert "no p-value with sampling weights" in panel  # Cramér's V keeps its own part


def test_heatmap_legends_draw_no_svg_gradient(df):
    # Each chart on a page numbers its SVG gradients from 0, so a second chart's gradient
    # legend would paint the first one's gradient (or none when that one sits in a hidden tab).
    vl_convert = pytest.importorskip("vl_convert")
    from rankfold.widgets.within_levels_view import level_heatmaps

    ex = rankfold.explore(df, ROW, COL, control="age_band")
    for colour_by in ("count", "pair_contribution"):
        ex.set_view(colour_by=colour_by)
        for chart in (ex.chart("heatmap"), level_heatmaps(ex.table, colour_by)):
            spec = chart if isinstance(chart, dict) else chart.to_dict()
            svg = vl_convert.vegalite_to_svg(spec)
            assert "<rect" in svg or "<path" in svg
            assert "linearGradient" not in svg
