"""Is a change of coding real? The paired delta method for two codings of the same data.

A coded table is a linear map of the table as collected: merges add rows or columns, exclusions
drop cells (their units leave the table), reorders permute. So for a measure ``f`` and two
codings ``A`` and ``B`` of the collected counts ``n``, the change ``f(B n) - f(A n)`` is a smooth
function of ``n`` alone, with gradient ``B^T grad f(B n) - A^T grad f(A n)``, and its variance
follows from the library's one variance rule (:func:`rankfold.ordinal_measures.delta_variance`):
multinomial counts, frequency weights, or sampling weights by linearisation.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from .control_variable import partial_gamma_arrays
from .measure_table import _cramers_v, interval_quantile, normal_p_value
from .ordinal_measures import Sampling, delta_variance, ordinal_measure_arrays
from .ordinal_table import OrdinalTable
from .polychoric import polychoric_arrays
from .two_by_two import two_by_two_measures

__all__ = ["CHANGE_COLUMNS", "coding_change", "expand_gradient", "measure_gradients",
           "same_collected"]

#: Columns :func:`coding_change` returns.
CHANGE_COLUMNS = ["change", "change_se", "change_ci_low", "change_ci_high", "change_p_value",
                  "change_note"]

UNRELATED = (
    "the two tables are not codings of the same collected data, so no paired standard error; "
    "for independent samples the variance of a difference is the sum of the two variances, "
    "sqrt(SE_a² + SE_b²), which rankfold does not assume"
)


def same_collected(a: OrdinalTable, b: OrdinalTable) -> bool:
    """Whether two tables are codings of one table as collected.

    Parameters
    ----------
    a, b : OrdinalTable

    Returns
    -------
    bool
        True when they share :attr:`~OrdinalTable.collected` (every coding of a table does),
        or when their collected tables hold the same variables, categories, weights and
        counts (the same data counted twice).
    """
    first, second = a.collected, b.collected
    if first is second:
        return True
    fields = ("row_name", "col_name", "row_labels", "col_labels", "control_name",
              "control_labels", "weight", "weight_kind")
    if any(getattr(first, f) != getattr(second, f) for f in fields):
        return False
    return all(
        (x is None and y is None) or (x is not None and y is not None and np.array_equal(x, y))
        for x, y in ((first.cells, second.cells), (first.squared_weights, second.squared_weights),
                     (first.records, second.records))
    )


def expand_gradient(gradient: np.ndarray, rows: np.ndarray, cols: np.ndarray) -> np.ndarray:
    """A coded table's gradient carried back to the collected cells: ``A^T g``.

    Parameters
    ----------
    gradient : ndarray, shape (..., I', J')
        Derivative of a measure in each coded cell.
    rows, cols : ndarray of int, shapes (I,) and (J,)
        Where each collected category went (``-1``: left out), as
        :meth:`OrdinalTable.coding_maps`.

    Returns
    -------
    ndarray, shape (..., I, J)
        ``g[rows[a], cols[b]]`` for kept categories and 0 for left-out ones: a collected
        cell adds to exactly one coded cell (or to none).
    """
    g = np.asarray(gradient, dtype=float)
    rows, cols = np.asarray(rows), np.asarray(cols)
    picked = g[..., np.maximum(rows, 0)[:, None], np.maximum(cols, 0)[None, :]]
    kept = (rows >= 0)[:, None] & (cols >= 0)[None, :]
    return np.where(kept, picked, 0.0)


def _whole(table: OrdinalTable) -> tuple[np.ndarray, Sampling]:
    """Every cell of every level as one table (K * I, J): one sample, whatever the level."""
    def flat(cells: np.ndarray) -> np.ndarray:
        return np.asarray(cells, dtype=float).reshape(-1, cells.shape[-1])

    if table.squared_weights is None:
        return flat(table.cells), Sampling()
    return flat(table.cells), Sampling(flat(table.squared_weights), float(table.records.sum()))


def measure_gradients(table: OrdinalTable) -> dict[str, dict]:
    """Each measure of :meth:`OrdinalTable.measures` with the gradient its standard error uses.

    Parameters
    ----------
    table : OrdinalTable

    Returns
    -------
    dict
        For each measure key that has a gradient: ``estimate`` and ``note`` as in
        ``table.measures()`` (and ``partial_gamma`` as in ``table.partial_measures()`` when
        there is a control variable), ``gradient`` (derivative in each cell, shape (K, I, J);
        the same in every level for the pooled measures) and ``log_scale`` (True where the
        errors refer to the logarithm of the estimate).
    """
    measures = table.measures()
    counts, sampling = table._pooled().astype(float), table._sampling()
    gradients = {k: v["gradient"] for k, v in
                 ordinal_measure_arrays(counts, sampling, gradients=True).items()}
    gradients["polychoric"] = polychoric_arrays(counts, sampling)["gradient"]
    if min((counts.sum(axis=1) > 0).sum(), (counts.sum(axis=0) > 0).sum()) >= 2:
        gradients["cramers_v"] = _cramers_v(counts, sampling)["gradient"]
    log_scale = dict.fromkeys(gradients, False)
    if counts.shape == (2, 2) and counts.sum() > 0:
        for key, found in two_by_two_measures(counts, sampling).items():
            gradients[key], log_scale[key] = found["gradient"], bool(found["log_scale"])
    levels = table.cells.shape[0]
    out = {
        key: {"estimate": float(measures.loc[key, "estimate"]),
              "note": str(measures.loc[key, "note"]),
              "gradient": np.broadcast_to(gradient, (levels, *gradient.shape)),
              "log_scale": log_scale[key]}
        for key, gradient in gradients.items() if key in measures.index
    }
    if table.control_name is not None:
        partial = table.partial_measures().loc["partial_gamma"]
        weights = None if table.squared_weights is None else Sampling(
            table.squared_weights, np.asarray(table.records, float).sum(axis=(-2, -1)))
        out["partial_gamma"] = {
            "estimate": float(partial["estimate"]), "note": str(partial["note"]),
            "gradient": partial_gamma_arrays(table.cells, weights)["gradient"],
            "log_scale": False,
        }
    return out


def _change_frame(keys: Sequence[str], change, se, notes, crit: float,
                  log_scale: Sequence[bool]) -> pd.DataFrame:
    change, se = np.asarray(change, float), np.asarray(se, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = np.where(se > 0, change / se, np.nan)
    # a difference of two measures in [-1, 1] lies in [-2, 2]; a ratio's interval would be on
    # the log scale, so it is left empty
    with np.errstate(invalid="ignore"):
        low = np.where(log_scale, np.nan, np.clip(change - crit * se, -2.0, 2.0))
        high = np.where(log_scale, np.nan, np.clip(change + crit * se, -2.0, 2.0))
    p = normal_p_value(z)
    notes = list(notes)
    for k, (s, c) in enumerate(zip(se, change, strict=True)):
        if s == 0 and c == 0 and not notes[k]:
            notes[k] = "the two codings give the same value whatever the counts"
    frame = pd.DataFrame(
        {"change": change, "change_se": se, "change_ci_low": low, "change_ci_high": high,
         "change_p_value": p, "change_note": notes},
        index=pd.Index(list(keys), name="measure"),
    )
    return frame[CHANGE_COLUMNS]


def coding_change(
    before: OrdinalTable,
    after: OrdinalTable,
    *,
    keys: Sequence[str] | None = None,
    confidence: float = 0.95,
) -> pd.DataFrame:
    """The change of each measure between two codings, with its paired standard error.

    Parameters
    ----------
    before, after : OrdinalTable
        Two codings (merges, exclusions, reorders) of the same table as collected; either
        may be the other's ancestor, or both codings of it.
    keys : sequence of str, optional
        Measure keys of :meth:`OrdinalTable.measures` (default: those both tables have).
    confidence : float
        Confidence level of the intervals of the change.

    Returns
    -------
    pandas.DataFrame
        Indexed by measure key with :data:`CHANGE_COLUMNS`: ``change`` = after - before (as
        the estimates read), ``change_se``, the interval ``change_ci_low`` / ``change_ci_high``
        (``change +/- z SE``), ``change_p_value`` (two-sided normal test of no change) and
        ``change_note``. For ratio measures (odds ratio, relative risk) the standard error,
        test and interval are those of the change of the logarithm, and the interval is left
        empty. When the tables are not codings of one collected table every standard error
        is NaN and the note says why.

    Notes
    -----
    With ``n`` the collected counts and ``A``, ``B`` the codings, ``Delta = f(B n) - f(A n)``
    has gradient ``D = B^T grad f(B n) - A^T grad f(A n)`` (each coded cell's derivative
    carried back to the collected cells it sums; 0 for cells left out), and
    ``Var(Delta) = sum s D^2 - (sum n D)^2 / m`` over the collected cells of every level of
    the control variable, if any, as one sample (the level of a unit is random; the delta method
    for a function of multinomial counts, Agresti 2013, sec. 16.1; with sampling weights ``s``
    the squared weights and ``m`` the records, a linearisation after Woodruff 1971). Both
    codings come from the same units, so this is far smaller than ``sqrt(SE_a^2 + SE_b^2)``
    when the codings are close. A coding chosen because its change is significant is still
    chosen after looking: report the coding rule, or the range over all codings.

    References
    ----------
    Agresti, A. (2013). Categorical Data Analysis, 3rd ed., Wiley, sec. 16.1.
    Woodruff, R. S. (1971). A simple method for approximating the variance of a complicated
    estimate. JASA 66, 411-414.
    """
    if not isinstance(before, OrdinalTable) or not isinstance(after, OrdinalTable):
        raise ValueError("coding_change needs two OrdinalTable objects, e.g. t and t.merge(...).")
    crit = interval_quantile(confidence)
    found_a, found_b = measure_gradients(before), measure_gradients(after)
    if keys is None:
        keys = [k for k in found_b if k in found_a]
    else:
        absent = [k for k in keys if k not in found_a or k not in found_b]
        if absent:
            raise ValueError(f"Measures {absent} are not defined for both tables; available: "
                             f"{[k for k in found_b if k in found_a]}.")
    change = [found_b[k]["estimate"] - found_a[k]["estimate"] for k in keys]
    log_scale = [found_b[k]["log_scale"] for k in keys]
    if not same_collected(before, after):
        return _change_frame(keys, change, [np.nan] * len(keys), [UNRELATED] * len(keys), crit,
                             log_scale)
    counts, sampling = _whole(before.collected)
    maps_a, maps_b = before.coding_maps(), after.coding_maps()
    ses, notes = [], []
    for k in keys:
        a, b = found_a[k], found_b[k]
        undefined = a["note"] if np.isnan(a["estimate"]) else (
            b["note"] if np.isnan(b["estimate"]) else "")
        if undefined:
            ses.append(np.nan)
            notes.append(f"undefined in one of the codings: {undefined}")
            continue
        difference = expand_gradient(b["gradient"], *maps_b) - expand_gradient(
            a["gradient"], *maps_a)
        difference = difference.reshape(counts.shape)  # (K, I, J) -> (K * I, J)
        ses.append(float(np.sqrt(delta_variance(counts, difference, sampling))))
        notes.append("standard error, test and interval of the change of the logarithm"
                     if b["log_scale"] else "")
    return _change_frame(keys, change, ses, notes, crit, log_scale)
