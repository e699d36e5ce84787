"""One-file report: a self-contained HTML page of a table's results that opens with no network.

Everything is written into the file: the styles, the charts (inline SVG drawn offline by
vl-convert) and the code that reproduces the table. The page has no script and refers to no
outside resource.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import pandas as pd

import rankfold
from rankfold import OrdinalTable, independence_label, measure_label
from rankfold.collapsing import range_sentence, sweep_ranges

from . import formatting
from .computation_view import computation_html
from .export import code_snippet
from .heatmap import heatmap_spec
from .named_charts import named_chart
from .static_record import RECORD_STYLE, chart_svg, counts_html, steps_html

if TYPE_CHECKING:
    import altair as alt

    from .render import Rendered

__all__ = ["report", "report_html", "rendered_report", "small_sweep", "free_path",
           "REPORT_CAUTIONS"]

#: The cautions every report carries, in plain words.
REPORT_CAUTIONS = (
    "Association is not causation: a strong value says units higher on one variable tend to "
    "be higher (or lower) on the other, not why.",
    "Choosing merges or exclusions after looking at the measures inflates false findings: the "
    "intervals and p-values assume the coding was fixed in advance. Fix it by a rule that "
    "ignores the association (such as a sparse-cell rule), or report the range across codings.",
    "Sparse tables: with many expected counts below 5 the large-sample intervals and p-values "
    "are doubtful; a permutation test (table.permutation_test()) does not rely on them.",
    "Weights: survey weights change both the estimates and their uncertainty; the standard "
    "errors here ignore clusters and strata, so for such designs they are usually too small.",
)

_PAGE_STYLE = """<style>
body { font-family: system-ui, sans-serif; max-width: 60em; margin: 1em auto; padding: 0 1em;
  line-height: 1.45; color: #1d1d1d; }
pre { background: #f4f4f4; padding: 8px; overflow-x: auto; }
h2 { border-bottom: 1px solid #ccc; margin-top: 1.6em; }
</style>"""


def free_path(path: str | Path) -> Path:
    """``path``, or the first ``name-2.ext``, ``name-3.ext``, ... that does not exist yet, so
    that no file is overwritten.

    Parameters
    ----------
    path : str or Path
        The file name asked for.

    Returns
    -------
    Path
    """
    path = Path(path)
    candidate, k = path, 2
    while candidate.exists():
        candidate = path.with_name(f"{path.stem}-{k}{path.suffix}")
        k += 1
    return candidate


def _description(table: OrdinalTable, left_out: float) -> str:
    items = [
        f"Variables: <strong>{formatting.text(table.row_name)}</strong> (down the side, "
        f"{len(table.row_labels)} categories) and <strong>{formatting.text(table.col_name)}"
        f"</strong> (across the top, {len(table.col_labels)} categories).",
        f"Units in the table: n = {formatting.amount(table.n)}.",
        f"Records dropped because a value was missing: {formatting.amount(table.n_missing)}.",
        f"Records in categories excluded when counting: {formatting.amount(table.n_excluded)}.",
    ]
    if left_out:
        items.append(f"Units left out by later exclusions: {formatting.amount(left_out)}.")
    if table.weight:
        items.append(f"Weighted by {formatting.text(table.weight)} ({table.weight_kind} "
                     "weights): counts are sums of weights.")
    else:
        items.append("No weights: every record counts once.")
    if table.control_name:
        items.append(f"Control variable {formatting.text(table.control_name)} with "
                     f"{len(table.control_labels)} levels; the table and measures below are "
                     "pooled over the levels.")
    return "<ul>" + "".join(f"<li>{item}</li>" for item in items) + "</ul>"


def _tests_html(tests: pd.DataFrame) -> str:
    rows = "".join(
        f'<tr data-test="{key}"><th scope="row">{formatting.text(independence_label(key))}</th>'
        f"<td>{formatting.estimate(r.statistic)}</td><td>{formatting.amount(r.df)}</td>"
        f"<td>{formatting.p_value(r.p_value)}</td>"
        f'<td class="rankfold-note">{formatting.text(r.note)}</td></tr>'
        for key, r in tests.iterrows()
    )
    return ('<table class="rankfold-tests"><thead><tr><th>test</th><th>statistic</th>'
            f"<th>df</th><th>p</th><th>note</th></tr></thead><tbody>{rows}</tbody></table>")


def _sweep_html(table: OrdinalTable, sweep: pd.DataFrame | None) -> str:
    if sweep is None:
        return ("<p>No sweep over codings was computed for this report; "
                "<code>rankfold.sweep(table)</code> gives one.</p>")
    ranges = sweep_ranges(sweep)
    rows = []
    for measure, part in ranges.groupby("measure", sort=False):
        met = part[part["meets_rule"]]
        low_met = formatting.estimate(met["low"].min()) if len(met) else formatting.DASH
        high_met = formatting.estimate(met["high"].max()) if len(met) else formatting.DASH
        rows.append(
            f'<tr data-measure="{measure}"><th scope="row">'
            f"{formatting.text(measure_label(measure, table.row_name, table.col_name))}</th>"
            f"<td>{formatting.estimate(part['low'].min())}</td>"
            f"<td>{formatting.estimate(part['high'].max())}</td>"
            f"<td>{low_met}</td><td>{high_met}</td></tr>")
    sentence = range_sentence(sweep, table.row_name, table.col_name)
    return (
        f"<p>{formatting.text(sentence)}</p>"
        '<table class="rankfold-sweep-ranges"><thead><tr><th>measure</th><th>lowest</th>'
        "<th>highest</th><th>lowest, Cochran's rule met</th><th>highest, rule met</th></tr>"
        f"</thead><tbody>{''.join(rows)}</tbody></table>"
    )


def report_html(
    table: OrdinalTable,
    *,
    measures: pd.DataFrame | None = None,
    tests: pd.DataFrame | None = None,
    charts: dict[str, alt.TopLevelMixin | dict] | None = None,
    sweep: pd.DataFrame | None = None,
    before: OrdinalTable | None = None,
    left_out: float = 0,
    records: bool = True,
    title: str | None = None,
) -> str:
    """The report page as one HTML string.

    Parameters
    ----------
    table : OrdinalTable
        The table reported.
    measures, tests : pandas.DataFrame, optional
        ``table.measures()`` and ``table.tests()`` (computed when not given).
    charts : dict of str to altair chart or Vega-Lite dict, optional
        Captioned charts, drawn as inline SVG; by default the heatmap of counts.
    sweep : pandas.DataFrame, optional
        A :func:`rankfold.sweep` frame; its ranges are reported.
    before : OrdinalTable, optional
        The table before its last step, for "what the last coding step did".
    left_out : float
        Units left out by exclusions after counting (the explorer's).
    records : bool
        Whether the data are a pandas frame of records (adds the line that recodes columns).
    title : str, optional
        Page title.

    Returns
    -------
    str
        A complete HTML document with no script and no reference to an outside resource.

    Notes
    -----
    The measures and tests are those of :meth:`OrdinalTable.measures` and
    :meth:`OrdinalTable.tests` (Agresti 2010, ch. 7), which name their sources.
    """
    measures = table.measures() if measures is None else measures
    tests = table.tests() if tests is None else tests
    if charts is None:
        figures = rankfold.cell_figures(table)
        charts = {"Counts in each cell": heatmap_spec(figures, "count", table.row_name,
                                                      table.col_name, weight=table.weight)}
    title = title or f"{table.row_name} by {table.col_name}"
    warnings = table.diagnostics().warnings
    # measures_html lives in the panel module; imported here to share its exact layout
    from .measures_panel import measures_html

    figures_html = "".join(
        f"<figure>{chart_svg(chart)}<figcaption>{formatting.text(caption)}</figcaption></figure>"
        for caption, chart in charts.items() if chart is not None
    )
    cautions = "".join(f"<li>{formatting.text(c)}</li>" for c in REPORT_CAUTIONS)
    code = code_snippet(table, records=records)
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f"<title>{formatting.text(title)}</title>{RECORD_STYLE}{_PAGE_STYLE}</head><body>"
        f'<div class="rankfold-record rankfold-report"><h1>{formatting.text(title)}</h1>'
        f"<p>Written by rankfold {rankfold.__version__}. This file needs no network and no "
        "Python to read.</p>"
        f'<h2 id="cautions">Before you read any number</h2><ul class="rankfold-cautions">'
        f"{cautions}</ul>"
        f'<h2 id="data">The data</h2>{_description(table, left_out)}'
        f'<h2 id="steps">Coding steps</h2>{steps_html(table)}'
        f'<h2 id="table">The table</h2>{counts_html(table)}'
        f'<h2 id="measures">Measures</h2>'
        f"{measures_html(table, measures, tests, warnings, left_out)}"
        f'<h2 id="tests">Tests of independence</h2>{_tests_html(tests)}'
        f'<h2 id="codings">Across codings</h2>{_sweep_html(table, sweep)}'
        f'<h2 id="charts">Charts</h2>{figures_html}'
        f'<h2 id="computed">How it is computed</h2>'
        f"{computation_html(table, measures, before)}"
        f'<h2 id="code">Code that reproduces this table</h2>'
        f"<p>Run it with <code>df</code> bound to the same data.</p>"
        f'<pre class="rankfold-report-code">{formatting.text(code)}</pre>'
        "</div></body></html>\n"
    )


def report(table: OrdinalTable, path: str | Path, *, sweep: pd.DataFrame | None = None,
           records: bool = True) -> Path:
    """Write a one-file HTML report of a table that opens with no network.

    Parameters
    ----------
    table : OrdinalTable
        The table to report (as built by :func:`rankfold.table` and its coding methods).
    path : str or Path
        Where to write, e.g. ``"report.html"``. An existing file is never overwritten: the
        report then goes to ``report-2.html`` (and so on) and the path written is returned.
    sweep : pandas.DataFrame, optional
        A :func:`rankfold.sweep` frame whose ranges the report should give.
    records : bool
        Whether the table was counted from a pandas frame of records (the code then also
        recodes the two columns).

    Returns
    -------
    Path
        The absolute path written.

    Notes
    -----
    Contents: the data (variables, n, missing, exclusions, weights), the coding steps, the
    table, the measures with intervals and notes, the tests, the range across codings when a
    sweep is given, the cautions, the heatmap as inline SVG, the worked formulas and the code
    that reproduces the table. Measures as in :meth:`OrdinalTable.measures` (Agresti 2010,
    ch. 7).
    """
    target = free_path(path)
    target.write_text(report_html(table, sweep=sweep, records=records), encoding="utf-8")
    return target.resolve()


def rendered_report(rendered: Rendered, path: str | Path, sweep: pd.DataFrame | None = None,
                    records: bool = True) -> Path:
    """The explorer's report: :func:`report_html` of its current state, with the heatmap,
    the comparison with the table as collected and (if a cell is chosen) the pair view.

    Parameters
    ----------
    rendered : Rendered
        The explorer's current rendering.
    path : str or Path
        Asked-for file name; never overwritten (see :func:`free_path`).
    sweep : pandas.DataFrame, optional
        A sweep of the codings to report.
    records : bool
        Whether the explorer holds a pandas frame of records.

    Returns
    -------
    Path
        The absolute path written.
    """
    charts = {
        "Counts in each cell (colour as chosen in the explorer)": named_chart(rendered,
                                                                              "heatmap"),
        "Each measure as collected and with the current coding": named_chart(rendered,
                                                                             "comparison"),
        "Pairs around the chosen cell": named_chart(rendered, "pairs"),
    }
    text = report_html(rendered.table, measures=rendered.measures, tests=rendered.tests,
                       charts=charts, sweep=sweep, before=rendered.before_last_step,
                       left_out=rendered.left_out,
                       records=records)
    target = free_path(path)
    target.write_text(text, encoding="utf-8")
    return target.resolve()


def small_sweep(rendered: Rendered) -> pd.DataFrame | None:
    """The sweep the Codings tab draws at once (every merge of the table with the explorer's
    exclusions and orders), or None when it has more than
    :data:`~rankfold.widgets.sweep_view.AUTO_LIMIT` codings or cannot be swept."""
    from rankfold.collapsing import count_codings

    from .sweep_view import AUTO_LIMIT, swept_codings, swept_table

    table, kept = swept_table(rendered.collected, rendered.state.edits)
    try:
        if count_codings(table) > AUTO_LIMIT:
            return None
        return swept_codings(table, kept).frame
    except ValueError:
        return None
