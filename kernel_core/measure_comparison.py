"""Side-by-side measures of two codings of the same data, with the change and its error."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from .coding_change import CHANGE_COLUMNS, coding_change
from .ordinal_table import OrdinalTable

__all__ = ["compare_measures"]

NO_COUNTS = (
    "measures tables carry no counts: pass the two tables themselves for the paired standard "
    "error of the change"
)

_FIELDS = ("estimate", "ci_low", "ci_high", "p_value")


def compare_measures(
    before: pd.DataFrame | OrdinalTable,
    after: pd.DataFrame | OrdinalTable,
    keys: str | Sequence[str] | None = None,
    confidence: float = 0.95,
) -> pd.DataFrame:
    """Estimates, intervals and p-values of two codings side by side, with the change.

    Parameters
    ----------
    before, after : OrdinalTable or pandas.DataFrame
        Two codings (for example the table as collected and after merging categories), or
        their results of :meth:`OrdinalTable.measures`. Only tables give the change a
        standard error; two tables with a control variable also compare partial gamma.
    keys : str or sequence of str, optional
        Measure keys to keep, in this order; default: the keys present in both, in the order
        of ``after``.

    confidence : float
        Confidence level of the interval of the change (tables only).

    Returns
    -------
    pandas.DataFrame
        Indexed by measure key, columns ``before_estimate``, ``before_ci_low``,
        ``before_ci_high``, ``before_p_value``, the same four for ``after_``, ``change``
        = after estimate - before estimate (NaN when either is undefined), and
        ``change_se``, ``change_ci_low``, ``change_ci_high``, ``change_p_value`` and
        ``change_note`` from :func:`rankfold.coding_change.coding_change`: the paired
        delta-method standard error when the tables are codings of the same collected table,
        NaN with the reason otherwise (unrelated tables, or measures tables given).

    Notes
    -----
    The two estimates come from the same units, so their intervals are not independent and
    overlapping intervals say nothing about whether the coding "matters"; the paired standard
    error accounts for the shared units (Agresti 2013, sec. 16.1). Merging categories turns
    pairs into ties, which moves gamma most (Agresti 2010, ch. 7).

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley.
    """
    tables = isinstance(before, OrdinalTable) and isinstance(after, OrdinalTable)
    if tables:
        pair = (before, after)
        frames = []
        for table in pair:
            frame = table.measures(confidence)
            if before.control_name is not None and after.control_name is not None:
                frame = pd.concat([frame, table.partial_measures(confidence)])
            frames.append(frame)
        before, after = frames
    elif isinstance(before, OrdinalTable) or isinstance(after, OrdinalTable):
        raise ValueError("compare_measures takes two tables or two measures results, not one "
                         "of each.")
    missing = [c for c in _FIELDS if c not in before.columns or c not in after.columns]
    if missing:
        raise ValueError(
            f"compare_measures needs two results of OrdinalTable.measures(); columns {missing} "
            "are missing."
        )
    if keys is None:
        keys = [k for k in after.index if k in before.index]
    elif isinstance(keys, str):  # one key given alone
        keys = [keys]
    absent = [k for k in keys if k not in before.index or k not in after.index]
    if absent:
        raise ValueError(
            f"Measures {absent} are not in both results; available in both: "
            f"{[k for k in after.index if k in before.index]}."
        )
    keys = list(keys)
    fields = list(_FIELDS)
    values = np.hstack([before.loc[keys, fields].to_numpy(dtype=float),
                        after.loc[keys, fields].to_numpy(dtype=float)])
    values = np.column_stack([values, values[:, len(fields)] - values[:, 0]])
    columns = [f"before_{f}" for f in fields] + [f"after_{f}" for f in fields] + ["change"]
    frame = pd.DataFrame(values, index=pd.Index(keys, name="measure"), columns=columns)
    extra = [c for c in CHANGE_COLUMNS if c != "change"]
    if tables:
        paired = coding_change(*pair, confidence=confidence)
        joined = paired.reindex(keys)[extra]
        joined["change_note"] = joined["change_note"].fillna(
            "no paired standard error for this measure yet")
        return pd.concat([frame, joined], axis=1)
    for column in extra[:-1]:
        frame[column] = np.nan
    frame["change_note"] = NO_COUNTS
    return frame
