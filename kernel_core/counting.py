"""Build ordered tables from a pandas DataFrame or from a ready array of counts.

:func:`table` runs four steps, each in a module of its own: the argument checks
(:mod:`rankfold.table_checks`), coding each column by its type's fast path
(:mod:`rankfold.column_coding`), counting records and weight sums per combination of raw codes
(:mod:`rankfold.cell_sums`), and here the bookkeeping of dropped records and the cells, both
read off the small table of raw combinations.
"""

from __future__ import annotations

import os
from collections.abc import Hashable, Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from .cell_sums import _count_cells, _count_lines, weight_column, weight_problems
from .column_coding import _python_scalar, column_rule, raw_codes
from .ordinal_table import OrdinalTable, Origin
from .steps import OrderStep, label_list
from .table_checks import (
    _check_arguments,
    check_columns,
    check_total,
    check_weights,
    refuse_unknown_keywords,
)

__all__ = ["table", "table_from_counts"]


#: Whole-number cell totals are kept as exact int64 while the table's total stays below this;
#: larger ones stay double-precision sums (16 significant digits) rather than wrap around.
EXACT_TOTAL_LIMIT = 2**62


def whole_counts(cells: np.ndarray) -> np.ndarray:
    """Whole-number totals as int64 when every sum over them fits, else unchanged floats."""
    if float(np.sum(cells, dtype=float)) < EXACT_TOTAL_LIMIT:
        return np.rint(cells).astype(np.int64)
    return cells


def _dropped_combinations(shape: tuple, lookups: Sequence[np.ndarray],
                          dropna: bool) -> tuple[np.ndarray, np.ndarray]:
    """Which raw combinations are dropped for a missing value (raw code 0 in any role, with
    ``dropna``) and which are dropped at all (missing, excluded or outside ``order=``)."""
    missing = np.zeros(shape, dtype=bool)
    dropped = np.zeros(shape, dtype=bool)
    for axis, lookup in enumerate(lookups):
        along = [1] * len(shape)
        along[axis] = -1
        if dropna:
            missing |= (np.arange(shape[axis]) == 0).reshape(along)
        dropped |= (lookup < 0).reshape(along)
    return missing, dropped | missing


def _cells(sums: np.ndarray, lookups: Sequence[np.ndarray], shape: tuple) -> np.ndarray:
    """Sums per raw combination (row, col, control) gathered into cells of ``shape`` (K, I, J)."""
    grids = np.meshgrid(*lookups, indexing="ij")
    kept = np.logical_and.reduce([g >= 0 for g in grids])
    cells = np.zeros(shape, dtype=sums.dtype)
    r, c, *k = (g[kept] for g in grids)
    np.add.at(cells, (k[0] if k else 0, r, c), sums[kept])
    return cells


