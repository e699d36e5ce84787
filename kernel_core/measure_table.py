"""Assemble the measures of one table into the public DataFrame, with notes for undefined cases."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from .ordinal_measures import ORDINAL_MEASURES, Sampling, delta_variance, ordinal_measure_arrays
from .polychoric import polychoric
from .scipy_special import special
from .two_by_two import two_by_two_measures

__all__ = [
    "BOUND_NOTE",
    "COLUMNS",
    "inference_frame",
    "interval_quantile",
    "measures_frame",
    "measure_label",
    "normal_p_value",
    "sampling_note",
]

#: The note beside an estimate on an end of its range (gamma = +/-1, say).
BOUND_NOTE = (
    "estimate at its bound (the end of its range, such as +1 or -1), where no interval can be "
    "computed; a permutation test, which reshuffles the units, gives a p-value that does not "
    "need one (unweighted counts only)"
)

COLUMNS = ["estimate", "std_error", "ci_low", "ci_high", "std_error_null", "z", "p_value", "note"]


def measure_label(key: str, row_name: str, col_name: str) -> str:
    """Human-readable name of a measure key using the variable names.

    Parameters
    ----------
    key : str
        A measure key as in the index of :meth:`OrdinalTable.measures`.
    row_name, col_name : str
        The row and column variable names.

    Returns
    -------
    str
        For example ``"Somers' d (satisfaction | income band)"`` for
        ``somers_d_col_given_row`` with column variable ``satisfaction``: the variable before
        the bar is the response.
    """
    labels = {
        "gamma": "Goodman–Kruskal gamma",
        "partial_gamma": "partial gamma (within levels)",
        "somers_d_col_given_row": f"Somers' d ({col_name} | {row_name})",
        "somers_d_row_given_col": f"Somers' d ({row_name} | {col_name})",
        "somers_d_symmetric": "Somers' d (symmetric)",
        "tau_b": "Kendall's tau-b",
        "tau_c": "Stuart's tau-c",
        "spearman_rho": "Spearman's rho (midranks)",
        "polychoric": "polychoric correlation (latent normal)",
        "cumulative_logit": f"cumulative-logit slope ({col_name} on {row_name} steps)",
        "cramers_v": "Cramér's V (nominal)",
        "odds_ratio": "odds ratio",
        "yules_q": "Yule's Q",
        "yules_y": "Yule's Y",
        "risk_difference": f"risk difference ({col_name} = first category)",
        "relative_risk": f"relative risk ({col_name} = first category)",
    }
    return labels.get(key, key)


def normal_p_value(z: np.ndarray | float) -> np.ndarray:
    """Two-sided p-value of a standard normal statistic, NaN where z is NaN.

    Parameters
    ----------
    z : ndarray or float
        Standardised statistics.

    Returns
    -------
    ndarray
        ``2 Phi(-|z|)``, with ``Phi`` the standard normal distribution function (common
        practice); evaluated from the lower tail so tiny p-values keep their precision.
    """
    return 2 * special.ndtr(-np.abs(z))


def _undefined_reasons(counts: np.ndarray) -> dict[str, str]:
    """Plain-language reason each measure is undefined for this table ('' if defined)."""
    rows = counts.sum(axis=1)
    cols = counts.sum(axis=0)
    busy_rows = int((rows > 0).sum())
    busy_cols = int((cols > 0).sum())
    if counts.sum() <= 0:
        return dict.fromkeys((*ORDINAL_MEASURES, "cramers_v"), "the table is empty")
    one_row = "" if busy_rows > 1 else "all units fall in one row category"
    one_col = "" if busy_cols > 1 else "all units fall in one column category"
    # With one category on either variable P - Q is 0 by construction, not by data. With two
    # or more on each, some pair of units is untied on both, so gamma is defined too.
    return dict.fromkeys((*ORDINAL_MEASURES, "cramers_v"), one_row or one_col)


def _cramers_v(counts: np.ndarray, sampling: Sampling) -> dict[str, float]:
    """Cramér's V over the non-empty rows and columns, with a delta-method SE.

    ``phi^2 = sum n_ij^2 / (n_i+ n_+j) - 1`` and ``V = sqrt(phi^2 / (m - 1))`` (Cramér 1946,
    sec. 21.9); the gradient of ``phi^2`` is
    ``2 n_kl/(n_k+ n_+l) - sum_j n_kj^2/(n_k+^2 n_+j) - sum_i n_il^2/(n_i+ n_+l^2)``
    (Bishop, Fienberg & Holland 1975, sec. 11.3).
    """
    keep_r = counts.sum(axis=1) > 0
    keep_c = counts.sum(axis=0) > 0
    full = keep_r.all() and keep_c.all()
    n = counts if full else counts[np.ix_(keep_r, keep_c)]
    rows = n.sum(axis=1)[:, None]
    cols = n.sum(axis=0)[None, :]
    m = min(n.shape)
    phi2 = (n**2 / (rows * cols)).sum() - 1
    v = np.sqrt(max(phi2, 0.0) / (m - 1))
    grad_phi2 = (
        2 * n / (rows * cols)
        - (n**2 / (rows**2 * cols)).sum(axis=1, keepdims=True)
        - (n**2 / (rows * cols**2)).sum(axis=0, keepdims=True)
    )
    sq = sampling.squared
    if sq is not None and not full:
        sq = sq[np.ix_(keep_r, keep_c)]
    var_phi2 = delta_variance(n, grad_phi2, Sampling(sq, sampling.records))
    se = np.sqrt(var_phi2) / (2 * v * (m - 1)) if v > 0 else np.nan
    gradient = np.zeros(counts.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        gradient[np.ix_(keep_r, keep_c)] = grad_phi2 / (2 * v * (m - 1))
    # Pearson's X^2 = n phi^2 on (I' - 1)(J' - 1) df (Cramer 1946, sec. 21.9); weighted
    # totals under sampling weights are not counts, so no p-value then.
    df = (n.shape[0] - 1) * (n.shape[1] - 1)
    p = special.chdtrc(df, n.sum() * max(phi2, 0.0)) if sampling.squared is None else np.nan
    return {"estimate": v, "std_error": float(se), "p_value": float(p), "gradient": gradient}


def measures_frame(
    counts: np.ndarray,
    *,
    sampling: Sampling | None = None,
    confidence: float = 0.95,
    extra_note: str = "",
    arrays: dict | None = None,
) -> pd.DataFrame:
    """The measures of one 2-D table as a DataFrame (see :meth:`OrdinalTable.measures`).

    Parameters
    ----------
    counts : ndarray, shape (I, J)
        Cell counts or sums of weights.
    sampling : Sampling, optional
        Survey-weight information for the standard errors.
    confidence : float
        Confidence level of the intervals, strictly between 0 and 1.
    extra_note : str
        A remark added to every row's note (e.g. the table's non-substantive categories).
    arrays : dict, optional
        This table's result of :func:`ordinal_measure_arrays` when already computed in a batch
        (as for the levels of a control variable); computed here otherwise.

    Returns
    -------
    pandas.DataFrame
        Indexed by measure key with columns :data:`COLUMNS`.
    """
    crit = interval_quantile(confidence)
    sampling = sampling or Sampling()
    counts = np.asarray(counts, dtype=float)
    reasons = _undefined_reasons(counts)
    arrays = ordinal_measure_arrays(counts, sampling) if arrays is None else arrays
    records = []
    for key in ORDINAL_MEASURES:
        est, se, se0 = (float(arrays[key][f]) for f in ("estimate", "std_error", "std_error_null"))
        note = reasons[key]
        if note:
            est = se = se0 = np.nan
        records.append((key, est, se, se0, note, (-1.0, 1.0), False,
                        bool(arrays[key]["on_bound"]) and not note))
    if reasons["cramers_v"]:  # the table itself leaves nothing to estimate
        records.append(("polychoric", np.nan, np.nan, np.nan, reasons["cramers_v"], (-1.0, 1.0),
                        False, False))
    else:
        latent = polychoric(counts, sampling)
        records.append(("polychoric", latent.estimate, latent.std_error, latent.std_error_null,
                        latent.note, (-1.0, 1.0), False, False))
    v_note = reasons["cramers_v"]
    chi_square_p = np.nan  # Pearson's test, reported on the Cramér's V row
    if v_note:
        records.append(("cramers_v", np.nan, np.nan, np.nan, v_note, (0.0, 1.0), False, False))
    else:
        v = _cramers_v(counts, sampling)
        chi_square_p = v["p_value"]
        v_note = "nominal measure; p-value from Pearson's X² test"
        if sampling.squared is not None:
            v_note = "nominal measure; no p-value with sampling weights"
        if not v["estimate"] > 0:
            v_note += "; V = 0 is on the boundary: no delta-method interval"
        records.append(
            ("cramers_v", v["estimate"], v["std_error"], np.nan, v_note, (0.0, 1.0), False, False)
        )
    if counts.shape == (2, 2) and counts.sum() > 0:
        for key, m in two_by_two_measures(counts, sampling).items():
            bounds = (-1.0, 1.0) if not m["log_scale"] else (0.0, np.inf)
            records.append(
                (
                    key,
                    m["estimate"],
                    m["std_error"],
                    m["std_error_null"],
                    m["note"],
                    bounds,
                    m["log_scale"],
                    m["on_bound"],
                )
            )

    extras = [extra_note] if extra_note else []
    if sampling.squared is not None:
        extras.insert(0, sampling_note(counts.sum(), sampling.squared.sum()))
    for extra in extras:
        records = [(*r[:4], f"{r[4]}; {extra}" if r[4] else extra, *r[5:]) for r in records]
    keys, est, se, se0, notes, bounds, log_scale, on_bound = zip(*records, strict=True)
    p_values = [chi_square_p if key == "cramers_v" else None for key in keys]
    return inference_frame(
        keys, est, se, se0, notes, crit=crit, bounds=bounds, log_scale=log_scale,
        p_values=p_values, on_bound=on_bound,
    )


def interval_quantile(confidence: object) -> float:
    """The normal quantile ``z_(1 - alpha/2)`` of a two-sided interval at ``confidence``.

    Parameters
    ----------
    confidence : float
        Confidence level, strictly between 0 and 1; anything else is refused.

    Returns
    -------
    float
        For example 1.959964 for 0.95 (the standard normal quantile; common practice).
    """
    number = isinstance(confidence, (int, float, np.integer, np.floating))
    if isinstance(confidence, bool) or not number or not 0 < confidence < 1:
        raise ValueError(
            f"confidence must be a number strictly between 0 and 1 (e.g. 0.95); got {confidence!r}."
        )
    return float(special.ndtri(0.5 + confidence / 2))


def sampling_note(total: float, squared: float) -> str:
    """Plain note for results from sampling weights, with Kish's effective sample size.

    Parameters
    ----------
    total, squared : float
        Sum of the weights and sum of their squares over the records counted.

    Returns
    -------
    str
        The note; the effective size is ``(sum w)^2 / sum w^2`` (Kish 1965, Survey
        Sampling), the number of unweighted records that would give about the same precision.
    """
    size = f"{total**2 / squared:,.1f}" if squared > 0 else "undefined (no weight)"
    return (
        "sampling weights (survey weights): the intervals allow for the weights, treating the "
        "rows as drawn independently (no clusters or strata; Taylor-linearised errors); effective "
        "sample size "
        f"(Kish) = {size} respondents: the weighted data hold about as much information as "
        "that many unweighted ones"
    )


def inference_frame(
    keys: Sequence[str],
    estimate: Sequence[float],
    std_error: Sequence[float],
    std_error_null: Sequence[float],
    notes: Sequence[str],
    *,
    crit: float,
    bounds: Sequence[tuple[float, float]] | None = None,
    log_scale: Sequence[bool] | None = None,
    p_values: Sequence[float | None] | None = None,
    on_bound: Sequence[bool] | None = None,
) -> pd.DataFrame:
    """Measures table: Wald interval, z statistic, p-value and notes for each estimate.

    Parameters
    ----------
    keys : sequence of str
        Measure keys (the index).
    estimate, std_error, std_error_null : sequence of float
        Estimates, delta-method standard errors and standard errors under independence
        (NaN when undefined).
    notes : sequence of str
        Reason or remark each note starts with ('' for none).
    crit : float
        Normal quantile of the interval, e.g. 1.96 for 95%.
    bounds : sequence of (float, float), optional
        Range of each measure (default [-1, 1]); intervals are clipped to it.
    log_scale : sequence of bool, optional
        Where True, the standard errors refer to ``log(estimate)`` (ratios) and the interval
        is ``exp(log(estimate) +/- crit * std_error)``.
    p_values : sequence of float or None, optional
        A p-value from another test where not None (Cramér's V uses Pearson's X²);
        otherwise the two-sided normal p-value of ``z = estimate / std_error_null``.
    on_bound : sequence of bool, optional
        Where True the estimate sits on an end of its range (decided by the caller from the
        data, e.g. no discordant pair for gamma, never from a floating standard error): the
        delta method gives no interval there, so the interval is NaN and the note says so.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``measure`` with the columns of :data:`COLUMNS`.

    Notes
    -----
    Wald intervals and z tests, as in Agresti (2010, ch. 7); the clipping to the
    measure's range is common practice.
    """
    size = len(keys)
    est = np.asarray(estimate, dtype=float)
    se = np.asarray(std_error, dtype=float)
    se0 = np.asarray(std_error_null, dtype=float)
    lo, hi = np.asarray(bounds if bounds is not None else [(-1.0, 1.0)] * size, dtype=float).T
    logs = np.asarray(log_scale if log_scale is not None else [False] * size, dtype=bool)
    bound = np.asarray(on_bound if on_bound is not None else [False] * size, dtype=bool)
    # overflow: a log-scale interval whose end is beyond floating point is +inf (tiny totals)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        centre = np.where(logs, np.log(np.where(est > 0, est, np.nan)), est)
        ci_low = np.where(
            logs, np.exp(centre - crit * se), np.minimum(np.maximum(est - crit * se, lo), hi)
        )
        ci_high = np.where(
            logs, np.exp(centre + crit * se), np.minimum(np.maximum(est + crit * se, lo), hi)
        )
        ci_low = np.where(bound, np.nan, ci_low)
        ci_high = np.where(bound, np.nan, ci_high)
        z = np.where(se0 > 0, centre / np.where(se0 > 0, se0, 1.0), np.nan)
    p = normal_p_value(z)
    if p_values is not None:
        p = np.array(
            [normal if other is None else other for normal, other in zip(p, p_values, strict=True)]
        )
    full_notes = []
    for key, note, e, s0, at_bound in zip(
        keys, notes, est.tolist(), se0.tolist(), bound.tolist(), strict=True
    ):
        parts = [note] if note else []
        defined = e == e  # not NaN
        if defined and at_bound:
            parts.append(BOUND_NOTE)
        if defined and key != "cramers_v" and not s0 > 0:
            parts.append("no variation under independence: no z test")
        full_notes.append("; ".join(parts))
    columns = {
        "estimate": est,
        "std_error": se,
        "ci_low": ci_low,
        "ci_high": ci_high,
        "std_error_null": se0,
        "z": z,
        "p_value": p,
        "note": np.array(full_notes, dtype=object),
    }
    # an object index and copy=False keep pandas from inspecting every value again
    return pd.DataFrame(
        columns, index=pd.Index(list(keys), name="measure", dtype=object), copy=False
    )
