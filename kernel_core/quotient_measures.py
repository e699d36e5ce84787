"""The six ordinal measures that are quotients of concordant less discordant pairs.

Gamma, Somers' d (column given row, row given column, symmetric), tau-b and tau-c all divide
``S = P - Q`` (concordant less discordant pairs) by a denominator of their own. This module
holds, once, each denominator with its gradient with respect to the cell counts
(:func:`quotient_denominator`) and the quotient rule that turns them into the estimate and
its gradient (:func:`quotient_rule`). The two kernels that compute these measures call both:
:func:`rankfold.ordinal_measures.ordinal_measure_arrays` (batch first, arrays
``(..., I, J)``, the six measures stacked) and
:func:`rankfold.merge_sweep_kernel.sweep_measure_arrays` (cells first, arrays ``(I, J, B)``,
the measures asked for). Neither layout is assumed here: the caller shapes every argument to
broadcast against its per-cell arrays (per-table quantities ``(..., 1, 1)`` batch first,
``(B,)`` cells first; per-row quantities ``(..., I, 1)`` or ``(I, 1, B)``).

Call these functions inside ``np.errstate(divide="ignore", invalid="ignore")``: a
denominator of 0 makes the measure undefined (NaN), and the caller explains why.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

__all__ = ["QUOTIENT_MEASURES", "PairSums", "quotient_denominator", "quotient_rule"]

QUOTIENT_MEASURES = (
    "gamma",
    "somers_d_col_given_row",
    "somers_d_row_given_col",
    "somers_d_symmetric",
    "tau_b",
    "tau_c",
)


@dataclass(frozen=True)
class PairSums:
    """What the denominators are made of, shaped to broadcast in the caller's layout.

    Attributes
    ----------
    concordant, discordant : ndarray
        Per cell: units concordant (``C_ij``) and discordant (``D_ij``) with a unit in the cell.
    row_rest, col_rest : ndarray
        Per row ``n - n_i+`` and per column ``n - n_+j`` (units outside the row or column).
    total : ndarray
        Per table: ``n``.
    P, Q : ndarray
        Per table: concordant ``sum n_ij C_ij`` and discordant ``sum n_ij D_ij`` pairs.
    w_r, w_c : ndarray
        Per table: ``n^2 - sum n_i+^2`` and ``n^2 - sum n_+j^2`` (pairs untied on the rows,
        on the columns), best summed as ``sum n_i+ (n - n_i+)``.
    categories : ndarray
        Per table: the smaller number of non-empty categories of the two variables (tau-c's
        ``m``).
    """

    concordant: np.ndarray
    discordant: np.ndarray
    row_rest: np.ndarray
    col_rest: np.ndarray
    total: np.ndarray
    P: np.ndarray
    Q: np.ndarray
    w_r: np.ndarray
    w_c: np.ndarray
    categories: np.ndarray


def _gamma(s: PairSums) -> tuple[np.ndarray, np.ndarray]:
    """``P + Q``, gradient ``2 (C_ij + D_ij)``."""
    return s.P + s.Q, 2 * (s.concordant + s.discordant)


def _col_given_row(s: PairSums) -> tuple[np.ndarray, np.ndarray]:
    """``w_r = n^2 - sum n_i+^2``, gradient ``2 (n - n_i+)``."""
    return s.w_r, 2 * s.row_rest


def _row_given_col(s: PairSums) -> tuple[np.ndarray, np.ndarray]:
    """``w_c = n^2 - sum n_+j^2``, gradient ``2 (n - n_+j)``."""
    return s.w_c, 2 * s.col_rest


def _symmetric(s: PairSums) -> tuple[np.ndarray, np.ndarray]:
    """``(w_r + w_c) / 2``, gradient ``(n - n_i+) + (n - n_+j)``."""
    return (s.w_r + s.w_c) / 2, s.row_rest + s.col_rest


def _tau_b(s: PairSums) -> tuple[np.ndarray, np.ndarray]:
    """``w = sqrt(w_r w_c)``, gradient ``(w_c (n - n_i+) + w_r (n - n_+j)) / w``."""
    w = np.sqrt(np.maximum(s.w_r * s.w_c, 0.0))  # rounding: w_r < 0 by 1 ulp
    inverse = np.where(w != 0, 1 / w, np.nan)
    # per-table factors first, so the only full-size step is the sum
    return w, s.row_rest * (s.w_c * inverse) + s.col_rest * (s.w_r * inverse)


def _tau_c(s: PairSums) -> tuple[np.ndarray, np.ndarray]:
    """``(m - 1) n^2 / m`` (undefined for ``m < 2``), gradient ``2 (m - 1) n / m``.

    The gradient is the same in every cell: the multinomial variance ignores it, the
    survey-weight variance does not.
    """
    m = s.categories
    den = np.where(m >= 2, (m - 1) * s.total**2 / m, np.nan)
    return den, 2 * den / s.total


_DENOMINATORS: dict[str, Callable[[PairSums], tuple[np.ndarray, np.ndarray]]] = {
    "gamma": _gamma,
    "somers_d_col_given_row": _col_given_row,
    "somers_d_row_given_col": _row_given_col,
    "somers_d_symmetric": _symmetric,
    "tau_b": _tau_b,
    "tau_c": _tau_c,
}


def quotient_denominator(key: str, sums: PairSums) -> tuple[np.ndarray, np.ndarray]:
    """Denominator of one quotient measure and its gradient with respect to the cell counts.

    Parameters
    ----------
    key : str
        One of :data:`QUOTIENT_MEASURES`.
    sums : PairSums
        The table's pair sums, shaped to broadcast in the caller's layout.

    Returns
    -------
    den : ndarray
        Per table (the shape of ``sums.P``); NaN where the measure is undefined for another
        reason than a zero denominator (tau-c with fewer than two categories).
    den_grad : ndarray
        ``d den / d n_ij``, broadcastable against the per-cell arrays (per cell, per row,
        per column or per table, whichever the formula needs).

    Notes
    -----
    With ``w_r = n^2 - sum n_i+^2``, ``w_c = n^2 - sum n_+j^2`` and ``m`` the smaller number
    of non-empty categories, the denominators are

    * gamma: ``P + Q`` (Goodman & Kruskal 1954, 1963);
    * Somers' d of the columns given the rows: ``w_r``; of the rows given the columns:
      ``w_c``; symmetric: ``(w_r + w_c) / 2`` (Somers 1962);
    * tau-b: ``sqrt(w_r w_c)`` (Kendall 1945; Agresti 2010, ch. 7);
    * tau-c: ``(m - 1) n^2 / m`` (Stuart 1953).

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1954, 1963). JASA 49, 732-764; 58, 310-364.
    Somers, R. H. (1962). A new asymmetric measure of association for ordinal variables.
    ASR 27, 799-811.
    Kendall, M. G. (1945). The treatment of ties in ranking problems. Biometrika 33, 239-251.
    Stuart, A. (1953). The estimation and comparison of strengths of association in
    contingency tables. Biometrika 40, 106-108.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    """
    return _DENOMINATORS[key](sums)


def quotient_rule(
    S: np.ndarray, den: np.ndarray, d: np.ndarray, den_grad: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Estimate ``S / den`` and its gradient ``(2 d_ij den - S den'_ij) / den^2``.

    Parameters
    ----------
    S : ndarray
        ``P - Q`` per table, shaped to broadcast against ``den``.
    den : ndarray
        The denominator per table (:func:`quotient_denominator`); several measures may be
        stacked on an axis of their own.
    d : ndarray
        ``C_ij - D_ij`` per cell (half the gradient of ``S``).
    den_grad : ndarray
        ``d den / d n_ij``, broadcastable against ``d`` (and the stacked measures).

    Returns
    -------
    estimate : ndarray
        ``S / den``, NaN where ``den`` is 0 or NaN.
    gradient : ndarray
        Its gradient with respect to the cell counts, the broadcast shape of ``den`` and
        ``d``; :func:`rankfold.ordinal_measures.delta_variance` of it is the variance.

    Notes
    -----
    ``S = sum n_ij (C_ij - D_ij)`` is a symmetric quadratic form in the counts (each pair is
    seen from both of its cells), so its gradient is ``2 d_ij`` (Goodman & Kruskal 1963;
    Agresti 2010, ch. 7); the rest is the derivative of a quotient.

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1963). JASA 58, 310-364.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    """
    inverse = np.where(den != 0, 1 / den, np.nan)
    estimate = S * inverse
    # per-table factors first: two full-size steps
    gradient = (2 * inverse) * d
    gradient -= (S * inverse**2) * den_grad
    return estimate, gradient
