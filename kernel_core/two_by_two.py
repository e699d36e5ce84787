"""Measures that exist only for 2 x 2 tables: odds ratio, Yule's Q and Y, risk difference and ratio.

Orientation (common practice): rows are the two groups, and the outcome of interest is the first
column category, so ``p1 = n11 / n1+`` and ``p2 = n21 / n2+``. With this orientation Somers' d
(column given row) equals ``p1 - p2``.
"""

from __future__ import annotations

import numpy as np

from .ordinal_measures import Sampling, delta_variance

__all__ = ["two_by_two_measures"]

#: Signs of the log odds ratio's gradient ``+/-1/n_ij``: + on the diagonal.
SIGNS = np.array([[1.0, -1.0], [-1.0, 1.0]])


def two_by_two_measures(
    counts: np.ndarray, sampling: Sampling | None = None
) -> dict[str, dict[str, object]]:
    """Odds ratio, Yule's Q and Y, risk difference and relative risk with standard errors.

    Parameters
    ----------
    counts : ndarray, shape (2, 2)
        Cell counts (or sums of weights).
    sampling : Sampling, optional
        Survey-weight information (sums of squared weights per cell and the number of
        records); multinomial counts by default.

    Returns
    -------
    dict
        For each of ``odds_ratio``, ``yules_q``, ``yules_y``, ``risk_difference`` and
        ``relative_risk``: ``estimate``, ``std_error``, ``std_error_null``, ``log_scale``
        (True where the errors refer to the logarithm of the estimate), ``on_bound`` (the
        estimate sits on an end of its range, decided from which cells are zero),
        ``gradient`` (shape (2, 2): the derivative, with respect to the cell totals, of the
        quantity the errors refer to: log OR, Q, Y, RD or log RR) and ``note``.

    Notes
    -----
    Every standard error is ``sqrt(delta_variance(counts, gradient, sampling))``, the one
    variance rule of :func:`rankfold.ordinal_measures.delta_variance`, so sampling weights
    are linearised as for every other measure (Woodruff 1971). For counts the rule gives the
    published closed forms:

    * log odds ratio, gradient ``+/-1/n_ij`` (+ on the diagonal): Woolf's ``sqrt(sum 1/n_ij)``;
    * Yule's Q ``= (n11 n22 - n12 n21)/(n11 n22 + n12 n21)`` (gamma of the 2 x 2 table) and
      Y ``= (sqrt(n11 n22) - sqrt(n12 n21))/(sqrt(n11 n22) + sqrt(n12 n21))``, gradients
      ``(1 - Q^2)/2`` and ``(1 - Y^2)/4`` times that of the log odds ratio, giving
      ``(1 - Q^2)/2 sqrt(sum 1/n_ij)`` and ``(1 - Y^2)/4 sqrt(sum 1/n_ij)`` (Yule 1912;
      Bishop, Fienberg & Holland 1975, sec. 11.2); both come from the unadjusted cells;
    * risk difference ``p1 - p2``: the Wald ``sqrt(p1 q1/n1+ + p2 q2/n2+)``; log relative risk
      ``log(p1/p2)``: ``sqrt(1/n11 - 1/n1+ + 1/n21 - 1/n2+)`` (Agresti 2013, ch. 3).

    When a cell is zero the odds ratio is 0 or infinite; its estimate and interval then use
    0.5 added to every cell (Haldane 1956; Agresti 2013, ch. 3), with sampling weights half
    of an average record (mean weight, mean squared weight, two records in all), which is the
    same at constant weights. Q and Y are then +/-1 and the risk difference +/-1 when both
    off-diagonal (or both diagonal) cells are zero: on the bound, where the delta method
    gives no interval. Gradients are 0 in empty cells, which carry no weight in the rule.

    Null standard errors apply the rule at the table expected under independence,
    ``m_ij = n_i+ n_+j / n``; with sampling weights the squared weights are spread the same
    way, ``s_i+ s_+j / s``, which is exact when the weights depend on one variable only (for
    the risk difference this is the pooled standard error).

    References
    ----------
    Agresti, A. (2013). Categorical Data Analysis, 3rd ed., Wiley, ch. 3.
    Woolf, B. (1955). On estimating the relation between blood group and disease.
    Ann. Hum. Genet. 19, 251-253.
    Haldane, J. B. S. (1956). The estimation and significance of the logarithm of a ratio of
    frequencies. Ann. Hum. Genet. 20, 309-311.
    Woodruff, R. S. (1971). JASA 66, 411-414.
    """
    n = np.asarray(counts, dtype=float)
    sampling = sampling or Sampling()
    rows, cols, total = n.sum(axis=1), n.sum(axis=0), n.sum()
    weighted = sampling.squared is not None
    squared = np.asarray(sampling.squared, dtype=float) if weighted else None
    group_empty = bool(rows.min() == 0)
    empty = group_empty or bool(cols.min() == 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        expected = np.outer(rows, cols) / total
        null_sampling = sampling
        if weighted:
            spread = np.outer(squared.sum(axis=1), squared.sum(axis=0)) / squared.sum()
            null_sampling = Sampling(spread, sampling.records)

    def se(cells, gradient, how):
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            return float(np.sqrt(delta_variance(cells, gradient, how)))

    def clean(gradient):  # empty cells carry no weight in the rule
        return np.where(n > 0, np.nan_to_num(gradient, nan=0.0, posinf=0.0, neginf=0.0), 0.0)

    zero = bool((n == 0).any())
    a, b, c, d = n.ravel()
    x, y = a * d, b * c
    out: dict[str, dict[str, object]] = {}
    with np.errstate(divide="ignore", invalid="ignore"):
        # odds ratio (log scale), 0.5 added to every cell when one is zero
        adjusted, adjusted_sampling, note = n, sampling, ""
        if zero:
            if weighted:
                records = float(sampling.records)
                adjusted = n + 0.5 * total / records
                adjusted_sampling = Sampling(squared + 0.5 * squared.sum() / records,
                                             records + 2)
                note = ("a cell is zero, so the odds ratio is 0 or infinite: estimate and "
                        "interval add half an average record to every cell (Haldane)")
            else:
                adjusted = n + 0.5
                note = ("a cell is zero, so the odds ratio is 0 or infinite: estimate and "
                        "interval add 0.5 to every cell (Haldane)")
        log_grad = SIGNS / adjusted
        null_log_grad = SIGNS / expected
        out["odds_ratio"] = _entry(
            adjusted[0, 0] * adjusted[1, 1] / (adjusted[0, 1] * adjusted[1, 0]),
            se(adjusted, log_grad, adjusted_sampling),
            se(expected, null_log_grad, null_sampling),
            log_grad, log_scale=True,
            notes=(note, "errors and z on the log scale (Woolf)"),
        )
        # Yule's Q and Y from the unadjusted cross products
        q_bound = (x == 0) or (y == 0)
        q = (x - y) / (x + y)
        root_x, root_y = np.sqrt(x), np.sqrt(y)
        yy = (root_x - root_y) / (root_x + root_y)
        bound_note = "a cell is zero" if q_bound else ""
        for key, value, factor in (("yules_q", q, 2.0), ("yules_y", yy, 4.0)):
            grad = clean((1 - value**2) / factor * SIGNS / n)
            out[key] = _entry(value, 0.0 if q_bound else se(n, grad, sampling),
                              se(expected, null_log_grad / factor, null_sampling), grad,
                              on_bound=q_bound, notes=(bound_note,))
        # risk difference of the first column category, row 1 - row 2
        p1, p2 = a / rows[0], c / rows[1]
        rd_grad = np.array([[(1 - p1) / rows[0], -p1 / rows[0]],
                            [-(1 - p2) / rows[1], p2 / rows[1]]])
        pooled = cols[0] / total
        rd_null = np.array([[1 - pooled, -pooled], [-(1 - pooled), pooled]]) / rows[:, None]
        rd_bound = (b == 0 and c == 0) or (a == 0 and d == 0)
        out["risk_difference"] = _entry(
            p1 - p2, 0.0 if rd_bound else se(n, clean(rd_grad), sampling),
            se(expected, rd_null, null_sampling), clean(rd_grad), on_bound=rd_bound,
            notes=("proportion in the first column category, row 1 - row 2",),
        )
        # relative risk (log scale) of the first column category, row 1 / row 2
        rr_note = "" if a > 0 and c > 0 else (
            "a first-column cell is zero: the relative risk is 0 or infinite, with no finite "
            "logarithm or error")
        rr_grad = np.array([[1 / a - 1 / rows[0], -1 / rows[0]],
                            [-1 / c + 1 / rows[1], 1 / rows[1]]])
        rr_null = np.array([[1 / expected[0, 0] - 1 / rows[0], -1 / rows[0]],
                            [-1 / expected[1, 0] + 1 / rows[1], 1 / rows[1]]])
        out["relative_risk"] = _entry(
            p1 / p2 if not rr_note else np.nan,
            se(n, rr_grad, sampling) if not rr_note else np.nan,
            se(expected, rr_null, null_sampling), clean(rr_grad), log_scale=True,
            notes=(rr_note, "first column category, row 1 / row 2; errors on the log scale"),
        )
    empty_note = "a row (group) is empty" if group_empty else "a column of the table is empty"
    for measure in out.values():  # an estimate that is undefined has no standard error either
        if empty:
            measure["estimate"] = np.nan
            measure["note"] = empty_note
        if np.isnan(measure["estimate"]):
            measure["std_error"] = measure["std_error_null"] = np.nan
            measure["on_bound"] = False
    return out


def _entry(estimate, std_error, std_error_null, gradient, *, log_scale=False, on_bound=False,
           notes=()):
    return {
        "estimate": float(estimate),
        "std_error": float(std_error),
        "std_error_null": float(std_error_null),
        "log_scale": log_scale,
        "on_bound": bool(on_bound),
        "gradient": np.asarray(gradient, dtype=float),
        "note": "; ".join(x for x in notes if x),
    }
