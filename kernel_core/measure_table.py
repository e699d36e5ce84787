"""Assemble the measures of one table into the public DataFrame, with notes for undefined cases."""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy import special, stats

from .ordinal_measures import ORDINAL_MEASURES, Sampling, delta_variance, ordinal_measure_arrays
from .two_by_two import two_by_two_measures

__all__ = ["COLUMNS", "measures_frame", "measure_label", "normal_p_value"]

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
        "somers_d_col_given_row": f"Somers' d ({col_name} | {row_name})",
        "somers_d_row_given_col": f"Somers' d ({row_name} | {col_name})",
        "somers_d_symmetric": "Somers' d (symmetric)",
        "tau_b": "Kendall's tau-b",
        "tau_c": "Stuart's tau-c",
        "spearman_rho": "Spearman's rho (midranks)",
        "cramers_v": "Cramér's V (nominal)",
        "odds_ratio": "odds ratio",
        "yules_q": "Yule's Q",
        "yules_y": "Yule's Y",
        "risk_difference": f"risk difference ({col_name} = first category)",
        "relative_risk": f"relative risk ({col_name} = first category)",
    }
    return labels.get(key, key)


def normal_p_value(z: np.ndarray | float) -> np.ndarray:
    """Two-sided p-value of a standard normal statistic, NaN where z is NaN."""
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
    any_one = one_row or one_col
    from .concordance import cell_concordance

    conc, disc = cell_concordance(counts)
    untied = (counts * (conc + disc)).sum() > 0
    return {
        "gamma": any_one or ("" if untied else "no pair of units is untied on both variables"),
        "somers_d_col_given_row": one_row,
        "somers_d_row_given_col": one_col,
        "somers_d_symmetric": "" if busy_rows > 1 or busy_cols > 1 else any_one,
        "tau_b": any_one,
        "tau_c": any_one,
        "spearman_rho": any_one,
        "cramers_v": any_one,
    }


def _cramers_v(counts: np.ndarray, sampling: Sampling) -> dict[str, float]:
    """Cramér's V over the non-empty rows and columns, with a delta-method SE.

    ``phi^2 = sum n_ij^2 / (n_i+ n_+j) - 1`` and ``V = sqrt(phi^2 / (m - 1))`` (Cramér 1946,
    sec. 21.9); the gradient of ``phi^2`` is
    ``2 n_kl/(n_k+ n_+l) - sum_j n_kj^2/(n_k+^2 n_+j) - sum_i n_il^2/(n_i+ n_+l^2)``
    (Bishop, Fienberg & Holland 1975, sec. 11.3).
    """
    keep_r = counts.sum(axis=1) > 0
    keep_c = counts.sum(axis=0) > 0
    n = counts[keep_r][:, keep_c]
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
    sq = None if sampling.squared is None else sampling.squared[keep_r][:, keep_c]
    var_phi2 = delta_variance(n, grad_phi2, Sampling(sq, sampling.records))
    se = np.sqrt(var_phi2) / (2 * v * (m - 1)) if v > 0 else np.nan
    return {"estimate": v, "std_error": float(se)}


def measures_frame(
    counts: np.ndarray,
    *,
    sampling: Sampling | None = None,
    confidence: float = 0.95,
    chi_square_p: float = np.nan,
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
    chi_square_p : float
        p-value of Pearson's chi-square test, reported on the Cramér's V row.

    Returns
    -------
    pandas.DataFrame
        Indexed by measure key with columns :data:`COLUMNS`.
    """
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be strictly between 0 and 1 (e.g. 0.95); got {confidence!r}.")
    sampling = sampling or Sampling()
    counts = np.asarray(counts, dtype=float)
    crit = stats.norm.ppf(0.5 + confidence / 2)
    reasons = _undefined_reasons(counts)
    arrays = ordinal_measure_arrays(counts, sampling)
    records = []
    for key in ORDINAL_MEASURES:
        est, se, se0 = (float(arrays[key][f]) for f in ("estimate", "std_error", "std_error_null"))
        note = reasons[key]
        if note:
            est = se = se0 = np.nan
        records.append((key, est, se, se0, note, (-1.0, 1.0), False))
    v_note = reasons["cramers_v"]
    if v_note:
        records.append(("cramers_v", np.nan, np.nan, np.nan, v_note, (0.0, 1.0), False))
    else:
        v = _cramers_v(counts, sampling)
        v_note = "nominal measure; p-value from Pearson's chi-square test"
        if not v["estimate"] > 0:
            v_note += "; V = 0 is on the boundary: no delta-method interval"
        records.append(("cramers_v", v["estimate"], v["std_error"], np.nan, v_note, (0.0, 1.0), False))
    if counts.shape == (2, 2) and counts.sum() > 0:
        for key, m in two_by_two_measures(counts).items():
            bounds = (-1.0, 1.0) if not m["log_scale"] else (0.0, np.inf)
            records.append(
                (key, m["estimate"], m["std_error"], m["std_error_null"], m["note"], bounds,
                 m["log_scale"])
            )

    rows = []
    for key, est, se, se0, note, (lo, hi), log_scale in records:
        notes = [note] if note else []
        centre = np.log(est) if log_scale and est > 0 else est
        with np.errstate(invalid="ignore", divide="ignore"):
            if log_scale:
                ci_low, ci_high = np.exp(centre - crit * se), np.exp(centre + crit * se)
            else:
                ci_low = float(np.clip(est - crit * se, lo, hi))
                ci_high = float(np.clip(est + crit * se, lo, hi))
            z = centre / se0 if se0 > 0 else np.nan
        if key == "cramers_v":
            p = chi_square_p if not np.isnan(est) else np.nan
        else:
            p = float(normal_p_value(z))
        if not np.isnan(est) and se == 0 and key != "cramers_v":
            notes.append("estimate at its bound: the delta-method interval is degenerate; "
                         "use permutation_test")
        if not np.isnan(est) and key != "cramers_v" and not se0 > 0:
            notes.append("no variation under independence: no z test")
        rows.append(
            {"measure": key, "estimate": est, "std_error": se, "ci_low": ci_low,
             "ci_high": ci_high, "std_error_null": se0, "z": z, "p_value": p,
             "note": "; ".join(notes)}
        )
    frame = pd.DataFrame(rows).set_index("measure")
    return frame[COLUMNS]
