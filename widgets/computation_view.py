"""The tab "How it is computed": each measure's formula with the table's numbers filled in.

Every number comes from :func:`rankfold.worked_formulas.worked_numbers` (that is,
:meth:`OrdinalTable.pairs`) and :func:`rankfold.worked_formulas.step_change`; this module only
writes them out as plain HTML (no script, no maths renderer).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import TYPE_CHECKING

import ipywidgets as widgets
import pandas as pd

from rankfold import OrdinalTable, measure_label
from rankfold.worked_formulas import step_change, worked_numbers

from . import formatting

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["computation_html", "ComputationSection", "number"]

_STYLE = """<style>
.rankfold-computation table { border-collapse: collapse; font-variant-numeric: tabular-nums; }
.rankfold-computation th, .rankfold-computation td { padding: 2px 8px; text-align: right;
  border-bottom: 1px solid rgba(128, 128, 128, 0.35); white-space: nowrap; }
.rankfold-computation th[scope=row], .rankfold-computation thead th:first-child,
.rankfold-computation td.rankfold-note { text-align: left; }
.rankfold-computation td.rankfold-note { white-space: normal; }
.rankfold-computation .rankfold-formula { font-family: ui-monospace, monospace; }
</style>"""


def number(value: float) -> str:
    """A pair count or sum as written in the formulas: thousands separators, whole numbers
    exactly, sums of weights to 1 decimal."""
    if isinstance(value, int) or float(value).is_integer():
        return f"{int(value):,}"
    return f"{value:,.1f}"


def _pair_rows(table: OrdinalTable, pairs: dict) -> str:
    r, c = formatting.text(table.row_name), formatting.text(table.col_name)
    meaning = {
        "concordant": ("C", f"one unit is higher than the other on both {r} and {c}"),
        "discordant": ("D", f"one unit is higher on {r} but lower on {c}"),
        "tied_row_only": ("T<sub>r</sub>", f"same category of {r}, different of {c}"),
        "tied_col_only": ("T<sub>c</sub>", f"same category of {c}, different of {r}"),
        "tied_both": ("T<sub>rc</sub>", "same cell: tied on both"),
    }
    rows = "".join(
        f'<tr data-pairs="{key}"><th scope="row">{symbol}</th>'
        f'<td class="rankfold-pair-count">{number(pairs[key])}</td>'
        f'<td class="rankfold-note">{text}</td></tr>'
        for key, (symbol, text) in meaning.items()
    )
    return (
        '<table class="rankfold-pair-kinds"><thead><tr><th>pairs</th><th>how many</th>'
        f"<th>what it means</th></tr></thead><tbody>{rows}"
        f'<tr data-pairs="total"><th scope="row">all</th><td>{number(pairs["total"])}</td>'
        '<td class="rankfold-note">n (n − 1) / 2: every pair of two different units</td></tr>'
        "</tbody></table>"
    )


def _formula(key: str, symbols: str, filled: str, worked: dict, measures: pd.DataFrame,
             label: str, sentence: str) -> str:
    value = worked["measures"][key]["value"]
    shown = formatting.estimate(value)
    agrees = ""
    if key in measures.index:
        estimate = measures.loc[key, "estimate"]
        if not (math.isnan(value) and math.isnan(estimate)) and not math.isclose(
                value, estimate, rel_tol=1e-9, abs_tol=1e-12):
            agrees = " (differs from the measures table: please report this)"
    return (
        f'<div class="rankfold-worked" data-measure="{key}"><h4>{formatting.text(label)}</h4>'
        f'<p class="rankfold-formula">{symbols} = {filled} = '
        f'<span class="rankfold-worked-value">{shown}</span>{agrees}</p>'
        f"<p>{sentence}</p></div>"
    )


def _formulas(table: OrdinalTable, worked: dict, measures: pd.DataFrame) -> str:
    p = worked["pairs"]
    C, D = number(p["concordant"]), number(p["discordant"])
    Tr, Tc = number(p["tied_row_only"]), number(p["tied_col_only"])
    n, m = number(worked["n"]), worked["m"]
    r, c = formatting.text(table.row_name), formatting.text(table.col_name)

    def label(key: str) -> str:
        return measure_label(key, table.row_name, table.col_name)

    parts = [
        _formula("gamma", "(C − D) / (C + D)", f"({C} − {D}) / ({C} + {D})", worked, measures,
                 label("gamma"),
                 "Among the pairs that are not tied on either variable, the share ordered the "
                 "same way minus the share ordered the opposite way. Ties are left out, which "
                 "is why merging categories (more ties) can move gamma a lot."),
        _formula("somers_d_col_given_row", "(C − D) / (C + D + T<sub>c</sub>)",
                 f"({C} − {D}) / ({C} + {D} + {Tc})", worked, measures,
                 label("somers_d_col_given_row"),
                 f"Of the pairs that differ on {r}, how much more often {c} goes the same way "
                 f"than the opposite way; a pair tied on {c} counts as no help in predicting "
                 f"{c}."),
        _formula("somers_d_row_given_col", "(C − D) / (C + D + T<sub>r</sub>)",
                 f"({C} − {D}) / ({C} + {D} + {Tr})", worked, measures,
                 label("somers_d_row_given_col"),
                 f"The same, the other way round: of the pairs that differ on {c}, how much "
                 f"more often {r} goes the same way than the opposite way."),
        _formula("tau_b", "(C − D) / √((C + D + T<sub>c</sub>) (C + D + T<sub>r</sub>))",
                 f"({C} − {D}) / √(({C} + {D} + {Tc}) ({C} + {D} + {Tr}))", worked, measures,
                 label("tau_b"),
                 "A compromise between the two Somers' d: it divides by the geometric mean of "
                 "their denominators, so ties on either variable pull it towards zero."),
        _formula("tau_c", "2 m (C − D) / (n² (m − 1))",
                 f"2 × {m} × ({C} − {D}) / ({n}² × ({m} − 1))", worked, measures,
                 label("tau_c"),
                 f"Scaled so that it can reach ±1 even when the table is not square; m = {m} is "
                 "the smaller number of non-empty categories, n the number of units."),
    ]
    return "".join(parts)


def _change_html(change: dict) -> str:
    before, after, delta = change["before"], change["after"], change["change"]
    names = {"concordant": "concordant (C)", "discordant": "discordant (D)",
             "tied_row_only": "tied on the row variable only",
             "tied_col_only": "tied on the column variable only",
             "tied_both": "tied on both", "total": "all pairs"}
    rows = "".join(
        f'<tr data-pairs="{key}"><th scope="row">{text}</th><td>{number(before[key])}</td>'
        f"<td>{number(after[key])}</td><td>{formatting.signed_amount(delta[key])}</td></tr>"
        for key, text in names.items()
    )
    return (
        f'<p class="rankfold-step-change">{formatting.text(change["sentence"])}</p>'
        '<table class="rankfold-step-change-table"><thead><tr><th>pairs</th><th>before</th>'
        f"<th>after</th><th>change</th></tr></thead><tbody>{rows}</tbody></table>"
    )


def computation_html(table: OrdinalTable, measures: pd.DataFrame,
                     before: OrdinalTable | None = None) -> str:
    """The worked formulas of a table, and what its last step did, as plain HTML.

    Parameters
    ----------
    table : OrdinalTable
        The current table.
    measures : pandas.DataFrame
        ``table.measures()``; each worked value is checked against it.
    before : OrdinalTable, optional
        The table before its last step (:func:`rankfold.worked_formulas.table_before_last_step`).

    Returns
    -------
    str
        A ``div.rankfold-computation`` with ``table.rankfold-pair-kinds`` (rows carry
        ``data-pairs``), one ``div.rankfold-worked`` per measure (``data-measure``, the result
        in ``span.rankfold-worked-value`` to 4 decimals) and, with ``before``,
        ``p.rankfold-step-change``.

    Notes
    -----
    The formulas are those of :func:`rankfold.worked_formulas.worked_numbers` (Agresti 2010,
    ch. 7; Goodman & Kruskal 1954; Somers 1962; Kendall 1945; Stuart 1953).
    """
    worked = worked_numbers(table)
    n = number(worked["n"])
    weighted = (" The table is weighted: each “pair” below is a sum of products of two "
                "weights, so the counts need not be whole numbers." if table.weight else "")
    pooled = (f" Pairs are counted in the table pooled over {formatting.text(table.control_name)}."
              if table.control_name else "")
    if before is None:
        last = "<p>No coding step yet: merge, leave out or reorder a category to see how it "\
               "moves pairs between these kinds.</p>"
    else:
        last = _change_html(step_change(before, table))
    return (
        f'{_STYLE}<div class="rankfold-computation">'
        f"<p>Every measure here compares the {n} units two at a time. A pair is "
        "<em>concordant</em> when one unit is higher on both variables, <em>discordant</em> "
        "when it is higher on one and lower on the other, and <em>tied</em> when the two "
        f"share a category.{weighted}{pooled}</p>"
        + _pair_rows(table, worked["pairs"])
        + _formulas(table, worked, measures)
        + "<h4>What the last coding step did</h4>" + last
        + "<p>Formulas: Goodman &amp; Kruskal (1954), Somers (1962), Kendall (1945), Stuart "
        "(1953); as collected in Agresti, <em>Analysis of Ordinal Categorical Data</em> "
        "(2010), ch. 7.</p></div>"
    )


class ComputationSection:
    """The tab "How it is computed" (see :func:`computation_html`).

    Parameters
    ----------
    propose : callable
        The explorer's entry point (unused: this view changes nothing).
    notify : callable
        Unused; a problem is shown inside the view.
    """

    title = "How it is computed"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._html = widgets.HTML()
        self._html.add_class("rankfold-computation-box")
        self.widget = widgets.VBox([self._html])
        self.widget.add_class("rankfold-computation-view")

    def show(self, rendered: Rendered) -> None:
        """Write out the current table's formulas and its last step's effect."""
        self._html.value = computation_html(rendered.table, rendered.measures,
                                            rendered.before_last_step)
