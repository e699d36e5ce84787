"""The numbers behind each concordance measure, and what one coding step did to the pairs.

Pure functions for views that teach how the measures are computed: every number comes from
:meth:`OrdinalTable.pairs` (unordered pairs of units) and :meth:`OrdinalTable.measures`.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .ordinal_table import OrdinalTable
from .steps import ExcludeStep, MergeStep, OrderStep, Step

__all__ = ["worked_numbers", "table_before_last_step", "replay_steps", "step_change"]

PAIR_KINDS = ("concordant", "discordant", "tied_row_only", "tied_col_only", "tied_both")


def worked_numbers(table: OrdinalTable) -> dict[str, Any]:
    """The pair counts of a table and each measure written from them.

    Parameters
    ----------
    table : OrdinalTable
        Any table; a control variable is pooled over, as in :meth:`OrdinalTable.measures`.

    Returns
    -------
    dict
        ``pairs`` (:meth:`OrdinalTable.pairs`), ``n`` (units), ``m`` (the smaller number of
        non-empty categories) and ``measures``: for ``gamma``, ``somers_d_col_given_row``,
        ``somers_d_row_given_col``, ``tau_b`` and ``tau_c`` a dict with ``numerator``,
        ``denominator`` and ``value`` (``numerator / denominator``, NaN when the denominator
        is 0). Whole-number tables give exact Python integers for the pair counts.

    Notes
    -----
    With C concordant and D discordant pairs, T_r pairs tied on the row variable only, T_c
    tied on the column variable only (Agresti 2010, sec. 7.1):

    * gamma = (C − D) / (C + D) (Goodman & Kruskal 1954);
    * Somers' d of the column given the row = (C − D) / (C + D + T_c): pairs tied on the row
      variable carry no information about its effect (Somers 1962); the other direction
      uses T_r;
    * tau-b = (C − D) / sqrt((C + D + T_r)(C + D + T_c)) (Kendall 1945);
    * tau-c = 2 m (C − D) / (n² (m − 1)) (Stuart 1953).

    These are the unordered-pair forms of the formulas in
    :func:`rankfold.ordinal_measures.ordinal_measure_arrays` (which counts ordered pairs, twice
    as many).

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    Goodman, L. A. & Kruskal, W. H. (1954). JASA 49, 732-764.
    Somers, R. H. (1962). ASR 27, 799-811. Stuart, A. (1953). Biometrika 40, 106-108.
    Kendall, M. G. (1945). Biometrika 33, 239-251.
    """
    pairs = table.pairs()
    pooled = np.asarray(table.cells).sum(axis=0)
    m = int(min((pooled.sum(axis=1) > 0).sum(), (pooled.sum(axis=0) > 0).sum()))
    n = table.n
    c, d = pairs["concordant"], pairs["discordant"]
    t_row, t_col = pairs["tied_row_only"], pairs["tied_col_only"]
    untied_row = c + d + t_col  # pairs that differ on the row variable
    untied_col = c + d + t_row
    measures = {
        "gamma": (c - d, c + d),
        "somers_d_col_given_row": (c - d, untied_row),
        "somers_d_row_given_col": (c - d, untied_col),
        "tau_b": (c - d, math.sqrt(untied_row) * math.sqrt(untied_col)),
        "tau_c": (2 * m * (c - d), n * n * (m - 1)),
    }
    return {
        "pairs": pairs,
        "n": n,
        "m": m,
        "measures": {
            key: {"numerator": num, "denominator": den,
                  "value": num / den if den else math.nan}
            for key, (num, den) in measures.items()
        },
    }


def replay_steps(table: OrdinalTable, steps: tuple[Step, ...]) -> OrdinalTable:
    """Apply recorded steps to a table with the same variables.

    Parameters
    ----------
    table : OrdinalTable
        Usually the table as collected.
    steps : sequence of steps
        Order, exclusion and merge steps, as in :attr:`OrdinalTable.steps`.

    Returns
    -------
    OrdinalTable
        ``table`` after :meth:`~OrdinalTable.reorder`, :meth:`~OrdinalTable.exclude` and
        :meth:`~OrdinalTable.merge` calls that repeat each step (merged labels as recorded).
    """
    for step in steps:
        if isinstance(step, MergeStep):
            groups = [(g, lab) for g, lab in zip(step.groups, step.labels, strict=True)
                      if len(g) > 1]
            table = table.merge(step.axis, [list(g) for g, _ in groups],
                                labels=[lab for _, lab in groups])
        elif isinstance(step, ExcludeStep):
            table = table.exclude(step.axis, list(step.labels))
        else:
            table = table.reorder(step.axis, list(step.labels))
    return table


def table_before_last_step(collected: OrdinalTable, table: OrdinalTable) -> OrdinalTable | None:
    """The table as it was before its last coding step, rebuilt from the table as collected.

    Parameters
    ----------
    collected : OrdinalTable
        The table as collected (its steps are a prefix of ``table.steps``).
    table : OrdinalTable
        The current table.

    Returns
    -------
    OrdinalTable or None
        ``collected`` with every step of ``table`` after collection but the last replayed
        (:func:`replay_steps`); None when ``table`` has no step after collection.

    Raises
    ------
    ValueError
        If ``table`` was not made from ``collected`` (their first steps differ).
    """
    start = len(collected.steps)
    if tuple(table.steps[:start]) != tuple(collected.steps):
        raise ValueError(
            "The current table was not made from the table as collected (their first steps "
            "differ); pass the table that the coding steps were applied to."
        )
    if len(table.steps) == start:
        return None
    return replay_steps(collected, table.steps[start:-1])


def step_change(before: OrdinalTable, after: OrdinalTable) -> dict[str, Any]:
    """How one coding step moved the pairs of units between the five kinds.

    Parameters
    ----------
    before, after : OrdinalTable
        The table before and after the step (``after.steps[-1]`` is the step).

    Returns
    -------
    dict
        ``step`` (the step object), ``kind`` (``'merge'``, ``'exclude'`` or ``'reorder'``),
        ``before`` and ``after`` (:meth:`OrdinalTable.pairs` of each), ``change`` (after minus
        before, per kind of pair), ``axis_variable`` (the recoded variable), ``other_variable``
        and ``sentence``: the change in plain words.

    Notes
    -----
    Merging neighbouring categories of one variable keeps the order of all other pairs, so
    it only turns pairs whose two units fall in the merged categories into ties on that
    variable: concordant and discordant ones into ties on that variable only, ties on the
    other variable into ties on both (Agresti 2010, sec. 7.1: a pair is tied on a variable
    when both units share its category). An exclusion removes every pair with a unit in
    the left-out categories.
    """
    step = after.steps[-1]
    old, new = before.pairs(), after.pairs()
    change = {k: new[k] - old[k] for k in (*PAIR_KINDS, "total")}
    variable = step.variable
    other = after.col_name if step.axis == "rows" else after.row_name
    mine, theirs = ("row", "col") if step.axis == "rows" else ("col", "row")
    if isinstance(step, MergeStep):
        kind = "merge"
        sentence = (
            f"This merge turned {_count(-change['concordant'])} concordant and "
            f"{_count(-change['discordant'])} discordant pairs into ties on {variable}, and "
            f"{_count(-change[f'tied_{theirs}_only'])} pairs tied on {other} only into pairs "
            f"tied on both; no other pair changed kind."
        )
    elif isinstance(step, ExcludeStep):
        kind = "exclude"
        left_out = before.n - after.n
        sentence = (
            f"Leaving out {', '.join(map(str, step.labels))} of {variable} removed "
            f"{_count(left_out)} units and every pair they were part of: "
            f"{_count(-change['concordant'])} concordant, {_count(-change['discordant'])} "
            f"discordant, {_count(-change[f'tied_{mine}_only'])} tied on {variable} only, "
            f"{_count(-change[f'tied_{theirs}_only'])} tied on {other} only and "
            f"{_count(-change['tied_both'])} tied on both."
        )
    elif isinstance(step, OrderStep):
        kind = "reorder"
        sentence = (
            f"The new order of {variable} changed concordant pairs by "
            f"{_signed(change['concordant'])} and discordant pairs by "
            f"{_signed(change['discordant'])}; ties do not depend on the order."
        )
    else:  # pragma: no cover - Step is a closed union
        raise ValueError(f"Unknown kind of step: {step!r}.")
    return {"step": step, "kind": kind, "before": old, "after": new, "change": change,
            "axis_variable": variable, "other_variable": other, "sentence": sentence}


def _count(value: float) -> str:
    if float(value).is_integer():
        return f"{int(value):,}"
    return f"{value:,.1f}"


def _signed(value: float) -> str:
    return ("+" if value > 0 else "") + _count(value)
