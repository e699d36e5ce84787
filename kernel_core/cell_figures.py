"""Every per-cell figure of a table in one long frame, ready for plotting."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .ordinal_table import OrdinalTable

__all__ = ["cell_figures", "CELL_FIGURES"]

#: The figure columns of :func:`cell_figures` (besides labels, positions and margins).
CELL_FIGURES = ("count", "row_percent", "col_percent", "adjusted_residual", "pair_contribution")


def cell_figures(table: OrdinalTable) -> pd.DataFrame:
    """One row per cell with its count, percentages, residual and pair contribution.

    Parameters
    ----------
    table : OrdinalTable
        The table (pooled over the levels of the control variable).

    Returns
    -------
    pandas.DataFrame
        Columns ``row``, ``col`` (labels), ``row_position``, ``col_position`` (0-based order),
        ``count``; ``row_percent`` = 100 ``n_ij / n_i+`` and ``col_percent`` = 100
        ``n_ij / n_+j`` (NaN in an empty row or column); ``expected`` (``n_i+ n_+j / n``),
        ``adjusted_residual`` (Haberman 1973) and ``pair_contribution`` (``n_ij (C_ij - D_ij)``)
        from :meth:`OrdinalTable.diagnostics`; and the margins ``row_total`` (``n_i+``) and
        ``col_total`` (``n_+j``). Rows come in row-major order.

    Notes
    -----
    Row and column percentages are the conditional distributions of Agresti (2010, ch. 1);
    the other figures are documented in :class:`rankfold.diagnostics.Diagnostics`.

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley.
    Haberman, S. J. (1973). The analysis of residuals in cross-classified tables. Biometrics
    29, 205-220.
    """
    counts = table.counts
    n = counts.to_numpy(dtype=float)
    rows, cols = n.sum(axis=1), n.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        row_percent = 100 * n / rows[:, None]
        col_percent = 100 * n / cols[None, :]
    diagnostics = table.diagnostics()
    n_rows, n_cols = n.shape
    return pd.DataFrame(
        {
            "row": np.repeat(np.array(table.row_labels, dtype=object), n_cols),
            "col": np.tile(np.array(table.col_labels, dtype=object), n_rows),
            "row_position": np.repeat(np.arange(n_rows), n_cols),
            "col_position": np.tile(np.arange(n_cols), n_rows),
            "count": counts.to_numpy().ravel(),
            "row_percent": row_percent.ravel(),
            "col_percent": col_percent.ravel(),
            "expected": diagnostics.expected.to_numpy().ravel(),
            "adjusted_residual": diagnostics.adjusted_residuals.to_numpy().ravel(),
            "pair_contribution": diagnostics.pair_contribution.to_numpy().ravel(),
            "row_total": np.repeat(rows, n_cols),
            "col_total": np.tile(cols, n_rows),
        }
    )
