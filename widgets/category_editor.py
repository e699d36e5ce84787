"""Per-axis category editor (merge neighbours, leave out, reorder) and the list of steps."""

from __future__ import annotations

from collections.abc import Callable, Hashable
from typing import TYPE_CHECKING

import ipywidgets as widgets

from rankfold import OrderStep
from rankfold.steps import collected_members

from . import formatting
from .state import Edit

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["CategoryEditor", "StepsPanel"]

_AXIS_TITLES = {"rows": "down the side", "cols": "across the top"}
#: Where a variable's order came from, in plain words (the order step's ``origin``).
_ORIGINS = {"declared": "order set in the data", "numeric": "ordered by value",
            "given": "order given to explore()", "sorted": "sorted by name: check the order"}
#: Origins whose order the editor does not offer to change: the values themselves fix it.
_FIXED_ORDER = ("declared", "numeric")


def _small(widget: widgets.DOMWidget, css_class: str, tooltip: str) -> widgets.DOMWidget:
    widget.layout = widgets.Layout(width="auto", height="26px")
    widget.tooltip = tooltip
    widget.add_class(css_class)
    return widget


class _CategoryRow:
    """The controls of the k-th category: name and count, leave out, move up and down, and
    split (for a merged category)."""

    def __init__(self, editor: CategoryEditor, k: int) -> None:
        self.name = widgets.HTML(layout=widgets.Layout(flex="1 1 150px", min_width="90px"))
        self.leave_out = _small(widgets.Button(description="leave out"), "rankfold-exclude", "")
        self.up = _small(widgets.Button(description="↑"), "rankfold-move-up", "")
        self.down = _small(widgets.Button(description="↓"), "rankfold-move-down", "")
        self.split = _small(widgets.Button(description="split"), "rankfold-split", "")
        self.leave_out.on_click(lambda _: editor.exclude(k))
        self.up.on_click(lambda _: editor.move(k, -1))
        self.down.on_click(lambda _: editor.move(k, 1))
        self.split.on_click(lambda _: editor.split(k))
        self.widget = widgets.HBox([self.name, self.leave_out, self.up, self.down, self.split])
        self.widget.add_class("rankfold-category")

    def show(self, label: Hashable, total: float, k: int, size: int, movable: bool,
             merged: bool) -> None:
        self.name.value = (
            f"<span class='rankfold-category-label'>{formatting.text(label)}</span> "
            f"<span class='rankfold-category-count'>({formatting.amount(total)})</span>"
        )
        self.leave_out.tooltip = f"Leave out the units in {label}"
        self.up.tooltip, self.down.tooltip = f"Move {label} up", f"Move {label} down"
        self.up.disabled, self.down.disabled = k == 0, k == size - 1
        shown = None if movable else "none"
        self.up.layout.display = self.down.layout.display = shown
        self.split.tooltip = f"Split {label} into the categories it was merged from"
        self.split.layout.display = None if merged else "none"


