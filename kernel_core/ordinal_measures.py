"""Concordance-based measures of ordinal association and their delta-method standard errors.

Every function works on count arrays of shape ``(..., I, J)`` (leading axes are a batch) and
returns arrays of shape ``(...)``. Standard errors come from one rule: each measure supplies its
gradient ``g_ij`` with respect to the cell counts, and

    Var = sum_ij s_ij g_ij^2 - (sum_ij n_ij g_ij)^2 / m

where, for multinomial sampling, ``s_ij = n_ij`` and ``m = n`` (Agresti 2010, ch. 7;
the delta method as in Agresti 2013, sec. 16.1); with survey weights ``n_ij`` is the sum of
weights in the cell, ``s_ij`` the sum of squared weights and ``m`` the number of records,
which is the Taylor linearisation of a with-replacement single-stage sample (Woodruff 1971,
JASA 66:411). The
second term vanishes for measures invariant to the scale of the table (Euler's theorem) but is
kept because it is what makes the null standard errors right.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .concordance import cell_concordance
from .quotient_measures import QUOTIENT_MEASURES, PairSums, quotient_denominator, quotient_rule

__all__ = [
    "ORDINAL_MEASURES",
    "Sampling",
    "bound_flags",
    "delta_variance",
    "ordinal_measure_arrays",
]

ORDINAL_MEASURES = (*QUOTIENT_MEASURES, "spearman_rho")


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
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    Agresti, A. (2013). Categorical Data Analysis, 3rd ed., Wiley, sec. 16.1.
    Woodruff, R. S. (1971). A simple method for approximating the variance of a complicated
    estimate. JASA 66, 411-414.
    """
    # An undefined measure has an infinite gradient in some cell; 0 * inf there gives NaN
    # silently, and the caller explains the NaN.
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        linear = (counts * grad).sum(axis=(-2, -1))
        if sampling.squared is None:
            # the same sum as sum n (g - gbar)^2, gbar = sum n g / n: centring first keeps
            # the digits that the difference of two huge sums would lose (two-pass variance)
            centred = grad - _expand(linear / counts.sum(axis=(-2, -1)))
            var = (counts * centred**2).sum(axis=(-2, -1))
        else:
            square = (sampling.squared * grad**2).sum(axis=(-2, -1))
            var = square - linear**2 / sampling.records
    return np.maximum(var, 0.0)


