"""The comparison view: each measure before and after coding, with the paired change.

Redrawn after every change while its tab shows, so its Vega-Lite specification is written as a
plain dictionary, like the heatmap's.

Two baselines: the table as collected, and the previous step (the table before the last step
of the shown pair). The change between two codings of one collected table has a paired
standard error (:func:`rankfold.compare_measures` given two tables), shown with its interval
and p-value beside a caution about choosing a coding after looking.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING

import ipywidgets as widgets
import pandas as pd

from rankfold import measure_label

from . import formatting
from .chart_pane import SCHEMA, ChartPane, inline_values
from .render import BASELINES, COMPARED

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["comparison_spec", "rendered_comparison", "comparison_html", "ComparisonSection",
           "COMPARED", "BASELINES", "CHOICE_CAUTION"]
_CURRENT = "current coding"
_COLOURS = ("#8c8c8c", "#3a78b5")

#: Shown beside the changes: a significant change does not make a coding right.
CHOICE_CAUTION = (
    "A coding chosen because its change is significant is still chosen after looking at the "
    "results, and the p-value no longer means what it says. Report the rule that fixed the "
    "coding before looking (such as a sparse-cell rule), or the whole range across codings "
    "(the Codings tab)."
)


def comparison_spec(comparison: pd.DataFrame, row_name: str, col_name: str,
                    baseline: str = "collected") -> dict:
    """Estimates with intervals for both codings, and the change with its paired interval.

    Parameters
    ----------
    comparison : pandas.DataFrame
        Output of :func:`rankfold.compare_measures` (two tables give the change its interval).
    row_name, col_name : str
        Variable names, for the measure labels.
    baseline : {'collected', 'previous'}
        Which earlier table ``before`` is, for the legend (a key of :data:`BASELINES`).

    Returns
    -------
    dict
        A Vega-Lite specification (:func:`~rankfold.widgets.chart_pane.as_altair` wraps it as
        an Altair chart). Top: each measure before and after; bottom: the change with its
        interval (the paired delta method; none is drawn where it is undefined).
    """
    versions = {"before": BASELINES[baseline], "after": _CURRENT}
    points, changes = [], []
    for key, record in comparison.iterrows():
        label = measure_label(key, row_name, col_name)
        for prefix, version in versions.items():
            est = record[f"{prefix}_estimate"]
            if pd.isna(est):
                continue
            points.append({
                "measure": label, "version": version, "estimate": float(est),
                "low": float(record[f"{prefix}_ci_low"]),
                "high": float(record[f"{prefix}_ci_high"]),
            })
        if not pd.isna(record["change"]):
            low, high = record.get("change_ci_low"), record.get("change_ci_high")
            changes.append({
                "measure": label, "change": float(record["change"]),
                "low": None if low is None or pd.isna(low) else float(low),
                "high": None if high is None or pd.isna(high) else float(high),
            })
    order = [measure_label(k, row_name, col_name) for k in comparison.index]
    y = {"field": "measure", "type": "nominal", "sort": order, "title": None,
         "axis": {"labelLimit": 200}}
    offset = {"field": "version", "type": "nominal", "sort": list(versions.values())}
    colour = {"field": "version", "type": "nominal", "title": None,
              "scale": {"domain": list(versions.values()), "range": list(_COLOURS)},
              "legend": {"orient": "bottom"}}
    x_scale = {"domain": [-1, 1]}
    zero = {"mark": {"type": "rule", "color": "#666666", "strokeDash": [3, 3]},
            "encoding": {"x": {"type": "quantitative", "datum": 0}}}
    bars = {"mark": {"type": "rule", "strokeWidth": 2}, "encoding": {
        "y": y, "yOffset": offset, "color": colour,
        "x": {"field": "low", "type": "quantitative", "scale": x_scale,
              "title": "estimate with confidence interval"},
        "x2": {"field": "high"}}}
    dots = {"mark": {"type": "point", "filled": True, "size": 60}, "encoding": {
        "y": y, "yOffset": offset, "color": colour,
        "x": {"field": "estimate", "type": "quantitative", "scale": x_scale}}}
    estimates = {
        "data": inline_values(points), "layer": [zero, bars, dots], "width": 320,
        "height": {"step": 14},
        "title": {"text": f"{BASELINES[baseline].capitalize()} and under the current coding",
                  "subtitle": "the same units (fewer after exclusions)"},
    }
    change_bars = {"mark": {"type": "rule", "color": "#b5543a", "strokeWidth": 2}, "encoding": {
        "y": y, "x": {"field": "low", "type": "quantitative",
                      "title": "change (current − earlier) with its paired interval"},
        "x2": {"field": "high"}}}
    change_dots = {"mark": {"type": "point", "color": "#b5543a", "filled": True, "size": 60},
                   "encoding": {"y": y, "x": {"field": "change", "type": "quantitative"}}}
    change = {
        "data": inline_values(changes), "layer": [zero, change_bars, change_dots], "width": 320,
        "height": {"step": 14},
        "title": {"text": "The change and its interval",
                  "subtitle": "from the shared units (paired), not from the two intervals "
                              "above"},
    }
    return {"$schema": SCHEMA, "background": "#ffffff", "vconcat": [estimates, change]}


def rendered_comparison(rendered: Rendered, baseline: str = "collected") -> dict:
    """The explorer's comparison chart of a rendered state: :func:`comparison_spec` of
    :meth:`~rankfold.widgets.render.Rendered.compared` against ``baseline``.

    Parameters
    ----------
    rendered : Rendered
        See :class:`rankfold.widgets.render.Rendered`.
    baseline : {'collected', 'previous'}
        The table as collected, or the table before the last step.

    Returns
    -------
    dict
        A Vega-Lite specification.
    """
    table = rendered.table
    return comparison_spec(rendered.compared(baseline), table.row_name, table.col_name,
                            baseline)


def comparison_html(comparison: pd.DataFrame, row_name: str, col_name: str,
                    baseline: str = "collected") -> str:
    """The comparison as an HTML table (class ``rankfold-comparison-table``) and the caution.

    Parameters
    ----------
    comparison : pandas.DataFrame
        Output of :func:`rankfold.compare_measures`.
    row_name, col_name : str
        Variable names, for the measure labels.
    baseline : {'collected', 'previous'}
        Which earlier table ``before`` is (a key of :data:`BASELINES`), for the heading.

    Returns
    -------
    str
        One row per measure with ``data-measure``: both estimates to 4 decimals with their
        intervals below them, the change (current minus earlier, class ``rankfold-change``),
        its paired interval (``rankfold-change-interval``) and p-value
        (``rankfold-change-p``); where the change has no standard error the note says why.
        Then the caution :data:`CHOICE_CAUTION` (``p.rankfold-choice-caution``).
    """
    body = []
    notes: list[str] = []
    for key, r in comparison.iterrows():
        note = r.get("change_note")
        mark = ""
        if isinstance(note, str) and note:
            if note not in notes:
                notes.append(note)
            mark = f"<sup>{notes.index(note) + 1}</sup>"
        nan = float("nan")
        change_interval = formatting.interval(r.get("change_ci_low", nan),
                                              r.get("change_ci_high", nan))
        change_p = formatting.text(formatting.p_value(r.get("change_p_value", nan)))
        body.append(
            f'<tr data-measure="{key}"><th scope="row">'
            f"{formatting.text(measure_label(key, row_name, col_name))}</th>"
            f"<td>{formatting.estimate(r.before_estimate)}</td>"
            f"<td>{formatting.estimate(r.after_estimate)}</td>"
            f'<td class="rankfold-change">{formatting.estimate(r.change)}{mark}</td>'
            f'<td class="rankfold-change-interval">{change_interval}</td>'
            f'<td class="rankfold-change-p">{change_p}</td></tr>'
            f'<tr class="rankfold-comparison-intervals"><td></td>'
            f"<td>{formatting.interval(r.before_ci_low, r.before_ci_high)}</td>"
            f"<td>{formatting.interval(r.after_ci_low, r.after_ci_high)}</td>"
            "<td></td><td></td><td></td></tr>"
        )
    head = "".join(
        f"<th>{h}</th>" for h in ("measure", BASELINES[baseline], _CURRENT, "change",
                                  "interval of the change", "p (change)")
    )
    footnotes = "".join(
        f'<p class="rankfold-change-note"><sup>{k}</sup> {formatting.text(note)}</p>'
        for k, note in enumerate(notes, 1)
    )
    return (
        '<div class="rankfold-comparison-wrap" style="max-width:100%;overflow-wrap:break-word">'
        "<style>.rankfold-comparison-table td { white-space: nowrap; padding: 0 6px; }"
        ".rankfold-comparison-table td.rankfold-change-interval,"
        ".rankfold-comparison-intervals td { white-space: normal; font-size: 90%; }</style>"
        '<table class="rankfold-comparison-table" style="max-width:100%">'
        f"<thead><tr>{head}</tr></thead><tbody>" + "".join(body) + "</tbody></table>"
        + footnotes
        + '<p class="rankfold-comparison-explained">Each estimate has its interval below it. '
          "The change's interval and p-value come from the units both codings share (the "
          "paired delta method), so they answer whether the coding moved the measure by more "
          "than noise; overlapping intervals of the two estimates are no such test.</p>"
        + f'<p class="rankfold-choice-caution"><b>Caution:</b> {CHOICE_CAUTION}</p></div>'
    )


class ComparisonSection:
    """Chart and table comparing the current coding with an earlier table.

    A toggle chooses the earlier table: as collected, or before the last step of the shown
    pair. The choice belongs to this view only (it is no coding, so it is not in the
    explorer's history).

    Parameters
    ----------
    propose, notify : callable
        The explorer's entry points (unused: the toggle changes no state).
    """

    title = "Compare"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._rendered = None
        self.baseline = widgets.ToggleButtons(
            options=[("against the table as collected", "collected"),
                     ("against the previous step", "previous")],
            value="collected",
            tooltips=["Compare the current coding with the table before any coding step",
                      "Compare the current coding with the table before its last step"],
            style={"button_width": "auto"},
        )
        self.baseline.add_class("rankfold-compare-baseline")
        self.baseline.observe(lambda _: self._redraw(), "value")
        self._which = widgets.HTML()
        self._which.add_class("rankfold-compare-which")
        self._pane = ChartPane("rankfold-comparison")
        self._table = widgets.HTML()
        self._table.add_class("rankfold-comparison-summary")
        self.widget = widgets.VBox([self.baseline, self._which, self._pane.widget, self._table])

    def show(self, rendered: Rendered) -> None:
        """Display the rendered state."""
        self._rendered = rendered
        self._redraw()

    def _redraw(self) -> None:
        rendered = self._rendered
        if rendered is None:
            return
        baseline = self.baseline.value
        table = rendered.table
        self._which.value = f"<p>{formatting.text(rendered.baseline_description(baseline))}</p>"
        self._pane.show(rendered_comparison(rendered, baseline))
        self._table.value = comparison_html(rendered.compared(baseline), table.row_name,
                                            table.col_name, baseline)
