"""The within-levels view: one heatmap per level on one shared colour scale, and the measures within
each level (each level's gamma beside partial gamma, with the homogeneity and CMH tests).

All numbers come from the core (:meth:`rankfold.OrdinalTable.control_table`,
:meth:`~rankfold.OrdinalTable.control_measures`, :meth:`~rankfold.OrdinalTable.partial_measures`,
:meth:`~rankfold.OrdinalTable.tests`); the heatmaps are :func:`heatmap_spec` drawn once per
level.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import TYPE_CHECKING

import ipywidgets as widgets
import pandas as pd

import rankfold
from rankfold import OrdinalTable

from . import formatting
from .chart_pane import SCHEMA, ChartPane, click_on
from .heatmap import cell_width, heatmap_spec

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["level_heatmaps", "within_levels_html", "WithinLevelsSection", "CONTROL_CAUTIONS"]

CONTROL_CAUTIONS = (
    "Holding one variable fixed removes its influence, not that of anything else: the "
    "association within each level is still not evidence of a cause.",
    "Pick the control variable from how the data arose, before looking at these numbers; "
    "trying control variables until one gives the hoped-for answer inflates false findings.",
    "Small levels give wide intervals; check each level's n.",
)
#: Widest grid of heatmaps (one per level), in pixels, before the next heatmap goes below (about the
#: width a notebook leaves for the explorer's tabs).
GRID_WIDTH = 600
_ROW_LABELS_WIDTH = 180  # row labels and axis title beside each heatmap

_NO_CONTROL = (
    '<p class="rankfold-hint">Choose a variable to control for above to see the table and the '
    "association within each of its categories.</p>"
)


def level_heatmaps(table: OrdinalTable, colour_by: str, columns: int | None = None) -> dict:
    """One heatmap per level, all on the same colour scale.

    Parameters
    ----------
    table : OrdinalTable
        A table with a control variable.
    colour_by : str
        A key of :data:`rankfold.widgets.state.COLOUR_CHOICES`.
    columns : int, optional
        Heatmaps per row of the grid; default: as many as fit in :data:`GRID_WIDTH` pixels
        (at least one), so that no heatmap is cut off at the right.

    Returns
    -------
    dict
        A concatenated Vega-Lite specification (:func:`~rankfold.widgets.chart_pane.as_altair`
        wraps it as an Altair chart), titled by level, with one shared colour scale (the
        largest absolute value over all levels), so that equal colours mean equal values in
        every level. Clicking a cell of any level sets the one point selection ``"cell"`` to
        its positions, as in :func:`heatmap_spec`.
    """
    parts = [(label, rankfold.cell_figures(table.control_table(label)))
             for label in table.control_labels]
    if columns is None:
        shown = len(table.col_labels) + 1  # + totals column
        width = cell_width(shown) * shown + _ROW_LABELS_WIDTH
        columns = max(1, GRID_WIDTH // width)
    values = pd.concat([figures[colour_by] for _, figures in parts]).astype(float).abs()
    shared = float(values.max()) if values.notna().any() else 0.0
    panels, views = [], []
    for k, (label, figures) in enumerate(parts):
        views.append(f"cells_{k}")
        panel = heatmap_spec(figures, colour_by, table.row_name, table.col_name,
                             scale_max=shared, view=views[-1])
        # the background, the click selection and the version tag belong to the whole grid
        for key in ("$schema", "background", "params"):
            del panel[key]
        level = table.control_table(label)
        respondents = None if level.records is None else float(level.records.sum())
        panel["title"] = {
            "text": f"{table.control_name} = {label}",
            "subtitle": formatting.sample_size(float(figures["count"].sum()),
                                               bool(table.weight), respondents)}
        panels.append(panel)
    # one selection for every panel: a click in any of them picks that cell
    return {"$schema": SCHEMA, "background": "#ffffff", "columns": columns, "concat": panels,
            "params": [click_on(views)], "resolve": {"scale": {"color": "shared"}}}


def _row(key: str, label: str, n: float | None, record: pd.Series, kind: str, note: str) -> str:
    count = "" if n is None else formatting.amount(n)
    return (
        f'<tr data-{kind}="{formatting.text(key)}"><th scope="row">{formatting.text(label)}</th>'
        f"<td>{count}</td>"
        f'<td class="rankfold-estimate">{formatting.estimate(record.estimate)}</td>'
        f"<td>{formatting.interval(record.ci_low, record.ci_high)}</td>"
        f"<td>{formatting.p_value(record.p_value)}</td>"
        f'<td class="rankfold-note">{formatting.text(note)}</td></tr>'
    )


def _test_line(key: str, label: str, record: pd.Series) -> str:
    df = "" if math.isnan(record.df) else f", df = {record.df:.0f}"
    return (
        f'<p class="rankfold-within-test" data-test="{key}">{formatting.text(label)}: '
        f"statistic = {formatting.estimate(record.statistic)}{df}, "
        f"p = {formatting.p_value(record.p_value)}"
        f' <span class="rankfold-hint">{formatting.text(record.note)}</span></p>'
    )


def within_levels_html(table: OrdinalTable, measures: pd.DataFrame, tests: pd.DataFrame,
                        confidence: float = 0.95) -> str:
    """Gamma in each level beside partial gamma and the pooled gamma, with their tests.

    Parameters
    ----------
    table : OrdinalTable
        A table with a control variable.
    measures, tests : pandas.DataFrame
        ``table.measures()`` (pooled; its gamma is shown for contrast) and ``table.tests()``
        (with the ``gamma_homogeneity`` and ``cmh_correlation`` rows of a table with a control
        variable).
    confidence : float
        Level of the intervals.

    Returns
    -------
    str
        HTML: a ``table.rankfold-within-measures`` whose rows carry ``data-level`` (one per
        level) or ``data-measure`` (``partial_gamma``, ``gamma`` for the pooled value), the
        estimate in ``td.rankfold-estimate`` to 4 decimals; ``p.rankfold-within-test`` lines
        with ``data-test``; and ``ul.rankfold-cautions``. A note part every row shares is
        written once below the table, in ``p.rankfold-warning``.
    """
    per_level = table.control_measures(confidence).xs("gamma", level=1)
    listed = [(str(label), str(label), float(cells.sum()), per_level.loc[label], "level")
              for label, cells in zip(table.control_labels, table.cells, strict=True)]
    listed += [
        ("partial_gamma", "partial gamma (within levels)", table.n,
         table.partial_measures(confidence).loc["partial_gamma"], "measure"),
        ("gamma", "pooled gamma (control variable ignored)", table.n, measures.loc["gamma"],
         "measure"),
    ]
    shared, notes = formatting.shared_note([record.note for *_, record, _ in listed])
    rows = "".join(_row(*row, note) for row, note in zip(listed, notes, strict=True))
    shared_html = (f'<p class="rankfold-warning">Every row above: {formatting.text(shared)}.</p>'
                   if shared else "")
    lines = (
        _test_line("gamma_homogeneity", "Same gamma in every level? (homogeneity check)",
                   tests.loc["gamma_homogeneity"])
        + _test_line("cmh_correlation", "Association within levels (CMH correlation test)",
                     tests.loc["cmh_correlation"])
    )
    cautions = "".join(f"<li>{formatting.text(c)}</li>" for c in CONTROL_CAUTIONS)
    return (
        '<div class="rankfold-within-panel"><table class="rankfold-within-measures"><thead><tr>'
        f"<th>gamma by {formatting.text(table.control_name)}</th><th>n</th><th>estimate</th>"
        f"<th>{confidence:.0%} interval</th><th>p</th><th>note</th></tr></thead><tbody>"
        + rows + "</tbody></table>" + shared_html + lines
        + f'<ul class="rankfold-cautions">{cautions}</ul></div>'
    )


class WithinLevelsSection:
    """The within-levels tab: measures within each level above one heatmap per level.

    Built like every entry of :data:`rankfold.widgets.explorer.SECTIONS`, from ``propose``
    and ``notify``; a click on a cell of any level chooses that cell for the pair view.
    """

    title = "Within each level"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._propose = propose
        self._rendered = None
        self._numbers = widgets.HTML(_NO_CONTROL)
        self._numbers.add_class("rankfold-within-measures-box")
        self._pane = ChartPane("rankfold-within-heatmaps", on_click=self._clicked)
        self.widget = widgets.VBox([self._numbers, self._pane.widget])

    def show(self, rendered: Rendered) -> None:
        """Display the rendered state (see :class:`rankfold.widgets.render.Rendered`)."""
        self._rendered = rendered
        table = rendered.table
        if table.control_name is None:
            self._numbers.value = _NO_CONTROL
            self._pane.show(None)
            return
        self._numbers.value = within_levels_html(table, rendered.measures, rendered.tests)
        self._pane.show(level_heatmaps(table, rendered.state.colour_by))

    def _clicked(self, point: dict) -> None:
        cell = self._rendered.cell_labels(point)
        self._propose(lambda state: state.with_view(chosen_cell=cell))
