"""The heatmap of the current table: cells coloured by a chosen quantity, values printed."""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING

import altair as alt
import ipywidgets as widgets
import numpy as np
import pandas as pd

from . import formatting
from .chart_pane import CLICK, ChartPane, building, inline_data
from .state import COLOUR_CHOICES

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["heatmap_chart", "rendered_heatmap", "HeatmapSection", "grid_axes", "cell_width",
           "TOTAL"]

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
) -> tuple[alt.X, alt.Y]:
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
    (alt.X, alt.Y)
        Channels on the fields ``col`` and ``row``.
    """
    rows = [str(x) for x in row_labels]
    cols = [str(x) for x in col_labels]
    if margins:
        rows.append(_margin_label(rows))
        cols.append(_margin_label(cols))
    # labels wider than a cell (about 6 px a character) are turned so they do not overlap
    fits = max(map(len, cols), default=0) * 6 <= cell_width(len(cols)) - 4
    with building():
        x = alt.X(
            field="col", type="nominal", sort=cols, title=col_name,
            axis=alt.Axis(orient="top", labelAngle=0 if fits else -40, labelLimit=110,
                          labelAlign="center" if fits else "left"),
        )
        y = alt.Y(field="row", type="nominal", sort=rows, title=row_name,
                  axis=alt.Axis(labelLimit=_LABEL_LIMIT))
    return x, y


def heatmap_chart(
    figures: pd.DataFrame,
    colour_by: str,
    row_name: str,
    col_name: str,
    chosen: tuple[int, int] | None = None,
    scale_max: float | None = None,
    weight: str | None = None,
) -> alt.LayerChart:
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

    Returns
    -------
    altair.LayerChart
        Clicking a cell sets the point selection ``"cell"`` to its positions.
    """
    if colour_by not in COLOUR_CHOICES:
        raise ValueError(f"colour_by must be one of {list(COLOUR_CHOICES)}; got {colour_by!r}.")
    row_labels = [str(x) for x in dict.fromkeys(figures["row"])]
    col_labels = [str(x) for x in dict.fromkeys(figures["col"])]
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
        for r, c, i, j, v, ok in zip(
            map(str, figures["row"]), map(str, figures["col"]), figures["row_position"],
            figures["col_position"], values, finite, strict=True)
    ]
    first_col = figures.drop_duplicates("row")
    first_row = figures.drop_duplicates("col")
    margins = [(r, totals_col, t) for r, t in zip(row_labels, first_col["row_total"], strict=True)]
    margins += [(totals_row, c, t) for c, t in zip(col_labels, first_row["col_total"], strict=True)]
    margins.append((totals_row, totals_col, float(first_col["row_total"].sum())))
    cells += [{"row": r, "col": c, "label": formatting.amount(t), "ink": _TOTAL_INK}
              for r, c, t in margins]
    with building():
        if colour_by in _DIVERGING:
            scale = alt.Scale(scheme="blueorange", domain=[-largest, largest], domainMid=0)
        else:
            scale = alt.Scale(scheme="blues", domain=[0, largest])
        click = alt.selection_point(name=CLICK, fields=["row_position", "col_position"],
                                    on="click")
        # Swatches, not a gradient: every chart on a page numbers its SVG gradients from 0, so
        # with two charts one legend would paint the other's gradient (or none, if hidden).
        legend = alt.Legend(orient="bottom", type="symbol", direction="horizontal",
                            symbolType="square", symbolSize=160, symbolStrokeWidth=0)
        rect = alt.Chart().mark_rect(stroke="#ffffff", strokeWidth=1, cursor="pointer").encode(
            x=x, y=y,
            color=alt.Color(field="value", type="quantitative", scale=scale,
                            title=COLOUR_CHOICES[colour_by], legend=legend),
        ).transform_filter(f"datum.ink != '{_TOTAL_INK}'").add_params(click)
        # The text is painted through "fill", a channel of its own: a second scale on
        # "color" would be merged with the cells' one (Vega-Lite shares it across layers).
        ink = alt.Fill(field="ink", type="nominal", legend=None,
                       scale=alt.Scale(domain=list(INKS), range=list(INKS)))
        text = alt.Chart().mark_text(fontSize=11).encode(
            x=x, y=y, text=alt.Text(field="label", type="nominal"), fill=ink
        )
        marks = [rect, text]
        if chosen is not None:
            outline = alt.Chart().mark_rect(fill=None, stroke="#111111", strokeWidth=3).encode(
                x=x, y=y
            ).transform_filter(
                f"datum.row_position == {int(chosen[0])} && datum.col_position == {int(chosen[1])}"
            )
            marks.append(outline)
        return alt.LayerChart(
            data=inline_data(cells),
            layer=marks,
            width=alt.Step(cell_width(len(col_labels) + 1)),
            height=alt.Step(CELL_HEIGHT),
            title=alt.Title(f"{row_name} by {col_name}: {COLOUR_CHOICES[colour_by]}",
                            subtitle=(f"sums of the weight {weight}; " if weight else "")
                            + "totals in grey; click a cell to see its pairs"),
            background="#ffffff",
        )


def rendered_heatmap(rendered: Rendered) -> alt.LayerChart:
    """The explorer's heatmap of a rendered state: :func:`heatmap_chart` of its table in the
    state's colouring, with the chosen cell (if it is still a cell of the table) outlined.

    Parameters
    ----------
    rendered : Rendered
        See :class:`rankfold.widgets.render.Rendered`.

    Returns
    -------
    altair.LayerChart
    """
    regions, table = rendered.regions, rendered.table
    chosen = None if regions is None else (regions.row, regions.col)
    return heatmap_chart(rendered.figures, rendered.state.colour_by, table.row_name,
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

