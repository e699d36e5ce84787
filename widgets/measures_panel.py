"""The measures panel: an HTML table of the measures, Pearson's X² test, warnings, cautions."""

from __future__ import annotations

from collections.abc import Sequence

import pandas as pd

from rankfold import OrdinalTable, independence_label, measure_label

from . import formatting

__all__ = ["measures_html", "CAUTIONS"]

CAUTIONS = (
    "An association, however strong, is not evidence that one variable causes the other.",
    "Choosing merges or exclusions after looking at these numbers inflates false findings: "
    "fix the coding by a rule set in advance (for instance, merge sparse categories), or "
    "report every coding you tried.",
)
_NOMINAL = ("cramers_v",)
_LATENT = ("polychoric",)
LATENT_CAUTION = (
    "These two assume the categories cut a continuous scale underneath (normal for the "
    "polychoric correlation, logistic for the slope). If that holds, merging neighbouring "
    "categories should not move them, while gamma and its relatives do move."
)


def _rejected(p_value: float, what: str) -> str:
    """A plain note when a model check rejects at the 5% level (common practice)."""
    if p_value < 0.05:
        shown = formatting.p_value(p_value)
        return f"{what} (p {shown if shown.startswith('<') else '= ' + shown}): read with care"
    return ""


def _model_checks(tests: pd.DataFrame, slope: pd.DataFrame) -> dict[str, str]:
    """A note for the polychoric row and the slope row when their model check rejects."""
    fit_p = tests.loc["latent_normal_fit", "p_value"] if "latent_normal_fit" in tests.index \
        else float("nan")
    odds_p = slope.attrs.get("proportional_odds_p_value", float("nan"))
    return {"polychoric": _rejected(fit_p, "the latent normal model does not fit"),
            "cumulative_logit": _rejected(odds_p, "the proportional-odds check rejects")}


def _measure_row(key: str, record: pd.Series, label: str, note: str) -> str:
    return (
        f'<tr data-measure="{key}"><th scope="row">{formatting.text(label)}</th>'
        f'<td class="rankfold-estimate" data-measure="{key}">{formatting.estimate(record.estimate)}'
        f"</td><td>{formatting.interval(record.ci_low, record.ci_high)}</td>"
        f"<td>{formatting.p_value(record.p_value)}</td>"
        f'<td class="rankfold-note">{formatting.text(note)}</td></tr>'
    )


def measures_html(
    table: OrdinalTable,
    measures: pd.DataFrame,
    tests: pd.DataFrame,
    warnings: Sequence[str],
    left_out: float,
    confidence: float = 0.95,
) -> str:
    """The measures of the current table as an HTML panel.

    Parameters
    ----------
    table : OrdinalTable
        The current table (for variable names and unit counts).
    measures : pandas.DataFrame
        ``table.measures()``.
    tests : pandas.DataFrame
        ``table.tests()``; the Pearson X² row is shown for contrast.
    warnings : sequence of str
        Sparse-cell warnings (``table.diagnostics().warnings``).
    left_out : float
        Units left out by the explorer's exclusions.
    confidence : float
        Level of the intervals in ``measures``, for the column heading.

    Returns
    -------
    str
        HTML with a table of class ``rankfold-measures``. Each measure row has
        ``data-measure`` set to its key; the estimate cell has class ``rankfold-estimate``, the
        same ``data-measure`` and the estimate to 4 decimals (a dash when undefined, with the
        reason in the note column). A note part every measure shares (such as the sampling
        weights caution) is written once, as the first ``div.rankfold-warning`` below the table.
    """
    ordinal = [k for k in measures.index if k not in (*_NOMINAL, *_LATENT)]
    latent = [k for k in measures.index if k in _LATENT]
    nominal = [k for k in measures.index if k in _NOMINAL]
    slope = table.cumulative_logit()
    shared, own = formatting.shared_note([*measures["note"], slope.loc["slope", "note"]])
    notes = dict(zip([*measures.index, "cumulative_logit"], own, strict=True))
    for key, check in _model_checks(tests, slope).items():
        notes[key] = "; ".join(x for x in (notes[key], check) if x)

    def rows(keys: list[str]) -> str:
        return "".join(
            _measure_row(k, measures.loc[k], measure_label(k, table.row_name, table.col_name),
                         notes[k])
            for k in keys
        )

    chi = tests.loc["pearson_x2"]
    chi_row = (
        '<tr data-measure="pearson_x2">'
        f'<th scope="row">{formatting.text(independence_label("pearson_x2"))}</th>'
        f'<td class="rankfold-estimate" data-measure="pearson_x2">'
        f"{formatting.estimate(chi.statistic)}</td><td>df = {formatting.amount(chi.df)}</td>"
        f"<td>{formatting.p_value(chi.p_value)}</td>"
        f'<td class="rankfold-note">{formatting.text(chi.note)}</td></tr>'
    )
    respondents = None if table.records is None else float(table.records.sum())
    counted = [formatting.sample_size(table.n, bool(table.weight), respondents)]
    if left_out:
        counted.append(f"{formatting.amount(left_out)} left out by exclusions")
    if table.n_missing:
        counted.append(f"{formatting.amount(table.n_missing)} records with a missing value dropped")
    if table.weight:
        counted.append(f"weighted by {formatting.text(table.weight)} ({table.weight_kind})")
    if table.control_name:
        counted.append(f"pooled over the {len(table.control_labels)} levels of "
                       f"{formatting.text(table.control_name)}: the association within each "
                       "level can "
                       "differ, even in sign (see the tab ‘Within each level’)")
    if shared:
        warnings = [f"Every measure above: {shared}.", *warnings]
    warning_html = "".join(f'<div class="rankfold-warning">{formatting.text(w)}</div>'
                           for w in warnings)
    cautions = "".join(f"<li>{formatting.text(c)}</li>" for c in CAUTIONS)
    return (
        f'<div class="rankfold-measures-panel"><p class="rankfold-units">{"; ".join(counted)}</p>'
        '<table class="rankfold-measures"><thead><tr><th>measure</th><th>estimate</th>'
        f"<th>{confidence:.0%} interval</th><th>p</th><th>note</th></tr></thead><tbody>"
        + rows(ordinal)
        + '<tr class="rankfold-group"><td colspan="5">assuming a continuous scale underneath'
        f' <span class="rankfold-hint">({formatting.text(LATENT_CAUTION)})</span></td></tr>'
        + rows(latent)
        + _measure_row("cumulative_logit", slope.loc["slope"],
                       measure_label("cumulative_logit", table.row_name, table.col_name),
                       notes["cumulative_logit"])
        + '<tr class="rankfold-group"><td colspan="5">for contrast, ignoring the order</td></tr>'
        + rows(nominal) + chi_row
        + "</tbody></table>" + warning_html
        + f'<ul class="rankfold-cautions">{cautions}</ul></div>'
    )
