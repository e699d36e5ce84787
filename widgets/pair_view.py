"""The pair view: for one chosen cell, which cells are concordant, discordant or tied with it.

Redrawn after every change while its tab shows, so its Vega-Lite specification is written as a
plain dictionary, like the heatmap's.
"""

from __future__ import annotations

from collections.abc import Callable, Hashable
from typing import TYPE_CHECKING

import ipywidgets as widgets
import pandas as pd

from rankfold import PairRegions
from rankfold.pair_regions import REGIONS

from . import formatting
from .chart_pane import SCHEMA, ChartPane, click_on, inline_values
from .heatmap import CELL_HEIGHT, cell_width, grid_axes, numbers_layer
from .pickers import labelled

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["pair_spec", "rendered_pairs", "pair_table_html", "PairSection", "ink_for",
           "relative_luminance"]

# The chart legend: concordant, discordant, tied (any tie), and the chosen cell itself.
_SHOWN = {key: kind.split()[0] for key, kind in REGIONS.items()} | {"same_cell": "chosen cell"}
_COLOURS = {"concordant": "#3a78b5", "discordant": "#e07b27", "tied": "#d4d4d4",
            "chosen cell": "#2b2b2b"}
_WHERE = {
    "above_left": "lower on both variables",
    "below_right": "higher on both variables",
    "above_right": "lower on {row}, higher on {col}",
    "below_left": "higher on {row}, lower on {col}",
    "same_row": "same {row} category, other {col} category",
    "same_col": "same {col} category, other {row} category",
    "same_cell": "the chosen cell itself",
}


def relative_luminance(colour: str) -> float:
    """Relative luminance of a ``#rrggbb`` colour, from 0 (black) to 1 (white).

    Parameters
    ----------
    colour : str
        A hex colour such as ``"#3a78b5"``.

    Returns
    -------
    float
        ``0.2126 R + 0.7152 G + 0.0722 B`` of the linearised sRGB channels (W3C, Web Content
        Accessibility Guidelines 2.1, definition of relative luminance).
    """
    channels = [int(colour[k:k + 2], 16) / 255 for k in (1, 3, 5)]
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def ink_for(colour: str) -> str:
    """Text colour readable on a cell of ``colour``: white on dark cells, near-black on light.

    Parameters
    ----------
    colour : str
        The cell's ``#rrggbb`` colour.

    Returns
    -------
    str
        ``"#ffffff"`` or ``"#1a1a1a"``, whichever has the larger contrast ratio
        ``(L1 + 0.05) / (L2 + 0.05)`` with the cell (WCAG 2.1).
    """
    cell = relative_luminance(colour)
    on_white = 1.05 / (cell + 0.05)
    on_dark = (cell + 0.05) / (relative_luminance("#1a1a1a") + 0.05)
    return "#ffffff" if on_white >= on_dark else "#1a1a1a"


def pair_spec(
    figures: pd.DataFrame, regions: PairRegions, row_name: str, col_name: str
) -> dict:
    """The table's cells coloured by the kind of pair they form with the chosen cell.

    Parameters
    ----------
    figures : pandas.DataFrame
        Output of :func:`rankfold.cell_figures` (labels, positions and counts).
    regions : PairRegions
        Output of :func:`rankfold.pair_regions` for the chosen cell.
    row_name, col_name : str
        Variable names.

    Returns
    -------
    dict
        A layered Vega-Lite specification (:func:`~rankfold.widgets.chart_pane.as_altair`
        wraps it as an Altair chart). Clicking a cell sets the point selection ``"cell"`` to
        its positions.
    """
    x, y = grid_axes(list(dict.fromkeys(figures["row"])), list(dict.fromkeys(figures["col"])),
                     row_name, col_name, margins=False)
    cells = [
        {"row": str(r.row), "col": str(r.col), "row_position": int(r.row_position),
         "col_position": int(r.col_position), "count": formatting.amount(r.count),
         "kind": _SHOWN[regions.cell_region[r.row_position, r.col_position]]}
        for r in figures.itertuples(index=False)
    ]
    for cell in cells:
        cell["ink"] = ink_for(_COLOURS[cell["kind"]])
    chosen = cells[regions.row * len(dict.fromkeys(figures["col"])) + regions.col]
    kinds = list(_COLOURS)
    rect = {
        "mark": {"type": "rect", "cursor": "pointer", "stroke": "#ffffff", "strokeWidth": 1},
        "encoding": {"x": x, "y": y, "color": {
            "field": "kind", "type": "nominal", "title": "pair with the chosen cell",
            "scale": {"domain": kinds, "range": [_COLOURS[k] for k in kinds]},
            "legend": {"orient": "bottom"}}},
        "name": "cells",
    }
    return {
        "$schema": SCHEMA,
        "background": "#ffffff",
        "data": inline_values(cells),
        "layer": [rect, numbers_layer(x, y, "count")],
        "params": [click_on(["cells"])],
        "width": {"step": cell_width(len(dict.fromkeys(figures["col"])))},
        "height": {"step": CELL_HEIGHT},
        "title": {"text": f"Pairs with a unit in ({chosen['row']}, {chosen['col']})",
                  "subtitle": "numbers are units per cell; click another cell to move"},
    }


