"""The "All pairs" tab: every pair of ordered columns at once, and a click opens a pair.

The matrix comes from :func:`rankfold.overview` on the explorer's frame (with its control
variable, weight and orders), computed when the tab is first opened and again only when those
change. The coding ranges (how far each pair's estimate moves across the codings that meet
Cochran's rule) are the slow part: they fill in the background as soon as the map is shown,
pair by pair, with a progress bar and a cancel button (and a button to start again), and the
matrix redraws as they arrive.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable

import ipywidgets as widgets
import pandas as pd

import rankfold
from rankfold.overview import fill_coding_ranges

from . import formatting
from .chart_pane import ChartPane
from .charts import PAIR_CLICK, overview_matrix
from .render import Rendered

__all__ = ["AllPairsSection", "overview_summary"]

#: Seconds between redraws of the matrix while coding ranges arrive.
REDRAW_EVERY = 1.0
#: Start filling in the coding ranges as soon as a new map is shown (the user may cancel).
AUTO_FILL = True

CAUTION = (
    "With many pairs some look strong by chance: compare the adjusted p-values (Holm), not "
    "the colours, and treat the strongest pair of a scan as a lead to check, not a finding. "
    "Association is not causation."
)


def overview_summary(frame: pd.DataFrame) -> str:
    """A plain paragraph on an overview: pairs, skipped columns, flags and the caution.

    Parameters
    ----------
    frame : pandas.DataFrame
        A :func:`rankfold.overview` result.

    Returns
    -------
    str
        HTML.
    """
    skipped = frame.attrs.get("skipped", {})
    sparse = int(frame["sparse"].sum())
    off_scale = frame.attrs.get("non_substantive", {})
    parts = [f"{len(frame):,} pairs of {len(frame.attrs.get('columns', []))} ordered columns; "
             f"{sparse:,} of them too sparse for Cochran's rule (ringed)."]
    if off_scale:
        parts.append("Answers that look off the scale in: "
                     + "; ".join(f"{k} ({', '.join(map(str, v))})" for k, v in off_scale.items())
                     + ".")
    if skipped:  # the first sentence of each reason says why
        parts.append("Not shown: " + "; ".join(f"{k}: {v.split('. ')[0].rstrip('.')}"
                                               for k, v in skipped.items()) + ".")
    parts.append("Click a cell to open that pair above, with the coding you gave each variable.")
    return (f'<p class="rankfold-hint">{formatting.text(" ".join(parts))}</p>'
            f'<p class="rankfold-warning">{formatting.text(CAUTION)}</p>')


class AllPairsSection:
    """The all-pairs view (see the module docstring).

    Parameters
    ----------
    propose : callable
        Takes a function from state to new state (the explorer's only entry point).
    notify : callable
        ``notify(text, error=False)`` shows a message in the explorer.
    """

    title = "All pairs"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._propose, self._notify = propose, notify
        self._key: tuple | None = None
        self._drawn: tuple | None = None  # the pair marked on the chart on screen
        self.frame: pd.DataFrame | None = None
        self._rendered: Rendered | None = None
        self._cancel = threading.Event()
        self._worker: threading.Thread | None = None
        self._summary = widgets.HTML()
        self._summary.add_class("rankfold-overview-summary")
        self._fill = widgets.Button(
            description="Fill in coding ranges", icon="play", layout=widgets.Layout(width="auto"),
            tooltip="For every pair, how far the estimate moves across the codings that meet "
                    "Cochran's rule (computed in the background)")
        self._fill.add_class("rankfold-overview-ranges")
        self._fill.on_click(lambda _: self.fill_ranges())
        self._stop = widgets.Button(description="Cancel", layout=widgets.Layout(
            width="auto", display="none"), tooltip="Stop filling in the coding ranges")
        self._stop.add_class("rankfold-overview-cancel")
        self._stop.on_click(lambda _: self._cancel.set())
        self._bar = widgets.IntProgress(min=0, max=1, value=0, description="pairs",
                                        layout=widgets.Layout(visibility="hidden"))
        self._pane = ChartPane("rankfold-overview", on_click=self._clicked, selection=PAIR_CLICK)
        self.widget = widgets.VBox([self._summary,
                                    widgets.HBox([self._fill, self._stop, self._bar]),
                                    self._pane.widget])

    # ------------------------------------------------------------------ showing
    def show(self, rendered: Rendered) -> None:
        """Compute the overview for the state's control, weight and orders (once), and draw."""
        self._rendered = rendered
        data = rendered.source.data
        if not isinstance(data, pd.DataFrame):
            self._summary.value = ('<p class="rankfold-hint">The map of all pairs needs the '
                                   "records in a pandas DataFrame.</p>")
            self._fill.layout.display = "none"
            self._pane.show(None)
            return
        state = rendered.state
        key = (state.control, state.weight, state.weight_kind, state.order)
        if key != self._key:
            self._cancel.set()
            self.frame = rankfold.overview(
                data, control=state.control, weight=state.weight,
                weight_kind=state.weight_kind, order=dict(state.order) or None)
            self._key = key
            self._fill.layout.display = None
            self._draw()
            if AUTO_FILL:
                self.fill_ranges()
            return
        if (state.row, state.col) != self._drawn:  # a new coding changes nothing drawn here
            self._draw()

    def _draw(self) -> None:
        state = self._rendered.state
        self._summary.value = overview_summary(self.frame)
        chosen = (state.row, state.col)
        self._pane.show(overview_matrix(self.frame, chosen=chosen))
        self._drawn = chosen

    # ------------------------------------------------------------------ actions
    def _clicked(self, point: dict) -> None:
        a, b = point.get("var_a"), point.get("var_b")
        if a is None or b is None or a == b:
            return
        self._propose(lambda s: s.with_variables(a, b))

    def fill_ranges(self, wait: bool = False) -> None:
        """Fill in every pair's coding range in the background (``wait=True``: at once)."""
        if self._worker is not None and self._worker.is_alive():
            if wait:
                self._worker.join()
            return
        if self.frame is None:
            return
        self._cancel.clear()
        self._worker = threading.Thread(target=self._ranges, daemon=True)
        self._fill.layout.display = "none"
        self._stop.layout.display = None
        self._bar.max, self._bar.value = len(self.frame), 0
        self._bar.layout.visibility = "visible"
        self._worker.start()
        if wait:
            self._worker.join()

    def _ranges(self) -> None:
        frame, last, stopped = self.frame, time.monotonic(), True

        def step(done: int, total: int) -> bool:
            nonlocal last, stopped
            if self._cancel.is_set() or frame is not self.frame:
                return False
            stopped = done < total
            self._bar.value = done
            if time.monotonic() - last > REDRAW_EVERY:
                self._draw()
                last = time.monotonic()
            return True

        try:
            fill_coding_ranges(frame, self._rendered.source.data, progress=step)
            if frame is self.frame:
                self._draw()
        except Exception as err:  # never a traceback from a background thread
            self._notify(f"Filling in the coding ranges stopped: {err}", error=True)
        finally:
            self._bar.layout.visibility = "hidden"
            self._stop.layout.display = "none"
            # offered again after a cancel or a failure (a pair with no admissible coding
            # keeps NaN and is done all the same)
            self._fill.layout.display = "none" if not stopped or frame is not self.frame else None
