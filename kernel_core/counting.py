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


# --- coding: each column type's fast path ------------------------------------------------

#: Integer columns whose values span fewer numbers than this are coded by their offset from the
#: smallest value (no copy); wider ones go through ``pandas.factorize``.
OFFSET_SPAN = 1 << 12


@dataclass(frozen=True)
class RawCodes:
    """A column read as small whole numbers, without a copy where its type allows.

    ``values[i] + offset`` is record i's raw code in ``0 .. size - 1``: 0 means missing and
    ``k`` stands for ``uniques[k - 1]``. ``all_categories``: the uniques are a Categorical's
    categories, kept even when unused; otherwise only the values found become categories.
    """

    values: np.ndarray
    offset: int
    uniques: list
    kind: str | None
    all_categories: bool = False

    @property
    def size(self) -> int:
        return len(self.uniques) + 1


def _value_range(values: np.ndarray) -> tuple[int, int]:
    """The smallest and largest value, both taken from each block while it is in the cache
    (one read of a long array instead of two)."""
    if values.nbytes <= 1 << 22:
        return int(values.min()), int(values.max())
    step = 1 << 16
    lows, highs = zip(*((values[k:k + step].min(), values[k:k + step].max())
                        for k in range(0, len(values), step)), strict=True)
    return int(min(lows)), int(max(highs))


def _held_by_arrow(series: pd.Series) -> bool:
    """Text stored by pyarrow: pandas' ``str`` (pandas 3 with pyarrow), ``string[pyarrow]``,
    or an ``ArrowDtype`` of strings."""
    dtype = series.dtype
    if isinstance(dtype, pd.StringDtype):
        return dtype.storage == "pyarrow"
    return isinstance(dtype, pd.ArrowDtype) and dtype.kind in "OSU"  # string, large_string


def _arrow_text_codes(series: pd.Series, kind: str | None) -> RawCodes:
    """pyarrow's dictionary encoding: each string hashed once in pyarrow, one dictionary for
    all chunks (its entries are the values found, in the order found; missing values -1)."""
    import pyarrow.compute as pc  # present: the column is stored by it

    encoded = series.array.__arrow_array__().dictionary_encode()  # the Arrow protocol: no copy
    chunks = encoded.chunks
    dictionary = chunks[-1].dictionary if chunks else None
    if dictionary is None or any(not c.dictionary.equals(dictionary) for c in chunks[:-1]):
        codes, uniques = pd.factorize(series, use_na_sentinel=True)
        return RawCodes(np.asarray(codes), 1, list(uniques), kind)
    indices = pc.fill_null(pc.cast(encoded.combine_chunks().indices if len(chunks) > 1
                                   else chunks[0].indices, _arrow_index_type(len(dictionary))),
                           -1)
    return RawCodes(indices.to_numpy(zero_copy_only=False), 1, dictionary.to_pylist(), kind)


def _arrow_index_type(distinct: int) -> object:
    import pyarrow as pa

    return pa.int8() if distinct < 127 else pa.int16() if distinct < 32767 else pa.int32()


def raw_codes(series: pd.Series) -> RawCodes:
    """Code a column by its type: a Categorical by its own codes, booleans as a uint8 view,
    integers of a narrow range by their offset from the smallest, text through a Categorical
    (compact codes); anything else by ``pandas.factorize``."""
    dtype = series.dtype
    kind = order_kind(dtype)
    if isinstance(dtype, pd.CategoricalDtype):
        # the Categorical's own codes (``.cat.codes`` would copy them)
        return RawCodes(series.array.codes, 1, list(dtype.categories), kind, True)
    if isinstance(dtype, np.dtype) and dtype.kind == "b":
        return RawCodes(series.to_numpy().view(np.uint8), 1, [False, True], kind)
    if isinstance(dtype, np.dtype) and dtype.kind in "iu" and dtype != np.uint64 and len(series):
        values = series.to_numpy()
        low, high = _value_range(values)
        if high - low < OFFSET_SPAN and -(1 << 31) < low and high < (1 << 31):
            return RawCodes(values, 1 - low, list(range(low, high + 1)), kind)
    if _held_by_arrow(series):
        return _arrow_text_codes(series, kind)
    if pd.api.types.is_object_dtype(dtype) or pd.api.types.is_string_dtype(dtype):
        try:  # compact codes (int8 for few values); the categories are the values found
            text = pd.Categorical(series)
            return RawCodes(np.asarray(text.codes), 1, list(text.categories), kind)
        except TypeError:  # values that cannot be sorted together
            pass
    codes, uniques = pd.factorize(series, use_na_sentinel=True)
    return RawCodes(np.asarray(codes), 1, list(uniques), kind)


@dataclass(frozen=True)
class ColumnRule:
    """Raw codes to category positions: ``lookup[raw code]`` (-1: dropped) and the labels."""

    lookup: np.ndarray
    labels: tuple
    n_missing: int
    steps: tuple[Step, ...]


