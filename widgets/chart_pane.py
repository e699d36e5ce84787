"""One place on screen that shows Altair charts offline and reports clicks on them.

Altair 6 emits Vega-Lite 6, which JupyterLab 4's built-in renderer does not know, and a plainly
displayed chart would fetch Vega from the internet. :class:`altair.JupyterChart` in offline
mode bundles Vega through vl-convert, so charts render with no network at all; the bundle is
made once per version and kept on disk (:mod:`rankfold.widgets.offline_script`).
"""

from __future__ import annotations

import json
from collections.abc import Callable, Sequence
from contextlib import AbstractContextManager
from typing import Any

import altair as alt
import ipywidgets as widgets
from altair.utils.schemapi import debug_mode
from altair.utils.selection import PointSelection

from .offline_script import offline_chart_class

__all__ = ["ChartPane", "CLICK", "building", "inline_data"]

#: Name of the point selection a clickable chart declares; its fields identify the cell.
CLICK = "cell"

# The mode is stated because the pane drops "$schema" (below), from which the page would
# otherwise guess it; without either, a concatenated chart (the within-levels view) is taken for a
# Vega specification and draws nothing.
_EMBED_OPTIONS = {"actions": False, "renderer": "svg", "mode": "vega-lite"}


def building() -> AbstractContextManager[None]:
    """Context for building charts without Altair's check of every part as it is made.

    The finished specification is still checked in full once, when the pane serialises it
    (and in the tests); skipping the per-part checks makes a chart several times faster.

    Returns
    -------
    contextlib.AbstractContextManager
        Use as ``with building(): ...``.
    """
    return debug_mode(False)


def inline_data(records: Sequence[dict[str, Any]]) -> alt.Data:
    """Chart data written into the specification as one JSON text.

    Vega-Lite accepts inline values as text with a format; checking the specification then
    treats the data as one string instead of checking every record, which keeps redrawing fast.
    """
    return alt.Data(values=json.dumps(list(records)), format=alt.DataFormat(type="json"))


class ChartPane:
    """Shows one chart at a time; a new chart replaces the old one in place.

    Parameters
    ----------
    css_class : str
        CSS class of the pane, for browser tests and styling.
    on_click : callable, optional
        Called with the clicked datum's fields (a dict) when the chart declares a point
        selection named ``selection``.
    placeholder : str
        HTML shown while there is no chart.
    selection : str
        Name of the point selection clicks come from (default :data:`CLICK`).
    """

    def __init__(
        self,
        css_class: str,
        on_click: Callable[[dict[str, Any]], None] | None = None,
        placeholder: str = "",
        selection: str = CLICK,
    ) -> None:
        self._selection = selection
        self._chart = offline_chart_class()(None, embed_options=_EMBED_OPTIONS)
        self._placeholder = widgets.HTML(placeholder)
        self.widget = widgets.Box([self._placeholder])
        self.widget.add_class(css_class)
        self._on_click = on_click
        if on_click is not None:
            self._chart.observe(self._clicked, names="_vl_selections")

    def show(self, chart: alt.TopLevelMixin | None) -> None:
        """Display ``chart`` (or the placeholder for None)."""
        if chart is None:
            self.widget.children = [self._placeholder]
            return
        with self._chart.hold_sync():
            self._chart.chart = chart
            # A pane can hold this very chart with no specification, when drawing it was cut
            # short (seen in JupyterLab when a click and a tab switch cross): build it again.
            spec = self._chart.spec if self._chart.spec is not None else chart.to_dict()
            # "$schema" is only a version tag, never fetched; leave it out so the page holds
            # no outside address at all.
            self._chart.spec = {k: v for k, v in spec.items() if k != "$schema"}
        if self.widget.children != (self._chart,):
            self.widget.children = [self._chart]

    @property
    def spec(self) -> dict | None:
        """The Vega-Lite specification currently sent to the page."""
        return self._chart.spec

    def _clicked(self, change: dict) -> None:
        selection = change["new"].get(self._selection)
        if not selection:
            return
        points = PointSelection.from_vega(self._selection, selection["value"],
                                          selection["store"]).value
        # A new chart starts with an empty selection: that is not a click.
        if points:
            self._on_click(points[0])
