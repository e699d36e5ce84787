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
        low, high = int(values.min()), int(values.max())
        if high - low < OFFSET_SPAN and -(1 << 31) < low and high < (1 << 31):
            return RawCodes(values, 1 - low, list(range(low, high + 1)), kind)
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
    found = _count_cells([raw], [1], raw.size)
    rule = column_rule(raw, found, name, axis, order, exclude, dropna, nominal)
    lookup = rule.lookup.astype(np.min_scalar_type(-len(rule.labels) - 1))
    codes = np.empty(len(series), dtype=lookup.dtype)
    for part in _chunks(len(series)):
        codes[part] = lookup[np.add(raw.values[part], raw.offset, dtype=np.intp)]
    n_excluded = int(found[1:][rule.lookup[1:] < 0].sum())
    return CodedColumn(codes, rule.labels, rule.n_missing, n_excluded, rule.steps)


# --- counting: raw code combinations, a block of records at a time ------------------------

#: Records per block: numpy widens what it counts to int64, and blocks keep that copy small.
BLOCK = 1 << 18


def _chunks(length: int) -> list[slice]:
    return [slice(start, start + BLOCK) for start in range(0, length, BLOCK)]


def _raw_cells(columns: Sequence[RawCodes], strides: Sequence[int], part: slice) -> np.ndarray:
    """Each record's raw code combination ``sum (values + offset) * stride``, computed in the
    narrowest signed type that holds every combination and the values as they are: the sum
    lies in ``0 .. size - 1``, so wrapping around on the way does not change it."""
    size = int(np.prod([column.size for column in columns]))
    widest = max(column.values.dtype.itemsize for column in columns)
    narrow = np.dtype(f"i{max(np.min_scalar_type(-size).itemsize, widest)}")  # no casting
    first, *others = zip(columns, strides, strict=True)
    flat = np.multiply(first[0].values[part], first[1], dtype=narrow, casting="unsafe")
    shift = first[0].offset * first[1]
    for column, stride in others:
        if stride == 1:
            np.add(flat, column.values[part], out=flat, casting="unsafe")
        else:
            np.add(flat, np.multiply(column.values[part], stride, dtype=narrow, casting="unsafe"),
                   out=flat, casting="unsafe")
        shift += column.offset * stride
    bits = 8 * narrow.itemsize
    shift = (shift + (1 << (bits - 1))) % (1 << bits) - (1 << (bits - 1))  # the same, wrapped
    np.add(flat, shift, out=flat, casting="unsafe")
    return flat


def _count_cells(columns: Sequence[RawCodes], strides: Sequence[int], size: int,
                 weights: np.ndarray | None = None, squares: bool = False,
                 fractional: bool = False) -> np.ndarray:
    """Records per raw code combination; with ``weights`` also the sums of the weights, of
    their squares (if ``squares``) and the records whose weight is not whole (if
    ``fractional``): an array of shape (size,) or (4, size)."""
    records = np.zeros(size, dtype=np.int64)
    sums = np.zeros((3, size)) if weights is not None else None
    scratch = np.empty(BLOCK) if fractional else None
    for part in _chunks(len(columns[0].values)):
        flat = _raw_cells(columns, strides, part)
        records += np.bincount(flat, minlength=size)
        if sums is None:
            continue
        w = weights[part]
        sums[0] += np.bincount(flat, w, minlength=size)
        if squares:
            sums[1] += np.bincount(flat, w * w, minlength=size)
        if fractional:
            whole = np.floor(w, out=scratch[: len(w)]) == w
            if not whole.all():
                sums[2] += np.bincount(flat[~whole], minlength=size)
    return records if sums is None else np.vstack([records, sums])