def column_rule(
    raw: RawCodes,
    found: np.ndarray,
    name: str,
    axis: str,
    order: Sequence[Hashable] | None,
    exclude: Sequence[Hashable] | None,
    dropna: bool,
    nominal: bool = False,
) -> ColumnRule:
    """Apply the ordering rules of :func:`table` to one column, given the records found per
    raw code (``found[0]``: missing values)."""
    seen = np.asarray(found[1:]) > 0
    uniques = [_python_scalar(u) for u, s in zip(raw.uniques, seen, strict=True)
               if s or raw.all_categories]
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
        observed = [_python_scalar(u) for u, s in zip(raw.uniques, seen, strict=True) if s]
        absent = [u for u in observed if u not in set(order) and u not in set(excluded)]
        if absent:
            raise ValueError(
                f"order for {name!r} leaves out values found in the column: {absent}. "
                "Add them to order= at their place, or list them in exclude=."
            )
        labels = [x for x in order if x not in set(excluded)]
        origin = "given"
    elif raw.kind == "declared":
        labels, origin = remaining, "declared"
    elif raw.kind == "numeric":
        if len(remaining) > MAX_NUMERIC_LEVELS and not nominal:
            raise ValueError(
                f"Column {name!r} is numeric with {len(remaining)} distinct values; rankfold "
                f"tabulates at most {MAX_NUMERIC_LEVELS}. Group it into ordered bands first, "
                f"e.g. pd.cut(df[{name!r}], bins=5) or pd.qcut(df[{name!r}], q=5), and pass "
                "the banded column."
            )
        labels, origin = sorted(remaining), "numeric"
    elif nominal:
        labels, origin = sorted(remaining, key=str), "sorted"
    else:
        raise ValueError(order_needed(name, remaining))
    position = {label: k for k, label in enumerate(labels)}
    n_missing = int(found[0])
    missing_at = -1
    missing_label = None
    if not dropna and n_missing:
        if MISSING_LABEL in position:
            raise ValueError(
                f"Column {name!r} already has a category {MISSING_LABEL!r}; fill missing values "
                "with another label yourself, or use dropna=True."
            )
        labels = [*labels, MISSING_LABEL]
        missing_at, n_missing, missing_label = len(labels) - 1, 0, MISSING_LABEL
    lookup = np.array([missing_at, *(position.get(_python_scalar(u), -1) for u in raw.uniques)],
                      dtype=np.intp)
    steps.append(OrderStep(axis, name, tuple(labels), origin, missing_label))
    return ColumnRule(lookup, tuple(labels), n_missing, tuple(steps))


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
    raw = raw_codes(series)
    found = _count_cells([raw], [1], raw.size).records
    rule = column_rule(raw, found, name, axis, order, exclude, dropna, nominal)
    lookup = rule.lookup.astype(np.min_scalar_type(-len(rule.labels) - 1))
    codes = np.empty(len(series), dtype=lookup.dtype)
    for part in _chunks(len(series)):
        codes[part] = lookup[np.add(raw.values[part], raw.offset, dtype=np.intp)]
    n_excluded = int(found[1:][rule.lookup[1:] < 0].sum())
    return CodedColumn(codes, rule.labels, rule.n_missing, n_excluded, rule.steps)


# --- counting: raw code combinations, a block of records at a time ------------------------

#: Records per block: each block's cell codes and weights stay in the processor's cache while
#: every sum of that block is taken from them.
BLOCK = 1 << 16


def _chunks(length: int) -> list[slice]:
    return [slice(start, start + BLOCK) for start in range(0, length, BLOCK)]


class RawCells:
    """Each record's raw code combination ``sum (values + offset) * stride``.

    It is computed in the narrowest signed type that holds every combination and the values
    as they are (the sum lies in ``0 .. size - 1``, so wrapping around on the way does not
    change it), in a buffer made once, then copied into ``intp``, the type ``np.bincount``
    counts without a copy of its own.
    """

    def __init__(self, columns: Sequence[RawCodes], strides: Sequence[int], length: int):
        size = int(np.prod([column.size for column in columns]))
        widest = max(column.values.dtype.itemsize for column in columns)
        self.narrow = np.dtype(f"i{max(np.min_scalar_type(-size).itemsize, widest)}")
        self.terms = [(column.values, stride) for column, stride in zip(columns, strides,
                                                                         strict=True)]
        shift = sum(column.offset * stride for column, stride in zip(columns, strides,
                                                                      strict=True))
        bits = 8 * self.narrow.itemsize
        self.shift = (shift + (1 << (bits - 1))) % (1 << bits) - (1 << (bits - 1))  # wrapped
        self.buffer = np.empty(length, dtype=self.narrow)
        self.codes = self.buffer if self.narrow == np.intp else np.empty(length, dtype=np.intp)

    def __call__(self, part: slice) -> np.ndarray:
        """The combinations of the records in ``part`` (at most ``length`` of them)."""
        (first, stride), *others = self.terms
        values = first[part]
        flat = self.buffer[: len(values)]
        np.multiply(values, stride, out=flat, dtype=self.narrow, casting="unsafe")
        for values, stride in others:
            if stride == 1:
                np.add(flat, values[part], out=flat, casting="unsafe")
            else:
                np.add(flat, np.multiply(values[part], stride, dtype=self.narrow,
                                         casting="unsafe"), out=flat, casting="unsafe")
        np.add(flat, self.shift, out=flat, casting="unsafe")
        if flat.dtype == np.intp:
            return flat
        codes = self.codes[: len(flat)]
        codes[...] = flat
        return codes


