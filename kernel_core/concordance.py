"""Concordant and discordant pair counts of ordered contingency tables.

Everything here works on count arrays whose last two axes are the ordered rows and columns;
leading axes are a batch (several tables of the same shape at once), which the collapsing sweep
and the permutation test use. Nothing enumerates pairs or expands rows: the per-cell counts
come from 2-D cumulative sums in O(I*J).
"""

from __future__ import annotations

from typing import Any

import numpy as np

__all__ = ["cell_concordance", "pair_counts"]


def cell_concordance(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Units concordant and discordant with one unit in each cell.

    Parameters
    ----------
    counts : ndarray, shape (..., I, J)
        Cell counts with rows and columns in their order; leading axes are a batch.

    Returns
    -------
    concordant, discordant : ndarray, shape (..., I, J)
        ``C_ij``, the count of units in cells strictly above-left or strictly below-right of
        (i, j), and ``D_ij``, the count strictly above-right or strictly below-left.

    Notes
    -----
    With these, ``P = sum n_ij C_ij`` and ``Q = sum n_ij D_ij`` count ordered pairs of units
    (each unordered concordant pair twice), the convention of Goodman & Kruskal (1954) as used
    by Agresti (2010, ch. 7). Both come from two 2-D cumulative sums, one from the top-left
    corner and one from the bottom-right, so the cost is O(I*J) whatever the number of units:
    the rows above a cell give the units above-left (read off directly) and above-right (the
    rest of those rows), and likewise below. A region with no units gives exactly 0, also for
    weighted totals, so a table without discordant pairs has gamma exactly 1.

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1954). Measures of association for cross classifications.
    JASA 49, 732-764.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    """
    n = np.asarray(counts)
    forward = n.cumsum(axis=-2).cumsum(axis=-1)  # sum over cells (<= i, <= j)
    backward = n[..., ::-1, ::-1].cumsum(axis=-2).cumsum(axis=-1)[..., ::-1, ::-1]  # (>= i, >= j)
    above = np.zeros_like(forward)  # rows < i, columns <= j
    above[..., 1:, :] = forward[..., :-1, :]
    below = np.zeros_like(backward)  # rows > i, columns >= j
    below[..., :-1, :] = backward[..., 1:, :]
    above_left = np.zeros_like(above)
    above_left[..., :, 1:] = above[..., :, :-1]
    below_right = np.zeros_like(below)
    below_right[..., :, :-1] = below[..., :, 1:]
    # a difference of two running sums that add only zeros in between is exactly 0
    above_right = above[..., -1:] - above
    below_left = below[..., :1] - below
    return above_left + below_right, above_right + below_left


def pair_counts(counts: np.ndarray) -> dict[str, Any]:
    """Classify all pairs of units of one table as concordant, discordant or tied.

    Parameters
    ----------
    counts : ndarray, shape (I, J)
        Non-negative cell counts. When every count is a whole number the results are exact
        Python integers at any size (no overflow); otherwise they are floats.

    Returns
    -------
    dict
        ``concordant``, ``discordant``, ``tied_row_only`` (same row category, different column
        category), ``tied_col_only``, ``tied_both`` (same cell) and ``total``, each counting
        unordered pairs of distinct units, so that the five classes add up to
        ``total = n (n - 1) / 2``.

    Notes
    -----
    With ``P`` and ``Q`` as in :func:`cell_concordance`, the unordered counts are ``P / 2``
    and ``Q / 2``; ``tied_both = sum n_ij (n_ij - 1) / 2``,
    ``tied_row_only = sum_i n_i+ (n_i+ - 1) / 2 - tied_both`` and likewise for columns
    (Agresti 2010, ch. 7).

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    """
    n = np.asarray(counts)
    if n.ndim != 2:
        raise ValueError(f"pair_counts needs one 2-D table; got an array with shape {n.shape}.")
    bad = ~(np.isfinite(n.astype(float)) & (n.astype(float) >= 0))
    if bad.any():
        cell = np.argwhere(bad)[0].tolist()
        raise ValueError(
            f"pair_counts needs finite, non-negative counts; cell {cell} is {n[tuple(cell)]}."
        )
    whole = bool(np.all(np.mod(n, 1) == 0))
    if whole:
        cells = n.astype(object)
        cells = np.vectorize(int, otypes=[object])(cells) if cells.size else cells
    else:
        cells = n.astype(float)
    conc, disc = cell_concordance(cells)
    total_units = cells.sum()
    row_tot = cells.sum(axis=1)
    col_tot = cells.sum(axis=0)
    tied_both = (cells * (cells - 1)).sum()
    tied_row = (row_tot * (row_tot - 1)).sum() - tied_both
    tied_col = (col_tot * (col_tot - 1)).sum() - tied_both
    raw = {
        "concordant": (cells * conc).sum(),
        "discordant": (cells * disc).sum(),
        "tied_row_only": tied_row,
        "tied_col_only": tied_col,
        "tied_both": tied_both,
        "total": total_units * (total_units - 1),
    }
    if whole:
        return {key: int(value) // 2 for key, value in raw.items()}
    return {key: float(value) / 2.0 for key, value in raw.items()}