def pair_table_html(
    regions: PairRegions, cell: tuple[Hashable, Hashable], row_name: str, col_name: str
) -> str:
    """An HTML table of each region's units and the pairs they form with the chosen cell.

    Parameters
    ----------
    regions : PairRegions
        Output of :func:`rankfold.pair_regions`.
    cell : (row label, column label)
        The chosen cell, for the heading.
    row_name, col_name : str
        Variable names.

    Returns
    -------
    str
        HTML whose table has class ``rankfold-pair-table``; each row carries
        ``data-region`` (the region key) and the pair count in ``data-pairs``.
    """
    names = {"row": formatting.text(row_name), "col": formatting.text(col_name)}
    body = []
    for key, record in regions.summary.iterrows():
        body.append(
            f'<tr data-region="{key}" data-pairs="{record.pairs:g}">'
            f"<td>{formatting.text(record.kind)}</td><td>{_WHERE[key].format(**names)}</td>"
            f"<td>{formatting.amount(record.units)}</td>"
            f"<td>{formatting.amount(record.pairs)}</td></tr>"
        )
    row_label, col_label = (formatting.text(x) for x in cell)
    return (
        f"<p>Each unit in <b>({row_label}, {col_label})</b> is paired with every other unit. "
        f"With units above-left or below-right the pair is <b>concordant</b>; above-right or "
        f"below-left, <b>discordant</b>; in the same row or column it is tied and counts for "
        f"neither in gamma. This cell adds {formatting.amount(regions.concordant)} concordant "
        f"and {formatting.amount(regions.discordant)} discordant pairs.</p>"
        '<table class="rankfold-pair-table"><thead><tr><th>pair</th><th>other unit is</th>'
        "<th>units</th><th>pairs</th></tr></thead><tbody>" + "".join(body) + "</tbody></table>"
    )


def rendered_pairs(rendered: Rendered) -> dict | None:
    """The explorer's pair view of ``rendered`` (the numbers of one state, a
    :class:`~rankfold.widgets.render.Rendered`): the Vega-Lite dictionary of :func:`pair_spec`
    around the state's chosen cell, or None while no cell of its table is chosen."""
    if rendered.regions is None:
        return None
    table = rendered.table
    return pair_spec(rendered.figures, rendered.regions, table.row_name, table.col_name)


class PairSection:
    """Chooses a cell (from a list or by clicking either chart) and explains its pairs.

    Parameters
    ----------
    propose : callable
        Takes a function from state to new state.
    notify : callable
        Shows a message in the explorer (unused here).
    """

    title = "Pairs"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._propose = propose
        self._rendered = None
        self._cell = widgets.Dropdown(
            description="cell", options=[("(choose a cell)", None)],
            tooltip="The cell whose pairs are shown (or click a cell in either chart)")
        self._cell.add_class("rankfold-pair-cell")
        self._cell.observe(self._picked, names="value")
        self._pane = ChartPane(
            "rankfold-pair-view", on_click=self._clicked,
            placeholder="<p>Click a cell of the heatmap, or choose one above, to see which "
                        "cells are concordant and discordant with it.</p>",
        )
        self._table = widgets.HTML()
        self._table.add_class("rankfold-pair-summary")
        self.widget = widgets.VBox([labelled(self._cell, "cell", self._cell.tooltip),
                                    self._pane.widget, self._table])

    def show(self, rendered: Rendered) -> None:
        """Display the rendered state."""
        self._rendered = rendered
        table = rendered.table
        options = [("(choose a cell)", None)] + [
            (f"{r} × {c}", (r, c)) for r in table.row_labels for c in table.col_labels
        ]
        if [o[1] for o in self._cell.options] != [o[1] for o in options]:
            self._cell.options = options
        self._cell.value = rendered.state.chosen_cell if rendered.regions is not None else None
        self._pane.show(rendered_pairs(rendered))
        self._table.value = (
            "" if rendered.regions is None
            else pair_table_html(rendered.regions, rendered.state.chosen_cell,
                                 table.row_name, table.col_name)
        )

    def _picked(self, change: dict) -> None:
        self._propose(lambda state: state.with_view(chosen_cell=change["new"]))

    def _clicked(self, point: dict) -> None:
        cell = self._rendered.cell_labels(point)
        self._propose(lambda state: state.with_view(chosen_cell=cell))
