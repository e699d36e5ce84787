"""The explorer's fast paths: chart specifications checked once per shape, only the visible tab
drawn, numbers of a coding computed once, and a render pass that draws nothing.

Outside references: the Vega-Lite JSON schema shipped with Altair (``altair.Root.validate``),
the Vega-Lite compiler in vl-convert (a specification must compile to Vega), Altair's own
fully validated ``to_dict(validate=True)``, and ``scipy.stats.somersd`` for the numbers the
measures panel shows.
"""

from __future__ import annotations

import ast
import json
from pathlib import Path

import altair as alt
import jsonschema
import pytest
import scipy.stats

import rankfold
from rankfold.widgets import chart_pane, comparison, heatmap, pair_view
from rankfold.widgets.chart_pane import chart_shape, specification
from rankfold.widgets.charts import diverging_bars, overview_matrix
from rankfold.widgets.render import TableCache, render
from rankfold.widgets.state import COLOUR_CHOICES, Edit, ExplorerState
from rankfold.widgets.sweep_view import sweep_chart, swept_codings
from rankfold.widgets.within_levels_view import level_heatmaps

ROW, COL = "trip_length", "service_rating"
WIDGETS = Path(rankfold.widgets.__file__).parent


@pytest.fixture
def remembered(monkeypatch):
    """The once-per-shape memory, empty, for this test (conftest turns it off elsewhere)."""
    shapes: set = set()
    monkeypatch.setattr(chart_pane, "_CHECKED", shapes)
    return shapes


@pytest.fixture
def checks(monkeypatch):
    """Counts the full schema checks made through ``altair.Root.validate``."""
    made = []
    original = alt.Root.validate

    def counted(instance, schema=None):
        made.append(instance)
        return original(instance, schema)

    monkeypatch.setattr(alt.Root, "validate", counted)
    return made


def _rendered(df, *edits, **view):
    state = ExplorerState(row=ROW, col=COL)
    for edit in edits:
        state = state.with_edit(edit)
    if view:
        state = state.with_view(**view)
    return render(state, TableCache(df))


NO_ANSWER = Edit("exclude", COL, ("no answer",))
FAR = Edit("merge", ROW, (("10–20 km", "over 20 km"),))


def every_chart_kind(df) -> dict[str, object]:
    """One chart of each kind the explorer shows (dicts and Altair charts)."""
    plain = _rendered(df, NO_ANSWER)
    chosen = _rendered(df, NO_ANSWER, FAR, chosen_cell=("2–5 km", "good"))
    kinds = {f"heatmap {key}": heatmap.rendered_heatmap(_rendered(df, colour_by=key))
             for key in COLOUR_CHOICES}
    kinds["heatmap with a chosen cell"] = heatmap.rendered_heatmap(chosen)
    kinds["pairs"] = pair_view.rendered_pairs(chosen)
    kinds["comparison collected"] = comparison.rendered_comparison(chosen, "collected")
    kinds["comparison previous"] = comparison.rendered_comparison(chosen, "previous")
    controlled = rankfold.table(df, ROW, COL, control="age_band")
    kinds["within levels"] = level_heatmaps(controlled, "adjusted_residual")
    swept = swept_codings(plain.table.merge("rows", [["10–20 km", "over 20 km"]]))
    kinds["codings (Altair)"] = sweep_chart(swept.frame, ROW, COL, {"as collected": None})
    kinds["all pairs (Altair)"] = overview_matrix(rankfold.overview(df), chosen=(ROW, COL))
    kinds["diverging bars (Altair)"] = diverging_bars(plain.table)
    return kinds


def test_each_chart_kind_passes_the_schema_and_compiles(df, remembered, checks):
    vl_convert = pytest.importorskip("vl_convert")
    specs = {name: specification(chart) for name, chart in every_chart_kind(df).items()}
    # one full check per shape (the colourings of the heatmap share one but the diverging)
    assert len(checks) == len({chart_shape(spec) for spec in specs.values()}) < len(specs)
    for name, spec in specs.items():
        alt.Root.validate(spec)  # Outside reference: the Vega-Lite schema, for every chart.
        # Outside reference: the Vega-Lite compiler (vl-convert) turns it into a Vega spec.
        vega = vl_convert.vegalite_to_vega(spec)
        assert vega.get("marks"), name


def test_the_unchecked_path_gives_the_fully_checked_specification(df, remembered, checks):
    first = every_chart_kind(df)
    for chart in first.values():
        specification(chart)
    again = every_chart_kind(df)  # new charts of the same shapes
    for name, chart in again.items():
        made = len(checks)
        fast = specification(chart)
        assert len(checks) == made, f"{name} was checked again"
        # Outside reference: Altair's own serialisation with its full schema check.
        full = chart.to_dict(validate=True) if not isinstance(chart, dict) else chart
        alt.Root.validate(full)
        assert json.dumps(fast, sort_keys=True) == json.dumps(full, sort_keys=True), name


def test_shapes_ignore_labels_and_numbers_but_not_structure(df):
    merged = heatmap.rendered_heatmap(_rendered(df, NO_ANSWER, FAR))
    plain = heatmap.rendered_heatmap(_rendered(df))
    assert chart_shape(merged) == chart_shape(plain)  # other labels, counts, sizes
    diverging = heatmap.rendered_heatmap(_rendered(df, colour_by="adjusted_residual"))
    outlined = heatmap.rendered_heatmap(_rendered(df, chosen_cell=("2–5 km", "good")))
    assert chart_shape(diverging) != chart_shape(plain)  # the scale gains a midpoint
    assert chart_shape(outlined) != chart_shape(plain)  # a third layer
    # an enumerated value is kept: a wrong mark type is a new shape, and it is refused
    broken = {**plain, "layer": [{**plain["layer"][0],
                                  "mark": {**plain["layer"][0]["mark"], "type": "rectangle"}},
                                 *plain["layer"][1:]]}
    assert chart_shape(broken) != chart_shape(plain)


