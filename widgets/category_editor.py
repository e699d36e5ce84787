"""Per-axis category editor (merge neighbours, leave out, reorder) and the list of steps."""

from __future__ import annotations

from collections.abc import Callable, Hashable
from typing import TYPE_CHECKING

import ipywidgets as widgets

from rankfold import OrderStep

from . import formatting
from .state import Edit

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["CategoryEditor", "StepsPanel"]

_AXIS_TITLES = {"rows": "down the side", "cols": "across the top"}


def _small(widget: widgets.DOMWidget, css_class: str, tooltip: str) -> widgets.DOMWidget:
    widget.layout = widgets.Layout(width="auto", height="26px")
    widget.tooltip = tooltip
    widget.add_class(css_class)
    return widget


class _CategoryRow:
    """The controls of the k-th category: name and count, leave out, move up and down."""

    def __init__(self, editor: CategoryEditor, k: int) -> None:
        self.name = widgets.HTML(layout=widgets.Layout(min_width="150px"))
        self.leave_out = _small(widgets.Button(description="leave out"), "rankfold-exclude", "")
        self.up = _small(widgets.Button(description="↑"), "rankfold-move-up", "")
        self.down = _small(widgets.Button(description="↓"), "rankfold-move-down", "")
        self.leave_out.on_click(lambda _: editor.exclude(k))
        self.up.on_click(lambda _: editor.move(k, -1))
        self.down.on_click(lambda _: editor.move(k, 1))
        self.widget = widgets.HBox([self.name, self.leave_out, self.up, self.down])
        self.widget.add_class("rankfold-category")

    def show(self, label: Hashable, total: float, k: int, size: int, movable: bool) -> None:
        self.name.value = (
            f"<span class='rankfold-category-label'>{formatting.text(label)}</span> "
            f"<span class='rankfold-category-count'>({formatting.amount(total)})</span>"
        )
        self.leave_out.tooltip = f"Leave out the units in {label}"
        self.up.tooltip, self.down.tooltip = f"Move {label} up", f"Move {label} down"
        self.up.disabled, self.down.disabled = k == 0, k == size - 1
        shown = None if movable else "none"
        self.up.layout.display = self.down.layout.display = shown


class CategoryEditor:
    """The categories of one axis in order, with their counts and coding controls.

    Between two neighbours a toggle merges them; each category can be left out; when the
    variable has no declared order, arrows move a category up or down. Splitting a merge is
    done with the steps panel's undo. Controls are reused from one table to the next.

    Parameters
    ----------
    axis : {'rows', 'cols'}
        Which variable of the table this editor codes.
    propose : callable
        Takes a function from state to new state.
    """

    def __init__(self, axis: str, propose: Callable) -> None:
        self._axis = axis
        self._propose = propose
        self._variable = ""
        self._labels: list = []
        self._rows: list[_CategoryRow] = []
        self._toggles: list[widgets.ToggleButton] = []
        self._title = widgets.HTML()
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
            f"<span class='rankfold-hint'>(order {origin})</span>"
        )
        children: list[widgets.Widget] = [self._title]
        for k, (label, total) in enumerate(totals):
            if k > 0:
                toggle = self._toggles[k - 1]
                toggle.value = False
                toggle.tooltip = f"Merge {self._labels[k - 1]} and {label}"
                children.append(toggle)
            self._rows[k].show(label, total, k, size, movable=origin != "declared")
            children.append(self._rows[k].widget)
        if tuple(children) != self.widget.children:
            self.widget.children = children

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
        ``"poor–good"`` after two merges, not ``"poor–fair–good"``)."""
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
    """The applied coding steps in order, with undo and reset.

    Parameters
    ----------
    propose : callable
        Takes a function from state to new state.
    """

    def __init__(self, propose: Callable) -> None:
        self._list = widgets.HTML()
        self._undo = _small(widgets.Button(description="undo"), "rankfold-undo",
                            "Take back the last step")
        self._reset = _small(widgets.Button(description="reset"), "rankfold-reset",
                             "Take back every step")
        self._undo.on_click(lambda _: propose(lambda s: s.undone()))
        self._reset.on_click(lambda _: propose(lambda s: s.reset()))
        self.widget = widgets.VBox([self._list, widgets.HBox([self._undo, self._reset])])
        self.widget.add_class("rankfold-steps")

    def show(self, rendered: Rendered) -> None:
        """List the steps the current table went through after it was counted."""
        table = rendered.table
        steps = table.steps[table.initial_steps:]
        items = "".join(f"<li>{formatting.text(s.describe())}</li>" for s in steps)
        self._list.value = (
            f"<b>steps</b><ol class='rankfold-step-list'>{items}</ol>" if steps
            else "<b>steps</b><p class='rankfold-hint'>none yet: the table as collected</p>"
        )
        self._undo.disabled = self._reset.disabled = not steps
