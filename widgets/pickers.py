"""Pickers for the row, column, control and weight variables, and the swap button."""

from __future__ import annotations

import html
from collections.abc import Callable, Hashable, Mapping, Sequence
from typing import TYPE_CHECKING

import ipywidgets as widgets
import pandas as pd

from rankfold.column_coding import MAX_NUMERIC_LEVELS

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["orderable_columns", "control_columns", "weight_columns", "holds_two_values",
           "VariablePickers", "labelled"]

#: Values looked at to tell cheaply whether a long column has too many distinct values.
SAMPLE = 1 << 14

#: The value behind "none" in the control and weight pickers. Not None: ipywidgets reads a
#: Dropdown value of None as "nothing selected" and would then show the picker blank.
_NONE = object()


def labelled(control: widgets.DOMWidget, label: str, tooltip: str) -> widgets.HBox:
    """A control with its label beside it, both showing ``tooltip`` on hover.

    ipywidgets shows a Dropdown's tooltip only when the Dropdown has no description of its own,
    so the label is a separate element carrying the same title.

    Parameters
    ----------
    control : ipywidgets.DOMWidget
        The control (its ``description`` is left empty).
    label : str
        The words before it.
    tooltip : str
        A short plain explanation.

    Returns
    -------
    ipywidgets.HBox
        Label and control side by side.
    """
    control.description = ""
    control.tooltip = tooltip
    text = widgets.HTML(f'<span class="rankfold-label" title="{html.escape(tooltip)}">'
                        f"{html.escape(label)}</span>")
    return widgets.HBox([text, control], layout=widgets.Layout(align_items="center",
                                                               margin="0 8px 0 0"))


def _column(value: object) -> str | None:
    """The column a control or weight picker's value names (None for "none")."""
    return None if value is _NONE else value


