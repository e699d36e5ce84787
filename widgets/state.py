"""The explorer's single state object: chosen variables, a coding per variable, view choices.

Controls never talk to each other; each one proposes a function from the current
:class:`ExplorerState` to a new one, and the explorer derives everything shown from it (see
:mod:`rankfold.widgets.render`). States are immutable, so the explorer's history is simply a
list of them.
"""

from __future__ import annotations

from collections.abc import Hashable
from dataclasses import dataclass, field, replace

from rankfold import OrdinalTable

__all__ = ["Edit", "ExplorerState", "COLOUR_CHOICES"]

#: Quantities the heatmap can colour cells by, with their display names.
COLOUR_CHOICES = {
    "count": "counts",
    "row_percent": "% within its row",
    "col_percent": "% within its column",
    "adjusted_residual": "adjusted residual (Haberman)",
    "pair_contribution": "pushes association up / down",
}

_KINDS = ("merge", "exclude", "reorder")


@dataclass(frozen=True)
class Edit:
    """One coding edit of one variable, applied with the core's table methods.

    Attributes
    ----------
    kind : {'merge', 'exclude', 'reorder'}
        Which :class:`~rankfold.OrdinalTable` method applies it.
    variable : str
        The variable (column name) it recodes; its axis follows the variable, so an edit
        survives swapping rows and columns.
    labels : tuple
        For ``merge``, the groups of neighbouring labels (a tuple of tuples); for ``exclude``,
        the labels to leave out; for ``reorder``, every label in the new order. Merged groups
        take the core's default label (:meth:`~rankfold.OrdinalTable.merge`).
    """

    kind: str
    variable: str
    labels: tuple

    def __post_init__(self) -> None:
        if self.kind not in _KINDS:
            raise ValueError(f"An edit is one of {_KINDS}; got {self.kind!r}.")

    def describe(self) -> str:
        """One line naming the edit, e.g. ``"trip_length: merge [10–20 km, over 20 km]"``."""
        if self.kind == "merge":
            shown = "; ".join(f"[{', '.join(map(str, group))}]" for group in self.labels)
        else:
            shown = ", ".join(map(str, self.labels))
        return f"{self.variable}: {self.kind} {shown}"

    def apply(self, table: OrdinalTable) -> OrdinalTable:
        """The table with this edit applied (through the core, which checks it)."""
        if self.variable == table.row_name:
            axis = "rows"
        elif self.variable == table.col_name:
            axis = "cols"
        else:
            raise ValueError(
                f"{self.variable!r} is neither the row nor the column variable of this table."
            )
        if self.kind == "merge":
            return table.merge(axis, [list(group) for group in self.labels])
        return getattr(table, self.kind)(axis, list(self.labels))


