"""Measures that exist only for 2 x 2 tables: odds ratio, Yule's Q and Y, risk difference and ratio.

Orientation (common practice): rows are the two groups, and the outcome of interest is the first
column category, so ``p1 = n11 / n1+`` and ``p2 = n21 / n2+``. With this orientation Somers' d
(column given row) equals ``p1 - p2``.
"""

from __future__ import annotations

import numpy as np

__all__ = ["two_by_two_measures"]


def two_by_two_measures(counts: np.ndarray) -> dict[str, dict[str, float | str]]:
    """Odds ratio, Yule's Q and Y, risk difference and relative risk with standard errors.

    Parameters
    ----------
    counts : ndarray, shape (2, 2)
        Cell counts.

    Returns
    -------
    dict
        For each of ``odds_ratio``, ``yules_q``, ``yules_y``, ``risk_difference`` and
        ``relative_risk``: ``estimate``, ``std_error``, ``std_error_null``, ``log_scale``
        (True where the errors refer to the logarithm of the estimate) and ``note``.

    Notes
    -----
    * Odds ratio ``(n11 n22)/(n12 n21)`` with Woolf's standard error of its logarithm,
      ``sqrt(sum 1/n_ij)``; when a cell is zero, 0.5 is added to every cell first (Haldane
      1956; Agresti 2013, sec. 3.1.1).
    * Yule's Q ``= (OR - 1)/(OR + 1)``, SE ``(1 - Q^2)/2 sqrt(sum 1/n_ij)``; Yule's Y
      ``= (sqrt(OR) - 1)/(sqrt(OR) + 1)``, SE ``(1 - Y^2)/4 sqrt(sum 1/n_ij)`` (Yule 1912;
      Bishop, Fienberg & Holland 1975, sec. 11.2).
    * Risk difference ``p1 - p2`` with the Wald SE ``sqrt(p1 q1/n1+ + p2 q2/n2+)``; relative
      risk ``p1/p2`` with the SE of its logarithm ``sqrt(1/n11 - 1/n1+ + 1/n21 - 1/n2+)``
      (Agresti 2013, sec. 3.1).
    * Null standard errors evaluate the same formulas at the table of counts expected under
      independence, ``m_ij = n_i+ n_+j / n`` (for the risk difference this is the pooled
      standard error).

    References
    ----------
    Agresti, A. (2013). Categorical Data Analysis, 3rd ed., Wiley, sec. 3.1.
    Woolf, B. (1955). On estimating the relation between blood group and disease.
    Ann. Hum. Genet. 19, 251-253.
    """
    n = np.asarray(counts, dtype=float)
    rows = n.sum(axis=1)
    cols = n.sum(axis=0)
    total = n.sum()
    expected = np.outer(rows, cols) / total if total > 0 else np.full((2, 2), np.nan)
    out: dict[str, dict[str, float | str]] = {}

    note = ""
    adjusted = n
    if (n == 0).any():
        adjusted = n + 0.5
        note = "a cell is zero: 0.5 added to every cell"
    with np.errstate(divide="ignore", invalid="ignore"):
        odds = adjusted[0, 0] * adjusted[1, 1] / (adjusted[0, 1] * adjusted[1, 0])
        root_inv = np.sqrt((1 / adjusted).sum())
        root_inv_null = np.sqrt((1 / expected).sum())
        if rows.min() == 0 or cols.min() == 0:
            odds = np.nan
            note = "a row or column of the table is empty"
        out["odds_ratio"] = {
            "estimate": odds,
            "std_error": root_inv,
            "std_error_null": root_inv_null,
            "log_scale": True,
            "note": "; ".join(x for x in (note, "errors and z on the log scale (Woolf)") if x),
        }
        q = (odds - 1) / (odds + 1)
        y = (np.sqrt(odds) - 1) / (np.sqrt(odds) + 1)
        out["yules_q"] = {
            "estimate": q,
            "std_error": (1 - q**2) / 2 * root_inv,
            "std_error_null": root_inv_null / 2,
            "log_scale": False,
            "note": note,
        }
        out["yules_y"] = {
            "estimate": y,
            "std_error": (1 - y**2) / 4 * root_inv,
            "std_error_null": root_inv_null / 4,
            "log_scale": False,
            "note": note,
        }
        p1, p2 = n[0, 0] / rows[0], n[1, 0] / rows[1]
        pooled = cols[0] / total
        group_note = "" if rows.min() > 0 else "a row (group) is empty"
        out["risk_difference"] = {
            "estimate": p1 - p2,
            "std_error": np.sqrt(p1 * (1 - p1) / rows[0] + p2 * (1 - p2) / rows[1]),
            "std_error_null": np.sqrt(pooled * (1 - pooled) * (1 / rows[0] + 1 / rows[1])),
            "log_scale": False,
            "note": "; ".join(
                x
                for x in (group_note, "proportion in the first column category, row 1 - row 2")
                if x
            ),
        }
        rr_note = group_note or (
            "" if n[1, 0] > 0 and n[0, 0] > 0 else "a first-column cell is zero"
        )
        out["relative_risk"] = {
            "estimate": p1 / p2 if not rr_note else np.nan,
            "std_error": np.sqrt(1 / n[0, 0] - 1 / rows[0] + 1 / n[1, 0] - 1 / rows[1])
            if not rr_note
            else np.nan,
            "std_error_null": np.sqrt(
                1 / expected[0, 0] - 1 / rows[0] + 1 / expected[1, 0] - 1 / rows[1]
            ),
            "log_scale": True,
            "note": "; ".join(
                x
                for x in (rr_note, "first column category, row 1 / row 2; errors on the log scale")
                if x
            ),
        }
    for measure in out.values():  # an estimate that is undefined has no standard error either
        if np.isnan(measure["estimate"]):
            measure["std_error"] = measure["std_error_null"] = np.nan
    return out
