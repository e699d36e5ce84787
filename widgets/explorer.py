"""The notebook explorer: one state, controls that edit it, views derived from it.

Flow: a control (or a scripting call) proposes a function from the current
:class:`~rankfold.widgets.state.ExplorerState` to a new one; :func:`render` derives the table,
measures and figures through the core; every view shows that result. A proposal that fails
leaves the previous state on screen and shows a readable message instead of a traceback.

CSS classes (stable, for styling and browser tests)
---------------------------------------------------
``rankfold-explorer``
    The whole explorer.
``rankfold-row-picker``, ``rankfold-col-picker``, ``rankfold-swap``
    Row and column variable Dropdowns and the swap button (inside ``rankfold-pickers``).
``rankfold-control-picker``, ``rankfold-weight-picker``, ``rankfold-weight-kind``
    Control and weight Dropdowns ("none" first) and the weight kind (also in the pickers).
``rankfold-within-measures-box``, ``rankfold-within-heatmaps``
    The "Within each level" tab: ``table.rankfold-within-measures`` (rows carry ``data-level`` or
    ``data-measure``: ``partial_gamma``, ``gamma``), ``p.rankfold-within-test`` lines
    (``data-test``: ``gamma_homogeneity``, ``cmh_correlation``), and one heatmap per level.
``rankfold-message``
    Message area; holds a ``div.rankfold-message-error`` or ``div.rankfold-message-info``.
``rankfold-editor-rows``, ``rankfold-editor-cols`` (both also ``rankfold-editor``)
    Category editors. Each category is an ``rankfold-category`` row with a label
    (``span.rankfold-category-label``), its count (``span.rankfold-category-count``), a
    ``rankfold-exclude`` button and, when the order was neither declared nor fixed by numeric
    values, ``rankfold-move-up`` and ``rankfold-move-down`` buttons. Between neighbours sits a
    ``rankfold-merge-toggle`` button whose tooltip (title) reads ``Merge <upper> and <lower>``.
    A merged category also has a ``rankfold-split`` button; categories left out are listed
    below (``rankfold-left-out``) with a ``rankfold-bring-back`` button each; answers that look
    off the scale ("no answer", ...) raise a ``rankfold-non-substantive`` warning with a
    ``rankfold-leave-out-flagged`` button.
``rankfold-steps``, ``rankfold-undo``, ``rankfold-redo``, ``rankfold-reset``
    The steps of the shown pair (``rankfold-step-list``: one ``rankfold-step`` line each, with
    a ``rankfold-remove-step`` button) and the history buttons.
``rankfold-sections``
    The tabs (Heatmap, Pairs, Compare, Codings, Export by default; see :data:`SECTIONS`).
``rankfold-sweep``, ``rankfold-sweep-summary``, ``rankfold-sweep-run``, ``rankfold-sweep-use``
    The codings view: chart, range sentence and suggestion, sweep and apply buttons.
``rankfold-colour-by``, ``rankfold-heatmap``
    The heatmap's colour choice (ToggleButtons) and its chart (an SVG Vega view).
``rankfold-pair-cell``, ``rankfold-pair-view``, ``rankfold-pair-summary``
    The pair view's cell Dropdown, chart, and ``table.rankfold-pair-table`` whose rows carry
    ``data-region`` and ``data-pairs``.
``rankfold-comparison``, ``rankfold-comparison-summary``
    The comparison chart and its ``table.rankfold-comparison-table`` (rows carry
    ``data-measure``).
``rankfold-export`` with ``rankfold-export-chart``, ``rankfold-export-name``,
``rankfold-export-html`` / ``-json`` / ``-png`` / ``-svg``, ``rankfold-export-columns``,
``rankfold-code``
    Export controls and the code of the current table.
``rankfold-measures-panel``
    The measures: ``table.rankfold-measures`` whose rows carry ``data-measure`` (the measure
    key, e.g. ``gamma``, plus ``pearson_x2``) and whose ``td.rankfold-estimate`` cells
    hold the estimate to 4 decimals; ``div.rankfold-warning`` for sparse-cell warnings and
    ``ul.rankfold-cautions``. Each measure row has a plain explanation as its ``title``; the
    ``rankfold-measures-help-toggle`` button above the table shows ``rankfold-measures-help``
    (how gamma, Somers' d and tau-b differ, and why merging moves them).

Every control carries a tooltip (``tooltip``; a Dropdown's sits on the control itself and on
its label, see :func:`~rankfold.widgets.pickers.labelled`). The editors and the tabs sit side
by side when the output is wide enough, else the tabs go below them; charts size their cells
to :data:`~rankfold.widgets.heatmap.GRID_BUDGET`.
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Hashable, Mapping, Sequence
from typing import TYPE_CHECKING, Any

import ipywidgets as widgets
import pandas as pd

from rankfold import OrdinalTable
from rankfold.table_checks import refuse_unknown_keywords

from . import formatting
from .category_editor import CategoryEditor, StepsPanel
from .chart_pane import as_altair
from .comparison import ComparisonSection
from .computation_view import ComputationSection
from .export import ExportSection, code_snippet, coding_caption, save_chart, save_measures
from .heatmap import HeatmapSection
from .measures_panel import MeasuresHelp, measures_html
from .named_charts import named_chart
from .overview_view import AllPairsSection
from .pair_view import PairSection
from .pickers import VariablePickers, holds_two_values
from .render import Rendered, TableCache, render
from .report import rendered_report, small_sweep
from .state import Edit, ExplorerState
from .static_record import SavedRecord, snapshot_html
from .sweep_view import SweepSection
from .table_mode import BackgroundCount, has_records, offer_for
from .within_levels_view import WithinLevelsSection

if TYPE_CHECKING:
    import altair as alt

__all__ = ["Explorer", "explore", "SECTIONS"]

#: The tabbed views, in order: (title, factory). A factory takes ``propose`` (a callable taking
#: a function from state to new state) and ``notify`` (``notify(text, error=False)``) and
#: returns an object with a ``widget`` and a ``show(rendered)`` method. Append to add a view.
SECTIONS: list[tuple[str, Callable[[Callable, Callable], Any]]] = [
    ("Heatmap", HeatmapSection),
    ("Pairs", PairSection),
    ("Compare", ComparisonSection),
    ("Codings", SweepSection),
    ("Export", ExportSection),
    ("Within each level", WithinLevelsSection),
    ("How it is computed", ComputationSection),
    ("All pairs", AllPairsSection),
]

_STYLE = """<style>
.rankfold-explorer { color: var(--jp-ui-font-color1, inherit); }
.rankfold-measures-box .widget-html-content, .rankfold-pair-summary .widget-html-content,
.rankfold-comparison-summary .widget-html-content { line-height: 1.4; }
.rankfold-measures, .rankfold-comparison-table, .rankfold-pair-table {
  border-collapse: collapse; font-variant-numeric: tabular-nums; margin: 4px 0; }
