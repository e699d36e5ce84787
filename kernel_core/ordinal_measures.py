"""Concordance-based measures of ordinal association and their delta-method standard errors.

Every function works on count arrays of shape ``(..., I, J)`` (leading axes are a batch) and
returns arrays of shape ``(...)``. Standard errors come from one rule: each measure supplies its
gradient ``g_ij`` with respect to the cell counts, and

    Var = sum_ij s_ij g_ij^2 - (sum_ij n_ij g_ij)^2 / m

where, for multinomial sampling, ``s_ij = n_ij`` and ``m = n`` (Agresti 2010, sec. 7.1.3 and
appendix on the delta method); with survey weights ``n_ij`` is the sum of weights in the cell,
``s_ij`` the sum of squared weights and ``m`` the number of records, which is the Taylor
linearisation of a with-replacement single-stage sample (Woodruff 1971, JASA 66:411). The
second term vanishes for measures invariant to the scale of the table (Euler's theorem) but is
kept because it is what makes the null standard errors right.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .concordance import cell_concordance

__all__ = ["ORDINAL_MEASURES", "Sampling", "ordinal_measure_arrays", "delta_variance"]

ORDINAL_MEASURES = (
    "gamma",
    "somers_d_col_given_row",
    "somers_d_row_given_col",
    "somers_d_symmetric",
    "tau_b",
    "tau_c",
    "spearman_rho",
)


@dataclass(frozen=True)
class Sampling:
    """How the cell totals arose, for variance estimation.

    ``squared`` holds per-cell sums of squared weights and ``records`` the number of data rows
    (shape of the batch) when the totals are sums of survey (sampling) weights; both are None
    for counts and frequency weights, which are treated as multinomial counts.
    """

    squared: np.ndarray | None = None
    records: np.ndarray | None = None


def delta_variance(counts: np.ndarray, grad: np.ndarray, sampling: Sampling) -> np.ndarray:
    """Delta-method variance ``sum s g^2 - (sum n g)^2 / m`` over the last two axes.

    Parameters
    ----------
    counts : ndarray, shape (..., I, J)
        Cell totals ``n_ij``.
    grad : ndarray, shape (..., I, J)
        Gradient of the statistic with respect to the cell totals.
    sampling : Sampling
        Multinomial counts (default) or survey-weight sums, see :class:`Sampling`.

    Returns
    -------
    ndarray, shape (...)
        The variance, floored at 0 against rounding.

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., sec. 7.1.3.
    Woodruff, R. S. (1971). A simple method for approximating the variance of a complicated
    estimate. JASA 66, 411-414.
    """
    # An undefined measure has an infinite gradient in some cell; 0 * inf there gives NaN
    # silently, and the caller explains the NaN.
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        linear = (counts * grad).sum(axis=(-2, -1))
        if sampling.squared is None:
            square = (counts * grad**2).sum(axis=(-2, -1))
            m = counts.sum(axis=(-2, -1))
        else:
            square = (sampling.squared * grad**2).sum(axis=(-2, -1))
            m = sampling.records
        var = square - linear**2 / m
    return np.maximum(var, 0.0)


def _divide(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den != 0, num / np.where(den != 0, den, 1.0), np.nan)


def _expand(x: np.ndarray) -> np.ndarray:
    """Batch-shaped array -> broadcastable against (..., I, J)."""
    return np.asarray(x)[..., None, None]


def ordinal_measure_arrays(
    counts: np.ndarray, sampling: Sampling | None = None
) -> dict[str, dict[str, np.ndarray]]:
    """Estimates, standard errors and null standard errors of the ordinal measures.

    Parameters
    ----------
    counts : ndarray, shape (..., I, J)
        Cell counts (or sums of weights) with rows and columns in their order.
    sampling : Sampling, optional
        Survey-weight information for the variances; multinomial counts by default.

    Returns
    -------
    dict
        For each key of :data:`ORDINAL_MEASURES`, a dict with arrays ``estimate``,
        ``std_error`` (delta method, no null hypothesis) and ``std_error_null`` (under
        independence), each of the batch shape. Undefined values are NaN; the caller turns
        the cause into a note.

    Notes
    -----
    With ``P = sum n_ij C_ij``, ``Q = sum n_ij D_ij``, ``d_ij = C_ij - D_ij``,
    ``w_r = n^2 - sum n_i+^2`` and ``w_c = n^2 - sum n_+j^2``:

    * gamma ``= (P - Q)/(P + Q)``, gradient ``4(Q C_ij - P D_ij)/(P + Q)^2``
      (Goodman & Kruskal 1963, JASA 58:310);
    * Somers' d (column given row) ``= (P - Q)/w_r``, gradient
      ``2(w_r d_ij - (P - Q)(n - n_i+))/w_r^2``, and its transpose (Somers 1962, ASR 27:799);
      the symmetric version divides by ``(w_r + w_c)/2``;
    * tau-b ``= (P - Q)/w``, ``w = sqrt(w_r w_c)``, gradient
      ``(2 w d_ij + tau_b v_ij - tau_b n (w_r + w_c))/w^2`` with
      ``v_ij = n_i+ w_c + n_+j w_r``;
    * tau-c ``= m (P - Q)/(n^2 (m - 1))``, ``m`` the smaller number of non-empty categories,
      gradient ``2 m (d_ij - (P - Q)/n) / ((m - 1) n^2)`` (Stuart 1953, Biometrika 40:106);
    * Spearman's rho with midrank scores, the Pearson correlation of the scores, whose
      gradient is derived in the code below.

    The null standard error of the first five is ``2/den * sqrt(sum n d^2 - (P - Q)^2 / n)``,
    i.e. the same variance rule applied to the gradient ``2 d_ij / den`` of the numerator
    alone (Brown & Benedetti 1977, JASA 72:309). For Spearman's rho it is ``1/sqrt(n - 1)``,
    the exact permutation standard deviation of a correlation (the linear-by-linear test with
    midrank scores, Agresti 2010, sec. 2.2); with survey weights ``n`` is Kish's effective size.

    These formulas reproduce the published ones: for gamma, for instance,
    ``SE = 4/(P + Q)^2 sqrt(sum n_ij (Q C_ij - P D_ij)^2)``.

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1954, 1963, 1972), JASA 49:732, 58:310, 67:415.
    Brown, M. B. & Benedetti, J. K. (1977). Sampling behavior of tests for correlation in
    two-way contingency tables. JASA 72, 309-315.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    """
    n = np.asarray(counts, dtype=float)
    sampling = sampling or Sampling()
    total = n.sum(axis=(-2, -1))
    rows = n.sum(axis=-1)
    cols = n.sum(axis=-2)
    conc, disc = cell_concordance(n)
    d = conc - disc
    P = (n * conc).sum(axis=(-2, -1))
    Q = (n * disc).sum(axis=(-2, -1))
    S = P - Q
    w_r = total**2 - (rows**2).sum(axis=-1)
    w_c = total**2 - (cols**2).sum(axis=-1)
    N = _expand(total)
    row_grid = rows[..., :, None]
    col_grid = cols[..., None, :]

    # The null gradient of every measure below is 2 d_ij times a per-table constant, so one
    # variance of the numerator P - Q serves them all.
    numerator_se = np.sqrt(delta_variance(n, 2 * d, sampling))

    def finish(estimate, grad, null_scale):
        with np.errstate(invalid="ignore"):
            null = numerator_se * np.abs(null_scale)
        return {
            "estimate": estimate,
            "std_error": np.sqrt(delta_variance(n, grad, sampling)),
            "std_error_null": null,
        }

    out: dict[str, dict[str, np.ndarray]] = {}

    # Each quotient numerator / den: numerator gradient 2 d_ij, den gradient given.
    def ratio(den, den_grad):
        estimate = _divide(S, den)
        den_x = _expand(den)
        with np.errstate(invalid="ignore", divide="ignore"):
            grad = (2 * d * den_x - _expand(S) * den_grad) / den_x**2
        return finish(estimate, grad, _divide(1.0, den))

    out["gamma"] = ratio(P + Q, 2 * (conc + disc))
    out["somers_d_col_given_row"] = ratio(w_r, 2 * (N - row_grid))
    out["somers_d_row_given_col"] = ratio(w_c, 2 * (N - col_grid))
    out["somers_d_symmetric"] = ratio((w_r + w_c) / 2, 2 * N - row_grid - col_grid)

    w = np.sqrt(np.maximum(w_r * w_c, 0.0))  # rounding: w_r < 0 by 1 ulp
    tau_b = _divide(S, w)
    w_x, tau_x = _expand(w), _expand(tau_b)
    v = row_grid * _expand(w_c) + col_grid * _expand(w_r)
    with np.errstate(invalid="ignore", divide="ignore"):
        grad = (2 * w_x * d + tau_x * v - tau_x * N * _expand(w_r + w_c)) / w_x**2
    out["tau_b"] = finish(tau_b, grad, _divide(1.0, w))

    m = np.minimum((rows > 0).sum(axis=-1), (cols > 0).sum(axis=-1)).astype(float)
    scale = _divide(m, (m - 1) * total**2)
    scale = np.where(m >= 2, scale, np.nan)
    # d/dn_ij of S / n^2 is (2 d_ij - 2 S / n) / n^2: the second term is the same in every
    # cell, so multinomial variances ignore it, but survey-weight variances do not.
    with np.errstate(invalid="ignore", divide="ignore"):  # empty table: NaN, explained later
        grad = 2 * (d - _expand(S) / N) * _expand(scale)
    out["tau_c"] = finish(S * scale, grad, scale)

    out["spearman_rho"] = _spearman(n, rows, cols, total, sampling)
    return out


def _midrank_scores(margin: np.ndarray) -> np.ndarray:
    """Midranks minus 1/2: units before the category plus half the category."""
    return np.cumsum(margin, axis=-1) - margin / 2


def _spearman(n, rows, cols, total, sampling):
    """Spearman's rho with midrank scores: estimate, delta-method and permutation SEs.

    With ``a_i = N_(<i) + n_i+/2`` and ``b_j`` likewise (midranks less 1/2, which leaves the
    correlation unchanged), ``sum n_i+ a_i = n^2/2``, so
    ``S_ab = sum n_ij a_i b_j - n^3/4`` and ``S_aa = (n^3 - sum n_i+^3)/12``.
    Differentiating, with ``R_i = sum_j n_ij b_j`` and ``K_j = sum_i n_ij a_i``:
    ``dS_ab/dn_kl = a_k b_l + sum_(i>k) R_i + R_k/2 + sum_(j>l) K_j + K_l/2 - 3 n^2/4`` and
    ``dS_aa/dn_kl = (n^2 - n_k+^2)/4``; then
    ``d rho = dS_ab/sqrt(S_aa S_bb) - rho/2 (dS_aa/S_aa + dS_bb/S_bb)``.
    """
    a = _midrank_scores(rows)
    b = _midrank_scores(cols)
    N = _expand(total)
    s_ab = (n * a[..., :, None] * b[..., None, :]).sum(axis=(-2, -1)) - total**3 / 4
    s_aa = (total**3 - (rows**3).sum(axis=-1)) / 12
    s_bb = (total**3 - (cols**3).sum(axis=-1)) / 12
    denom = np.sqrt(np.maximum(s_aa * s_bb, 0.0))
    rho = _divide(s_ab, denom)
    R = (n * b[..., None, :]).sum(axis=-1)
    K = (n * a[..., :, None]).sum(axis=-2)
    R_after = R.sum(axis=-1, keepdims=True) - np.cumsum(R, axis=-1)
    K_after = K.sum(axis=-1, keepdims=True) - np.cumsum(K, axis=-1)
    d_sab = (
        a[..., :, None] * b[..., None, :]
        + (R_after + R / 2)[..., :, None]
        + (K_after + K / 2)[..., None, :]
        - 3 * N**2 / 4
    )
    d_saa = ((N[..., 0] ** 2 - rows**2) / 4)[..., :, None]
    d_sbb = ((N[..., 0] ** 2 - cols**2) / 4)[..., None, :]
    with np.errstate(invalid="ignore", divide="ignore"):
        grad = d_sab / _expand(denom) - _expand(rho) / 2 * (
            d_saa / _expand(s_aa) + d_sbb / _expand(s_bb)
        )
    se = np.sqrt(delta_variance(n, grad, sampling))
    if sampling.squared is None:
        size = total
    else:
        size = total**2 / sampling.squared.sum(axis=(-2, -1))
    with np.errstate(invalid="ignore", divide="ignore"):
        se_null = np.where(size > 1, 1 / np.sqrt(np.maximum(size - 1, 1e-300)), np.nan)
    se_null = np.where(np.isnan(rho), np.nan, se_null)
    return {"estimate": rho, "std_error": se, "std_error_null": se_null}
