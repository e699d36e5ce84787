"""Build ordered tables from a pandas DataFrame or from a ready array of counts."""

from __future__ import annotations

import os
from collections.abc import Hashable, Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from .ordinal_table import OrdinalTable, Origin
from .steps import ExcludeStep, OrderStep, Step, label_list

if TYPE_CHECKING:
    from .sources import Tally

__all__ = ["table", "table_from_counts", "MAX_NUMERIC_LEVELS", "MISSING_LABEL"]

MAX_NUMERIC_LEVELS = 30
MISSING_LABEL = "(missing)"


def _python_scalar(value: Hashable) -> Hashable:
    """numpy scalars -> Python scalars, so labels print and compare plainly."""
    return value.item() if isinstance(value, np.generic) else value


@dataclass(frozen=True)
class CodedColumn:
    """A column turned into category positions (-1 where dropped)."""

    codes: np.ndarray
    labels: tuple
    n_missing: int
    n_excluded: int
    steps: tuple[Step, ...]


def order_kind(dtype: object) -> str | None:
    """Where a column's order comes from when ``order=`` does not give it.

    Returns ``"declared"`` for an ordered pandas Categorical, ``"numeric"`` for numbers and
    booleans, and None for anything else (text, unordered categoricals, dates), which needs
    ``order=``. Counting in other engines checks their column types with this same rule.
    """
    if isinstance(dtype, pd.CategoricalDtype):
        return "declared" if dtype.ordered else None
    if pd.api.types.is_numeric_dtype(dtype) or pd.api.types.is_bool_dtype(dtype):
        return "numeric"
    return None


def order_needed(name: str, found: Sequence[Hashable]) -> str:
    """The message for a row or column variable that has no order rankfold can trust."""
    values = sorted((_python_scalar(x) for x in found), key=str)
    shown = values[:12]
    more = f" and {len(values) - 12} more" if len(values) > 12 else ""
    seen = (f" Its values, sorted alphabetically (not in any real order): {shown}{more}."
            if shown else "")
    return (
        f"Column {name!r} has no order rankfold can trust.{seen} Tell it the order with "
        f"order={{{name!r}: [lowest, ..., highest]}}, listing every category from lowest to "
        "highest: put them in their real order yourself (an alphabetical or as-found order is "
        "almost never the right one), or convert the column to an ordered pandas Categorical."
    )


