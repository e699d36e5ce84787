"""The comparison view: each measure as collected and under the current coding, side by side."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

import altair as alt
import ipywidgets as widgets
import pandas as pd

from rankfold import measure_label

from . import formatting
from .chart_pane import ChartPane, building, inline_data

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["comparison_chart", "comparison_html", "ComparisonSection", "COMPARED", "VERSIONS"]

#: The measures compared, in display order.
COMPARED = ("gamma", "somers_d_col_given_row", "somers_d_row_given_col", "tau_b", "tau_c",
            "spearman_rho")
#: Display names of the two codings.
VERSIONS = {"before": "as collected", "after": "current coding"}
_COLOURS = {"as collected": "#8c8c8c", "current coding": "#3a78b5"}


def comparison_chart(comparison: pd.DataFrame, row_name: str, col_name: str) -> alt.LayerChart:
    """Estimates with intervals for both codings, one line per measure.

    Parameters
    ----------
    comparison : pandas.DataFrame
        Output of :func:`rankfold.compare_measures`.
    row_name, col_name : str
        Variable names, for the measure labels.

    Returns
    -------
    altair.LayerChart
    """
    points = []
    for key, record in comparison.iterrows():
        label = measure_label(key, row_name, col_name)
        for prefix, version in VERSIONS.items():
            est = record[f"{prefix}_estimate"]
            if pd.isna(est):
                continue
            points.append({
                "measure": label, "version": version, "estimate": float(est),
                "low": float(record[f"{prefix}_ci_low"]),
                "high": float(record[f"{prefix}_ci_high"]),
            })
    order = [measure_label(k, row_name, col_name) for k in comparison.index]
    with building():
        y = alt.Y(field="measure", type="nominal", sort=order, title=None,
                  axis=alt.Axis(labelLimit=260))
        offset = alt.YOffset(field="version", type="nominal", sort=list(VERSIONS.values()))
        colour = alt.Color(field="version", type="nominal", title=None,
                           scale=alt.Scale(domain=list(_COLOURS), range=list(_COLOURS.values())),
                           legend=alt.Legend(orient="bottom"))
        x_scale = alt.Scale(domain=[-1, 1])
        bars = alt.Chart().mark_rule(strokeWidth=2).encode(
            y=y, yOffset=offset, color=colour,
            x=alt.X(field="low", type="quantitative", scale=x_scale,
                    title="estimate with confidence interval"),
            x2=alt.X2(field="high"),
        )
        dots = alt.Chart().mark_point(filled=True, size=60).encode(
            y=y, yOffset=offset, color=colour,
            x=alt.X(field="estimate", type="quantitative", scale=x_scale),
        )
        zero = alt.Chart().mark_rule(color="#666666", strokeDash=[3, 3]).encode(
            x=alt.datum(0, type="quantitative", scale=x_scale)
        )
        return alt.LayerChart(
            data=inline_data(points), layer=[zero, bars, dots], width=420,
            height=alt.Step(16),
            title=alt.Title("As collected and under the current coding",
                            subtitle="the same units (fewer after exclusions): overlapping "
                                     "intervals are no test of a difference"),
            background="#ffffff",
        )


def comparison_html(comparison: pd.DataFrame, row_name: str, col_name: str) -> str:
    """The comparison as an HTML table (class ``rankfold-comparison-table``).

    Parameters
    ----------
    comparison : pandas.DataFrame
        Output of :func:`rankfold.compare_measures`.
    row_name, col_name : str
        Variable names, for the measure labels.

    Returns
    -------
    str
        One row per measure with ``data-measure``; estimates to 4 decimals, intervals and the
        change (current minus as collected).
    """
    body = []
    for key, r in comparison.iterrows():
        body.append(
            f'<tr data-measure="{key}"><th scope="row">'
            f"{formatting.text(measure_label(key, row_name, col_name))}</th>"
            f"<td>{formatting.estimate(r.before_estimate)}</td>"
            f"<td>{formatting.interval(r.before_ci_low, r.before_ci_high)}</td>"
            f"<td>{formatting.estimate(r.after_estimate)}</td>"
            f"<td>{formatting.interval(r.after_ci_low, r.after_ci_high)}</td>"
            f'<td class="rankfold-change">{formatting.estimate(r.change)}</td></tr>'
        )
    head = "".join(
        f"<th>{h}</th>" for h in ("measure", "as collected", "interval", "current coding",
                                  "interval", "change")
    )
    return (
        f'<table class="rankfold-comparison-table"><thead><tr>{head}</tr></thead><tbody>'
        + "".join(body) + "</tbody></table>"
    )


class ComparisonSection:
    """Chart and table comparing the table as collected with the current coding.

    Parameters
    ----------
    propose, notify : callable
        The explorer's entry points (unused: this section has no controls).
    """

    title = "Compare"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._pane = ChartPane("rankfold-comparison")
        self._table = widgets.HTML()
        self._table.add_class("rankfold-comparison-summary")
        self.widget = widgets.VBox([self._pane.widget, self._table])

    def show(self, rendered: Rendered) -> None:
        """Display the rendered state."""
        table = rendered.table
        self._pane.show(rendered.chart("comparison"))
        self._table.value = comparison_html(rendered.comparison, table.row_name, table.col_name)