@dataclass(frozen=True)
class ExplorerState:
    """Everything that decides what the explorer shows.

    Attributes
    ----------
    row, col : str
        The row and column variables.
    control, weight : str or None
        Control variable and weight columns, passed to :func:`rankfold.table`.
    weight_kind : {'frequency', 'sampling'}
        How the weights are read, passed to :func:`rankfold.table`.
    order : tuple of (column, labels) pairs
        Orders given for columns without a declared one (``order=`` of :func:`rankfold.table`).
    codings : dict
        ``{column: (Edit, ...)}``: each variable's coding, oldest edit first. A variable keeps
        its coding while another pair is shown. Never modified in place: every method returns
        a new state with a new dict.
    colour_by : str
        The heatmap's quantity, a key of :data:`COLOUR_CHOICES`.
    chosen_cell : (row label, column label) or None
        The cell the pair view explains.
    """

    row: str
    col: str
    control: str | None = None
    weight: str | None = None
    weight_kind: str = "frequency"
    order: tuple = ()
    codings: dict = field(default_factory=dict)
    colour_by: str = "count"
    chosen_cell: tuple[Hashable, Hashable] | None = None

    def __post_init__(self) -> None:
        if self.colour_by not in COLOUR_CHOICES:
            raise ValueError(
                f"colour_by must be one of {list(COLOUR_CHOICES)}; got {self.colour_by!r}."
            )

    __hash__ = None  # type: ignore[assignment]  # holds a dict; compared by value only

    @property
    def table_key(self) -> tuple:
        """What the raw count depends on: one cached table per distinct key."""
        return (self.row, self.col, self.control, self.weight, self.weight_kind, self.order)

    @property
    def edits(self) -> tuple[Edit, ...]:
        """The edits of the shown pair: the row variable's coding, then the column's. This is
        the order of the steps list, and of the table's steps after counting."""
        return (*self.codings.get(self.row, ()), *self.codings.get(self.col, ()))

    def coding(self, column: str) -> tuple[Edit, ...]:
        """One variable's edits (empty when it was never recoded)."""
        return self.codings.get(column, ())

    def with_coding(self, column: str, edits: tuple[Edit, ...]) -> ExplorerState:
        """``column``'s coding replaced by ``edits`` (an empty tuple forgets it)."""
        codings = {k: v for k, v in self.codings.items() if k != column}
        if edits:
            codings[column] = tuple(edits)
        return replace(self, codings=codings)

    def with_variables(self, row: str, col: str) -> ExplorerState:
        """New variables; every variable keeps its coding (shown again when picked again)."""
        return replace(self, row=row, col=col, chosen_cell=None)

    def swapped(self) -> ExplorerState:
        """Rows and columns exchanged (codings follow their variables)."""
        cell = None if self.chosen_cell is None else self.chosen_cell[::-1]
        return replace(self, row=self.col, col=self.row, chosen_cell=cell)

    def with_edit(self, edit: Edit) -> ExplorerState:
        """One more edit at the end of its variable's coding."""
        return self.with_coding(edit.variable, (*self.coding(edit.variable), edit))

    def collected(self) -> ExplorerState:
        """Every coding taken back: the tables as collected (the pair and view choices stay)."""
        return replace(self, codings={}, chosen_cell=None)

    def step_at(self, index: int) -> tuple[str, int]:
        """The variable and the position in its coding of the shown pair's step ``index``
        (numbered as in :attr:`edits`, from 0)."""
        edits = self.edits
        if isinstance(index, bool) or not isinstance(index, int):
            raise ValueError(f"A step is given by its number, from 0; got {index!r}.")
        if not -len(edits) <= index < len(edits):
            raise ValueError(
                f"There is no step {index}: the shown pair has {len(edits)} step(s), "
                f"numbered from 0." if edits else "There is no step to remove: none was made."
            )
        index %= len(edits)
        first = len(self.coding(self.row))
        return (self.row, index) if index < first else (self.col, index - first)

    def with_step_replaced(self, index: int, edit: Edit | None,
                           collected: OrdinalTable) -> ExplorerState:
        """Step ``index`` of the shown pair replaced by ``edit`` (None removes it); the
        variable's coding is rebuilt by replaying the other steps on ``collected``.

        Parameters
        ----------
        index : int
            The step's number in :attr:`edits`, from 0.
        edit : Edit or None
            Its replacement (e.g. a merge with one group fewer), or None to remove it.
        collected : OrdinalTable
            The table as collected for this state's variables.

        Raises
        ------
        ValueError
            When a later step cannot be replayed without it (for example a merge that names a
            category the removed step created); the message names that step.
        """
        variable, position = self.step_at(index)
        old = self.coding(variable)
        target = old[position]
        edits = (*old[:position], *(() if edit is None else (edit,)), *old[position + 1:])
        table = collected
        for later in edits:
            try:
                table = later.apply(table)
            except ValueError as err:
                what = "Removing" if edit is None else "Changing"
                raise ValueError(
                    f"{what} the step {target.describe()!r} is refused: the later step "
                    f"{later.describe()!r} depends on it ({err}) Take that step back first."
                ) from None
        return self.with_coding(variable, edits)

    def variable(self, axis: str) -> str:
        """The variable shown on ``axis`` (``'rows'`` or ``'cols'``)."""
        return self.row if axis == "rows" else self.col

    def _index(self, variable: str, position: int) -> int:
        return position + (0 if variable == self.row else len(self.coding(self.row)))

    def left_out(self, axis: str) -> list:
        """Categories of the variable on ``axis`` that its exclusions leave out, in the order
        they were left out."""
        return [label for edit in self.coding(self.variable(axis)) if edit.kind == "exclude"
                for label in edit.labels]

    def with_merge_split(self, axis: str, label: Hashable,
                         collected: OrdinalTable) -> ExplorerState:
        """The merge that made category ``label`` of the variable on ``axis`` taken back
        (only its group, when the merge made several); see :meth:`with_step_replaced`.

        Raises
        ------
        ValueError
            If ``label`` is not a merged category now, or a later step depends on it.
        """
        variable = self.variable(axis)
        coding = self.coding(variable)
        table, made = collected, None
        for position, edit in enumerate(coding):
            table = edit.apply(table)
            if edit.kind == "merge":
                step = table.steps[-1]
                for group, new in zip(step.groups, step.labels, strict=True):
                    if new == label and len(group) > 1:
                        made = (position, set(group))
        shown = table.row_labels if axis == "rows" else table.col_labels
        if made is None or label not in shown:
            raise ValueError(f"{label!r} is not a merged category of {variable!r}; nothing "
                             "to split.")
        position, members = made
        rest = tuple(g for g in coding[position].labels if set(g) != members)
        replacement = Edit("merge", variable, rest) if rest else None
        return self.with_step_replaced(self._index(variable, position), replacement, collected)

    def with_brought_back(self, axis: str, label: Hashable,
                          collected: OrdinalTable) -> ExplorerState:
        """Category ``label`` of the variable on ``axis``, left out by an exclusion, counted
        again (the exclusion keeps its other labels); see :meth:`with_step_replaced`."""
        variable = self.variable(axis)
        coding = self.coding(variable)
        for position in reversed(range(len(coding))):
            edit = coding[position]
            if edit.kind == "exclude" and label in edit.labels:
                rest = tuple(x for x in edit.labels if x != label)
                replacement = Edit("exclude", variable, rest) if rest else None
                return self.with_step_replaced(self._index(variable, position), replacement,
                                               collected)
        raise ValueError(f"{label!r} is not left out of {variable!r}; nothing to bring back.")

    def with_roles(self, **roles: str | None) -> ExplorerState:
        """New ``control``, ``weight`` or ``weight_kind``; the codings and view choices stay
        (they recode the row and column variables, which every level shares).

        Parameters
        ----------
        **roles : str or None
            Any of ``control``, ``weight`` (column names, None for none) and ``weight_kind``.

        Returns
        -------
        ExplorerState
            A copy with the new roles (states are immutable); a keyword other than these three
            raises ValueError.
        """
        unknown = sorted(set(roles) - {"control", "weight", "weight_kind"})
        if unknown:
            raise ValueError(f"Only control, weight and weight_kind are roles; got {unknown}.")
        return replace(self, **roles)

    def with_view(self, **choices: str | tuple[Hashable, Hashable] | None) -> ExplorerState:
        """New view choices (``colour_by``, ``chosen_cell``); the data and coding stay.

        Parameters
        ----------
        **choices : str, (row label, column label) or None
            ``colour_by`` (one of the colour choices) and ``chosen_cell`` (None for none).

        Returns
        -------
        ExplorerState
            A copy with the new choices; any other keyword raises ValueError.
        """
        unknown = sorted(set(choices) - {"colour_by", "chosen_cell"})
        if unknown:
            raise ValueError(f"Only colour_by and chosen_cell are view choices; got {unknown}.")
        return replace(self, **choices)