def _divide(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """``num / den``, NaN where ``den`` is 0."""
    num, den = np.asarray(num, dtype=float), np.asarray(den, dtype=float)
    out = np.full(np.broadcast_shapes(num.shape, den.shape), np.nan)
    np.divide(num, den, out=out, where=den != 0)
    return out


def _inverse(den: np.ndarray) -> np.ndarray:
    """``1 / den``, NaN where ``den`` is 0 (inside ``np.errstate(divide="ignore")``)."""
    return np.where(den != 0, 1 / den, np.nan)


def _expand(x: np.ndarray) -> np.ndarray:
    """Batch-shaped array -> broadcastable against (..., I, J)."""
    return np.asarray(x)[..., None, None]


def bound_flags(counts: np.ndarray) -> dict[str, np.ndarray]:
    """Where each ordinal measure sits on its bound (+1 or -1), decided from pair counts.

    Parameters
    ----------
    counts : ndarray, shape (..., I, J)
        Cell counts or sums of weights.

    Returns
    -------
    dict
        For each key of :data:`ORDINAL_MEASURES`, a boolean array of the batch shape.

    Notes
    -----
    Only which cells are non-empty matters, so the decision is made on the table of 0/1
    indicators, whose pair counts are small exact integers (never on a floating standard
    error). With ``P``, ``Q`` the concordant and discordant pairs and at least two non-empty
    categories on each variable (Goodman & Kruskal 1954; Somers 1962; Kendall 1945):

    * gamma (and Yule's Q) is +/-1 exactly when ``Q = 0`` or ``P = 0``;
    * Somers' d of the columns given the rows is +/-1 when moreover no pair is tied on the
      column variable alone: every non-empty column category holds units of one row category
      only (the denominator ``w_r = P + Q + T_col`` then equals ``|P - Q|``); its transpose
      likewise with rows and columns swapped;
    * tau-b, the symmetric Somers' d and Spearman's rho (midranks) are +/-1 when both Somers'
      d are: the non-empty cells form a one-to-one monotone diagonal;
    * tau-c ``= m (P - Q)/(n^2 (m - 1))`` is +/-1 when the Somers' d whose denominator counts
      pairs untied on the shorter variable is +/-1 and that variable's non-empty categories
      hold equal totals (``w_r <= n^2 (1 - 1/I')`` with equality only then; totals count as
      equal within a relative 1e-12, against the rounding of sums of weights).

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1954). JASA 49, 732-764.
    Somers, R. H. (1962). ASR 27, 799-811.
    Stuart, A. (1953). Biometrika 40, 106-108.
    """
    n = np.asarray(counts, dtype=float)
    filled = (n > 0).astype(float)
    return _bound_flags(n, filled, *cell_concordance(filled))


def _bound_flags(n, filled, conc, disc):
    """:func:`bound_flags` given the 0/1 table of non-empty cells and its concordance."""
    no_concordant = (filled * conc).sum(axis=(-2, -1)) == 0
    no_discordant = (filled * disc).sum(axis=(-2, -1)) == 0
    if not (no_concordant | no_discordant).any():  # the usual case: nothing on a bound
        return {key: np.zeros(no_concordant.shape, dtype=bool) for key in ORDINAL_MEASURES}
    rows_used = (filled.sum(axis=-1) > 0).sum(axis=-1)
    cols_used = (filled.sum(axis=-2) > 0).sum(axis=-1)
    defined = (rows_used >= 2) & (cols_used >= 2)
    monotone = defined & (no_concordant | no_discordant)
    col_given_row = monotone & (filled.sum(axis=-2) <= 1).all(axis=-1)
    row_given_col = monotone & (filled.sum(axis=-1) <= 1).all(axis=-1)
    diagonal = col_given_row & row_given_col

    def equal_margin(margin: np.ndarray) -> np.ndarray:
        top = margin.max(axis=-1)
        low = np.where(margin > 0, margin, np.inf).min(axis=-1)
        return top - low <= 1e-12 * top

    tau_c = (col_given_row & (rows_used <= cols_used) & equal_margin(n.sum(axis=-1))) | (
        row_given_col & (cols_used <= rows_used) & equal_margin(n.sum(axis=-2))
    )
    return {
        "gamma": monotone,
        "somers_d_col_given_row": col_given_row,
        "somers_d_row_given_col": row_given_col,
        "somers_d_symmetric": diagonal,
        "tau_b": diagonal,
        "tau_c": tau_c,
        "spearman_rho": diagonal,
    }


def ordinal_measure_arrays(
    counts: np.ndarray, sampling: Sampling | None = None, gradients: bool = False
) -> dict[str, dict[str, np.ndarray]]:
    """Estimates, standard errors and null standard errors of the ordinal measures.

    Parameters
    ----------
    counts : ndarray, shape (..., I, J)
        Cell counts (or sums of weights) with rows and columns in their order.
    sampling : Sampling, optional
        Survey-weight information for the variances; multinomial counts by default.
    gradients : bool
        Also return each measure's ``gradient`` with respect to the cell totals, shape
        (..., I, J) (for the delta method of functions of several measures).

    Returns
    -------
    dict
        For each key of :data:`ORDINAL_MEASURES`, a dict with arrays ``estimate``,
        ``std_error`` (delta method, no null hypothesis), ``std_error_null`` (under
        independence) and ``on_bound`` (True where the estimate is +/-1, see
        :func:`bound_flags`; there the estimate is exactly +/-1 and ``std_error`` exactly 0),
        each of the batch shape, and ``gradient`` when asked for. Undefined values are NaN;
        the caller turns the cause into a note.

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
    the exact permutation standard deviation of a correlation (the linear trend test M² with
    midrank scores, Agresti 2010, ch. 2); with survey weights it is the same variance rule
    applied to the gradient of the numerator under independence, ``u_i v_j`` (centred
    midranks) (Woodruff 1971): its ratio to the multinomial variance of as many records
    drawn simply, a design effect (Kish 1965), multiplies ``1/(m - 1)``, ``m`` the
    number of records, so constant weights give exactly the unweighted value.

    These formulas reproduce the published ones: for gamma, for instance,
    ``SE = 4/(P + Q)^2 sqrt(sum n_ij (Q C_ij - P D_ij)^2)``. The first six are written once,
    in :mod:`rankfold.quotient_measures` (each denominator with its gradient, and the quotient
    rule), which the collapsing sweep's kernel calls too.

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1954, 1963, 1972), JASA 49:732, 58:310, 67:415.
    Brown, M. B. & Benedetti, J. K. (1977). Sampling behavior of tests for correlation in
    two-way contingency tables. JASA 72, 309-315.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    """
    with np.errstate(invalid="ignore", divide="ignore"):  # undefined: NaN, explained later
        return _ordinal_measure_arrays(np.asarray(counts, dtype=float), sampling or Sampling(),
                                       gradients)


def _ordinal_measure_arrays(n, sampling, gradients):
    """The body of :func:`ordinal_measure_arrays` (NaN where a denominator is 0)."""
    total = n.sum(axis=(-2, -1))
    rows = n.sum(axis=-1)
    cols = n.sum(axis=-2)
    # the counts and the 0/1 table of non-empty cells (for bound_flags) in one pass
    filled = (n > 0).astype(float)
    both = cell_concordance(np.stack([n, filled]))
    conc, disc = both[0][0], both[1][0]
    d = conc - disc
    P = (n * conc).sum(axis=(-2, -1))
    Q = (n * disc).sum(axis=(-2, -1))
    S = P - Q
    # n^2 - sum n_i+^2 summed as sum n_i+ (n - n_i+): no cancellation at huge counts
    row_rest = np.asarray(total)[..., None] - rows
    col_rest = np.asarray(total)[..., None] - cols
    w_r = (rows * row_rest).sum(axis=-1)
    w_c = (cols * col_rest).sum(axis=-1)
    m = np.minimum((rows > 0).sum(axis=-1), (cols > 0).sum(axis=-1)).astype(float)
    sums = PairSums(conc, disc, row_rest[..., :, None], col_rest[..., None, :], _expand(total),
                    _expand(P), _expand(Q), _expand(w_r), _expand(w_c), _expand(m))
    # the six quotient measures stacked on axis -3, evaluated by one quotient rule
    dens = np.empty((*n.shape[:-2], len(QUOTIENT_MEASURES), 1, 1))
    den_grads = np.empty((*n.shape[:-2], len(QUOTIENT_MEASURES), *n.shape[-2:]))
    for k, key in enumerate(QUOTIENT_MEASURES):
        dens[..., k, :, :], den_grads[..., k, :, :] = quotient_denominator(key, sums)
    estimates, grads = quotient_rule(_expand(S)[..., None, :, :], dens, d[..., None, :, :],
                                     den_grads)
    estimates, inverse = estimates[..., 0, 0], _inverse(dens[..., 0, 0])
    spearman = _spearman(n, rows, cols, total, sampling, gradients=True)
    grads = np.concatenate([grads, spearman["gradient"][..., None, :, :]], axis=-3)
    stacked = sampling
    if sampling.squared is not None:
        stacked = Sampling(np.asarray(sampling.squared, dtype=float)[..., None, :, :],
                           np.asarray(sampling.records, dtype=float)[..., None])
    errors = np.sqrt(delta_variance(n[..., None, :, :], grads, stacked))
    # The null gradient of every quotient is 2 d_ij / den, so one variance of the numerator
    # P - Q serves them all.
    numerator_se = np.sqrt(delta_variance(n, 2 * d, sampling))
    nulls = numerator_se[..., None] * np.abs(inverse)
    flags = _bound_flags(n, filled, both[0][1], both[1][1])

    out: dict[str, dict[str, np.ndarray]] = {}
    for k, key in enumerate(ORDINAL_MEASURES):
        if key == "spearman_rho":
            found = {f: spearman[f] for f in ("estimate", "std_error_null")}
        else:
            found = {"estimate": estimates[..., k], "std_error_null": nulls[..., k]}
        found["std_error"] = errors[..., k]
        if gradients:
            found["gradient"] = grads[..., k, :, :]
        # On its bound the delta-method error is 0 in exact arithmetic; rounding leaves ~1e-17.
        flag = flags[key]
        found["on_bound"] = flag
        if flag.any():
            found["estimate"] = np.where(flag, np.sign(found["estimate"]), found["estimate"])
            found["std_error"] = np.where(flag, 0.0, found["std_error"])
        out[key] = {f: found[f] for f in ("estimate", "std_error", "std_error_null", "on_bound",
                                          *(("gradient",) if gradients else ()))}
    return out


def _centred_midranks(margin: np.ndarray, total: np.ndarray) -> np.ndarray:
    """Midrank scores less their mean: units before the category plus half of it, less n/2."""
    return np.cumsum(margin, axis=-1) - margin / 2 - np.asarray(total)[..., None] / 2


def _spearman(n, rows, cols, total, sampling, gradients=False):
    """Spearman's rho with midrank scores: estimate, delta-method and permutation SEs.

    With the centred midranks ``u_i = N_(<i) + n_i+/2 - n/2`` and ``v_j`` likewise,
    ``S_uv = sum n_ij u_i v_j`` and ``S_uu = sum n_i+ u_i^2 = (n^3 - sum n_i+^3)/12``; centring
    first keeps the digits that ``sum n_ij a_i b_j - n^3/4`` loses at huge counts.
    Differentiating (each ``u_i`` moves by ``([k < i] - [k > i])/2`` when ``n_kl`` grows), with
    ``R_i = sum_j n_ij v_j`` and ``K_j = sum_i n_ij u_i``, which sum to 0:
    ``dS_uv/dn_kl = u_k v_l + sum_(i>k) R_i + R_k/2 + sum_(j>l) K_j + K_l/2`` and
    ``dS_uu/dn_kl = (n - n_k+)(n + n_k+)/4``; then
    ``d rho = dS_uv/sqrt(S_uu S_vv) - rho/2 (dS_uu/S_uu + dS_vv/S_vv)``.
    """
    u = _centred_midranks(rows, total)
    v = _centred_midranks(cols, total)
    N = _expand(total)
    s_uv = (n * u[..., :, None] * v[..., None, :]).sum(axis=(-2, -1))
    s_uu = (rows * u**2).sum(axis=-1)
    s_vv = (cols * v**2).sum(axis=-1)
    denom = np.sqrt(np.maximum(s_uu * s_vv, 0.0))
    rho = _divide(s_uv, denom)
    R = (n * v[..., None, :]).sum(axis=-1)
    K = (n * u[..., :, None]).sum(axis=-2)
    R_after = R.sum(axis=-1, keepdims=True) - np.cumsum(R, axis=-1)
    K_after = K.sum(axis=-1, keepdims=True) - np.cumsum(K, axis=-1)
    d_suv = (
        u[..., :, None] * v[..., None, :]
        + (R_after + R / 2)[..., :, None]
        + (K_after + K / 2)[..., None, :]
    )
    d_suu = ((N[..., 0] - rows) * (N[..., 0] + rows) / 4)[..., :, None]
    d_svv = ((N[..., 0] - cols) * (N[..., 0] + cols) / 4)[..., None, :]
    with np.errstate(invalid="ignore", divide="ignore"):
        grad = d_suv / _expand(denom) - _expand(rho) / 2 * (
            d_suu / _expand(s_uu) + d_svv / _expand(s_vv)
        )
    se = np.sqrt(delta_variance(n, grad, sampling))
    if sampling.squared is None:
        with np.errstate(invalid="ignore", divide="ignore"):
            se_null = np.where(total > 1, 1 / np.sqrt(np.maximum(total - 1, 1e-300)), np.nan)
    else:
        # Under independence R_i = K_j = 0, so the numerator's gradient is u_i v_j. Its
        # linearised variance against the multinomial one of as many records drawn simply
        # (N/m times the rule with s = n) is the design effect of the weights on this
        # statistic; it scales the permutation standard error of the m records, so constant
        # weights give exactly the unweighted 1/sqrt(m - 1).
        null_grad = u[..., :, None] * v[..., None, :]
        weighted = delta_variance(n, null_grad, sampling)
        records = np.asarray(sampling.records, dtype=float)
        simple = delta_variance(n, null_grad, Sampling()) * _divide(total, records)
        with np.errstate(invalid="ignore", divide="ignore"):
            se_null = np.where(
                records > 1,
                np.sqrt(_divide(weighted, simple) / np.maximum(records - 1, 1e-300)),
                np.nan,
            )
    se_null = np.where(np.isnan(rho), np.nan, se_null)
    found = {"estimate": rho, "std_error": se, "std_error_null": se_null}
    if gradients:
        found["gradient"] = grad
    return found
