"""Where the partners of one cell's units lie: concordant, discordant and tied regions.

Used to explain a measure cell by cell: pick a cell, and every other unit of the table is either
higher on both variables or lower on both (concordant), higher on one and lower on the other
(discordant), or tied on one variable or both.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .concordance import cell_concordance

__all__ = ["PairRegions", "pair_regions", "REGIONS"]

#: Region keys, with the kind of pair a unit of the chosen cell forms with a unit there.
REGIONS = {
    "above_left": "concordant",
    "below_right": "concordant",
    "above_right": "discordant",
    "below_left": "discordant",
    "same_row": "tied on the row variable",
    "same_col": "tied on the column variable",
    "same_cell": "tied on both",
}


@dataclass(frozen=True)
class PairRegions:
    """The regions of a table seen from one chosen cell.

    Attributes
    ----------
    row, col : int
        Position of the chosen cell (0-based, in category order).
    cell_region : ndarray of str, shape (I, J)
        The region key of every cell (see :data:`REGIONS`); the chosen cell is ``"same_cell"``.
    summary : pandas.DataFrame
        Indexed by region key, columns ``kind`` (concordant, discordant or a tie), ``units``
        (units in the region; sums of weights for a weighted table) and ``pairs`` (pairs formed
        by one unit of the chosen cell and one unit of the region; for ``same_cell``, pairs of
        two units of the chosen cell).
    concordant, discordant : float
        The chosen cell's concordant and discordant pairs: ``n_ij C_ij`` and ``n_ij D_ij``.
    """

    row: int
    col: int
    cell_region: np.ndarray
    summary: pd.DataFrame
    concordant: float
    discordant: float


def pair_regions(counts: np.ndarray, row: int, col: int) -> PairRegions:
    """Split the table around one cell into concordant, discordant and tied regions.

    Parameters
    ----------
    counts : array_like, shape (I, J)
        Cell counts (or sums of weights), rows and columns in their order.
    row, col : int
        Position of the chosen cell, 0-based.

    Returns
    -------
    PairRegions

    Notes
    -----
    For the cell ``(i, j)`` a unit in a cell ``(k, l)`` with ``k < i, l < j`` or
    ``k > i, l > j`` is concordant with its units and one with ``k < i, l > j`` or
    ``k > i, l < j`` is discordant (Goodman & Kruskal 1954; Agresti 2010, ch. 7). The region
    totals are the row of :func:`rankfold.cell_concordance` for that cell: units concordant
    ``C_ij`` and discordant ``D_ij``, so the cell contributes ``n_ij C_ij`` concordant and
    ``n_ij D_ij`` discordant pairs; summed over all cells these count every pair twice, which is
    why the measures use ``P = sum n_ij C_ij`` as ordered pairs. Ties: ``n_ij (n_i+ - n_ij)``
    pairs in the same row, ``n_ij (n_+j - n_ij)`` in the same column and ``n_ij (n_ij - 1) / 2``
    within the cell.

    References
    ----------
    Goodman, L. A. & Kruskal, W. H. (1954). Measures of association for cross classifications.
    JASA 49, 732-764.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.

    Examples
    --------
    >>> from rankfold.pair_regions import pair_regions
    >>> r = pair_regions([[2, 1], [0, 3]], 0, 0)
    >>> int(r.summary.loc["below_right", "pairs"]), r.concordant
    (6, 6.0)
    """
    n = np.asarray(counts, dtype=float)
    if n.ndim != 2:
        raise ValueError(f"pair_regions needs one 2-D table of counts; got shape {n.shape}.")
    n_rows, n_cols = n.shape
    for name, value, size in (("row", row, n_rows), ("col", col, n_cols)):
        whole = isinstance(value, (int, np.integer)) and not isinstance(value, bool)
        if not whole or not 0 <= value < size:
            raise ValueError(
                f"{name} must be a position from 0 to {size - 1} in this {n_rows} x {n_cols} "
                f"table; got {value!r}."
            )
    k = np.arange(n_rows)[:, None]
    l_ = np.arange(n_cols)[None, :]
    masks = {
        "above_left": (k < row) & (l_ < col),
        "below_right": (k > row) & (l_ > col),
        "above_right": (k < row) & (l_ > col),
        "below_left": (k > row) & (l_ < col),
        "same_row": (k == row) & (l_ != col),
        "same_col": (k != row) & (l_ == col),
        "same_cell": (k == row) & (l_ == col),
    }
    region = np.empty(n.shape, dtype=object)
    for key, mask in masks.items():
        region[mask] = key
    chosen = n[row, col]
    units = {key: float(n[mask].sum()) for key, mask in masks.items()}
    pairs = {key: chosen * units[key] for key in masks}
    pairs["same_cell"] = chosen * (chosen - 1) / 2
    conc, disc = cell_concordance(n)
    summary = pd.DataFrame(
        {"kind": pd.Series(REGIONS), "units": pd.Series(units), "pairs": pd.Series(pairs)}
    )
    summary.index.name = "region"
    return PairRegions(
        row=int(row),
        col=int(col),
        cell_region=region,
        summary=summary,
        concordant=float(chosen * conc[row, col]),
        discordant=float(chosen * disc[row, col]),
    )