def _sample(column: pd.Series) -> pd.Series:
    """The whole column when short, else SAMPLE values evenly spread over it."""
    if len(column) <= SAMPLE:
        return column
    return column.iloc[:: len(column) // SAMPLE]


def _too_many_values(column: pd.Series) -> bool:
    """Whether a cheap look proves the column has more than MAX_NUMERIC_LEVELS values:
    a Categorical's categories, an integer column's range, or an evenly spread sample."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        return len(column.cat.categories) > MAX_NUMERIC_LEVELS and (
            column.nunique(dropna=True) > MAX_NUMERIC_LEVELS)
    if pd.api.types.is_bool_dtype(column.dtype):
        return False
    if pd.api.types.is_integer_dtype(column.dtype) and len(column):
        if int(column.max()) - int(column.min()) < MAX_NUMERIC_LEVELS:
            return False
    return _sample(column).nunique(dropna=True) > MAX_NUMERIC_LEVELS


def holds_two_values(column: pd.Series) -> bool:
    """Whether the column holds at least two different values (looks at a sample first)."""
    return _sample(column).nunique(dropna=True) >= 2 or column.nunique(dropna=True) >= 2


def orderable_columns(
    data: pd.DataFrame, order: Mapping[str, Sequence[Hashable]] | None = None
) -> list[str]:
    """Columns that :func:`rankfold.table` can put in order, in the frame's column order.

    Decided from the column types and cheap checks, so that wide frames open at once: a numeric
    column is left out when a sample of its values (all of them when it is short) already shows
    more than :data:`rankfold.column_coding.MAX_NUMERIC_LEVELS` distinct values; a long column whose
    sample shows fewer is offered, and counting says so if it has too many after all.

    Parameters
    ----------
    data : pandas.DataFrame
        The user's frame (only read).
    order : mapping, optional
        Orders given for text columns (``order=`` of :func:`rankfold.table`).

    Returns
    -------
    list of str
        Ordered Categoricals, numeric and boolean columns with few distinct values, and any
        column named in ``order``: the rules :func:`rankfold.table` applies.
    """
    given = set(order or {})
    found = []
    for name in data.columns:
        column = data[name]
        if name in given:
            found.append(name)
        elif isinstance(column.dtype, pd.CategoricalDtype):
            if column.cat.ordered:
                found.append(name)
        elif (pd.api.types.is_numeric_dtype(column.dtype)
              or pd.api.types.is_bool_dtype(column.dtype)):
            if not _too_many_values(column):
                found.append(name)
    return found


def control_columns(data: pd.DataFrame) -> list[str]:
    """Columns that can serve as a control variable: 2 to 30 distinct values, of any type.

    Parameters
    ----------
    data : pandas.DataFrame
        The user's frame (only read).

    Returns
    -------
    list of str
        In the frame's column order. A control variable needs no order (text is sorted), but
        more than :data:`rankfold.column_coding.MAX_NUMERIC_LEVELS` levels would give tables
        too small to read.
        Decided by the same cheap checks as :func:`orderable_columns`.
    """
    return [name for name in data.columns
            if not _too_many_values(data[name]) and holds_two_values(data[name])]


def weight_columns(data: pd.DataFrame) -> list[str]:
    """Numeric (not boolean) columns, the possible weights; :func:`rankfold.table` checks the
    values (finite, not negative) when one is chosen."""
    return [name for name in data.columns
            if pd.api.types.is_numeric_dtype(data[name].dtype)
            and not pd.api.types.is_bool_dtype(data[name].dtype)]


class VariablePickers:
    """Dropdowns for the row, column, control and weight variables, and a swap button.

    Choosing in one picker the variable the other one shows swaps them. The control and weight
    pickers offer "none" first; the weight kind says whether a weight counts identical units
    (frequency) or is a survey weight (sampling).

    Parameters
    ----------
    columns : list of str
        The columns offered for rows and columns (see :func:`orderable_columns`).
    propose : callable
        Takes a function from state to new state.
    controls, weights : sequence of str
        The columns offered as control variable and as weight (see :func:`control_columns` and
        :func:`weight_columns`).
    """

    def __init__(self, columns: list[str], propose: Callable, controls: Sequence[str] = (),
                 weights: Sequence[str] = ()) -> None:
        wide = {"description_width": "initial"}
        self._row = widgets.Dropdown(
            options=columns, description="down the side", style=wide,
            tooltip="The variable whose categories are the table's rows")
        self._col = widgets.Dropdown(
            options=columns, description="across the top", style=wide,
            tooltip="The variable whose categories are the table's columns")
        self._swap = widgets.Button(
            description="swap ⇄", layout=widgets.Layout(width="auto"),
            tooltip="Exchange rows and columns (the measures that treat both alike stay the same)")
        for widget, css in ((self._row, "rankfold-row-picker"), (self._col, "rankfold-col-picker"),
                            (self._swap, "rankfold-swap")):
            widget.add_class(css)
        self._row.observe(lambda c: propose(lambda s: _pick(s, row=c["new"])), names="value")
        self._col.observe(lambda c: propose(lambda s: _pick(s, col=c["new"])), names="value")
        self._swap.on_click(lambda _: propose(lambda s: s.swapped()))
        self._control = widgets.Dropdown(options=[("none", _NONE), *((c, c) for c in controls)],
                                       description="control for", style=wide,
                                       tooltip="A third variable to hold fixed: the tab 'Within "
                                               "each level' shows the association inside each of "
                                               "its categories")
        self._weight = widgets.Dropdown(options=[("none", _NONE), *((c, c) for c in weights)],
                                        description="weight",
                                        tooltip="A column that says how much each row counts "
                                                "(none: every row counts once)")
        self._kind = widgets.Dropdown(
            options=[("repeat counts", "frequency"), ("survey weights", "sampling")],
            description="weights are",
            style={"description_width": "initial"},
            tooltip="Repeat counts: a row with weight 3 stands for 3 identical units. Survey "
                    "weights: each row is one respondent, weighted to stand for the population "
                    "(the intervals then allow for the weights)",
        )
        for widget, css in ((self._control, "rankfold-control-picker"),
                            (self._weight, "rankfold-weight-picker"),
                            (self._kind, "rankfold-weight-kind")):
            widget.add_class(css)
        self._control.observe(lambda c: propose(lambda s: s.with_roles(control=_column(c["new"]))),
                            names="value")
        # no weight means no weight kind: back to the default, which needs no column
        self._weight.observe(lambda c: propose(lambda s: s.with_roles(
            weight=_column(c["new"]),
            weight_kind="frequency" if c["new"] is _NONE else s.weight_kind)),
            names="value")
        self._kind.observe(lambda c: propose(lambda s: s.with_roles(weight_kind=c["new"])),
                           names="value")
        shown = [labelled(w, w.description, w.tooltip) if isinstance(w, widgets.Dropdown) else w
                 for w in (self._row, self._col, self._swap, self._control, self._weight,
                           self._kind)]
        self.widget = widgets.HBox(
            shown,
            layout=widgets.Layout(flex_flow="row wrap"),
        )
        self.widget.add_class("rankfold-pickers")

    def show(self, rendered: Rendered) -> None:
        """Show the state's variables."""
        state = rendered.state
        self._row.value = state.row
        self._col.value = state.col
        for picker, column in ((self._control, state.control), (self._weight, state.weight)):
            value = _NONE if column is None else column
            if value not in [v for _, v in picker.options]:  # given to explore() directly
                picker.options = [*picker.options, (value, value)]
            picker.value = value
        self._kind.value = state.weight_kind
        self._kind.disabled = state.weight is None


def _pick(state, row: str | None = None, col: str | None = None):
    row = state.row if row is None else row
    col = state.col if col is None else col
    if row == col:  # picked the other axis's variable: exchange the two
        return state.swapped()
    return state.with_variables(row, col)