def table(
    data: pd.DataFrame | str | os.PathLike | Any,
    row: str,
    col: str,
    *,
    control: str | None = None,
    weight: str | None = None,
    weight_kind: str = "frequency",
    order: Mapping[str, Sequence[Hashable]] | None = None,
    exclude: Mapping[str, Sequence[Hashable]] | None = None,
    dropna: bool = True,
    non_substantive: Sequence[Hashable] | bool = True,
    **unknown: Any,
) -> OrdinalTable:
    """Cross-tabulate two ordered variables of a DataFrame, a Dask or polars frame, or files.

    Parameters
    ----------
    data : pandas.DataFrame, dask DataFrame, polars DataFrame or LazyFrame, DuckDB relation, or path
        The records; never modified or copied. Anything but a pandas DataFrame is counted by
        its own engine with one group-by, and only the table comes back (see
        :func:`rankfold.sources.tally_source`): a Dask DataFrame on its cluster, a polars
        frame by polars, and a DuckDB relation or the path or glob of Parquet or CSV files
        (``"survey/*.parquet"``) by DuckDB, out of core. The ordering rules below are the
        same for every source; they are checked against the column types before counting.
    row, col : str
        Names of the row and column variables.
    control : str, optional
        A third variable to hold fixed: one table per category (may be nominal).
    weight : str, optional
        A column of non-negative weights (their total between 1e-40 and 1e40, or 0).
    weight_kind : {'frequency', 'sampling'}
        ``"frequency"``: each record stands for ``w`` identical units (results equal those on
        the expanded records). ``"sampling"``: survey weights; estimates use the weighted
        table and standard errors are Taylor-linearised, treating the records as a
        with-replacement single-stage sample (Woodruff 1971, JASA 66:411); with ``control``,
        each level's records as a sample of their own. Not covered: cluster sampling and
        design strata (a later ``cluster=`` argument is planned); where the design has them
        the standard errors are usually too small. Count-based tests (chi-square, CMH,
        permutation) are not available with sampling weights.
    order : dict, optional
        ``{column: [labels from lowest to highest]}``; overrides any other order.
    exclude : dict, optional
        ``{column: [labels]}`` of non-substantive answers to leave out before counting.
    dropna : bool
        Drop records with a missing value (default; the number is kept as
        ``table.n_missing``), or keep missing values as a last category ``"(missing)"``.
    non_substantive : list of labels or bool
        Categories to flag as answers off the scale besides the common phrasings ("don't
        know", "no answer", "refused", ...; see :attr:`OrdinalTable.non_substantive`);
        ``False`` turns the check off. Flagged categories are named in the measures' notes,
        never excluded automatically.

    Returns
    -------
    OrdinalTable

    Notes
    -----
    Order rules: an ordered pandas Categorical keeps its order; numeric and boolean columns
    use numeric order (at most 30 distinct values); text needs ``order=``. Categories with no
    units keep their place. Counting maps each column to category positions and counts
    position pairs with :func:`numpy.bincount`, so the frame is never copied.

    Examples
    --------
    >>> import pandas as pd, rankfold
    >>> relief = ["low", "mid", "mid", "high", "high"]
    >>> df = pd.DataFrame({"dose": [1, 1, 2, 2, 3], "relief": relief})
    >>> t = rankfold.table(df, "dose", "relief", order={"relief": ["low", "mid", "high"]})
    >>> t.counts.to_numpy().tolist()
    [[1, 1, 0], [0, 1, 1], [0, 0, 1]]
    """
    refuse_unknown_keywords("table", unknown)
    order, exclude, extra_flags = _check_arguments(
        row, col, control, weight, weight_kind, order, exclude, non_substantive
    )
    source, tally = data, None
    if isinstance(data, pd.DataFrame):
        check_columns(data.columns, [row, col, control, weight])
    else:
        from .sources import tally_source  # the engines are optional: imported on demand

        data, tally = tally_source(data, row, col, control=control, weight=weight, order=order)
    roles = [(role, name, axis) for role, name, axis in
             (("row", row, "rows"), ("col", col, "cols"), ("control", control, "control"))
             if name is not None]
    # coding: each column read as raw codes by its type (see raw_codes), without a copy
    raws = [raw_codes(data[name]) for _, name, _ in roles]
    sizes = tuple(raw.size for raw in raws)
    strides = [int(np.prod(sizes[k + 1:])) for k in range(len(sizes))]
    # counting: records and weight sums per combination of raw codes, then the rules
    size, w = int(np.prod(sizes)), None
    if tally is not None:
        sums = _count_lines(raws, strides, size, tally)
    elif weight is None:
        sums = _count_cells(raws, strides, size)
    else:
        w = weight_column(data, weight)
        # frequency weights: records are counted only where the weight sums cannot stand in
        sums = _count_cells(raws, strides, size, w, squares=weight_kind == "sampling",
                            records=weight_kind == "sampling")
    records = sums.records
    if records is None and not sums.lowest > 0:  # a zero, missing or negative weight
        records = _count_cells(raws, strides, size).records
    # with every weight positive, a combination has records exactly when its weight sum is > 0
    present = (records if records is not None else sums.weight).reshape(sizes)
    rules = {}
    for k, ((role, name, axis), raw) in enumerate(zip(roles, raws, strict=True)):
        found = present.sum(axis=tuple(a for a in range(len(roles)) if a != k))
        rules[role] = column_rule(raw, found, name, axis, order.get(name), exclude.get(name),
                                  dropna, nominal=(role == "control"))
    r, c = rules["row"], rules["col"]
    n_i, n_j = len(r.labels), len(c.labels)
    n_k = len(rules["control"].labels) if control is not None else 1
    if n_k == 0:
        raise ValueError(
            f"The control variable {control!r} has no category left to hold fixed: every value is "
            "missing or excluded. Leave out control=, or keep missing values with dropna=False."
        )
    if w is not None and not (sums.lowest >= 0 and np.isfinite(sums.weight.sum())):
        check_weights(weight, *weight_problems(w))  # NaN fails both comparisons
    # bookkeeping of dropped records, and the cells
    lookups = [rules[role].lookup for role, _, _ in roles]
    missing, dropped = _dropped_combinations(sizes, lookups, dropna)
    if records is None and present[dropped].any():  # some records were dropped
        records = _count_cells(raws, strides, size).records
    n_missing, n_excluded = (0, 0) if records is None else (
        int(records.reshape(sizes)[mask].sum()) for mask in (missing, dropped & ~missing))
    shape = (n_k, n_i, n_j)
    squared = per_cell = None
    if weight is None:
        cells = _cells(records.reshape(sizes), lookups, shape)
    else:
        cells = _cells(sums.weight.reshape(sizes), lookups, shape)
        check_total(float(cells.sum()), f"weights in {weight!r}")
        if weight_kind == "frequency" and np.all(np.mod(cells, 1) == 0):
            cells = whole_counts(cells)  # every cell's total a whole number
        if weight_kind == "sampling":
            squared = _cells(sums.squares.reshape(sizes), lookups, shape)
            per_cell = _cells(records.reshape(sizes), lookups, shape)
    steps = r.steps + c.steps + (rules["control"].steps if control is not None else ())
    origin = Origin(
        "frame",
        {
            "row": row,
            "col": col,
            "control": control,
            "weight": weight,
            "weight_kind": weight_kind,
            "order": order,
            "exclude": exclude,
            "dropna": dropna,
        }
        | ({"source": os.fspath(source)} if isinstance(source, (str, os.PathLike)) else {}),
    )
    return OrdinalTable(
        cells=cells,
        row_name=row,
        col_name=col,
        row_labels=r.labels,
        col_labels=c.labels,
        steps=steps,
        n_missing=n_missing,
        n_excluded=n_excluded,
        control_name=control,
        control_labels=rules["control"].labels if control is not None else (None,),
        weight=weight,
        weight_kind=weight_kind if weight is not None else None,
        squared_weights=squared,
        records=per_cell,
        origin=origin,
        initial_steps=len(steps),
        non_substantive_extra=extra_flags,
    )


