"""One place on screen that shows Altair charts offline and reports clicks on them.

Altair 6 emits Vega-Lite 6, which JupyterLab 4's built-in renderer does not know, and a plainly
displayed chart would fetch Vega from the internet. :class:`altair.JupyterChart` in offline
mode bundles Vega through vl-convert, so charts render with no network at all; the bundle is
made once per version and kept on disk (:mod:`rankfold.widgets.offline_script`).

Checking a specification against the Vega-Lite schema costs more than building it, so
:func:`specification` checks each chart *shape* once per process (:func:`chart_shape`: the
specification with its free text, labels and numbers left out) and later charts of that shape
are only serialised. The pane hands the specification to the page itself instead of giving
the chart object to :class:`altair.JupyterChart`, which would check it in full every time.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Hashable, Sequence
from contextlib import AbstractContextManager
from typing import Any

import altair as alt
import ipywidgets as widgets
from altair.jupyter.jupyter_chart import Selections
from altair.utils.schemapi import debug_mode
from altair.utils.selection import IndexSelection, IntervalSelection, PointSelection

from .offline_script import offline_chart_class

__all__ = ["ChartPane", "CLICK", "SCHEMA", "building", "inline_data", "inline_values",
           "click_on", "specification", "chart_shape", "as_altair"]

#: Name of the point selection a clickable chart declares; its fields identify the cell.
CLICK = "cell"
#: The Vega-Lite version tag of specifications written as dictionaries (Altair's own).
SCHEMA = alt.SCHEMA_URL

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


def inline_values(records: Sequence[dict[str, Any]]) -> dict:
    """Chart data written into the specification as one JSON text (a Vega-Lite ``data``).

    Vega-Lite accepts inline values as text with a format; checking the specification then
    treats the data as one string instead of checking every record, which keeps redrawing fast.

    Parameters
    ----------
    records : sequence of dict
        One dict of JSON values per datum.

    Returns
    -------
    dict
        ``{"values": <JSON text>, "format": {"type": "json"}}``.
    """
    return {"values": json.dumps(list(records)), "format": {"type": "json"}}


def inline_data(records: Sequence[dict[str, Any]]) -> alt.Data:
    """:func:`inline_values` as an Altair ``Data`` object, for charts built with Altair."""
    return alt.Data(**inline_values(records))


def click_on(views: Sequence[str], fields: Sequence[str] = ("row_position", "col_position"),
             name: str = CLICK) -> dict:
    """A point selection set by a click on a mark of the named views (layers), as a
    Vega-Lite top-level parameter.

    Parameters
    ----------
    views : sequence of str
        The ``name`` of each layer whose marks can be clicked.
    fields : sequence of str
        The data fields a click selects (by default a cell's positions).
    name : str
        The selection's name (:data:`CLICK`).

    Returns
    -------
    dict
        ``{"name": ..., "select": {"type": "point", "fields": [...], "on": "click"},
        "views": [...]}``, what Altair writes for ``alt.selection_point`` added to a layer.
    """
    return {"name": name, "select": {"type": "point", "fields": list(fields), "on": "click"},
            "views": list(views)}


def as_altair(spec: dict) -> alt.TopLevelMixin:
    """An Altair chart holding a Vega-Lite specification written as a dictionary.

    Parameters
    ----------
    spec : dict
        A top-level specification (layered, concatenated or a single view).

    Returns
    -------
    altair.TopLevelMixin
        The matching chart class (``LayerChart``, ``ConcatChart``, ``VConcatChart``,
        ``HConcatChart`` or ``Chart``), checked against the schema as it is read; restyle,
        save or display it as any Altair chart.
    """
    kinds = {"layer": alt.LayerChart, "concat": alt.ConcatChart, "vconcat": alt.VConcatChart,
             "hconcat": alt.HConcatChart}
    kind = next((cls for key, cls in kinds.items() if key in spec), alt.Chart)
    return kind.from_dict(spec)


#: Keys whose values never change which part of the schema applies: text shown to the reader,
#: category labels (sort orders), inline data, filter expressions, scale domains, view names.
#: Only the kind of such a value (text, list, ...) enters a chart's shape, unless it is an
#: object, whose own keys are then followed.
_FREE = frozenset({"values", "text", "title", "subtitle", "sort", "filter", "domain", "name",
                   "views", "datum"})
#: Chart shapes whose specification has passed the full schema check in this process.
_CHECKED: set[Hashable] = set()
_MOST_SHAPES = 4096  # forget them all beyond this (a long session of odd charts)


def chart_shape(spec: Any, free: bool = False) -> Hashable:
    """What of a Vega-Lite specification decides whether it passes the schema check.

    Parameters
    ----------
    spec : dict, list or a JSON value
        A specification or part of one.
    free : bool
        Whether ``spec`` is the value of a key in :data:`_FREE`.

    Returns
    -------
    hashable
        Objects keep their keys and lists their length, recursively; numbers, booleans and
        null become their type; text is kept, except under the keys of :data:`_FREE` (titles,
        labels, data, expressions, domains, names), where only its type is kept. Two
        specifications of one shape differ only in values the schema checks by type, so one
        check covers both.
    """
    if isinstance(spec, dict):
        return ("{", tuple((k, chart_shape(v, k in _FREE)) for k, v in spec.items()))
    if free:
        return type(spec).__name__
    if isinstance(spec, list):
        return ("[", tuple(chart_shape(v) for v in spec))
    return spec if isinstance(spec, str) else type(spec).__name__


def specification(chart: alt.TopLevelMixin | dict) -> dict:
    """The chart's Vega-Lite specification, checked against the schema once per shape.

    Parameters
    ----------
    chart : altair chart or dict
        Any top-level chart, or a specification written as a dictionary.

    Returns
    -------
    dict
        ``chart.to_dict()`` (a dictionary is returned as it is). The first chart of each
        :func:`chart_shape` in the process is checked in full (an invalid one raises
        ``jsonschema.ValidationError``); later ones of that shape are serialised without the
        check, which gives the same dictionary.
    """
    spec = chart if isinstance(chart, dict) else chart.to_dict(validate=False)
    shape = chart_shape(spec)
    if shape not in _CHECKED:
        alt.Root.validate(spec)
        if len(_CHECKED) >= _MOST_SHAPES:
            _CHECKED.clear()
        _CHECKED.add(shape)
    return spec


_SELECTIONS = {"point": PointSelection, "interval": IntervalSelection, "index": IndexSelection}


def _selection_kinds(spec: dict) -> dict[str, str]:
    """The kind of each selection the specification declares at its top (where Altair puts
    them), as :class:`altair.JupyterChart` records them for the page's replies."""
    kinds = {}
    for param in spec.get("params", []):
        select = param.get("select")
        if select is None:
            continue
        select = {"type": select} if isinstance(select, str) else select
        kind = select["type"]
        if kind == "point" and not (select.get("fields") or select.get("encodings")):
            kind = "index"
        kinds[param["name"]] = kind
    return kinds


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

    def show(self, chart: alt.TopLevelMixin | dict | None) -> None:
        """Display ``chart``, an Altair chart or a Vega-Lite dictionary (or the placeholder
        for None)."""
        if chart is None:
            self.widget.children = [self._placeholder]
            return
        spec = specification(chart)
        kinds = _selection_kinds(spec)
        page = self._chart
        with page.hold_sync():
            # What altair.JupyterChart does with a new chart, from the specification made
            # above: the page's selections start empty, and replies are read by their kind.
            page.selections = Selections({name: _SELECTIONS[kind](name=name, value=[], store=[])
                                          for name, kind in kinds.items()})
            page._selection_types = kinds
            page._vl_selections = {name: {"value": None, "store": []} for name in kinds}
            # "$schema" is only a version tag, never fetched; leave it out so the page holds
            # no outside address at all.
            page.spec = {k: v for k, v in spec.items() if k != "$schema"}
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