.rankfold-measures th, .rankfold-measures td, .rankfold-comparison-table th,
.rankfold-comparison-table td, .rankfold-pair-table th, .rankfold-pair-table td {
  padding: 2px 6px; text-align: right; white-space: nowrap;
  border-bottom: 1px solid var(--jp-border-color2, rgba(128, 128, 128, 0.35)); }
.rankfold-measures th, .rankfold-comparison-table th, .rankfold-pair-table th,
.rankfold-pair-table td:nth-child(2) { white-space: normal; }
.rankfold-measures th[scope=row] { min-width: 8em; }
.rankfold-explorer .widget-html-content { white-space: normal; overflow-wrap: anywhere;
  line-height: 1.4; }
.rankfold-explorer .widget-html-content pre { overflow-wrap: normal; }
.rankfold-right, .rankfold-left, .rankfold-sections, .rankfold-sections .lm-TabBar-content,
.rankfold-sections .widget-tab-contents, .rankfold-sections .jupyter-widget-Collapse-contents {
  min-width: 0; max-width: 100%; }
.rankfold-sections .lm-TabBar-tab { flex: 1 1 auto; min-width: 0; max-width: none; }
.rankfold-sections .lm-TabBar-content { flex-wrap: wrap; }
.rankfold-explorer .widget-toggle-buttons { flex-wrap: wrap; height: auto; }
.rankfold-explorer .widget-toggle-buttons .widget-toggle-button { margin-bottom: 2px; }
.rankfold-explorer .widget-dropdown, .rankfold-explorer .widget-text { max-width: 100%; }
.rankfold-explorer .widget-dropdown > select { min-width: 0; }
.rankfold-measures-help { max-width: 46em; }
.rankfold-measures th[scope=row], .rankfold-comparison-table th[scope=row],
.rankfold-pair-table td:first-child, .rankfold-pair-table td:nth-child(2) {
  text-align: left; font-weight: normal; }
