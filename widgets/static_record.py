"""A static record of the explorer's state: plain HTML that needs no kernel and no network.

A saved notebook keeps widget outputs only as references to a running kernel, so a reader of a
saved copy (a static viewer, an HTML export) sees nothing where the explorer was. The explorer
therefore writes, beside its widget, a plain HTML record of the current coding steps, table,
measures and heatmap (inline SVG drawn offline by vl-convert), and replaces it after every change
(an IPython display with a ``display_id``). A live front end hides that record while the
explorer itself is on screen in the same cell; static viewers show it. :func:`snapshot_html`
gives the same content as a frozen copy that stays visible.
"""

from __future__ import annotations

import asyncio
import re
import uuid
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import pandas as pd

from rankfold import OrdinalTable

from . import formatting
from .export import static_spec
from .heatmap import rendered_heatmap
from .measures_panel import measures_html

if TYPE_CHECKING:
    import altair as alt

    from .render import Rendered

__all__ = ["chart_svg", "counts_html", "steps_html", "record_html", "snapshot_html",
           "SavedRecord", "RECORD_STYLE"]

#: Styling of records and reports (plain CSS, no external resource).
RECORD_STYLE = """<style>
.rankfold-record table { border-collapse: collapse; font-variant-numeric: tabular-nums;
  margin: 4px 0; }
.rankfold-record th, .rankfold-record td { padding: 2px 8px; text-align: right;
  border-bottom: 1px solid rgba(128, 128, 128, 0.35); }
.rankfold-record td { white-space: nowrap; }
.rankfold-record th[scope=row], .rankfold-record td.rankfold-note,
.rankfold-record thead th:first-child { text-align: left; }
.rankfold-record th[scope=row] { font-weight: normal; }
.rankfold-record td.rankfold-note { font-size: 90%; max-width: 30em; white-space: normal; }
.rankfold-record .rankfold-warning { padding: 4px 8px; margin: 6px 0;
  border-left: 4px solid #d08a00; }
.rankfold-record .rankfold-formula { font-family: ui-monospace, monospace; }
.jp-OutputArea:has(.rankfold-explorer) .jp-OutputArea-child:has(.rankfold-saved-record),
.jp-OutputArea:has(.rankfold-explorer) .rankfold-saved-record { display: none; }
</style>"""

_NAMESPACES = re.compile(r'\s+xmlns(:\w+)?="[^"]*"')


def chart_svg(chart: alt.TopLevelMixin | dict) -> str:
    """An Altair chart as an inline ``<svg>`` element, drawn offline with vl-convert.

    Parameters
    ----------
    chart : altair chart or dict
        Any chart or Vega-Lite dictionary (the explorer's heatmap, for instance).

    Returns
    -------
    str
        The ``<svg>`` element without its ``xmlns`` attributes: an SVG element inside an HTML
        page belongs to the SVG namespace by the HTML parsing rules (WHATWG HTML, "foreign
        elements"), and dropping the namespace strings keeps the page free of any ``http://``
        text. Only for embedding in HTML, not for a stand-alone ``.svg`` file. A drawn copy
        cannot be clicked, so title phrases that ask for a click are left out
        (:func:`~rankfold.widgets.export.static_spec`).
    """
    import vl_convert

    svg = vl_convert.vegalite_to_svg(static_spec(chart))
    start = svg.index("<svg")
    head_end = svg.index(">", start)
    return _NAMESPACES.sub("", svg[start:head_end]) + svg[head_end:]


def steps_html(table: OrdinalTable) -> str:
    """The table's coding steps as an ordered list.

    Parameters
    ----------
    table : OrdinalTable
        Any table; all of its :attr:`~rankfold.OrdinalTable.steps` are listed, oldest first.

    Returns
    -------
    str
        An ``ol.rankfold-record-steps`` with one ``describe()`` line per step, or a sentence
        saying there is none.
    """
    if not table.steps:
        return "<p>No coding steps: the categories as counted.</p>"
    items = "".join(f"<li>{formatting.text(step.describe())}</li>" for step in table.steps)
    return f'<ol class="rankfold-record-steps">{items}</ol>'


def counts_html(table: OrdinalTable) -> str:
    """The table of counts with row and column totals.

    Parameters
    ----------
    table : OrdinalTable
        Any table; a control variable is pooled over (:attr:`~rankfold.OrdinalTable.counts`).

    Returns
    -------
    str
        A ``table.rankfold-record-counts``; counts written by
        :func:`rankfold.widgets.formatting.amount`.
    """
    counts = table.counts
    head = "".join(f'<th scope="col">{formatting.text(c)}</th>' for c in counts.columns)
    rows = []
    for label, values in counts.iterrows():
        cells = "".join(f"<td>{formatting.amount(v)}</td>" for v in values)
        rows.append(f'<tr><th scope="row">{formatting.text(label)}</th>{cells}'
                    f"<td>{formatting.amount(values.sum())}</td></tr>")
    totals = "".join(f"<td>{formatting.amount(v)}</td>" for v in counts.sum(axis=0))
    corner = f"{formatting.text(table.row_name)} \\ {formatting.text(table.col_name)}"
    return (
        f'<table class="rankfold-record-counts"><thead><tr><th>{corner}</th>{head}'
        f"<th>total</th></tr></thead><tbody>{''.join(rows)}"
        f'<tr><th scope="row">total</th>{totals}<td>{formatting.amount(table.n)}</td></tr>'
        "</tbody></table>"
    )


