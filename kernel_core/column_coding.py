"""Coding a column: each column type read as small whole numbers by its own fast path, and
the ordering rules of :func:`rankfold.table` that turn those numbers into category positions.

Fast paths (:func:`raw_codes`): a Categorical by its own codes, booleans as a uint8 view,
integers of a narrow range by their offset from the smallest value (no copy), text held by
pyarrow through pyarrow's dictionary encoding, other text through a Categorical (compact
codes), anything else through ``pandas.factorize``.
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .cell_sums import _chunks, _count_cells
from .steps import ExcludeStep, OrderStep, Step

__all__ = ["MAX_NUMERIC_LEVELS", "MISSING_LABEL", "code_column", "column_rule", "order_kind",
           "order_needed", "raw_codes"]

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
    """The smallest and largest value; of a long array of wide numbers both are taken from
    each block while it is in the cache (one read of the array instead of two)."""
    if values.itemsize < 4 or values.nbytes <= 1 << 22:
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
        return dtype.storage in ("pyarrow", "pyarrow_numpy")  # the latter: pandas 2.1 to 2.3
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
    raw code (``found[0]``: missing values), or any numbers positive exactly where there are
    records (the weight sums when every weight is positive; the result's ``n_missing`` is then
    that number, not a count of records)."""
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
    if not dropna and found[0] > 0:
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