def table_from_counts(
    counts: object,
    row_labels: Sequence[Hashable] | None = None,
    col_labels: Sequence[Hashable] | None = None,
    *,
    row_name: str = "row",
    col_name: str = "col",
) -> OrdinalTable:
    """An ordered table from a ready 2-D array of counts.

    Parameters
    ----------
    counts : array_like, shape (I, J)
        Non-negative finite counts, rows and columns in their order. Non-integer values are
        allowed (weighted totals); they are then treated as multinomial counts. The total must
        lie between 1e-40 and 1e40 (or be 0), the range the measures can be computed in.
    row_labels, col_labels : sequence, optional
        Category labels; default 1..I and 1..J. A pandas DataFrame supplies its own index
        and columns (and names) when these are not given.
    row_name, col_name : str
        Variable names.

    Returns
    -------
    OrdinalTable

    Examples
    --------
    >>> import rankfold
    >>> t = rankfold.table_from_counts([[10, 5], [3, 12]])
    >>> round(float(t.measures().loc["gamma", "estimate"]), 4)
    0.7778
    """
    if isinstance(counts, pd.DataFrame):
        row_labels = list(counts.index) if row_labels is None else row_labels
        col_labels = list(counts.columns) if col_labels is None else col_labels
        if row_name == "row" and counts.index.name is not None:
            row_name = str(counts.index.name)
        if col_name == "col" and counts.columns.name is not None:
            col_name = str(counts.columns.name)
        counts = counts.to_numpy()
    try:
        array = np.asarray(counts, dtype=float)
    except (TypeError, ValueError) as err:
        raise ValueError(
            f"counts must be a 2-D array of numbers; could not read it ({err})."
        ) from err
    if array.ndim != 2:
        raise ValueError(f"counts must be 2-D (rows x columns); got shape {array.shape}.")
    if array.size == 0:
        raise ValueError(f"counts is empty (shape {array.shape}); a table needs at least one cell.")
    if not np.all(np.isfinite(array)):
        raise ValueError(
            "counts contains NaN or infinite values; every cell must be a finite count."
        )
    if (array < 0).any():
        bad = np.argwhere(array < 0)[0].tolist()
        raise ValueError(f"counts must be non-negative; cell {bad} is {array[tuple(bad)]}.")
    check_total(float(array.sum()), "counts")
    if np.all(np.mod(array, 1) == 0) and array.sum() < EXACT_TOTAL_LIMIT:
        given = np.asarray(counts)  # integers keep every digit (a float holds 53 bits)
        array = (given if np.issubdtype(given.dtype, np.integer) else array).astype(np.int64)
    n_i, n_j = array.shape
    rows, cols = (
        tuple(_python_scalar(x) for x in (
            range(1, size + 1) if given is None else label_list(given, what)
        ))
        for given, size, what in ((row_labels, n_i, "row_labels"), (col_labels, n_j, "col_labels"))
    )
    if len(rows) != n_i or len(cols) != n_j:
        raise ValueError(
            f"Label counts do not match the table: {n_i} x {n_j} counts, {len(rows)} row labels, "
            f"{len(cols)} column labels."
        )
    for labels, what in ((rows, "row"), (cols, "column")):
        if len(set(labels)) != len(labels):
            raise ValueError(f"The {what} labels are not distinct: {list(labels)}.")
    steps = (
        OrderStep("rows", row_name, rows, "given"),
        OrderStep("cols", col_name, cols, "given"),
    )
    return OrdinalTable(
        cells=array[None, :, :],
        row_name=row_name,
        col_name=col_name,
        row_labels=rows,
        col_labels=cols,
        steps=steps,
        origin=Origin(
            "counts",
            {
                # to_code prints these; a copy, so later edits of the input do not leak in
                "cells": array.copy(),
                "row_labels": rows,
                "col_labels": cols,
                "row_name": row_name,
                "col_name": col_name,
            },
        ),
        initial_steps=len(steps),
    )