@dataclass(frozen=True)
class CellSums:
    """Sums per raw code combination (flat arrays of the combinations' number).

    ``records``: records (None when not counted); ``weight`` and ``squares``: sums of the
    weights and of their squares (None without weights, or without ``squares``);
    ``lowest``: the smallest weight (NaN if any is missing; None without weights).
    """

    records: np.ndarray | None
    weight: np.ndarray | None = None
    squares: np.ndarray | None = None
    lowest: float | None = None


def _count_cells(columns: Sequence[RawCodes], strides: Sequence[int], size: int,
                 weights: np.ndarray | None = None, squares: bool = False,
                 records: bool = True) -> CellSums:
    """Records per raw code combination and, with ``weights``, the sums of the weights (and of
    their squares if ``squares``) and the smallest weight, in one pass over blocks of
    :data:`BLOCK` records: the block's codes and weights are read from memory once, and each
    sum is a ``np.bincount`` of them while they are in the cache."""
    length = len(columns[0].values)
    counted = np.zeros(size, dtype=np.int64) if records else None
    total = np.zeros(size) if weights is not None else None
    square_sums = np.zeros(size) if squares else None
    lowest = []
    raw_cells = RawCells(columns, strides, min(BLOCK, length))
    converted, squared = (np.empty(min(BLOCK, length) if weights is not None else 0)
                          for _ in range(2))
    for part in _chunks(length):
        flat = raw_cells(part)
        if counted is not None:
            counted += np.bincount(flat, minlength=size)
        if weights is None:
            continue
        w = weights[part]
        if w.dtype != np.float64:  # other numbers are converted a block at a time
            np.copyto(converted[: len(w)], w)
            w = converted[: len(w)]
        lowest.append(np.min(w))
        total += np.bincount(flat, w, minlength=size)
        if square_sums is not None:
            square_sums += np.bincount(flat, np.multiply(w, w, out=squared[: len(w)]),
                                       minlength=size)
    if weights is None:
        return CellSums(counted)
    return CellSums(counted, total, square_sums, float(np.min(lowest)) if lowest else np.inf)


def _count_lines(columns: Sequence[RawCodes], strides: Sequence[int], size: int,
                 tally: Tally) -> CellSums:
    """The same sums from a group-by result: each line stands for its records."""
    flat = RawCells(columns, strides, len(tally.records))(slice(None))
    records = np.zeros(size, dtype=np.int64)
    np.add.at(records, flat, tally.records)  # integer sums: exact at any count
    if tally.weight_sum is None:
        return CellSums(records)
    sums = np.zeros((2, size))
    np.add.at(sums[0], flat, tally.weight_sum)
    if tally.weight_square_sum is not None:
        np.add.at(sums[1], flat, tally.weight_square_sum)
    return CellSums(records, sums[0], sums[1])


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
    """The weight column as floats; raises if a value is missing, infinite or negative."""
    values = np.asarray(weight_column(data, weight), dtype=float)
    if not (len(values) == 0 or (np.min(values) >= 0 and np.max(values) < np.inf)):
        check_weights(weight, *weight_problems(values))  # NaN fails both comparisons
    return values


def weight_column(data: pd.DataFrame, weight: str) -> np.ndarray:
    """The weight column as numbers: NumPy integers, floats and booleans as they are (no
    copy), anything else read as floats, a missing or non-numeric value as NaN."""
    column = data[weight]
    if isinstance(column.dtype, np.dtype) and column.dtype.kind in "fiub":
        return column.to_numpy(copy=False)
    return pd.to_numeric(column, errors="coerce").to_numpy(dtype=float, na_value=np.nan)


def weight_problems(values: np.ndarray) -> tuple[int, int, int]:
    """How many weights are missing (NaN), infinite and, among the finite ones, negative: -inf
    counts as infinite only, so the three add up to the rows at fault."""
    if values.dtype.kind != "f":
        return 0, 0, int(np.count_nonzero(values < 0))
    return (int(np.count_nonzero(np.isnan(values))), int(np.count_nonzero(np.isinf(values))),
            int(np.count_nonzero(np.isfinite(values) & (values < 0))))


def _check_arguments(
    row: str, col: str, control: str | None, weight: str | None, weight_kind: str,
    order: Mapping | None, exclude: Mapping | None, non_substantive: Sequence[Hashable] | bool,
) -> tuple[dict, dict, tuple | None]:
    """Check the arguments of :func:`table`; return the orders, exclusions and extra flags."""
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
    if non_substantive is False:
        extra_flags = None
    elif non_substantive is True:
        extra_flags = ()
    else:
        extra_flags = tuple(label_list(non_substantive, "non_substantive"))
    return options["order"], options["exclude"], extra_flags


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
    if records is None and present[missing | dropped].any():  # some records were dropped
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