def code_column(
    series: pd.Series,
    name: str,
    axis: str,
    order: Sequence[Hashable] | None,
    exclude: Sequence[Hashable] | None,
    dropna: bool,
    nominal: bool = False,
) -> CodedColumn:
    """Map one column to category positions following the ordering rules of :func:`table`.

    Parameters
    ----------
    series : pandas.Series
        The raw column (not modified).
    name : str
        Its name, for messages and steps.
    axis : str
        ``"rows"``, ``"cols"`` or ``"control"``.
    order, exclude : sequence of labels, optional
        As in :func:`table`.
    dropna : bool
        Drop missing values (True) or keep them as a last category labelled ``"(missing)"``.
    nominal : bool
        A control variable needs no order: labels then follow the categorical order, numeric
        order, or sorted text.

    Returns
    -------
    CodedColumn
    """
    if isinstance(series.dtype, pd.CategoricalDtype):
        codes = np.asarray(series.cat.codes)  # kept compact (int8 for few categories)
        uniques = [_python_scalar(x) for x in series.cat.categories]
    else:
        codes, uniques_index = pd.factorize(series, use_na_sentinel=True)
        codes = np.asarray(codes)
        uniques = [_python_scalar(x) for x in uniques_index]
    kind = order_kind(series.dtype)
    excluded = list(exclude or [])
    unknown_excluded = [x for x in excluded if x not in set(uniques) | set(order or [])]
    if unknown_excluded:
        raise ValueError(
            f"exclude lists {unknown_excluded} for {name!r}, but the column has no such value; "
            f"its values are {uniques[:20]}."
        )
    steps: list[Step] = []
    if excluded:
        steps.append(ExcludeStep(axis=axis, variable=name, labels=tuple(excluded)))
    remaining = [x for x in uniques if x not in set(excluded)]
    if order is not None:
        order = [_python_scalar(x) for x in order]
        if len(set(order)) != len(order):
            raise ValueError(f"order for {name!r} lists a category twice: {order}.")
        observed = set(np.flatnonzero(np.bincount(codes[codes >= 0], minlength=len(uniques))))
        absent = [
            u
            for k, u in enumerate(uniques)
            if k in observed and u not in set(order) and u not in set(excluded)
        ]
        if absent:
            raise ValueError(
                f"order for {name!r} leaves out values found in the column: {absent}. "
                "Add them to order= at their place, or list them in exclude=."
            )
        labels = [x for x in order if x not in set(excluded)]
        origin = "given"
    elif kind == "declared":
        labels, origin = remaining, "declared"
    elif kind == "numeric":
        present = [u for k, u in enumerate(uniques) if u in set(remaining)]
        if len(present) > MAX_NUMERIC_LEVELS and not nominal:
            raise ValueError(
                f"Column {name!r} is numeric with {len(present)} distinct values; rankfold "
                f"tabulates at most {MAX_NUMERIC_LEVELS}. Group it into ordered bands first, "
                f"e.g. pd.cut(df[{name!r}], bins=5) or pd.qcut(df[{name!r}], q=5), and pass "
                "the banded column."
            )
        labels, origin = sorted(present), "numeric"
    elif nominal:
        labels, origin = sorted(remaining, key=str), "sorted"
    else:
        raise ValueError(order_needed(name, remaining))
    position = {label: k for k, label in enumerate(labels)}
    # code -1 (missing) picks the trailing -1; codes already in label order are kept as they are
    lookup = np.array(
        [position.get(u, -1) for u in uniques] + [-1], dtype=np.min_scalar_type(-len(labels) - 1)
    )
    missing_mask = codes < 0
    n_missing = int(np.count_nonzero(missing_mask))
    in_order = np.array_equal(lookup[:-1], np.arange(len(uniques)))
    new_codes = codes if in_order else lookup[codes]
    n_excluded = int(np.count_nonzero(new_codes < 0)) - n_missing
    missing_label = None
    if not dropna and n_missing:
        if MISSING_LABEL in position:
            raise ValueError(
                f"Column {name!r} already has a category {MISSING_LABEL!r}; fill missing values "
                "with another label yourself, or use dropna=True."
            )
        labels = [*labels, MISSING_LABEL]
        new_codes = np.where(missing_mask, len(labels) - 1, new_codes)
        n_missing, missing_label = 0, MISSING_LABEL
    steps.append(OrderStep(axis, name, tuple(labels), origin, missing_label))
    return CodedColumn(new_codes, tuple(labels), n_missing, n_excluded, tuple(steps))


#: Keywords renamed in 0.2.0, with their new names.
RENAMED_KEYWORDS = {"layer": "control"}


def refuse_unknown_keywords(function: str, given: Mapping[str, Any]) -> None:
    """Raise the TypeError Python would for unknown keywords, naming the new name of renamed ones.

    Parameters
    ----------
    function : str
        The function's name, for the message.
    given : mapping
        The keywords a ``**unknown`` parameter collected.

    Raises
    ------
    TypeError
        For the first keyword given, e.g. ``layer=`` (renamed ``control=`` in 0.2.0).
    """
    for name in given:
        if name in RENAMED_KEYWORDS:
            new = RENAMED_KEYWORDS[name]
            raise TypeError(
                f"{function}() has no {name}= argument since rankfold 0.2.0: use {new}= instead, "
                f"e.g. {function}(df, 'income_band', 'satisfaction', {new}='region')."
            )
        raise TypeError(f"{function}() got an unexpected keyword argument {name!r}")


def check_columns(available: Sequence[Hashable], columns: Sequence[str | None]) -> None:
    """Raise unless every named role is one available column and no column has two roles;
    ``columns`` are the row, column, control and weight columns, in that order (None: unused)."""
    named = [c for c in columns if c is not None]
    if not all(isinstance(c, Hashable) for c in named):
        raise ValueError(f"Name each column by a single label, such as 'age'; got {named}.")
    absent = [c for c in named if c not in available]
    if absent:
        raise ValueError(f"Column(s) {absent} not in the data; its columns are {list(available)}.")
    if len(set(named)) != len(named):
        roles = [r for r, c in zip(("row", "column", "control", "weight"), columns, strict=True)
                 if c is not None]
        twice = next(c for c in named if named.count(c) > 1)
        both = [r for r, c in zip(roles, named, strict=True) if c == twice]
        raise ValueError(
            f"Column {twice!r} cannot be both the {both[0]} and the {both[1]} variable: each role "
            "needs its own column, so choose another one for one of them."
        )
    doubled = [c for c in named if sum(a == c for a in available) > 1]
    if doubled:
        raise ValueError(
            f"The data has more than one column named {doubled}; rename them so each name is "
            "used once (e.g. df.columns = [...])."
        )