class CategoryEditor:
    """The categories of one axis in order, with their counts and coding controls.

    Between two neighbours a toggle merges them; each category can be left out; when the
    variable has no declared order, arrows move a category up or down; a merged category can
    be split again. Below, the categories left out, each with a button that brings it back,
    and a warning (with a one-click "leave out") when a category looks like an answer off the
    scale. Controls are reused from one table to the next.

    Parameters
    ----------
    axis : {'rows', 'cols'}
        Which variable of the table this editor codes.
    propose : callable
        Takes a function from state to new state.
    collected : callable
        The table as collected for a state (to replay a coding without one of its steps).
    """

    def __init__(self, axis: str, propose: Callable, collected: Callable) -> None:
        self._axis = axis
        self._propose = propose
        self._collected = collected
        self._variable = ""
        self._labels: list = []
        self._flagged: list = []
        self._rows: list[_CategoryRow] = []
        self._toggles: list[widgets.ToggleButton] = []
        self._title = widgets.HTML()
        self._warning = widgets.HTML()
        self._warning.add_class("rankfold-non-substantive")
        self._leave_flagged = _small(widgets.Button(description="leave them out"),
                                     "rankfold-leave-out-flagged", "")
        self._leave_flagged.on_click(lambda _: self.exclude_flagged())
        self._flag_box = widgets.VBox([self._warning, self._leave_flagged])
        self._left_out = widgets.VBox()
        self._left_out.add_class("rankfold-left-out")
        self._left_out_heading = widgets.HTML("<span class='rankfold-hint'>left out:</span>")
        self._left_out_lines: dict[tuple[str, Hashable], widgets.HBox] = {}  # made once each
        self.widget = widgets.VBox([self._title])
        self.widget.add_class(f"rankfold-editor-{axis}")
        self.widget.add_class("rankfold-editor")

    def show(self, rendered: Rendered) -> None:
        """Show this axis's current categories and counts."""
        table = rendered.table
        self._variable = table.row_name if self._axis == "rows" else table.col_name
        origin = next(s.origin for s in rendered.collected.steps
                      if isinstance(s, OrderStep) and s.variable == self._variable)
        totals = rendered.axis_totals(self._axis)
        self._labels = [label for label, _ in totals]
        size = len(totals)
        while len(self._rows) < size:
            self._rows.append(_CategoryRow(self, len(self._rows)))
        while len(self._toggles) < size - 1:
            self._toggles.append(self._merge_toggle(len(self._toggles)))
        self._title.value = (
            f"<b>{_AXIS_TITLES[self._axis]}: {formatting.text(self._variable)}</b> "
            f"<span class='rankfold-hint'>({_ORIGINS.get(origin, f'order {origin}')})</span>"
        )
        members = collected_members(table.steps, self._variable)
        children: list[widgets.Widget] = [self._title]
        for k, (label, total) in enumerate(totals):
            if k > 0:
                toggle = self._toggles[k - 1]
                toggle.value = False
                toggle.tooltip = f"Merge {self._labels[k - 1]} and {label}"
                children.append(toggle)
            self._rows[k].show(label, total, k, size, movable=origin not in _FIXED_ORDER,
                               merged=len(members.get(label, (label,))) > 1)
            children.append(self._rows[k].widget)
        self._flagged = table.non_substantive[self._axis]
        if self._flagged:
            shown = ", ".join(f"“{formatting.text(x)}”" for x in self._flagged)
            self._warning.value = (
                f"<div class='rankfold-warning'>{shown} looks like an answer off the scale; "
                "counted as a position on it, it distorts every measure. Leave it out unless "
                "it belongs there.</div>")
            self._leave_flagged.tooltip = f"Leave out {', '.join(map(str, self._flagged))}"
            children.append(self._flag_box)
        left_out = rendered.state.left_out(self._axis)
        if left_out:
            lines = [self._left_out_heading, *(self._left_out_line(label) for label in left_out)]
            if tuple(lines) != self._left_out.children:
                self._left_out.children = lines
            children.append(self._left_out)
        if tuple(children) != self.widget.children:
            self.widget.children = children

    def _left_out_line(self, label: Hashable) -> widgets.HBox:
        """The line of a left-out category with its bring-back button (made on first use)."""
        key = (self._variable, label)
        if key not in self._left_out_lines:
            self._left_out_lines[key] = self._new_left_out_line(label)
        return self._left_out_lines[key]

    def _new_left_out_line(self, label: Hashable) -> widgets.HBox:
        back = _small(widgets.Button(description="bring back"), "rankfold-bring-back",
                      f"Count the units in {label} again")
        back.on_click(lambda _: self.bring_back(label))
        return widgets.HBox([widgets.HTML(
            f"<span class='rankfold-left-out-label'>{formatting.text(label)}</span>",
            layout=widgets.Layout(flex="1 1 150px", min_width="90px")), back])

    def split(self, k: int) -> None:
        """Propose taking back the merge that made the k-th category."""
        axis, label, collected = self._axis, self._labels[k], self._collected
        self._propose(lambda s: s.with_merge_split(axis, label, collected(s)))

    def bring_back(self, label: Hashable) -> None:
        """Propose counting a left-out category again."""
        axis, collected = self._axis, self._collected
        self._propose(lambda s: s.with_brought_back(axis, label, collected(s)))

    def exclude_flagged(self) -> None:
        """Propose leaving out the categories flagged as answers off the scale."""
        edit = Edit("exclude", self._variable, tuple(self._flagged))
        self._propose(lambda s: s.with_edit(edit))

    def exclude(self, k: int) -> None:
        """Propose leaving out the k-th category."""
        edit = Edit("exclude", self._variable, (self._labels[k],))
        self._propose(lambda s: s.with_edit(edit))

    def move(self, k: int, step: int) -> None:
        """Propose moving the k-th category ``step`` places (-1 up, +1 down)."""
        order = list(self._labels)
        order[k], order[k + step] = order[k + step], order[k]
        edit = Edit("reorder", self._variable, tuple(order))
        self._propose(lambda s: s.with_edit(edit))

    def merge(self, k: int) -> None:
        """Propose merging the k-th category with the next one (named by the core's rule:
        ``"poor to good"`` after two merges, not ``"poor to fair to good"``)."""
        edit = Edit("merge", self._variable, ((self._labels[k], self._labels[k + 1]),))
        self._propose(lambda s: s.with_edit(edit))

    def _merge_toggle(self, k: int) -> widgets.ToggleButton:
        toggle = _small(widgets.ToggleButton(value=False, description="merge ⇕"),
                        "rankfold-merge-toggle", "")
        toggle.layout.margin = "0 0 0 40px"
        toggle.layout.align_self = "flex-start"

        def merged(change: dict) -> None:
            if change["new"]:
                self.merge(k)
                toggle.value = False  # a refused merge leaves the boundary open

        toggle.observe(merged, names="value")
        return toggle


