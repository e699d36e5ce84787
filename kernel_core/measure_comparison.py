"""Side-by-side measures of two codings of the same data."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

__all__ = ["compare_measures"]

_FIELDS = ("estimate", "ci_low", "ci_high", "p_value")


def compare_measures(
    before: pd.DataFrame,
    after: pd.DataFrame,
    keys: str | Sequence[str] | None = None,
) -> pd.DataFrame:
    """Estimates, intervals and p-values of two codings side by side, with the change.

    Parameters
    ----------
    before, after : pandas.DataFrame
        Results of :meth:`OrdinalTable.measures` for two codings (for example the table as
        collected and after merging categories).
    keys : str or sequence of str, optional
        Measure keys to keep, in this order; default: the keys present in both, in the order
        of ``after``.

    Returns
    -------
    pandas.DataFrame
        Indexed by measure key, columns ``before_estimate``, ``before_ci_low``,
        ``before_ci_high``, ``before_p_value``, the same four for ``after_``, and ``change``
        = after estimate - before estimate (NaN when either is undefined).

    Notes
    -----
    The two estimates come from the same units, so their intervals are not independent and
    overlapping intervals say nothing about whether the coding "matters"; the change is shown
    to describe, not to test (common practice). Merging categories turns pairs into ties, which
    moves gamma most (Agresti 2010, ch. 7).

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley.
    """
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
    return pd.DataFrame(values, index=pd.Index(keys, name="measure"), columns=columns)