def check_total(total: float, what: str) -> None:
    """Raise if a table's total is so large or small that products of counts (up to the
    fourth power, as in tau-b) would leave the range of double-precision numbers."""
    if total > 0 and not 1e-40 <= total <= 1e40:
        raise ValueError(
            f"The {what} add up to {total:.3g}; rankfold computes with totals between 1e-40 and "
            "1e40, beyond which products of counts leave the range of floating point. Rescale "
            "them (the estimates do not depend on scale; standard errors treat totals as counts)."
        )


#: Whole-number cell totals are kept as exact int64 while the table's total stays below this;
#: larger ones stay double-precision sums (16 significant digits) rather than wrap around.
EXACT_TOTAL_LIMIT = 2**62


def whole_counts(cells: np.ndarray) -> np.ndarray:
    """Whole-number totals as int64 when every sum over them fits, else unchanged floats."""
    if float(np.sum(cells, dtype=float)) < EXACT_TOTAL_LIMIT:
        return np.rint(cells).astype(np.int64)
    return cells


def check_weights(weight: str, bad_nan: int, bad_inf: int, bad_neg: int) -> None:
    """Raise if a weight column had missing or non-numeric, infinite or negative values."""
    if bad_nan or bad_inf or bad_neg:
        kinds = ((bad_nan, "missing or non-numeric"), (bad_inf, "infinite"), (bad_neg, "negative"))
        problems = [f"{k} {what}" for k, what in kinds if k]
        raise ValueError(
            f"Weight column {weight!r} has {', '.join(problems)} value(s) in "
            f"{bad_nan + bad_inf + bad_neg} row(s). Weights must be finite and >= 0 (zero is "
            "allowed): fix or drop those rows before tabulating."
        )


def _weights(data: pd.DataFrame, weight: str) -> np.ndarray:
    values = pd.to_numeric(data[weight], errors="coerce").to_numpy(dtype=float)
    # -inf counts as infinite only, so the three counts add up to the rows at fault
    check_weights(
        weight,
        int(np.isnan(values).sum()),
        int(np.isinf(values).sum()),
        int((np.isfinite(values) & (values < 0)).sum()),
    )
    return values


def _kept(values: np.ndarray, keep: np.ndarray | None) -> np.ndarray:
    return values if keep is None else values[keep]


def _bincount(cells_flat: np.ndarray, size: int, weights: np.ndarray | None = None) -> np.ndarray:
    """``numpy.bincount`` a million records at a time: numpy widens what it counts to int64,
    and slicing keeps that copy small whatever the number of records."""
    out = np.zeros(size, dtype=np.int64 if weights is None else float)
    for start in range(0, len(cells_flat), 1 << 20):
        part = slice(start, start + (1 << 20))
        out += np.bincount(
            cells_flat[part], None if weights is None else weights[part], minlength=size
        )
    return out


def _rows_per_cell(cells_flat: np.ndarray, per_line: np.ndarray | None, size: int) -> np.ndarray:
    """Data rows in each cell: one per line of a frame, or the rows a group-by line tallies."""
    if per_line is None:
        return _bincount(cells_flat, size)
    rows = np.zeros(size, dtype=np.int64)
    np.add.at(rows, cells_flat, per_line)  # integer sums: exact at any count
    return rows