def record_html(
    table: OrdinalTable,
    measures: pd.DataFrame,
    tests: pd.DataFrame,
    warnings: Sequence[str],
    left_out: float,
    chart: alt.TopLevelMixin | dict | None,
    heading: str,
    css_class: str = "rankfold-record",
) -> str:
    """Coding steps, table, measures with intervals and the chart as one static HTML block.

    Parameters
    ----------
    table, measures, tests, warnings, left_out
        As in :func:`rankfold.widgets.measures_panel.measures_html`.
    chart : altair chart, Vega-Lite dict or None
        Drawn as inline SVG by :func:`chart_svg`; if it cannot be drawn the record says why.
    heading : str
        The record's heading.
    css_class : str
        Extra class of the outer ``div`` (the saved record uses ``rankfold-saved-record``).

    Returns
    -------
    str
        A ``div`` with class ``rankfold-record`` that needs no script and no network.
    """
    figure = ""
    if chart is not None:
        try:
            figure = f'<div class="rankfold-record-chart">{chart_svg(chart)}</div>'
        except Exception as err:  # noqa: BLE001 - a record without its chart beats no record
            figure = f"<p>(The chart could not be drawn here: {formatting.text(err)})</p>"
    classes = " ".join(dict.fromkeys(["rankfold-record", css_class]))
    return (
        f'{RECORD_STYLE}<div class="{classes}"><h3>{formatting.text(heading)}</h3>'
        f"<h4>Coding steps</h4>{steps_html(table)}<h4>Table</h4>{counts_html(table)}"
        f"<h4>Measures</h4>"
        f"{measures_html(table, measures, tests, warnings, left_out)}{figure}</div>"
    )


def _rendered_record(rendered: Rendered, heading: str, css_class: str) -> str:
    return record_html(rendered.table, rendered.measures, rendered.tests,
                       rendered.diagnostics.warnings, rendered.left_out,
                       rendered_heatmap(rendered), heading, css_class)


def snapshot_html(rendered: Rendered) -> str:
    """A frozen copy of the explorer's current state ("here is where we stopped").

    Parameters
    ----------
    rendered : Rendered
        The explorer's current rendering.

    Returns
    -------
    str
        :func:`record_html` with class ``rankfold-snapshot`` (shown by live front ends too).
    """
    t = rendered.table
    heading = (f"Snapshot: {t.row_name} by {t.col_name}, "
               f"{len(t.steps) - len(rendered.collected.steps)} coding steps since counting")
    return _rendered_record(rendered, heading, "rankfold-snapshot")


def _from_widget_message() -> bool:
    """True while the kernel handles a message from a widget (a click), not a cell."""
    try:
        from IPython import get_ipython

        parent = get_ipython().kernel.get_parent()
    except Exception:  # noqa: BLE001 - outside a kernel: treat as a cell
        return False
    return (parent or {}).get("header", {}).get("msg_type") == "comm_msg"


class SavedRecord:
    """The explorer's static record in the notebook, replaced after every change.

    :meth:`display` shows the widget and the record (as two outputs of the cell);
    :meth:`follow` replaces every displayed copy of the record with the new state. Drawing the
    record costs about 0.4 s (mostly the SVG), so nothing is drawn until the explorer has been
    displayed, and after a click the record is redrawn once the clicks pause for
    :attr:`delay` seconds (a change made by a cell is written at once, so the cell's saved
    output is complete when it finishes).
    """

    delay = 1.0

    def __init__(self) -> None:
        self.display_id = f"rankfold-record-{uuid.uuid4().hex}"
        self.shown = False
        self._pending: Rendered | None = None
        self._scheduled = False

    @staticmethod
    def _bundle(rendered: Rendered) -> dict[str, Any]:
        t = rendered.table
        heading = f"Explorer: {t.row_name} by {t.col_name} (saved record of the last state)"
        return {
            "text/html": _rendered_record(rendered, heading, "rankfold-saved-record"),
            "text/plain": f"rankfold explorer record: {t.row_name} by {t.col_name}, n = {t.n}",
        }

    def display(self, widget_bundle: dict[str, Any], rendered: Rendered) -> None:
        """Show the widget (its own mime bundle), then the record with this record's id."""
        from IPython.display import display

        display(widget_bundle, raw=True)
        display(self._bundle(rendered), raw=True, display_id=self.display_id)
        self.shown = True

    def follow(self, rendered: Rendered) -> None:
        """Replace the displayed record by one of ``rendered`` (nothing before the first
        display)."""
        if not self.shown:
            return
        self._pending = rendered
        if _from_widget_message():
            try:
                loop = asyncio.get_running_loop()
            except RuntimeError:
                loop = None
            if loop is not None:
                if not self._scheduled:
                    self._scheduled = True
                    loop.call_later(self.delay, self._flush)
                return
        self._flush()

    def _flush(self) -> None:
        from IPython.display import update_display

        self._scheduled = False
        rendered, self._pending = self._pending, None
        if rendered is None:
            return
        try:
            update_display(self._bundle(rendered), raw=True, display_id=self.display_id)
        except Exception:  # noqa: BLE001 - the record must never break the explorer
            self._pending = None