def _count_lines(columns: Sequence[RawCodes], strides: Sequence[int], size: int,
                 tally: Tally) -> np.ndarray:
    """The same sums from a group-by result: each line stands for its records."""
    flat = _raw_cells(columns, strides, slice(None))
    records = np.zeros(size, dtype=np.int64)
    np.add.at(records, flat, tally.records)  # integer sums: exact at any count
    if tally.weight_sum is None:
        return records
    sums = np.zeros((3, size))
    np.add.at(sums[0], flat, tally.weight_sum)
    for k, per_line in ((1, tally.weight_square_sum), (2, tally.fractional)):
        if per_line is not None:
            np.add.at(sums[k], flat, per_line)
    return np.vstack([records, sums])
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
    values, problems = _weight_values(data, weight)
    check_weights(weight, *problems)
    return values


def _weight_values(data: pd.DataFrame, weight: str) -> tuple[np.ndarray, tuple[int, int, int]]:
    """The weight column as floats, and its missing, infinite and negative values (counted
    only when its smallest or largest value shows there are some)."""
    column = data[weight]
    if isinstance(column.dtype, np.dtype) and column.dtype.kind in "fiub":
        values = column.to_numpy(dtype=float, copy=False)  # no copy of a float64 column
    else:
        values = pd.to_numeric(column, errors="coerce").to_numpy(dtype=float)
    if not len(values) or (np.min(values) >= 0 and np.max(values) < np.inf):  # NaN fails both
        return values, (0, 0, 0)
    # -inf counts as infinite only, so the three counts add up to the rows at fault
    return values, (
        int(np.isnan(values).sum()),
        int(np.isinf(values).sum()),
        int((np.isfinite(values) & (values < 0)).sum()),
    )


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


def _dropped(sums: np.ndarray, lookups: Sequence[np.ndarray], dropna: bool) -> tuple[int, int]:
    """Records dropped for a missing value (raw code 0 in any role, with ``dropna``) and,
    among the others, for an excluded category, from the records per raw combination."""
    shape = sums.shape
    missing = np.zeros(shape, dtype=bool)
    dropped = np.zeros(shape, dtype=bool)
    for axis, lookup in enumerate(lookups):
        along = [1] * len(shape)
        along[axis] = -1
        if dropna:
            missing |= (np.arange(shape[axis]) == 0).reshape(along)
        dropped |= (lookup < 0).reshape(along)
    return int(sums[missing].sum()), int(sums[dropped & ~missing].sum())


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
    # counting: records (and weight sums) per combination of raw codes, then the rules
    problems = (0, 0, 0)
    if tally is not None:
        sums = _count_lines(raws, strides, int(np.prod(sizes)), tally)
    elif weight is None:
        sums = _count_cells(raws, strides, int(np.prod(sizes)))
    else:
        w, problems = _weight_values(data, weight)
        sums = _count_cells(raws, strides, int(np.prod(sizes)), w,
                            squares=weight_kind == "sampling",
                            fractional=weight_kind == "frequency")
    sums = sums.reshape(-1, *sizes)
    records = sums[0].astype(np.int64)
    rules = {}
    for k, ((role, name, axis), raw) in enumerate(zip(roles, raws, strict=True)):
        found = records.sum(axis=tuple(a for a in range(len(roles)) if a != k))
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
    if tally is None and weight is not None:
        check_weights(weight, *problems)
    # bookkeeping of dropped records, and the cells
    lookups = [rules[role].lookup for role, _, _ in roles]
    n_missing, n_excluded = _dropped(records, lookups, dropna)
    shape = (n_k, n_i, n_j)
    squared = per_cell = None
    if weight is None:
        cells = _cells(records, lookups, shape)
    else:
        cells = _cells(sums[1], lookups, shape)
        check_total(float(cells.sum()), f"weights in {weight!r}")
        if weight_kind == "frequency" and not _cells(sums[3], lookups, shape).any():
            cells = whole_counts(cells)
        if weight_kind == "sampling":
            squared = _cells(sums[2], lookups, shape)
            per_cell = _cells(records, lookups, shape)
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