def _rows_where(mask: np.ndarray, tally: Tally | None) -> int:
    return int(mask.sum()) if tally is None else int(tally.records[mask].sum())


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
    if weight_kind not in ("frequency", "sampling"):
        raise ValueError(f"weight_kind must be 'frequency' or 'sampling'; got {weight_kind!r}.")
    if weight_kind == "sampling" and weight is None:
        raise ValueError("weight_kind='sampling' needs a weight column: pass weight='your_column'.")
    if row is None or col is None:
        raise ValueError(f"table needs a row and a col column; got row={row!r}, col={col!r}.")
    options = {}
    for what, given in (("order", order), ("exclude", exclude)):
        if given is not None and not isinstance(given, Mapping):
            raise ValueError(
                f"{what}= must be a dict {{column: [labels]}}, e.g. {what}={{{row!r}: [...]}}; "
                f"got {given!r}."
            )
        stray = [k for k in (given or {}) if k not in (row, col, control)]
        if stray:
            raise ValueError(f"{what}= names {stray}, which are not among row, col or control.")
        options[what] = {k: label_list(v, f"{what}[{k!r}]") for k, v in (given or {}).items()}
    order, exclude = options["order"], options["exclude"]
    if non_substantive is False:
        extra_flags = None
    elif non_substantive is True:
        extra_flags = ()
    else:
        extra_flags = tuple(label_list(non_substantive, "non_substantive"))
    source, tally = data, None
    if isinstance(data, pd.DataFrame):
        check_columns(data.columns, [row, col, control, weight])
    else:
        from .sources import tally_source  # the engines are optional: imported on demand

        data, tally = tally_source(data, row, col, control=control, weight=weight, order=order)
    coded = {
        role: code_column(
            data[name],
            name,
            axis,
            order.get(name),
            exclude.get(name),
            dropna,
            nominal=(role == "control"),
        )
        for role, name, axis in (
            ("row", row, "rows"),
            ("col", col, "cols"),
            ("control", control, "control"),
        )
        if name is not None
    }
    r, c = coded["row"], coded["col"]
    n_i, n_j = len(r.labels), len(c.labels)
    n_k = len(coded["control"].labels) if control is not None else 1
    if n_k == 0:
        raise ValueError(
            f"The control variable {control!r} has no category left to hold fixed: every value is "
            "missing or excluded. Leave out control=, or keep missing values with dropna=False."
        )
    size = n_k * n_i * n_j
    cell_type = np.min_scalar_type(-size - 1)  # the narrowest signed type holding every cell
    flat = np.multiply(r.codes, n_j, dtype=cell_type) + c.codes
    if control is not None:
        flat += np.multiply(coded["control"].codes, n_i * n_j, dtype=cell_type)
    keep = None  # records kept, when some are dropped (a code of -1 in any role)
    if any(role.n_missing or role.n_excluded for role in coded.values()):
        keep = np.logical_and.reduce([role.codes >= 0 for role in coded.values()])
    cells_flat = flat if keep is None else flat[keep]
    per_line = None if tally is None else _kept(tally.records, keep)
    squared = records = None
    if weight is None:
        cells = _rows_per_cell(cells_flat, per_line, size)
    else:
        if tally is None:
            w = _kept(_weights(data, weight), keep)
            whole = bool(np.all(np.mod(w, 1) == 0))
        else:
            w = _kept(tally.weight_sum, keep)
            whole = not _kept(tally.fractional, keep).any()
        cells = _bincount(cells_flat, size, weights=w)
        check_total(float(cells.sum()), f"weights in {weight!r}")
        if weight_kind == "frequency" and whole:
            cells = whole_counts(cells)
        if weight_kind == "sampling":
            w2 = w * w if tally is None else _kept(tally.weight_square_sum, keep)
            squared = _bincount(cells_flat, size, weights=w2).reshape(n_k, n_i, n_j)
            records = _rows_per_cell(cells_flat, per_line, size).reshape(n_k, n_i, n_j)
    n_missing = n_excluded = 0
    if keep is not None:  # some records were dropped: count why
        missing_any = np.zeros(len(data), dtype=bool)
        excluded_any = np.zeros(len(data), dtype=bool)
        for coded_col, name in ((r, row), (c, col), (coded.get("control"), control)):
            if coded_col is None:
                continue
            raw_missing = data[name].isna().to_numpy() if dropna else np.zeros(len(data), bool)
            missing_any |= raw_missing
            excluded_any |= (coded_col.codes < 0) & ~raw_missing
        n_missing = _rows_where(missing_any & ~keep, tally)
        n_excluded = _rows_where(excluded_any & ~missing_any, tally)
    steps = r.steps + c.steps + (coded["control"].steps if control is not None else ())
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
        cells=cells.reshape(n_k, n_i, n_j),
        row_name=row,
        col_name=col,
        row_labels=r.labels,
        col_labels=c.labels,
        steps=steps,
        n_missing=n_missing,
        n_excluded=n_excluded,
        control_name=control,
        control_labels=coded["control"].labels if control is not None else (None,),
        weight=weight,
        weight_kind=weight_kind if weight is not None else None,
        squared_weights=squared,
        records=records,
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
