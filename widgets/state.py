"""The explorer's single state object: chosen variables, coding edits and view choices.

Controls never talk to each other; each one proposes a new :class:`ExplorerState` and the
explorer derives everything shown from it (see :mod:`rankfold.widgets.render`).
"""

from __future__ import annotations

from collections.abc import Hashable
from dataclasses import dataclass, replace

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
    edits : tuple of Edit
        The coding edits in the order they were made.
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
    edits: tuple[Edit, ...] = ()
    colour_by: str = "count"
    chosen_cell: tuple[Hashable, Hashable] | None = None

    def __post_init__(self) -> None:
        if self.colour_by not in COLOUR_CHOICES:
            raise ValueError(
                f"colour_by must be one of {list(COLOUR_CHOICES)}; got {self.colour_by!r}."
            )

    @property
    def table_key(self) -> tuple:
        """What the raw count depends on: one cached table per distinct key."""
        return (self.row, self.col, self.control, self.weight, self.weight_kind, self.order)

    def with_variables(self, row: str, col: str) -> ExplorerState:
        """New variables; edits of variables no longer shown are dropped, the rest kept."""
        kept = tuple(e for e in self.edits if e.variable in (row, col))
        return replace(self, row=row, col=col, edits=kept, chosen_cell=None)

    def swapped(self) -> ExplorerState:
        """Rows and columns exchanged (edits follow their variables)."""
        cell = None if self.chosen_cell is None else self.chosen_cell[::-1]
        return replace(self, row=self.col, col=self.row, chosen_cell=cell)

    def with_edit(self, edit: Edit) -> ExplorerState:
        """One more coding edit."""
        return replace(self, edits=(*self.edits, edit))

    def undone(self) -> ExplorerState:
        """The last coding edit taken back (no change when there is none)."""
        return replace(self, edits=self.edits[:-1])

    def reset(self) -> ExplorerState:
        """All coding edits taken back."""
        return replace(self, edits=())

    def with_roles(self, **roles: str | None) -> ExplorerState:
        """New ``control``, ``weight`` or ``weight_kind``; the coding edits and view choices stay
        (edits recode the row and column variables, which every level shares).

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
