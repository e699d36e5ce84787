"""Exploring without the records in memory: a source counted elsewhere, or a ready table.

Every view of the explorer works from the table of counts, so it needs the records only to
count a pair of variables. For a Dask, polars or DuckDB source (or Parquet/CSV files) the
pickers list the source's columns from its types alone, and each new pair is counted by the
source's engine in a background thread (:class:`BackgroundCount`) while a progress bar shows,
so the notebook stays free for other cells. For a ready :class:`~rankfold.OrdinalTable` the
variables are fixed: rows and columns can be swapped, and every merge, exclusion, sweep and
measure works from its counts.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable, Hashable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import ipywidgets as widgets
import pandas as pd

from rankfold import OrdinalTable
from rankfold.sources import engine_name, schema

from . import formatting
from .pickers import control_columns, orderable_columns, weight_columns
from .state import ExplorerState

__all__ = ["Offer", "offer_for", "fixed_table", "has_records", "BackgroundCount"]

_ENGINE_NAMES = {"dask": "Dask", "duckdb": "DuckDB", "polars": "polars"}
_BAR_STYLE = """<style>
.rankfold-counting-bar { height: 4px; width: 100%; margin-top: 3px;
  background: linear-gradient(90deg, transparent, #3a78b5, transparent) no-repeat;
  background-size: 40% 100%; animation: rankfold-counting-slide 1.4s linear infinite; }
@keyframes rankfold-counting-slide { from { background-position: -60% 0; }
  to { background-position: 160% 0; } }
</style>"""


def has_records(data: object) -> bool:
    """True for a pandas DataFrame, the only data the explorer can recode record by record."""
    return isinstance(data, pd.DataFrame)


@dataclass(frozen=True)
class Offer:
    """What the pickers can offer for some data.

    Attributes
    ----------
    columns : list of str
        Every column.
    orderable, controls, weights : list of str
        Columns offered for rows and columns, as control variable, and as weight.
    fixed : dict
        Roles a ready table fixes (``row``, ``col``, ``control``, ``weight``, ``weight_kind``);
        empty for records.
    """

    columns: list[str]
    orderable: list[str]
    controls: list[str]
    weights: list[str]
    fixed: dict = field(default_factory=dict)


def offer_for(data: Any, order: Mapping[str, Sequence[Hashable]] | None = None) -> Offer:
    """The variables the explorer can offer for a frame, a source or a ready table.

    Parameters
    ----------
    data : pandas.DataFrame, OrdinalTable, or a source of :func:`rankfold.table`
        For a source only the column types are read (:func:`rankfold.sources.schema`), so a
        numeric column is offered whatever its number of values (counting says if there are
        too many) and any column but a float one is offered as a control variable.
    order : mapping, optional
        Orders given for text columns.

    Returns
    -------
    Offer

    Raises
    ------
    ValueError
        If ``data`` is none of these (the message lists what is accepted).
    """
    if isinstance(data, OrdinalTable):
        fixed = {"row": data.row_name, "col": data.col_name, "control": data.control_name,
                 "weight": data.weight, "weight_kind": data.weight_kind or "frequency"}
        named = [data.row_name, data.col_name]
        return Offer(named, named, [data.control_name] if data.control_name else [],
                     [data.weight] if data.weight else [], fixed)
    if has_records(data):
        return Offer(list(data.columns), orderable_columns(data, order), control_columns(data),
                     weight_columns(data))
    types = schema(data)
    controls = [name for name in types.columns
              if not pd.api.types.is_float_dtype(types[name].dtype)]
    return Offer(list(types.columns), orderable_columns(types, order), controls,
                 weight_columns(types))


def fixed_table(table: OrdinalTable, state: ExplorerState) -> OrdinalTable:
    """The table an explorer opened on ``table`` shows for ``state``: itself or, after a swap,
    its transpose.

    Raises
    ------
    ValueError
        If the state asks for other variables, a control variable or weight the table does not have.
    """
    kind = table.weight_kind or "frequency"
    if (state.control, state.weight, state.weight_kind) != (table.control_name, table.weight, kind):
        raise ValueError(
            "This explorer was opened on a table of counts, whose control variable and weight "
            "are fixed; "
            "to choose others, open it on the records (a DataFrame, files or a Dask frame)."
        )
    if (state.row, state.col) == (table.row_name, table.col_name):
        return table
    if (state.row, state.col) == (table.col_name, table.row_name):
        return table.transpose()
    raise ValueError(
        f"This explorer was opened on a table of {table.row_name!r} by {table.col_name!r}; "
        "it has no other variables."
    )


class BackgroundCount:
    """Counts a new pair of variables in a worker thread, with a progress bar meanwhile.

    Every count reports back when it ends (choosing again while one runs starts another; each
    one's proposal lands in turn), so no choice made meanwhile is lost.

    Attributes
    ----------
    widget : ipywidgets.HTML
        Empty when idle; while counting, a line naming the variables and the engine over an
        animated bar (CSS class ``rankfold-counting``).
    """

    def __init__(self) -> None:
        self.widget = widgets.HTML()
        self.widget.add_class("rankfold-counting")
        self._lock = threading.Lock()
        self._running: list[threading.Thread] = []

    def start(self, state: ExplorerState, count: Callable[[ExplorerState], Any], data: object,
              done: Callable[[Exception | None], None]) -> None:
        """Run ``count(state)`` in a thread, then ``done(error)``.

        Parameters
        ----------
        state : ExplorerState
            The state whose variables need counting.
        count : callable
            Counts (and caches) the table, e.g. ``TableCache.collected``.
        data : object
            The source, to name its engine in the progress line.
        done : callable
            Called from the worker thread with the error raised, if any (None on success);
            it proposes the change again, to the state current by then.
        """
        what = f"{state.row} × {state.col}" + (f" by {state.control}" if state.control else "")
        self.widget.value = (
            f'{_BAR_STYLE}<div role="status" aria-live="polite">Counting '
            f"{formatting.text(what)} with {_ENGINE_NAMES[engine_name(data)]}; the notebook "
            'stays free meanwhile.<div class="rankfold-counting-bar"></div></div>'
        )
        thread = threading.Thread(target=self._run, args=(state, count, done),
                                  name="rankfold-count", daemon=True)
        with self._lock:
            self._running.append(thread)
        thread.start()

    def _run(self, state: ExplorerState, count: Callable, done: Callable) -> None:
        error = None
        try:
            count(state)
        except Exception as err:  # noqa: BLE001 - reported in the widget by ``done``
            error = err
        try:
            done(error)
        finally:
            with self._lock:
                self._running.remove(threading.current_thread())
                idle = not self._running
            if idle:
                self.widget.value = ""

    def wait(self, timeout: float | None = None) -> None:
        """Block until every running count (and any count its result started) has reported
        back, or ``timeout`` seconds have passed."""
        deadline = None if timeout is None else time.monotonic() + timeout
        while True:
            with self._lock:
                running = list(self._running)
            if not running:
                return
            left = None if deadline is None else max(0.0, deadline - time.monotonic())
            running[0].join(left)
            if deadline is not None and time.monotonic() >= deadline:
                return