.rankfold-measures thead th:first-child, .rankfold-measures thead th:last-child,
.rankfold-comparison-table thead th:first-child, .rankfold-pair-table thead th:first-child,
.rankfold-pair-table thead th:nth-child(2) { text-align: left; }
.rankfold-measures td.rankfold-note { text-align: left; font-size: 90%; opacity: 0.8;
  min-width: 13em; max-width: 30em; white-space: normal; overflow-wrap: normal; }
.rankfold-group td { text-align: left; font-style: italic; opacity: 0.8; white-space: normal; }
.rankfold-warning, .rankfold-message-error, .rankfold-message-info {
  padding: 4px 8px; margin: 6px 0; border-left: 4px solid #d08a00; }
.rankfold-message-error { border-left-color: #c8382f; }
.rankfold-message-info { border-left-color: #3a78b5; }
.rankfold-hint { opacity: 0.7; }
.rankfold-code pre { white-space: pre; overflow-x: auto; padding: 6px;
  border: 1px solid var(--jp-border-color2, rgba(128, 128, 128, 0.35)); }
.rankfold-within-measures { border-collapse: collapse; font-variant-numeric: tabular-nums; }
.rankfold-within-measures th, .rankfold-within-measures td { padding: 2px 8px; text-align: right;
  border-bottom: 1px solid var(--jp-border-color2, rgba(128, 128, 128, 0.35)); }
.rankfold-within-measures th[scope=row], .rankfold-within-measures td.rankfold-note,
.rankfold-within-measures thead th:first-child, .rankfold-within-measures thead th:last-child {
  text-align: left; }
.rankfold-within-measures th[scope=row] { font-weight: normal; }
.rankfold-within-measures td.rankfold-note { font-size: 90%; opacity: 0.8; max-width: 30em; }
</style>"""


def _usable(data: Any, column: str) -> bool:
    """Whether a column offered for rows or columns holds two values or more (known for a
    DataFrame; a source's columns are checked when counted)."""
    return not has_records(data) or holds_two_values(data[column])


def _axis(axis: str) -> str:
    if axis not in ("rows", "cols"):
        raise ValueError(f"axis must be 'rows' or 'cols'; got {axis!r}.")
    return axis


class Explorer(widgets.VBox):
    """Interactive explorer of two ordered variables of a DataFrame (see :func:`explore`).

    The same state is driven by the controls and by the methods below; after every change
    :attr:`table` and :attr:`measures` hold the current results.
    """

    def __init__(
        self,
        data: pd.DataFrame | OrdinalTable | Any,
        row: str | None = None,
        col: str | None = None,
        *,
        control: str | None = None,
        weight: str | None = None,
        weight_kind: str = "frequency",
        order: Mapping[str, Sequence[Hashable]] | None = None,
        **unknown: Any,
    ) -> None:
        refuse_unknown_keywords("Explorer", unknown)
        offer = offer_for(data, order)  # refuses data it cannot explore
        if offer.fixed:  # a ready table brings its own variables
            row, col = row or offer.fixed["row"], col or offer.fixed["col"]
            control, weight = offer.fixed["control"], offer.fixed["weight"]
            weight_kind = offer.fixed["weight_kind"]
        columns = offer.orderable
        for name in (row, col):
            if name is not None and name not in offer.columns:
                raise ValueError(f"{name!r} is not a column; the columns are {offer.columns}.")
        free = [c for c in columns if c not in (row, col, control, weight) and _usable(data, c)]
        row = row if row is not None else (free.pop(0) if free else None)
        col = col if col is not None else (free.pop(0) if free else None)
        if row is None or col is None:
            empty = has_records(data) and len(data) == 0
            raise ValueError(
                "The frame has no rows, so there is nothing to explore." if empty else
                f"Need two columns that can be put in order and hold at least two different "
                f"values; found {[c for c in columns if _usable(data, c)]}. Ordered "
                "Categoricals and numeric columns with few values qualify; give text columns an "
                "order, e.g. explore(df, order={'answer': ['low', 'mid', 'high']})."
            )
        state = ExplorerState(
            row=row, col=col, control=control, weight=weight, weight_kind=weight_kind,
            order=tuple((k, tuple(v)) for k, v in (order or {}).items()),
        )
        self._cache = TableCache(data)
        self._rendered: Rendered = render(state, self._cache)
        self._history: list[ExplorerState] = [state]
        self._cursor = 0
        self._lock = threading.RLock()  # background counts report from their own thread
        self._syncing = False
        self._record = SavedRecord()  # the static copy of the state kept in saved notebooks
        self._message = widgets.HTML()
        self._message.add_class("rankfold-message")
        propose = self._control_proposal
        offered = columns + [c for c in (row, col) if c not in columns]
        self._pickers = VariablePickers(offered, propose, controls=offer.controls,
                                        weights=offer.weights)
        self._counting = BackgroundCount()
        self._editors = [CategoryEditor("rows", propose, self._collected),
                         CategoryEditor("cols", propose, self._collected)]
        self._steps = StepsPanel(propose, self._collected, self._walk)
        self._sections = [factory(propose, self._notify) for _, factory in SECTIONS]
        self._stale = set(range(len(self._sections)))
        self._tabs = widgets.Tab([s.widget for s in self._sections],
                                 titles=[title for title, _ in SECTIONS])
        self._tabs.add_class("rankfold-sections")
        self._tabs.observe(lambda _: self._open_tab(), names="selected_index")
        self._measures = widgets.HTML()
        self._measures.add_class("rankfold-measures-box")
        self._help = MeasuresHelp()
        # The editors and the tabs sit side by side when both fit, else the tabs go below
        # (and then have the whole width); nothing inside is wider than its column.
        left = widgets.VBox([*(e.widget for e in self._editors), self._steps.widget],
                            layout=widgets.Layout(flex="0 1 340px", min_width="300px",
                                                  max_width="400px"))
        left.add_class("rankfold-left")
        right = widgets.VBox([self._tabs, self._help.widget, self._measures],
                             layout=widgets.Layout(flex="1 1 560px", min_width="0"))
        right.add_class("rankfold-right")
        super().__init__([
            widgets.HTML(_STYLE), self._pickers.widget, self._counting.widget, self._message,
            widgets.HBox([left, right], layout=widgets.Layout(flex_flow="row wrap")),
        ])
        self.add_class("rankfold-explorer")
        self._show(self._rendered)

    # ------------------------------------------------------------------ state changes
    def _notify(self, text: str, error: bool = False) -> None:
        kind = "error" if error else "info"
        self._message.value = (
            f'<div class="rankfold-message-{kind}">{formatting.text(text)}</div>' if text else ""
        )

    def _collected(self, state: ExplorerState) -> OrdinalTable:
        """The table as collected for a state (counted already: the state is on screen)."""
        return self._cache.collected(state)

    def _control_proposal(self, change: Callable[[ExplorerState], ExplorerState]) -> bool:
        """A proposal from a control; the controls echo a state being shown, which is not a
        change and is ignored."""
        return False if self._syncing else self._propose(change)

    def _propose(self, change: Callable[[ExplorerState], ExplorerState],
                 raise_errors: bool = False) -> bool:
        """Apply ``change`` to the current state and, if the result can be rendered, append it
        to the history (dropping the redo tail) and show it; else keep the current state and
        say why in the message area. Returns True when the change was made (or changed
        nothing)."""
        with self._lock:
            previous = self._rendered
            try:
                state = change(previous.state)
                if state == previous.state:
                    return True
                if not raise_errors and self._cache.needs_count(state):  # a slow engine
                    self._counting.start(state, self._cache.collected, self._cache.data,
                                         lambda error: self._counted(change, error))
                    return False
                rendered = render(state, self._cache)
                redo_tail = self._history[self._cursor + 1:]
                self._history[self._cursor + 1:] = [state]
                self._cursor += 1
                try:
                    self._show(rendered)
                except Exception:
                    self._cursor -= 1
                    self._history[self._cursor + 1:] = redo_tail
                    raise
            except Exception as err:  # noqa: BLE001 - shown in the widget, never as a traceback
                self._refuse(err, previous)
                if raise_errors:
                    raise
                return False
            self._notify("")
            return True

    def _refuse(self, err: Exception, shown: Rendered | None = None) -> None:
        expected = isinstance(err, ValueError)
        text = str(err) if expected else (
            f"Unexpected problem ({type(err).__name__}: {err}); nothing was changed.")
        if shown is not None:
            try:
                self._show(shown)  # puts back controls a refused change had moved
            except Exception:  # noqa: BLE001, S110 - the message below says what went wrong
                pass
        self._notify(text, error=True)

    def _counted(self, change: Callable[[ExplorerState], ExplorerState],
                 error: Exception | None) -> None:
        """A background count has finished: propose the change again, to whatever the state
        is by now (so edits made meanwhile are kept), or say why the count failed."""
        with self._lock:
            if error is not None:
                self._refuse(error, self._rendered)
                return
            self._propose(change)

    def _walk(self, step: int) -> None:
        """Move through the history: -1 is undo, +1 redo."""
        with self._lock:
            target = self._cursor + step
            if not 0 <= target < len(self._history):
                self._notify("Nothing to undo." if step < 0 else "Nothing to redo.")
                return
            try:
                rendered = render(self._history[target], self._cache)
            except Exception as err:  # noqa: BLE001 - shown in the widget
                self._refuse(err, self._rendered)
                return
            self._cursor = target
            self._show(rendered)
            self._notify("")

    def _show(self, rendered: Rendered) -> None:
        self._rendered = rendered
        self._syncing = True
        try:
            self._pickers.show(rendered)
            for editor in self._editors:
                editor.show(rendered)
            self._steps.show(rendered, can_undo=self._cursor > 0,
                             can_redo=self._cursor < len(self._history) - 1)
            self._measures.value = measures_html(
                rendered.table, rendered.measures, rendered.tests,
                rendered.diagnostics.warnings, rendered.left_out, slope=rendered.slope,
            )
            self._stale = set(range(len(self._sections)))
            self._show_sections()
            self._record.follow(rendered)
        finally:
            self._syncing = False

    def _open_tab(self) -> None:
        """Draw the tab just opened; a failure is a message, never a traceback."""
        with self._lock:
            try:
                self._show_sections()
            except Exception as err:  # noqa: BLE001 - shown in the widget
                self._refuse(err)

    def _show_sections(self) -> None:
        """Draw the visible section; hidden ones are drawn when their tab is opened."""
        index = self._tabs.selected_index or 0
        if index in self._stale:
            was_syncing, self._syncing = self._syncing, True
            try:
                self._sections[index].show(self._rendered)
            finally:
                self._syncing = was_syncing
            self._stale.discard(index)

    # ------------------------------------------------------------------ scripting API
    @property
    def state(self) -> ExplorerState:
        """The current state (variables, edits, view choices)."""
        return self._rendered.state

    @property
    def table(self) -> OrdinalTable:
        """The current table, after every step."""
        return self._rendered.table

    @property
    def measures(self) -> pd.DataFrame:
        """The current table's measures (:meth:`OrdinalTable.measures`)."""
        return self._rendered.measures

    @property
    def steps(self) -> tuple:
        """The coding steps applied since counting (core step objects, oldest first)."""
        return self.table.steps[self.table.initial_steps:]

    @property
    def codings(self) -> dict[str, tuple[Edit, ...]]:
        """Every variable's coding, ``{column: (Edit, ...)}``, including variables not shown
        now (picking one again restores its coding)."""
        return dict(self.state.codings)

    @property
    def history(self) -> tuple[tuple[ExplorerState, ...], int]:
        """The states in the history and the position of the one shown (undo moves it back,
        redo forward)."""
        return tuple(self._history), self._cursor

    def _scripted(self, change: Callable[[], Callable[[ExplorerState], ExplorerState]]) -> None:
        """Build a proposal (errors in the arguments are shown and raised) and make it."""
        try:
            proposal = change()
        except Exception as err:
            self._refuse(err)
            raise
        self._propose(proposal, raise_errors=True)

    def _edit(self, kind: str, axis: str, labels: Any) -> None:
        def build() -> Callable[[ExplorerState], ExplorerState]:
            axis_ = _axis(axis)
            getattr(self.table, kind)(axis_, labels)  # the core's own checks and messages
            if kind == "merge":
                normal = tuple(tuple(group) for group in labels)
            elif kind == "exclude" and not pd.api.types.is_list_like(labels):
                normal = (labels,)
            else:
                normal = tuple(labels)
            variable = self.state.row if axis_ == "rows" else self.state.col
            edit = Edit(kind, variable, normal)
            return lambda s: s.with_edit(edit)

        self._scripted(build)

    def merge(self, axis: str, groups: Sequence[Sequence[Hashable]]) -> None:
        """Merge groups of neighbouring categories, as :meth:`OrdinalTable.merge`.

        Parameters
        ----------
        axis : {'rows', 'cols'}
        groups : list of lists of labels
            E.g. ``[["10–20 km", "over 20 km"]]``; a flat list of labels is refused, as by
            the core.

        Raises
        ------
        ValueError
            If the merge is impossible (the message is also shown in the widget and the
            previous state kept).
        """
        self._edit("merge", axis, groups)

    def exclude(self, axis: str, labels: Sequence[Hashable] | Hashable) -> None:
        """Leave out the units in some categories, as :meth:`OrdinalTable.exclude`.

        Parameters
        ----------
        axis : {'rows', 'cols'}
        labels : label or list of labels
        """
        self._edit("exclude", axis, labels)

    def reorder(self, axis: str, labels: Sequence[Hashable]) -> None:
        """Put one variable's categories in a new order, as :meth:`OrdinalTable.reorder`.

        Parameters
        ----------
        axis : {'rows', 'cols'}
        labels : list of labels
            Every current category once (a string is refused, as by the core).
        """
        self._edit("reorder", axis, labels)

    def remove_step(self, index: int) -> None:
        """Take back one step of the shown pair (numbered as in :attr:`steps`, from 0); the
        variable's other steps are replayed without it.

        Raises
        ------
        ValueError
            If a later step depends on it (e.g. merges a category it created): the message
            names that step, and nothing is changed.
        """
        self._scripted(lambda: lambda s: s.with_step_replaced(index, None, self._collected(s)))

    def split(self, axis: str, label: Hashable) -> None:
        """Split a merged category back into the categories it was made of (takes back the
        merge that made it; other groups of the same merge stay merged)."""
        def build() -> Callable[[ExplorerState], ExplorerState]:
            axis_ = _axis(axis)
            return lambda s: s.with_merge_split(axis_, label, self._collected(s))

        self._scripted(build)

    def bring_back(self, axis: str, label: Hashable) -> None:
        """Bring back a category left out by an exclusion of the shown pair."""
        def build() -> Callable[[ExplorerState], ExplorerState]:
            axis_ = _axis(axis)
            return lambda s: s.with_brought_back(axis_, label, self._collected(s))

        self._scripted(build)

    def undo(self) -> None:
        """Go back one entry in the history (any change: pickers, roles, coding, view)."""
        self._walk(-1)

    def redo(self) -> None:
        """Go forward one entry in the history, after an undo."""
        self._walk(1)

    def reset(self) -> None:
        """Take back every variable's coding; this is a change like any other, so undo
        brings the codings back."""
        self._propose(lambda s: s.collected(), raise_errors=True)

    def swap(self) -> None:
        """Exchange the row and column variables (steps follow their variables)."""
        self._propose(lambda s: s.swapped(), raise_errors=True)

    def set_variables(self, row: str | None = None, col: str | None = None) -> None:
        """Choose the row and/or column variable; every variable keeps its coding, and a
        variable picked again shows its coding again. A variable that cannot be used leaves
        the state as it was, with a message."""
        self._propose(lambda s: s.with_variables(row or s.row, col or s.col), raise_errors=True)

    def set_view(self, **choices: Any) -> None:
        """Change view choices: ``colour_by`` (a key of
        :data:`~rankfold.widgets.state.COLOUR_CHOICES`) or ``chosen_cell`` (a (row label,
        column label) pair for the pair view, or None)."""
        self._propose(lambda s: s.with_view(**choices), raise_errors=True)

    def to_code(self, data_name: str = "df", all_variables: bool = False) -> str:
        """Python that rebuilds the current table and measures from the raw frame.

        Parameters
        ----------
        data_name : str
            Name of the frame in the reader's notebook.
        all_variables : bool
            Also rebuild the coding of every other coded variable (each in a table beside
            one of the shown variables), collected in ``tables``.

        Returns
        -------
        str
            Runs as printed given ``data_name``; it defines ``table``, ``measures`` and
            ``coded`` (the two columns with the current coding; with ``all_variables``, every
            coded column).
        """
        records = has_records(self._cache.data)
        code = code_snippet(self.table, data_name, records=records)
        others = [v for v in self.state.codings if v not in (self.state.row, self.state.col)]
        if not all_variables or not others:
            return code
        lines = [code, "tables = {}  # the other coded variables, each in a table of its own"]
        for variable in others:
            partner = self.state.col if variable != self.state.col else self.state.row
            table = render(self.state.with_variables(variable, partner), self._cache).table
            built = table.to_code(data_name).splitlines()
            start = next(k for k, line in enumerate(built) if line.startswith("table = "))
            built[start] = f"tables[{variable!r}] = " + built[start][len("table = "):]
            lines += [line for line in built if not line.startswith("measures = ")]
        if records:
            columns = [self.state.row, self.state.col, *others]
            lines.append(
                f"coded = rankfold.apply_steps({data_name}[{columns!r}], [*table.steps, *(\n"
                "    s for name, t in tables.items() for s in t.steps if s.variable == name)])"
            )
        return "\n".join(lines) + "\n"

    def wait(self, timeout: float | None = None) -> None:
        """Wait until a count started from the pickers (for a Dask, polars or DuckDB source)
        has finished and is shown; scripting calls such as :meth:`set_variables` count at
        once and need no wait."""
        self._counting.wait(timeout)

    def coded_columns(self) -> pd.DataFrame:
        """The row and column variables with the current coding, as new ordered Categoricals.

        Returns
        -------
        pandas.DataFrame
            Same index as the frame; excluded categories are missing. Join it to your data
            (``df.join(coded, rsuffix="_coded")``) to carry the coding into other analyses.
        """
        return self._rendered.coded_columns()

    def chart(self, name: str) -> alt.TopLevelMixin | None:
        """The current Altair chart ``'heatmap'``, ``'pairs'`` (None until a cell is chosen),
        ``'comparison'`` or ``'comparison_previous'``: an ordinary Altair object to restyle or
        save.

        Parameters
        ----------
        name : {'heatmap', 'pairs', 'comparison', 'comparison_previous'}
            Which chart (the comparisons are against the table as collected and against the
            table before the last step).

        Returns
        -------
        altair.TopLevelMixin or None
            The chart of the current state, or None for ``'pairs'`` before a cell is chosen.
        """
        chart = named_chart(self._rendered, name)
        return as_altair(chart) if isinstance(chart, dict) else chart

    def save_chart(self, name: str, path: str) -> str:
        """Save one of the charts (see :meth:`chart`) to ``path``.

        Parameters
        ----------
        name : {'heatmap', 'pairs', 'comparison', 'comparison_previous'}
            Which chart.
        path : str
            Where to write; the format follows the suffix (.html, .json, .png, .svg). PNG and
            SVG are still pictures: no hints for the live chart, the coding steps below.

        Returns
        -------
        str
            The path written.

        Raises
        ------
        ValueError
            For ``'pairs'`` before a cell is chosen.
        """
        chart = named_chart(self._rendered, name)
        if chart is None:
            raise ValueError("There is no pair view yet: choose a cell first (set_view).")
        return str(save_chart(chart, path, coding_caption(self.table)))

    def export_measures(self, path_or_format: str = "csv",
                        folder: str = "rankfold-exports") -> str:
        """Write the measures table (:attr:`measures`) as CSV, Markdown or LaTeX.

        Parameters
        ----------
        path_or_format : str
            ``'csv'``, ``'markdown'`` (``'md'``) or ``'latex'`` (``'tex'``) to write
            ``<folder>/rankfold-measures.<suffix>``; or a file name ending in ``.csv``,
            ``.md`` or ``.tex``, used as given.
        folder : str
            Where a format name writes (made when needed), relative to the working directory.

        Returns
        -------
        str
            The path written; an existing file is never overwritten (``-2``, ``-3``...).
        """
        return str(save_measures(self._rendered, path_or_format, folder))

    def _ipython_display_(self) -> None:
        """Show the widget and, beside it, the static record that saved notebooks keep."""
        self._record.display(self._repr_mimebundle_(), self._rendered)

    def snapshot(self) -> None:
        """Put a frozen copy of the current state (steps, table, measures, heatmap) into the
        cell's output: it stays as it is when the explorer changes."""
        from IPython.display import HTML, display

        display(HTML(snapshot_html(self._rendered)))

    def report(self, path: str = "rankfold-report.html") -> str:
        """Write a one-file HTML report of the current state that opens with no network.

        Parameters
        ----------
        path : str
            File name; an existing file is never overwritten (``-2``, ``-3``... are added).

        Returns
        -------
        str
            The path written. Contents: :func:`rankfold.widgets.report.report_html`.
        """
        records = has_records(self._cache.data)
        return str(rendered_report(self._rendered, path, small_sweep(self._rendered), records))


def explore(
    df: pd.DataFrame | OrdinalTable | Any,
    row: str | None = None,
    col: str | None = None,
    *,
    control: str | None = None,
    weight: str | None = None,
    weight_kind: str = "frequency",
    order: Mapping[str, Sequence[Hashable]] | None = None,
    **unknown: Any,
) -> Explorer:
    """Open the explorer on two ordered variables of a DataFrame, a larger source, or a table.

    Parameters
    ----------
    df : pandas.DataFrame, source, or OrdinalTable
        The records; never modified (every change works on a counted copy of the table).
        Any source :func:`rankfold.table` counts works too (a Dask or polars frame, a DuckDB
        relation, a path or glob of Parquet or CSV files): the pickers list its columns from
        their types, and a pair chosen in the pickers is counted by its engine in the
        background while a progress bar shows. A ready :class:`~rankfold.OrdinalTable` is
        explored as it is: its variables, control variable and weight are fixed, and
        everything else works from its counts.
    row, col : str, optional
        The row and column variables; default: the first two columns that can be ordered.
    control, weight, weight_kind, order
        As in :func:`rankfold.table`.

    Returns
    -------
    Explorer
        An ipywidgets container that displays itself in a notebook cell. Its methods
        (:meth:`~Explorer.merge`, :meth:`~Explorer.exclude`, :meth:`~Explorer.undo`, ...) drive
        the same state as the controls; :attr:`~Explorer.table` and
        :attr:`~Explorer.measures` give the current results and :meth:`~Explorer.to_code` the
        code that reproduces them.

    Notes
    -----
    The measures are those of :meth:`rankfold.OrdinalTable.measures` (Goodman & Kruskal 1954;
    Agresti 2010, ch. 7). Charts render offline through :class:`altair.JupyterChart`.

    Examples
    --------
    >>> import rankfold
    >>> df = rankfold.demo.transit_survey()
    >>> ex = rankfold.explore(df, "trip_length", "service_rating")
    >>> ex.exclude("cols", ["no answer"])
    >>> ex.table.shape
    (5, 5)
    """
    refuse_unknown_keywords("explore", unknown)
    return Explorer(df, row, col, control=control, weight=weight, weight_kind=weight_kind,
                    order=order)
