"""Cell-level diagnostics: expected counts, adjusted residuals, pair contributions, sparseness."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .concordance import cell_concordance

__all__ = ["Diagnostics", "diagnose", "sparse_cell_figures"]


def sparse_cell_figures(counts: np.ndarray) -> dict[str, np.ndarray]:
    """Sparse-cell figures of a table (or a batch of tables) of counts.

    Parameters
    ----------
    counts : ndarray, shape (..., I, J)
        Cell counts; leading axes are a batch.

    Returns
    -------
    dict
        ``share_expected_below_5`` and ``min_expected`` (over the expected counts
        ``n_i+ n_+j / n`` of the cells in non-empty rows and columns) and ``zero_cells`` (cells
        there with no units), each of the batch shape; NaN, NaN and 0 when no cell is left.

    Notes
    -----
    These are the inputs of Cochran's rule for the chi-square approximation: no expected count
    below 1 and at most 20% below 5 (Cochran 1954, Biometrics 10:417-451). Empty rows and
    columns carry no information, so they are left out (common practice).

    References
    ----------
    Cochran, W. G. (1954). Some methods for strengthening the common chi-square tests.
    Biometrics 10, 417-451.
    """
    n = np.asarray(counts, dtype=float)
    rows, cols = n.sum(axis=-1), n.sum(axis=-2)
    total = rows.sum(axis=-1)
    inside = (rows[..., :, None] > 0) & (cols[..., None, :] > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        expected = rows[..., :, None] * cols[..., None, :] / total[..., None, None]
        cells = inside.sum(axis=(-2, -1))
        share = ((expected < 5) & inside).sum(axis=(-2, -1)) / cells
    smallest = np.where(inside, expected, np.inf).min(axis=(-2, -1))
    return {
        "share_expected_below_5": share,
        "min_expected": np.where(cells > 0, smallest, np.nan),
        "zero_cells": ((n == 0) & inside).sum(axis=(-2, -1)),
    }


@dataclass(frozen=True)
class Diagnostics:
    """Cell diagnostics of a table; every frame has the table's labels.

    Attributes
    ----------
    expected : DataFrame
        ``m_ij = n_i+ n_+j / n``, counts expected under independence.
    adjusted_residuals : DataFrame
        ``(n_ij - m_ij) / sqrt(m_ij (1 - p_i+) (1 - p_+j))`` (Haberman 1973, Biometrics 29:205),
        approximately standard normal under independence; NaN in empty rows or columns.
    pair_contribution : DataFrame
        ``n_ij (C_ij - D_ij)``: the cell's share of ``P - Q`` (ordered pairs), so the frame
        sums to ``P - Q``. Positive cells push the ordinal measures up.
    share_expected_below_5, min_expected : float
        Sparse-cell figures over the non-empty rows and columns (Cochran 1954).
    zero_cells : int
        Cells with no units, within the non-empty rows and columns.
    warnings : tuple of str
        Plain-language warnings when Cochran's rule fails.
    """

    expected: pd.DataFrame
    adjusted_residuals: pd.DataFrame
    pair_contribution: pd.DataFrame
    share_expected_below_5: float
    min_expected: float
    zero_cells: int
    warnings: tuple[str, ...]

    @property
    def sources(self) -> dict[str, str]:
        """Where each figure comes from."""
        return {
            "expected": "independence model (Pearson 1900; common practice)",
            "adjusted_residuals": "Haberman (1973), Biometrics 29:205-220",
            "pair_contribution": "Goodman & Kruskal (1954) pair counts, per cell",
            "share_expected_below_5": "Cochran (1954), Biometrics 10:417-451",
            "min_expected": "Cochran (1954), Biometrics 10:417-451",
            "zero_cells": "common practice",
        }


def _expected(n: np.ndarray) -> np.ndarray:
    """Counts expected under independence, ``n_i+ n_+j / n`` (zeros for an empty table)."""
    total = n.sum()
    if total <= 0:
        return np.zeros_like(n)
    return np.outer(n.sum(axis=1), n.sum(axis=0)) / total


def diagnose(counts: pd.DataFrame, records: pd.DataFrame | None = None) -> Diagnostics:
    """Cell diagnostics of a table of counts with labelled rows and columns.

    Parameters
    ----------
    counts : pandas.DataFrame
        The table (as in :attr:`OrdinalTable.counts`).
    records : pandas.DataFrame, optional
        Data rows per cell, when ``counts`` holds sums of sampling weights. Sparseness is a
        matter of how many units were observed, so the sparse-cell figures then come from
        these; the adjusted residuals use the weighted table rescaled to the number of
        records (which ignores design effects: a rough guide only).

    Returns
    -------
    Diagnostics
        The figures with their formulas as listed on :class:`Diagnostics`.

    References
    ----------
    Haberman, S. J. (1973). The analysis of residuals in cross-classified tables.
    Biometrics 29, 205-220.
    Cochran, W. G. (1954). Some methods for strengthening the common chi-square tests.
    Biometrics 10, 417-451.
    Goodman, L. A. & Kruskal, W. H. (1954). Measures of association for cross
    classifications. JASA 49, 732-764.
    """
    n = counts.to_numpy(dtype=float)
    total = n.sum()
    observed = n if records is None else records.to_numpy(dtype=float)
    scaled = n if records is None or total <= 0 else n * (observed.sum() / total)
    expected = _expected(n)
    scaled_expected = _expected(scaled)
    rows, cols = scaled.sum(axis=1), scaled.sum(axis=0)
    scaled_total = scaled.sum()
    with np.errstate(invalid="ignore", divide="ignore"):
        scale = np.sqrt(
            scaled_expected * np.outer(1 - rows / scaled_total, 1 - cols / scaled_total)
        )
        residuals = np.where(
            scale > 0, (scaled - scaled_expected) / np.where(scale > 0, scale, 1), np.nan
        )
    conc, disc = cell_concordance(n)
    sparse = sparse_cell_figures(observed)
    share, smallest = float(sparse["share_expected_below_5"]), float(sparse["min_expected"])
    zeros = int(sparse["zero_cells"])
    unit = "count" if records is None else "number of records"
    warnings = []
    if share > 0.2 or smallest < 1:  # False when no cell is left (NaN)
        warnings.append(
            f"{share:.0%} of cells have an expected {unit} below 5 and the smallest is "
            f"{smallest:.2f}: Cochran's rule (none below 1, at most 20% below 5) is not met, so "
            "large-sample p-values and intervals may be unreliable; consider merging sparse "
            "neighbouring categories by a rule fixed in advance, or the permutation test."
        )
    if records is not None:
        warnings.append(
            "Sampling weights: the sparse-cell figures count records (respondents) per cell; "
            "the adjusted residuals use the weighted table scaled to the number of records "
            "and ignore design effects, so read them as a rough guide."
        )
    like = dict(index=counts.index, columns=counts.columns)
    return Diagnostics(
        expected=pd.DataFrame(expected, **like),
        adjusted_residuals=pd.DataFrame(residuals, **like),
        pair_contribution=pd.DataFrame(n * (conc - disc), **like),
        share_expected_below_5=share,
        min_expected=smallest,
        zero_cells=zeros,
        warnings=tuple(warnings),
    )
