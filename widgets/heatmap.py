"""The heatmap of the current table: cells coloured by a chosen quantity, values printed.

The heatmap is redrawn after every change, so its Vega-Lite specification is written here as a
plain dictionary (building it through Altair's objects costs more than the whole change is
allowed to); :func:`~rankfold.widgets.chart_pane.specification` checks it against the schema.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING

import ipywidgets as widgets
import numpy as np
import pandas as pd

from . import formatting
from .chart_pane import SCHEMA, ChartPane, click_on, inline_values
from .state import COLOUR_CHOICES

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["heatmap_spec", "rendered_heatmap", "HeatmapSection", "grid_axes", "cell_width",
           "numbers_layer", "TOTAL"]

TOTAL = "total"
CELL_WIDTH = 78  # the widest a cell gets
MIN_CELL_WIDTH = 40  # room for "12,345" in the cells' font
CELL_HEIGHT = 34
#: Width (px) the cells of a heatmap may take together: what the explorer's tabs leave for the
#: cells beside the row labels in a 1280-px window with JupyterLab's file browser open.
GRID_BUDGET = 440
_LABEL_LIMIT = 120  # longest row label drawn (px); longer ones end in "…"
_DIVERGING = {"adjusted_residual", "pair_contribution"}
_TOTAL_INK = "#595959"  # the totals' text (no cell behind them)
#: Text colours of the charts' numbers: white on dark cells, near-black on light, grey totals.
INKS = ("#ffffff", "#1a1a1a", _TOTAL_INK)


def _cell_text(value: float, colour_by: str) -> str:
    if value is None or math.isnan(value):
        return formatting.DASH
    if colour_by in ("row_percent", "col_percent"):
        return f"{value:.1f}%"
    if colour_by == "adjusted_residual":
        return f"{value:+.1f}"
    if colour_by == "pair_contribution":
        return formatting.signed_amount(value)
    return formatting.amount(value)


def _margin_label(labels: Sequence[str]) -> str:
    """The label of the totals row/column, distinct from every category label."""
    label = TOTAL
    while label in labels:
        label = f"({label})"
    return label


def cell_width(columns: int) -> int:
    """Width of a heatmap cell for ``columns`` columns (totals included): cells shrink from
    :data:`CELL_WIDTH` to :data:`MIN_CELL_WIDTH` so that the grid fits :data:`GRID_BUDGET`."""
    return int(max(MIN_CELL_WIDTH, min(CELL_WIDTH, GRID_BUDGET // max(columns, 1))))


def grid_axes(
    row_labels: Sequence, col_labels: Sequence, row_name: str, col_name: str, margins: bool
) -> tuple[dict, dict]:
    """Nominal x and y channels that keep the categories in their order.

    Parameters
    ----------
    row_labels, col_labels : sequence
        Category labels in order (shown as text).
    row_name, col_name : str
        Axis titles.
    margins : bool
        Whether a totals row and column follow the categories.

    Returns
    -------
    (dict, dict)
        Vega-Lite ``x`` and ``y`` channels on the fields ``col`` and ``row``.
    """
    rows = [str(x) for x in row_labels]
    cols = [str(x) for x in col_labels]
    if margins:
        rows.append(_margin_label(rows))
        cols.append(_margin_label(cols))
    # labels wider than a cell (about 6 px a character) are turned so they do not overlap
    fits = max(map(len, cols), default=0) * 6 <= cell_width(len(cols)) - 4
    x = {"field": "col", "type": "nominal", "sort": cols, "title": col_name,
         "axis": {"orient": "top", "labelAngle": 0 if fits else -40, "labelLimit": 110,
                  "labelAlign": "center" if fits else "left"}}
    y = {"field": "row", "type": "nominal", "sort": rows, "title": row_name,
         "axis": {"labelLimit": _LABEL_LIMIT}}
    return x, y


def numbers_layer(x: dict, y: dict, field: str) -> dict:
    """The layer that prints each cell's text, in the colour named in its datum's ``ink``.

    The text is painted through ``fill``, a channel of its own: a second scale on ``color``
    would be merged with the cells' one (Vega-Lite shares a channel's scale across layers) and
    paint the numbers in the cells' colours.

    Parameters
    ----------
    x, y : dict
        The grid's channels (:func:`grid_axes`).
    field : str
        The data field holding the text.

    Returns
    -------
    dict
        A Vega-Lite text layer; its inks are :data:`INKS`.
    """
    return {"mark": {"type": "text", "fontSize": 11}, "encoding": {
        "x": x, "y": y, "text": {"field": field, "type": "nominal"},
        "fill": {"field": "ink", "type": "nominal", "legend": None,
                 "scale": {"domain": list(INKS), "range": list(INKS)}}}}


def heatmap_spec(
    figures: pd.DataFrame,
    colour_by: str,
    row_name: str,
    col_name: str,
    chosen: tuple[int, int] | None = None,
    scale_max: float | None = None,
    weight: str | None = None,
    view: str = "cells",
) -> dict:
    """Heatmap of a table with the value printed in each cell and marginal totals.

    Parameters
    ----------
    figures : pandas.DataFrame
        Output of :func:`rankfold.cell_figures` for the table.
    colour_by : str
        A key of :data:`rankfold.widgets.state.COLOUR_CHOICES`. Adjusted residuals and pair
        contributions use a diverging scale centred at 0.
    row_name, col_name : str
        Variable names (axis titles).
    chosen : (int, int), optional
        Positions of a cell to outline (the one the pair view explains).
    scale_max : float, optional
        Largest absolute value the colour scale must reach; give the same value to several
        charts (one per level of the control variable) so that they share one colour scale.
    weight : str, optional
        The weight column, named in the subtitle: the cells then hold sums of weights.
    view : str
        Name of the layer of cells, which the click selection refers to (distinct names
        when several heatmaps share a page, see
        :func:`~rankfold.widgets.within_levels_view.level_heatmaps`).

    Returns
    -------
    dict
        A layered Vega-Lite specification (wrap it with
        :func:`~rankfold.widgets.chart_pane.as_altair` for an Altair chart). Clicking a cell
        sets the point selection ``"cell"`` to its positions.
    """
    if colour_by not in COLOUR_CHOICES:
        raise ValueError(f"colour_by must be one of {list(COLOUR_CHOICES)}; got {colour_by!r}.")
    rows = [str(r) for r in figures["row"].tolist()]
    cols = [str(c) for c in figures["col"].tolist()]
    row_labels, col_labels = list(dict.fromkeys(rows)), list(dict.fromkeys(cols))
    row_positions = figures["row_position"].to_numpy()
    col_positions = figures["col_position"].to_numpy()
    x, y = grid_axes(row_labels, col_labels, row_name, col_name, margins=True)
    totals_col = _margin_label(col_labels)
    totals_row = _margin_label(row_labels)
    values = figures[colour_by].to_numpy(dtype=float)
    finite = ~np.isnan(values)
    largest = float(np.abs(values[finite]).max()) if finite.any() else 0.0
    if scale_max is not None:
        largest = max(largest, float(scale_max))
    if colour_by == "adjusted_residual":
        largest = max(largest, 2.0)  # keep +/-2 (the usual reference) inside the scale
    largest = largest or 1.0
    cells = [
        {"row": r, "col": c, "row_position": int(i), "col_position": int(j),
         "value": float(v) if ok else None, "label": _cell_text(v, colour_by),
         "ink": "#ffffff" if ok and abs(v) / largest > 0.6 else "#1a1a1a"}
        for r, c, i, j, v, ok in zip(rows, cols, row_positions.tolist(), col_positions.tolist(),
                                     values.tolist(), finite.tolist(), strict=True)
    ]
    row_totals, col_totals = np.zeros(len(row_labels)), np.zeros(len(col_labels))
    row_totals[row_positions] = figures["row_total"].to_numpy(dtype=float)
    col_totals[col_positions] = figures["col_total"].to_numpy(dtype=float)
    margins = [(r, totals_col, t) for r, t in zip(row_labels, row_totals.tolist(), strict=True)]
    margins += [(totals_row, c, t) for c, t in zip(col_labels, col_totals.tolist(), strict=True)]
    margins.append((totals_row, totals_col, float(row_totals.sum())))
    cells += [{"row": r, "col": c, "label": formatting.amount(t), "ink": _TOTAL_INK}
              for r, c, t in margins]
    if colour_by in _DIVERGING:
        scale = {"domain": [-largest, largest], "domainMid": 0, "scheme": "blueorange"}
    else:
        scale = {"domain": [0, largest], "scheme": "blues"}
    # Swatches, not a gradient: every chart on a page numbers its SVG gradients from 0, so
    # with two charts one legend would paint the other's gradient (or none, if hidden).
    legend = {"direction": "horizontal", "orient": "bottom", "symbolSize": 160,
              "symbolStrokeWidth": 0, "symbolType": "square", "type": "symbol"}
    rect = {
        "mark": {"type": "rect", "cursor": "pointer", "stroke": "#ffffff", "strokeWidth": 1},
        "encoding": {"x": x, "y": y, "color": {
            "field": "value", "type": "quantitative", "scale": scale,
            "title": COLOUR_CHOICES[colour_by], "legend": legend}},
        "name": view,
        "transform": [{"filter": f"datum.ink != '{_TOTAL_INK}'"}],
    }
    layers = [rect, numbers_layer(x, y, "label")]
    if chosen is not None:
        layers.append({
            "mark": {"type": "rect", "fill": None, "stroke": "#111111", "strokeWidth": 3},
            "encoding": {"x": x, "y": y},
            "transform": [{"filter": f"datum.row_position == {int(chosen[0])} && "
                                     f"datum.col_position == {int(chosen[1])}"}],
        })
    return {
        "$schema": SCHEMA,
        "background": "#ffffff",
        "data": inline_values(cells),
        "layer": layers,
        "params": [click_on([view])],
        "width": {"step": cell_width(len(col_labels) + 1)},
        "height": {"step": CELL_HEIGHT},
        "title": {"text": f"{row_name} by {col_name}: {COLOUR_CHOICES[colour_by]}",
                  "subtitle": (f"sums of the weight {weight}; " if weight else "")
                  + "totals in grey; click a cell to see its pairs"},
    }


def rendered_heatmap(rendered: Rendered) -> dict:
    """The explorer's heatmap of a rendered state: :func:`heatmap_spec` of its table in the
    state's colouring, with the chosen cell (if it is still a cell of the table) outlined.

    Parameters
    ----------
    rendered : Rendered
        See :class:`rankfold.widgets.render.Rendered`.

    Returns
    -------
    dict
        A Vega-Lite specification.
    """
    regions, table = rendered.regions, rendered.table
    chosen = None if regions is None else (regions.row, regions.col)
    return heatmap_spec(rendered.figures, rendered.state.colour_by, table.row_name,
                         table.col_name, chosen, weight=table.weight)


#: A plain explanation of each colouring, shown as its button's tooltip.
COLOUR_HELP = {
    "count": "How many units fall in each cell",
    "row_percent": "Each cell as a share of its row: compare the rows' profiles",
    "col_percent": "Each cell as a share of its column: compare the columns' profiles",
    "adjusted_residual": "How far each count is from what no association would give, in "
                         "standard units: beyond ±2 is unusual",
    "pair_contribution": "How much each cell pushes the association up or down: the pairs "
                         "its units form that agree in order minus those that disagree",
}


class HeatmapSection:
    """The heatmap with its colour choice; a click on a cell chooses it for the pair view.

    Parameters
    ----------
    propose : callable
        Takes a function from state to new state (the explorer's only entry point).
    notify : callable
        Shows a message in the explorer (unused here; part of every section's signature).
    """

    title = "Heatmap"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._propose = propose
        self._colour = widgets.ToggleButtons(
            options=[(name, key) for key, name in COLOUR_CHOICES.items()],
            description="colour by",
            style={"button_width": "auto"},
            tooltips=[COLOUR_HELP[key] for key in COLOUR_CHOICES],
            tooltip="What the cells' colours show",
        )
        self._colour.add_class("rankfold-colour-by")
        self._colour.observe(self._colour_changed, names="value")
        self._pane = ChartPane("rankfold-heatmap", on_click=self._clicked)
        self._rendered = None
        self.widget = widgets.VBox([self._colour, self._pane.widget])

    def show(self, rendered: Rendered) -> None:
        """Display the rendered state (see :class:`rankfold.widgets.render.Rendered`)."""
        self._rendered = rendered
        self._colour.value = rendered.state.colour_by
        self._pane.show(rendered_heatmap(rendered))

    def _colour_changed(self, change: dict) -> None:
        self._propose(lambda state: state.with_view(colour_by=change["new"]))

    def _clicked(self, point: dict) -> None:
        cell = self._rendered.cell_labels(point)
        self._propose(lambda state: state.with_view(chosen_cell=cell))