class StepsPanel:
    """The steps of the shown pair, each with a remove button, and the history buttons
    (undo, redo, reset).

    Parameters
    ----------
    propose : callable
        Takes a function from state to new state.
    collected : callable
        The table as collected for a state (to replay a coding without one of its steps).
    walk : callable
        ``walk(-1)`` undoes the last change of any kind, ``walk(1)`` redoes it.
    """

    def __init__(self, propose: Callable, collected: Callable, walk: Callable) -> None:
        self._propose = propose
        self._collected = collected
        self._title = widgets.HTML("<b>steps</b>")
        self._list = widgets.VBox()
        self._lines: list[tuple[widgets.HTML, widgets.Button, widgets.HBox]] = []
        self._none = widgets.HTML("<p class='rankfold-hint'>none yet: the table as collected</p>")
        self._undo = _small(widgets.Button(description="undo"), "rankfold-undo",
                            "Take back the last change (of any kind)")
        self._redo = _small(widgets.Button(description="redo"), "rankfold-redo",
                            "Make again the change last taken back")
        self._reset = _small(widgets.Button(description="reset"), "rankfold-reset",
                             "Take back every variable's coding (undo brings it back)")
        self._undo.on_click(lambda _: walk(-1))
        self._redo.on_click(lambda _: walk(1))
        self._reset.on_click(lambda _: propose(lambda s: s.collected()))
        self.widget = widgets.VBox([self._title, self._list,
                                    widgets.HBox([self._undo, self._redo, self._reset])])
        self.widget.add_class("rankfold-steps")

    def _line(self, k: int) -> tuple[widgets.HTML, widgets.Button, widgets.HBox]:
        text = widgets.HTML(layout=widgets.Layout(flex="1 1 250px", min_width="120px"))
        remove = _small(widgets.Button(description="remove"), "rankfold-remove-step", "")
        collected = self._collected
        remove.on_click(lambda _: self._propose(
            lambda s: s.with_step_replaced(k, None, collected(s))))
        box = widgets.HBox([text, remove])
        box.add_class("rankfold-step")
        return text, remove, box

    def show(self, rendered: Rendered, can_undo: bool = False, can_redo: bool = False) -> None:
        """List the steps the current table went through after it was counted."""
        table = rendered.table
        steps = table.steps[table.initial_steps:]
        while len(self._lines) < len(steps):
            self._lines.append(self._line(len(self._lines)))
        for k, step in enumerate(steps):
            text, remove, _ = self._lines[k]
            text.value = (f"<span class='rankfold-step-text'>{k + 1}. "
                          f"{formatting.text(step.describe())}</span>")
            remove.tooltip = f"Take back step {k + 1} only; the others are replayed"
        self._list.children = ([box for _, _, box in self._lines[:len(steps)]] if steps
                               else [self._none])
        if steps:
            self._list.add_class("rankfold-step-list")
        else:
            self._list.remove_class("rankfold-step-list")
        self._undo.disabled, self._redo.disabled = not can_undo, not can_redo
        self._reset.disabled = not rendered.state.codings
