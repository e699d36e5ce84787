"""The measures panel: an HTML table of the measures, Pearson's X² test, warnings, cautions."""

from __future__ import annotations

from collections.abc import Sequence

import ipywidgets as widgets
import pandas as pd

from rankfold import OrdinalTable, independence_label, measure_label

from . import formatting

__all__ = ["measures_html", "CAUTIONS", "MEASURE_HELP", "MEASURES_EXPLAINED", "MeasuresHelp"]

#: A plain explanation of each row of the panel, shown as the row's tooltip (title).
MEASURE_HELP = {
    "gamma": "Of the pairs of units ordered differently on both variables, the share that agree "
             "in direction minus the share that disagree. Ties are left out, so it is usually "
             "the largest of these measures.",
    "somers_d_col_given_row": "Like gamma, but pairs that differ on the row variable and tie on "
                              "the column variable count against it: how well the rows predict "
                              "the order of the columns.",
    "somers_d_row_given_col": "Like gamma, but pairs that differ on the column variable and tie "
                              "on the row variable count against it: how well the columns "
                              "predict the order of the rows.",
    "somers_d_symmetric": "The average of the two one-way Somers' d: neither variable is the one "
                          "predicted.",
    "tau_b": "Like gamma, but ties on either variable pull it towards 0; it reaches ±1 only in a "
             "square table with all units on one diagonal.",
    "tau_c": "A version of tau for tables that are not square: it can reach ±1 in any shape.",
    "spearman_rho": "The correlation of the two variables' ranks (tied units share a rank).",
    "polychoric": "The correlation of two normal variables assumed to lie beneath the "
                  "categories, as if the categories cut them at fixed points.",
    "cumulative_logit": "How much the odds of a higher column category grow with each step to "
                        "a higher row category (on the log scale), assuming the same growth at "
                        "every cut between column categories.",
    "cramers_v": "Strength of any association, ignoring the order of the categories: 0 is none, "
                 "1 is the most the table allows.",
    "pearson_x2": "A test of whether the two variables are unrelated, ignoring their order; a "
                  "small p says the table is unlikely if they were.",
}

#: The text behind the "what do these mean?" toggle.
MEASURES_EXPLAINED = (
    "<p><b>Pairs of units.</b> Take any two units. If one is higher than the other on both "
    "variables, the pair <i>agrees</i> in order (concordant); if higher on one and lower on the "
    "other, it <i>disagrees</i> (discordant); if they share a category on either variable, the "
    "pair is <i>tied</i>.</p>"
    "<p><b>Gamma</b> looks only at pairs that agree or disagree: (agree − disagree) / (agree + "
    "disagree). It ignores ties entirely, so it is usually the largest.</p>"
    "<p><b>Somers' d</b> also counts pairs tied on the variable being predicted, but not on the "
    "other one: they are pairs the prediction gets wrong. It has a direction (which variable is "
    "predicted); the symmetric version averages the two.</p>"
    "<p><b>Tau-b</b> counts ties on both variables, so it is the smallest of the three for the "
    "same table; tau-c adjusts it for tables that are not square.</p>"
    "<p><b>Why merging moves them.</b> Merging two categories turns every pair that was split "
    "between them into a tie. Gamma then loses those pairs from its count (it can rise or fall), "
    "while Somers' d and tau-b count more ties and usually shrink. Leaving a category out "
    "removes its units and their pairs altogether. That is why the numbers move with the coding, "
    "and why a coding should be chosen by a rule set in advance.</p>"
)

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


def _title(key: str) -> str:
    help_text = MEASURE_HELP.get(key)
    return f' title="{formatting.text(help_text)}"' if help_text else ""


def _measure_row(key: str, record: pd.Series | tuple, label: str, note: str) -> str:
    return (
        f'<tr data-measure="{key}"{_title(key)}><th scope="row">{formatting.text(label)}</th>'
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
    slope: pd.DataFrame | None = None,
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
    slope : pandas.DataFrame, optional
        ``table.cumulative_logit()``, when computed already (else it is computed here).

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
    slope = table.cumulative_logit() if slope is None else slope
    shared, own = formatting.shared_note([*measures["note"], slope.loc["slope", "note"]])
    notes = dict(zip([*measures.index, "cumulative_logit"], own, strict=True))
    for key, check in _model_checks(tests, slope).items():
        notes[key] = "; ".join(x for x in (notes[key], check) if x)

    records = dict(zip(measures.index, measures.itertuples(index=False), strict=True))

    def rows(keys: list[str]) -> str:
        return "".join(
            _measure_row(k, records[k], measure_label(k, table.row_name, table.col_name),
                         notes[k])
            for k in keys
        )

    chi = tests.loc["pearson_x2"]
    chi_row = (
        f'<tr data-measure="pearson_x2"{_title("pearson_x2")}>'
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


class MeasuresHelp:
    """A "what do these mean?" toggle that shows :data:`MEASURES_EXPLAINED` below it."""

    def __init__(self) -> None:
        self._toggle = widgets.ToggleButton(
            value=False, description="what do these mean?", icon="question",
            tooltip="Show or hide a plain explanation of gamma, Somers' d and tau-b, and why "
                    "merging categories moves them",
            layout=widgets.Layout(width="auto", min_width="fit-content",
                                  align_self="flex-start"))
        self._toggle.add_class("rankfold-measures-help-toggle")
        self._text = widgets.HTML(MEASURES_EXPLAINED, layout=widgets.Layout(display="none"))
        self._text.add_class("rankfold-measures-help")
        self._toggle.observe(self._flip, names="value")
        self.widget = widgets.VBox([self._toggle, self._text])

    def _flip(self, change: dict) -> None:
        self._text.layout.display = None if change["new"] else "none"