def test_a_broken_chart_of_a_new_shape_is_refused(df, remembered):
    plain = heatmap.rendered_heatmap(_rendered(df))
    specification(plain)
    broken = {**plain, "width": "wide"}  # a width must be a number, "container" or a step
    with pytest.raises(jsonschema.ValidationError):
        specification(broken)


def _spy(monkeypatch, module, name, calls: list):
    original = getattr(module, name)

    def spied(rendered, *args, **kwargs):
        calls.append(rendered)
        return original(rendered, *args, **kwargs)

    monkeypatch.setattr(module, name, spied)


def _tab(ex, title: str) -> None:
    ex._tabs.selected_index = list(ex._tabs.titles).index(title)


def test_a_change_draws_only_the_tab_on_screen(df, monkeypatch):
    ex = rankfold.explore(df, ROW, COL)
    ex.set_view(chosen_cell=("2–5 km", "good"))
    heatmaps, pairs, comparisons = [], [], []
    _spy(monkeypatch, heatmap, "rendered_heatmap", heatmaps)
    _spy(monkeypatch, pair_view, "rendered_pairs", pairs)
    _spy(monkeypatch, comparison, "rendered_comparison", comparisons)
    ex.exclude("cols", ["no answer"])
    ex.merge("rows", [["10–20 km", "over 20 km"]])
    assert len(heatmaps) == 2 and not pairs and not comparisons
    _tab(ex, "Pairs")  # opening the tab draws the current state, once
    assert len(pairs) == 1 and pairs[0] is ex._rendered
    pane = ex._sections[1]._pane
    assert "10–20 km to over 20 km" in pane.spec["layer"][0]["encoding"]["y"]["sort"]
    ex.undo()  # while the pair view shows, the heatmap is not built
    assert len(heatmaps) == 2 and len(pairs) == 2 and not comparisons
    assert "10–20 km to over 20 km" not in pane.spec["layer"][0]["encoding"]["y"]["sort"]
    _tab(ex, "Heatmap")  # stale since the undo: drawn again, from the current state
    assert len(heatmaps) == 3 and heatmaps[-1] is ex._rendered
    _tab(ex, "Pairs")  # nothing changed since it was drawn: not drawn again
    assert len(pairs) == 2


def test_the_measures_panel_follows_every_change_on_any_tab(df):
    ex = rankfold.explore(df, ROW, COL)
    _tab(ex, "Export")
    for change in (lambda: ex.exclude("cols", ["no answer"]),
                   lambda: ex.merge("rows", [["10–20 km", "over 20 km"]]), ex.undo):
        change()
        # Outside reference: scipy.stats.somersd of the current table, column given row.
        expected = scipy.stats.somersd(ex.table.counts.to_numpy()).statistic
        panel = ex._measures.value
        cell = panel.split('data-measure="somers_d_col_given_row">')[1].split("<")[0]
        assert float(cell) == pytest.approx(expected, abs=5e-5)


def test_view_choices_and_undo_reuse_the_numbers_of_their_coding(df, monkeypatch):
    ex = rankfold.explore(df, ROW, COL)
    ex.exclude("cols", ["no answer"])
    made = []
    original = rankfold.OrdinalTable.measures

    def counted(self, *args, **kwargs):
        made.append(self)
        return original(self, *args, **kwargs)

    monkeypatch.setattr(rankfold.OrdinalTable, "measures", counted)
    ex.set_view(colour_by="row_percent")
    ex.set_view(chosen_cell=("2–5 km", "good"))
    ex.undo()
    ex.undo()
    ex.undo()  # back to the table as collected, counted first
    assert made == []
    ex.merge("rows", [["10–20 km", "over 20 km"]])  # a new coding is computed
    assert len(made) == 1
    # Outside reference: scipy.stats.somersd on the table after the undos and the merge.
    assert ex.measures.loc["somers_d_col_given_row", "estimate"] == pytest.approx(
        scipy.stats.somersd(ex.table.counts.to_numpy()).statistic, abs=1e-12)


VIEWS = {"heatmap", "pair_view", "comparison", "sweep_view", "within_levels_view",
         "overview_view", "computation_view", "export", "measures_panel", "named_charts",
         "report", "static_record", "charts", "chart_pane", "explorer", "category_editor"}


def _imports(module: str) -> set[str]:
    """The modules of the widgets package that ``module`` imports (at any level)."""
    tree = ast.parse((WIDGETS / f"{module}.py").read_text())
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level == 1:
                found |= {node.module} if node.module else {a.name for a in node.names}
            elif node.module and node.module.startswith("rankfold.widgets"):
                found.add(node.module.split(".")[2] if node.module.count(".") > 1 else "")
        elif isinstance(node, ast.Import):
            found |= {a.name for a in node.names}
    return found


def test_the_render_pass_imports_no_view_and_no_chart_library():
    seen, todo = set(), ["render"]
    while todo:  # everything render.py needs, directly or through other modules
        module = todo.pop()
        seen.add(module)
        for name in _imports(module):
            if (WIDGETS / f"{name}.py").exists() and name not in seen:
                todo.append(name)
    assert not seen & VIEWS, seen & VIEWS
    assert not any(n == "altair" or n.startswith("altair.") for m in seen for n in _imports(m))
