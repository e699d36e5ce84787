"""The render pass: from an :class:`ExplorerState` to every number the explorer shows.

The user's frame is counted once per variable pair (:class:`TableCache`); every edit or view
change starts again from that cached table, so a change costs a few milliseconds whatever the
number of records. Statistics all come from the core; this module only chains the calls. It
draws nothing: each view module builds its own chart from a :class:`Rendered` (the heatmap in
``heatmap.py``, the pair view in ``pair_view.py``, ...), and imports this module, never the
other way round.
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Hashable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

import rankfold
from rankfold import Diagnostics, OrdinalTable, PairRegions

from .state import ExplorerState
from .table_mode import fixed_table, has_records

__all__ = ["TableCache", "Rendered", "render", "COMPARED", "BASELINES"]

#: The measures :meth:`Rendered.compared` compares, in display order.
COMPARED = ("gamma", "somers_d_col_given_row", "somers_d_row_given_col", "somers_d_symmetric",
            "tau_b", "tau_c", "spearman_rho")
#: What the current coding can be compared against: key -> name shown for the earlier table.
BASELINES = {"collected": "as collected", "previous": "before the last step"}


class TableCache:
    """Counts a DataFrame once per choice of variables and keeps the result, and keeps the
    numbers of the codings shown last.

    Parameters
    ----------
    data : pandas.DataFrame, a source of :func:`rankfold.table`, or OrdinalTable
        The user's frame or source; it is only read. A ready table is shown as it is (see
        :func:`~rankfold.widgets.table_mode.fixed_table`).

    Notes
    -----
    A view choice (colour, chosen cell), undo, redo and picking a pair seen before come back
    to a coding whose numbers were computed already: :meth:`numbers` keeps those of the last
    :attr:`remembered` codings, so such changes cost no core computation.
    """

    #: How many codings' numbers are kept (the most recently used ones).
    remembered = 32

    def __init__(self, data: pd.DataFrame | OrdinalTable | Any) -> None:
        self.data = data
        self._tables: dict[tuple, OrdinalTable] = {}
        self._numbers: OrderedDict[tuple, dict[str, Any]] = OrderedDict()

    def collected(self, state: ExplorerState) -> OrdinalTable:
        """The table as collected (before any edit) for the state's variables."""
        key = state.table_key
        if key not in self._tables and isinstance(self.data, OrdinalTable):
            self._tables[key] = fixed_table(self.data, state)
        if key not in self._tables:
            roles = (state.row, state.col, state.control)
            self._tables[key] = rankfold.table(
                self.data, state.row, state.col, control=state.control, weight=state.weight,
                weight_kind=state.weight_kind,
                order={name: list(labels) for name, labels in state.order if name in roles},
            )
        return self._tables[key]

    def numbers(self, state: ExplorerState) -> dict[str, Any]:
        """The tables and the numbers of the state's coding of its pair, computed once.

        Parameters
        ----------
        state : ExplorerState

        Returns
        -------
        dict
            ``collected``, ``previous``, ``table``, ``measures``, ``tests``, ``diagnostics``,
            ``figures`` and ``slope`` (``table.cumulative_logit()``), as in :class:`Rendered`,
            and ``_compared``, where :meth:`Rendered.compared` keeps its comparisons of this
            coding.

        Raises
        ------
        ValueError
            If the coding cannot be applied or leaves an unusable table (nothing is kept).
        """
        key = (state.table_key, state.edits)
        if key in self._numbers:
            self._numbers.move_to_end(key)
            return self._numbers[key]
        collected = self.collected(state)
        previous = table = collected
        for edit in state.edits:
            previous, table = table, edit.apply(table)
        _check_usable(table)
        numbers = {
            "collected": collected, "previous": previous, "table": table,
            "measures": table.measures(), "tests": table.tests(),
            "diagnostics": table.diagnostics(), "figures": rankfold.cell_figures(table),
            "slope": table.cumulative_logit(), "_compared": {},
        }
        self._numbers[key] = numbers
        while len(self._numbers) > self.remembered:
            self._numbers.popitem(last=False)
        return numbers

    def needs_count(self, state: ExplorerState) -> bool:
        """True if the state's variables must first be counted by another engine (slow)."""
        return state.table_key not in self._tables and not (
            has_records(self.data) or isinstance(self.data, OrdinalTable))


