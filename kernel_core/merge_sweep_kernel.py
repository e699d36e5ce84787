"""Merged tables and their ordinal measures for many codings at once, for the collapsing sweep.

The sweep evaluates up to hundreds of thousands of small tables (2 x 2 to 10 x 10). Arrays
here keep the cells first and the batch last: a batch of ``B`` tables of ``I'`` rows and
``J'`` columns is an array of shape ``(I', J', B)``, so that every step (a cell-wise product,
a running sum over rows, a sum over cells) runs over long contiguous runs of the batch instead
of over tiny tables one at a time. :func:`batch_view` shows such an array in the core's usual
shape ``(B, I', J')`` (a view, no copy), which is how :func:`delta_variance`, the one variance
rule, receives the gradients below.

Merging neighbouring categories is linear: the merged table of a row coding ``R`` (a 0/1
matrix of shape ``(I', I)``, one row per merged category) and a column coding ``C`` is
``R N C^T``. For every row coding of one size and every column coding of one size this is
two matrix products, with exact sums for whole counts and exact zeros for empty blocks.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from .ordinal_measures import Sampling, bound_flags, delta_variance
from .quotient_measures import QUOTIENT_MEASURES, PairSums, quotient_denominator, quotient_rule

__all__ = [
    "SWEEP_KERNEL_MEASURES",
    "batch_view",
    "concordance_cells_first",
    "interval_positions",
    "merge_matrices",
    "merged_cells",
    "one_thread_product",
    "paired_change_variance",
    "rectangle_moments",
    "sweep_measure_arrays",
]

#: The measures :func:`sweep_measure_arrays` computes (the others come from the core's
#: :func:`~rankfold.ordinal_measures.ordinal_measure_arrays`).
SWEEP_KERNEL_MEASURES = QUOTIENT_MEASURES


def merge_matrices(groups: np.ndarray, count: int) -> np.ndarray:
    """0/1 merge matrices of several codings of one axis into ``count`` categories.

    Parameters
    ----------
    groups : ndarray of int, shape (M, I)
        For each coding, the merged category each original category falls in.
    count : int
        Number of merged categories of every coding.

    Returns
    -------
    ndarray, shape (M, count, I)
        ``out[k, a, i]`` is 1 when category ``i`` belongs to merged category ``a`` of coding
        ``k``, else 0.
    """
    return (np.asarray(groups)[:, None, :] == np.arange(count)[None, :, None]).astype(float)


def merged_cells(cells: np.ndarray, row_merge: np.ndarray, col_merge: np.ndarray) -> np.ndarray:
    """Every merged table ``R_k N C_l^T`` of one table, cells first.

    Parameters
    ----------
    cells : ndarray, shape (I, J)
        The table as swept.
    row_merge : ndarray, shape (M_r, I', I)
        Row merge matrices (:func:`merge_matrices`).
    col_merge : ndarray, shape (M_c, J', J)
        Column merge matrices.

    Returns
    -------
    ndarray, shape (I', J', M_r * M_c)
        The merged tables, the batch ordered by row coding, then column coding.

    Notes
    -----
    Each merged cell sums the original cells of its block (the other terms are products with
    0), so whole counts stay exact and a block without units is exactly 0.

    Examples
    --------
    Rows 1-2 | 3 and columns 1 | 2-3 of a 3 x 3 table:

    >>> import numpy as np
    >>> rows = merge_matrices(np.array([[0, 0, 1]]), 2)
    >>> cols = merge_matrices(np.array([[0, 1, 1]]), 2)
    >>> merged_cells(np.arange(9).reshape(3, 3), rows, cols)[..., 0]
    array([[ 3., 12.],
           [ 6., 15.]])
    """
    m_r, rows, size_r = row_merge.shape
    m_c, cols, size_c = col_merge.shape
    left = one_thread_product(row_merge.reshape(m_r * rows, size_r),
                              np.asarray(cells, dtype=float))
    both = one_thread_product(left, col_merge.reshape(m_c * cols, size_c).T)  # (M_r I', M_c J')
    both = both.reshape(m_r, rows, m_c, cols).transpose(1, 3, 0, 2)
    return np.ascontiguousarray(both).reshape(rows, cols, m_r * m_c)


#: OpenBLAS runs a product on one thread when m * n * k is at most 4 * 65536 (its
#: GEMM_MULTITHREAD_THRESHOLD times SMP_THRESHOLD_MIN).
ONE_THREAD_WORK = 4 * 65536


def one_thread_product(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a @ b`` for 2-D arrays, in slices of rows small enough for one BLAS thread each.

    The sweep's products are many and small (``k`` is the number of categories). On a busy
    machine a threaded BLAS spends more processor time waiting for its threads than the
    product takes (measured: the 10 x 10 sweep used 2.4 times the processor time of the same
    sweep on one thread), so each slice is kept below the size at which OpenBLAS starts
    threads. Other BLAS libraries simply get several smaller calls.

    Parameters
    ----------
    a : ndarray, shape (m, k)
    b : ndarray, shape (k, n)

    Returns
    -------
    ndarray, shape (m, n)
        The product; each row is computed by one BLAS call over the same terms as ``a @ b``.
    """
    rows, inner = a.shape
    cols = b.shape[1]
    step = max(1, ONE_THREAD_WORK // max(1, inner * cols))
    if step >= rows:
        return a @ b
    out = np.empty((rows, cols), dtype=np.result_type(a, b))
    for start in range(0, rows, step):
        np.matmul(a[start:start + step], b, out=out[start:start + step])
    return out


def batch_view(x: np.ndarray) -> np.ndarray:
    """A cells-first array seen batch first, without a copy.

    Parameters
    ----------
    x : ndarray, shape (I', J', ...)
        Cells first, the batch after.

    Returns
    -------
    ndarray, shape (..., I', J')
        A view of ``x`` with the batch axes first, as the core's batched functions take it.
    """
    return x.transpose((*range(2, x.ndim), 0, 1))


def _accumulate(x: np.ndarray, axis: int, reverse: bool = False) -> None:
    """Inclusive running sums along a cells axis (0 or 1), in place, one slice at a time.

    Summing slice after slice keeps the order of ``numpy.cumsum`` (so the same rounding) and
    runs over whole batches at once; ``numpy.cumsum`` on a leading axis is far slower.
    """
    view = np.moveaxis(x, axis, 0)
    steps = range(view.shape[0] - 2, -1, -1) if reverse else range(1, view.shape[0])
    for k in steps:
        view[k] += view[k + 1] if reverse else view[k - 1]


def concordance_cells_first(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Units concordant and discordant with one unit in each cell, for cells-first batches.

    Parameters
    ----------
    counts : ndarray, shape (I, J, ...)
        Cell counts, cells first and the batch after.

    Returns
    -------
    concordant, discordant : ndarray, shape (I, J, ...)
        ``C_ij`` (units strictly above-left or strictly below-right of cell (i, j)) and
        ``D_ij`` (strictly above-right or below-left), as
        :func:`rankfold.concordance.cell_concordance` gives them for batch-first arrays.

    Notes
    -----
    The same running sums as :func:`rankfold.concordance.cell_concordance` (Goodman &
    Kruskal 1954; Agresti 2010, ch. 7), in the same order, so a region without units gives
    exactly 0 also for weighted totals.
    """
    n = np.asarray(counts, dtype=float)
    above = np.zeros_like(n)  # rows < i, columns <= j
    above[1:] = n[:-1]
    _accumulate(above[1:], 0)
    _accumulate(above[1:], 1)
    below = np.zeros_like(n)  # rows > i, columns >= j
    below[:-1] = n[1:]
    _accumulate(below[:-1], 0, reverse=True)
    _accumulate(below[:-1], 1, reverse=True)
    concordant = np.zeros_like(n)
    concordant[:, 1:] = above[:, :-1]
    concordant[:, :-1] += below[:, 1:]
    # a difference of two running sums that add only zeros in between is exactly 0
    discordant = above[:, -1:] - above
    discordant += below[:, :1] - below
    return concordant, discordant


def _bounds(counts, rows, cols, P, Q) -> dict[str, np.ndarray]:
    """Where each measure sits on its bound, by :func:`rankfold.ordinal_measures.bound_flags`.

    Every bound needs ``P = 0`` or ``Q = 0`` with two non-empty categories on each variable
    (see ``bound_flags``), so only those tables are passed to it. With non-negative cells and
    regions without units exactly 0, ``P = 0`` exactly when no two units are concordant.
    """
    defined = ((rows > 0).sum(axis=0) >= 2) & ((cols > 0).sum(axis=0) >= 2)
    candidate = defined & ((P == 0) | (Q == 0))
    flags = {key: np.zeros(candidate.shape, dtype=bool) for key in SWEEP_KERNEL_MEASURES}
    if candidate.any():
        found = bound_flags(batch_view(counts[:, :, candidate]))
        for key, flag in flags.items():
            flag[candidate] = found[key]
    return flags


def sweep_measure_arrays(
    counts: np.ndarray,
    measures: Sequence[str],
    squared: np.ndarray | None = None,
    records: float | None = None,
    gradients: bool = False,
) -> dict[str, dict[str, np.ndarray]]:
    """Estimates and delta-method standard errors of ordinal measures of cells-first batches.

    Parameters
    ----------
    counts : ndarray, shape (I, J, B)
        Cell counts (or sums of weights), cells first.
    measures : sequence of str
        Keys from :data:`SWEEP_KERNEL_MEASURES`.
    squared : ndarray, shape (I, J, B), optional
        Sums of squared sampling weights per cell; with ``records`` (the number of data rows
        behind every table) the variances are Taylor-linearised (see
        :class:`rankfold.ordinal_measures.Sampling`).
    records : float, optional
        Data rows behind each table, with ``squared``.
    gradients : bool
        Also return each measure's gradient with respect to the cells, shape (I, J, B).

    Returns
    -------
    dict
        For each measure, ``estimate`` and ``std_error`` of shape (B,), ``on_bound``, and
        ``gradient`` when asked for; the same values as
        :func:`rankfold.ordinal_measures.ordinal_measure_arrays` gives for the batch (its
        formulas and sources; Goodman & Kruskal 1963, Somers 1962, Stuart 1953, Agresti
        2010, ch. 7), up to rounding. Undefined values are NaN.

    Notes
    -----
    With ``P = sum n C``, ``Q = sum n D``, ``S = P - Q``: each measure is ``S / den``, its
    denominator and the denominator's gradient from
    :func:`~rankfold.quotient_measures.quotient_denominator` and the estimate and gradient
    from :func:`~rankfold.quotient_measures.quotient_rule`, the functions
    :func:`~rankfold.ordinal_measures.ordinal_measure_arrays` calls too; every variance is
    :func:`~rankfold.ordinal_measures.delta_variance` of the gradient (the one variance rule).

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1963). JASA 58, 310-364.
    Somers, R. H. (1962). ASR 27, 799-811.
    Stuart, A. (1953). Biometrika 40, 106-108.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    """
    unknown = [m for m in measures if m not in SWEEP_KERNEL_MEASURES]
    if unknown:
        raise ValueError(
            f"sweep_measure_arrays computes {list(SWEEP_KERNEL_MEASURES)}; got {unknown}."
        )
    n = np.asarray(counts, dtype=float)
    sampling = Sampling() if squared is None else Sampling(batch_view(squared), records)
    rows, cols = n.sum(axis=1), n.sum(axis=0)  # (I, B), (J, B)
    total = rows.sum(axis=0)
    conc, disc = concordance_cells_first(n)
    P = (n * conc).sum(axis=(0, 1))
    Q = (n * disc).sum(axis=(0, 1))
    S = P - Q
    d = conc - disc
    row_rest, col_rest = total - rows, total - cols  # n - n_i+, n - n_+j
    m = np.minimum((rows > 0).sum(axis=0), (cols > 0).sum(axis=0)).astype(float)
    sums = PairSums(conc, disc, row_rest[:, None], col_rest[None, :], total, P, Q,
                    (rows * row_rest).sum(axis=0), (cols * col_rest).sum(axis=0), m)
    bounds = _bounds(n, rows, cols, P, Q)
    out: dict[str, dict[str, np.ndarray]] = {}
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        for key in (k for k in SWEEP_KERNEL_MEASURES if k in measures):
            den, den_grad = quotient_denominator(key, sums)
            estimate, grad = quotient_rule(S, den, d, den_grad)
            # on its bound the estimate is +/-1 and the error 0 exactly (rounding leaves ~1e-17)
            flag = bounds[key]
            variance = delta_variance(batch_view(n), batch_view(grad), sampling)
            out[key] = {
                "estimate": np.where(flag, np.sign(estimate), estimate),
                "std_error": np.where(flag, 0.0, np.sqrt(variance)),
                "on_bound": flag,
            }
            if gradients:
                out[key]["gradient"] = grad
    return out


def interval_positions(size: int) -> np.ndarray:
    """Position of each run ``[start, stop)`` of neighbouring categories among all runs.

    Parameters
    ----------
    size : int
        Number of categories of the axis.

    Returns
    -------
    ndarray of int, shape (size + 1, size + 1)
        ``out[start, stop]`` numbers the ``size (size + 1) / 2`` runs with
        ``start < stop``, by start then stop; -1 elsewhere.
    """
    out = np.full((size + 1, size + 1), -1)
    starts, stops = np.triu_indices(size + 1, k=1)
    out[starts, stops] = np.arange(len(starts))
    return out


def _run_masks(size: int) -> np.ndarray:
    starts, stops = np.triu_indices(size + 1, k=1)
    at = np.arange(size)
    return ((at >= starts[:, None]) & (at < stops[:, None])).astype(float)  # (runs, size)


def rectangle_moments(weights: np.ndarray, gradient: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Weighted mean and spread of a gradient over every block a merge can make.

    Parameters
    ----------
    weights : ndarray, shape (I, J)
        Cell weights of the variance rule (counts, or sums of squared sampling weights).
    gradient : ndarray, shape (I, J)
        The swept table's own gradient ``g0``.

    Returns
    -------
    mean, within : ndarray, shape (I (I + 1) / 2, J (J + 1) / 2)
        For each block of a row run and a column run (numbered as in
        :func:`interval_positions`), ``mean = sum w g0 / sum w`` (0 for a block without
        weight) and ``within = sum w (g0 - mean)^2`` (centred first, so no digits are lost).

    References
    ----------
    Chan, T. F., Golub, G. H. & LeVeque, R. J. (1983). Algorithms for computing the sample
    variance: analysis and recommendations. The American Statistician 37, 242-247 (sums of
    squares of groups combined through their means).
    """
    w = np.asarray(weights, dtype=float)
    g0 = np.asarray(gradient, dtype=float)
    rows, cols = _run_masks(w.shape[0]), _run_masks(w.shape[1])
    total = rows @ w @ cols.T
    first = rows @ (w * g0) @ cols.T
    mean = np.divide(first, total, out=np.zeros_like(first), where=total != 0)
    inside = rows[:, None, :, None] * cols[None, :, None, :]  # (runs_I, runs_J, I, J)
    within = (inside * w * (g0 - mean[:, :, None, None]) ** 2).sum(axis=(-2, -1))
    return mean, within


def paired_change_variance(
    gradient: np.ndarray,
    counts: np.ndarray,
    weights: np.ndarray,
    mean: np.ndarray,
    within: np.ndarray,
    base_linear: float,
    records: float | None = None,
) -> np.ndarray:
    """Variance of each coding's change from the swept table, by the one variance rule.

    The change of a measure from the swept table to a coding has the gradient
    ``x_ij = g_(a(i) b(j)) - g0_ij`` over the swept table's cells (the coding's gradient
    carried back to the cells each merged cell sums, less the table's own), and its variance
    is :func:`rankfold.ordinal_measures.delta_variance` of ``x``:
    ``sum n (x - xbar)^2`` for counts, ``sum s x^2 - (sum n x)^2 / m`` for sampling weights.
    Within a merged cell (block) ``g_ab`` is constant, so with the block's weighted mean
    ``mu_ab`` and spread ``W_ab`` of ``g0`` (:func:`rectangle_moments`, weights ``n`` or
    ``s``), ``sum_block w (c - g0)^2 = w_ab (c - mu_ab)^2 + W_ab`` exactly, for any ``c``.
    This needs only the merged tables, not a swept-size array per coding.

    Parameters
    ----------
    gradient : ndarray, shape (I', J', B)
        Each coding's gradient, cells first.
    counts, weights : ndarray, shape (I', J', B)
        Merged counts ``n_ab`` and the merged weights of the rule (``n_ab`` for counts,
        ``s_ab`` for sampling weights).
    mean : ndarray, shape (I', J', B)
        ``mu`` of each merged cell's block.
    within : ndarray, shape (B,)
        ``sum_ab W_ab`` of each coding.
    base_linear : float
        ``sum n g0`` over the swept table.
    records : float, optional
        Data rows ``m`` for sampling weights; None for counts.

    Returns
    -------
    ndarray, shape (B,)
        The variance, floored at 0 against rounding.

    References
    ----------
    Agresti, A. (2013). Categorical Data Analysis, 3rd ed., Wiley, sec. 16.1.
    Chan, T. F., Golub, G. H. & LeVeque, R. J. (1983). The American Statistician 37, 242-247.
    Woodruff, R. S. (1971). JASA 66, 411-414.
    """
    n = np.asarray(counts, dtype=float)
    g = np.asarray(gradient, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        linear = (n * g).sum(axis=(0, 1)) - base_linear
        if records is None:
            centred = g - linear / n.sum(axis=(0, 1))
            centred -= mean
            var = (n * centred**2).sum(axis=(0, 1)) + within
        else:
            square = (weights * (g - mean) ** 2).sum(axis=(0, 1)) + within
            var = square - linear**2 / records
    return np.maximum(var, 0.0)
