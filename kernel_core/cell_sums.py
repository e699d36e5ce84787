"""Counting: records, weight sums and sums of squared weights per combination of raw codes.

One pass over blocks of records (:data:`BLOCK`): each block's combination codes are formed in
the narrowest integer type, copied once into the type ``np.bincount`` counts, and every sum of
the block is taken while its codes and weights are in the processor's cache. The weight column
is read as it is stored (no float copy of the whole column), and its smallest value is taken on
the way, so that missing and negative weights are found without a pass of their own.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .table_checks import check_weights

if TYPE_CHECKING:
    from .column_coding import RawCodes
    from .sources import Tally

__all__ = ["BLOCK", "CellSums", "weight_column", "weight_problems"]

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