@dataclass(frozen=True)
class Rendered:
    """Every number derived from one state (the views draw their charts from it).

    Attributes
    ----------
    state : ExplorerState
    collected, table : OrdinalTable
        The table as collected and after the state's edits.
    measures, tests : pandas.DataFrame
        ``table.measures()`` and ``table.tests()``.
    diagnostics : Diagnostics
    figures : pandas.DataFrame
        :func:`rankfold.cell_figures` of the table.
    slope : pandas.DataFrame
        ``table.cumulative_logit()`` (the proportional-odds slope the measures panel shows).
    regions : PairRegions or None
        :func:`rankfold.pair_regions` of the chosen cell, if one is chosen and still exists.
    previous : OrdinalTable
        The table before the last step of the shown pair (the last of ``state.edits``, the
        numbering of the steps list); the table as collected when there is no step.
    left_out : float
        Units left out by the state's exclusions.
    source : TableCache
        Where the tables came from (holds the user's frame, for :meth:`coded_columns`).
    """

    state: ExplorerState
    collected: OrdinalTable
    table: OrdinalTable
    measures: pd.DataFrame
    tests: pd.DataFrame
    diagnostics: Diagnostics
    figures: pd.DataFrame
    slope: pd.DataFrame
    regions: PairRegions | None
    previous: OrdinalTable
    left_out: float
    source: TableCache = field(repr=False, compare=False)
    _compared: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def before_last_step(self) -> OrdinalTable | None:
        """The table before the state's last coding step; None when there is no step."""
        return self.previous if self.state.edits else None

    @property
    def comparison(self) -> pd.DataFrame:
        """:meth:`compared` against the table as collected."""
        return self.compared("collected")

    def compared(self, baseline: str = "collected") -> pd.DataFrame:
        """:func:`rankfold.compare_measures` of an earlier table and the current one, computed
        on first request: both are codings of one collected table, so the change carries its
        paired standard error, interval and p-value.

        Parameters
        ----------
        baseline : {'collected', 'previous'}
            The table as collected, or the table before the last step (:attr:`previous`).

        Returns
        -------
        pandas.DataFrame
            The measures of :data:`COMPARED`, one row each.
        """
        if baseline not in BASELINES:
            raise ValueError(f"Compare against one of {list(BASELINES)}; got {baseline!r}.")
        if baseline not in self._compared:
            before = self.collected if baseline == "collected" else self.previous
            keys = [k for k in COMPARED if k in self.measures.index]
            self._compared[baseline] = rankfold.compare_measures(before, self.table, keys)
        return self._compared[baseline]

    def baseline_description(self, baseline: str) -> str:
        """One sentence naming the earlier table of :meth:`compared`."""
        edits = self.state.edits
        if not edits:
            return "No coding step yet: the current coding is the table as collected."
        if baseline == "collected":
            return (f"The current coding ({len(edits)} step(s)) against the table as "
                    "collected.")
        return (f"The current coding against the table before its last step, step "
                f"{len(edits) - 1}: {edits[-1].describe()}.")

    def cell_labels(self, point: dict) -> tuple[Hashable, Hashable]:
        """The (row, column) labels of a clicked chart datum holding cell positions."""
        return (self.table.row_labels[int(point["row_position"])],
                self.table.col_labels[int(point["col_position"])])

    def coded_columns(self) -> pd.DataFrame:
        """The row and column variables with the current coding, as new ordered Categoricals
        (excluded categories become missing); the user's frame is not modified."""
        if not has_records(self.source.data):
            raise ValueError(
                "The explorer holds counts, not records, so it cannot recode columns; apply "
                "the steps to your records with rankfold.apply_steps(records, table.steps)."
            )
        columns = [self.table.row_name, self.table.col_name]
        return rankfold.apply_steps(self.source.data[columns], self.table.steps)

    def axis_totals(self, axis: str) -> list[tuple[Hashable, float]]:
        """Each category of ``axis`` (``'rows'`` or ``'cols'``) with its number of units."""
        which = "row" if axis == "rows" else "col"
        labels = self.table.row_labels if axis == "rows" else self.table.col_labels
        totals = np.zeros(len(labels))
        totals[self.figures[f"{which}_position"].to_numpy()] = self.figures[f"{which}_total"]
        return list(zip(labels, totals.tolist(), strict=True))


def _check_usable(table: OrdinalTable) -> None:
    for labels, name in ((table.row_labels, table.row_name), (table.col_labels, table.col_name)):
        if len(labels) < 2:
            which = f"a single category ({labels[0]})" if labels else "no category at all"
            raise ValueError(
                f"That would leave {name!r} with {which}; an ordinal measure needs at least two "
                "categories on each variable (a column whose values are all missing has none). "
                "Nothing was changed."
            )
    if not table.n > 0:
        raise ValueError(
            "That would leave no units at all: every remaining unit is in an excluded "
            "category. Nothing was changed."
        )


def render(state: ExplorerState, cache: TableCache) -> Rendered:
    """Derive the table, its measures and every figure for a state.

    Parameters
    ----------
    state : ExplorerState
    cache : TableCache
        Holds the counted tables of the user's frame.

    Returns
    -------
    Rendered

    Raises
    ------
    ValueError
        If the state asks for something impossible (an unknown label, a merge of
        non-neighbours, a variable left with one category, no units left); the message says
        what and how to fix it.
    """
    numbers = cache.numbers(state)
    table = numbers["table"]
    regions = None
    if state.chosen_cell is not None:
        row, col = state.chosen_cell
        if row in table.row_labels and col in table.col_labels:
            regions = rankfold.pair_regions(
                table.counts.to_numpy(), table.row_labels.index(row), table.col_labels.index(col)
            )
    return Rendered(state=state, regions=regions, left_out=numbers["collected"].n - table.n,
                    source=cache, **numbers)
