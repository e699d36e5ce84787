"""Counting where the data live: Dask, DuckDB (Parquet or CSV files, relations) and polars.

Every measure depends on the records only through the table of counts, so a source too large
for pandas is reduced by its own engine to one group-by over the row, column and control values:
one line per distinct combination, with the number of records and, for a weight column, the
sum of weights, the sum of squared weights and counts of unusable weights. That small result
comes back as a pandas frame and :func:`rankfold.table` codes it with exactly the rules it
applies to a pandas DataFrame, so the labels, steps and counts are the same whichever engine
counted. The engines are optional and imported only here, on demand.
"""

from __future__ import annotations

import importlib
import os
from collections.abc import Hashable, Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from types import ModuleType
from typing import Any

import numpy as np
import pandas as pd

from .column_coding import order_kind, order_needed
from .table_checks import check_columns, check_weights

__all__ = ["MAX_LINES", "Tally", "engine_name", "schema", "tally_source"]

MAX_LINES = 1_000_000
"""Most distinct (row, column, control) combinations a group-by may return."""

RECORDS = "__rankfold_records"
WEIGHT_SUM = "__rankfold_weight_sum"
SQUARE_SUM = "__rankfold_weight_square_sum"
BAD_NAN = "__rankfold_nan"
BAD_INF = "__rankfold_inf"
BAD_NEG = "__rankfold_negative"

FILE_READERS = {".parquet": "read_parquet", ".pq": "read_parquet", ".csv": "read_csv",
                ".tsv": "read_csv", ".gz": "read_csv"}


@dataclass(frozen=True)
class Tally:
    """What stands behind each line of a group-by result.

    Attributes
    ----------
    records : ndarray of int64
        Data rows on the line.
    weight_sum, weight_square_sum : ndarray of float, optional
        Sums of the weights and of their squares (weighted tables only).
    """

    records: np.ndarray
    weight_sum: np.ndarray | None = None
    weight_square_sum: np.ndarray | None = None


def _require(module: str, extra: str, purpose: str) -> ModuleType:
    try:
        return importlib.import_module(module)
    except ImportError as err:
        raise ValueError(
            f"{purpose} needs the optional package {module.split('.')[0]!r}, which is not "
            f'installed. Install it with: pip install "rankfold[{extra}]"'
        ) from err


@dataclass(frozen=True)
class Request:
    """The variables to count and the orders given for them."""

    row: str
    col: str
    control: str | None
    weight: str | None
    order: Mapping[str, Sequence[Hashable]]

    @property
    def keys(self) -> list[str]:
        """The columns to group by: row, column and, when given, control."""
        return [k for k in (self.row, self.col, self.control) if k is not None]

    def check(self, schema: pd.DataFrame) -> None:
        """Refuse, before any pass over the data, a count whose result the rules would reject."""
        check_columns(schema.columns, [self.row, self.col, self.control, self.weight])
        for name in (self.row, self.col):
            if name not in self.order and order_kind(schema[name].dtype) is None:
                raise ValueError(order_needed(name, []))


def _aggregate_frame(frame: Any, keys: list[str], weight: str | None, numeric: Any) -> Any:
    """Group-by sums on a frame with the pandas interface (a Dask DataFrame).

    ``numeric`` is the engine's ``to_numeric``; non-numeric weights become missing, as in
    the pandas path.
    """
    parts: dict[str, Any] = {RECORDS: 1}
    if weight is not None:
        w = numeric(frame[weight], errors="coerce").astype("float64")
        parts |= {
            WEIGHT_SUM: w,
            SQUARE_SUM: w * w,
            BAD_NAN: w.isna().astype("int64"),
            BAD_INF: (w.abs() == np.inf).astype("int64"),
            BAD_NEG: ((w < 0) & (w.abs() != np.inf)).astype("int64"),
        }
    # split_out=1: one tree reduction to a single small result (no shuffle between workers)
    grouped = frame[keys].assign(**parts).groupby(keys, dropna=False, observed=True)
    return grouped.sum(split_out=1)


def _dask_schema(frame: Any) -> pd.DataFrame:
    _require("dask.dataframe", "dask", "Counting a Dask DataFrame")
    return pd.DataFrame({name: pd.Series(dtype=dtype) for name, dtype in frame.dtypes.items()})


def _dask_lines(frame: Any, request: Request) -> pd.DataFrame:
    columns = _dask_schema(frame)
    request.check(columns)
    dtypes = columns.dtypes
    keys = request.keys
    categorical = [k for k in keys if isinstance(dtypes[k], pd.CategoricalDtype)]
    known = [k for k in categorical if frame[k].cat.known]
    unknown = [k for k in categorical if k not in known and k not in request.order]
    if unknown:
        name = unknown[0]
        raise ValueError(
            f"Column {name!r} of the Dask DataFrame is categorical with unknown categories. "
            f"rankfold will not scan the data to find them without saying so: pass "
            f"order={{{name!r}: [lowest, ..., highest]}}, or make them known first with "
            f"ddf[{name!r}] = ddf[{name!r}].cat.as_known() (one pass over the data)."
        )
    dd = _require("dask.dataframe", "dask", "Counting a Dask DataFrame")
    grouped = _aggregate_frame(frame, keys, request.weight, dd.to_numeric)
    lines = grouped.head(MAX_LINES + 1, npartitions=-1).reset_index()
    for name in known:  # the group-by may drop unobserved categories from the dtype
        lines[name] = lines[name].astype(dtypes[name])
    return lines


def _polars_schema(frame: Any) -> pd.DataFrame:
    _require("polars", "polars", "Counting a polars DataFrame")
    return frame.lazy().head(0).collect().to_pandas()


def _polars_lines(frame: Any, request: Request) -> pd.DataFrame:
    request.check(_polars_schema(frame))
    pl = _require("polars", "polars", "Counting a polars DataFrame")
    aggregates = [pl.len().alias(RECORDS)]
    if request.weight is not None:
        w = pl.col(request.weight).cast(pl.Float64, strict=False)
        aggregates += [
            w.sum().alias(WEIGHT_SUM),
            (w * w).sum().alias(SQUARE_SUM),
            (w.is_null() | w.is_nan()).sum().alias(BAD_NAN),
            w.is_infinite().sum().alias(BAD_INF),
            ((w < 0) & w.is_finite()).sum().alias(BAD_NEG),
        ]
    grouped = frame.lazy().group_by(request.keys).agg(aggregates)
    return grouped.head(MAX_LINES + 1).collect().to_pandas()


def _quote(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


@contextmanager
def _relation(source: Any) -> Iterator[Any]:
    """A DuckDB relation: the source itself, or its files read through a new connection."""
    duckdb = _require("duckdb", "duckdb", "Counting files or a DuckDB relation")
    if not isinstance(source, (str, os.PathLike)):
        yield source
        return
    path = os.fspath(source)
    reader = FILE_READERS.get(os.path.splitext(path)[1].lower())
    if reader is None:
        raise ValueError(
            f"Cannot tell the file type of {path!r}: name Parquet files *.parquet (or *.pq) and "
            "CSV files *.csv, *.tsv or *.csv.gz; for a folder pass a glob such as "
            "'folder/*.parquet'."
        )
    # a cursor of the default in-memory database: its own connection, made in microseconds
    # where duckdb.connect() takes milliseconds; files are only read, nothing is stored in it
    default = duckdb.default_connection  # a function since duckdb 1.1, an object before
    connection = (default() if callable(default) else default).cursor()
    try:
        try:
            relation = getattr(connection, reader)(path)
        except duckdb.Error as err:
            raise ValueError(f"DuckDB could not read {path!r}: {err}") from err
        yield relation
    finally:
        connection.close()


def _duckdb_schema(source: Any) -> pd.DataFrame:
    with _relation(source) as relation:
        return relation.limit(0).df()


def _duckdb_lines(source: Any, request: Request) -> pd.DataFrame:
    with _relation(source) as relation:
        request.check(relation.limit(0).df())
        group = ", ".join(_quote(k) for k in request.keys)

        def grouped(aggregates: list[str]) -> pd.DataFrame:
            query = relation.aggregate(f"{group}, {', '.join(aggregates)}", group)
            return query.limit(MAX_LINES + 1).df()

        if request.weight is None:
            return grouped([f"count(*) AS {RECORDS}"])
        w = f"TRY_CAST({_quote(request.weight)} AS DOUBLE)"
        sums = [f"count(*) AS {RECORDS}", f"sum({w}) AS {WEIGHT_SUM}",
                f"sum({w} * {w}) AS {SQUARE_SUM}"]
        # Cheap checks in the same query: the smallest weight (below 0 for a negative one or
        # -inf), how many are present (fewer than the records when one is missing) and the
        # weight sums themselves, which are NaN or infinite when a weight is NaN or infinite.
        lines = grouped([*sums, f"min({w}) AS low", f"count({w}) AS present"])
        totals, low = lines[WEIGHT_SUM].to_numpy(float), lines["low"].to_numpy(float)
        doubtful = ((lines["present"] < lines[RECORDS]).any() or (low < 0).any()
                    or not np.isfinite(totals).all())
        if doubtful:  # only then count the bad weights exactly, for the error message
            return grouped([
                *sums,
                f"count(*) FILTER (WHERE {w} IS NULL OR isnan({w})) AS {BAD_NAN}",
                f"count(*) FILTER (WHERE isinf({w})) AS {BAD_INF}",
                # -inf counts as infinite only, as in the pandas path
                f"count(*) FILTER (WHERE {w} < 0 AND NOT isinf({w})) AS {BAD_NEG}",
            ])
        for name in (BAD_NAN, BAD_INF, BAD_NEG):
            lines[name] = 0
        return lines.drop(columns=["low", "present"])


#: For each engine: (column types without reading records, the group-by count).
ENGINES = {
    "dask": (_dask_schema, _dask_lines),
    "polars": (_polars_schema, _polars_lines),
    "duckdb": (_duckdb_schema, _duckdb_lines),
}


def engine_name(source: object) -> str:
    """``"dask"``, ``"polars"`` or ``"duckdb"``: the engine that counts ``source``.

    Raises
    ------
    ValueError
        For anything :func:`tally_source` cannot count.
    """
    if isinstance(source, (str, os.PathLike)):
        return "duckdb"
    top = type(source).__module__.split(".")[0]
    name = type(source).__name__
    kinds = {("dask", "DataFrame"), ("polars", "DataFrame"), ("polars", "LazyFrame"),
             ("duckdb", "DuckDBPyRelation")}
    if (top, name) in kinds:
        return top
    raise ValueError(
        f"rankfold.table cannot count a {type(source).__module__}.{name}. It takes a pandas, "
        "Dask or polars DataFrame, a DuckDB relation, or the path or glob of Parquet or CSV "
        "files; for a ready table of counts use rankfold.table_from_counts."
    )


def schema(source: Any) -> pd.DataFrame:
    """The columns of a source, without reading its records.

    Parameters
    ----------
    source : dask DataFrame, polars DataFrame or LazyFrame, DuckDB relation, str or PathLike
        As in :func:`tally_source`.

    Returns
    -------
    pandas.DataFrame
        An empty frame with the source's columns and the pandas types their values take when
        counted, for choosing variables (the ordering rules look at these types).
    """
    return ENGINES[engine_name(source)][0](source)


def tally_source(
    source: Any,
    row: str,
    col: str,
    *,
    control: str | None = None,
    weight: str | None = None,
    order: Mapping[str, Sequence[Hashable]] | None = None,
) -> tuple[pd.DataFrame, Tally]:
    """Count a source with its own engine: one line per distinct (row, col, control) values.

    Parameters
    ----------
    source : dask DataFrame, polars DataFrame or LazyFrame, DuckDB relation, str or PathLike
        The records. A path or glob (``"visits/*.parquet"``) names Parquet (``.parquet``,
        ``.pq``) or CSV (``.csv``, ``.tsv``, ``.csv.gz``) files, read by DuckDB.
    row, col : str
        Row and column variables.
    control : str, optional
        Control variable.
    weight : str, optional
        Weight column: its sums, sums of squares and unusable values are tallied too.
    order : dict, optional
        ``{column: [labels]}``, as in :func:`rankfold.table`. A row or column variable
        whose type carries no order (text, unordered categories) needs an entry here; that is
        checked against the column types before anything is counted.

    Returns
    -------
    lines : pandas.DataFrame
        The ``row``, ``col`` (and ``control``) values of each distinct combination, missing
        values included, with the column types the source has.
    tally : Tally
        The records and weight totals behind each line.

    Raises
    ------
    ValueError
        If the source is of an unknown kind, its engine is not installed (the message names
        the extra to install), a column is absent or needs ``order=``, a Dask categorical has
        unknown categories, the weights include missing, infinite or negative values, or
        there are more than :data:`MAX_LINES` combinations (band numeric columns first).

    Notes
    -----
    This is the split-apply-combine reduction of Wickham (2011), "The split-apply-combine
    strategy for data analysis", J. Stat. Software 40(1): counts and weight sums add up
    over any partition of the records, so each engine may count its partitions separately
    and add the results, which is what Dask does on a cluster and DuckDB does out of core.
    """
    request = Request(row, col, control, weight, dict(order or {}))
    keys = request.keys
    lines = ENGINES[engine_name(source)][1](source, request)
    if len(lines) > MAX_LINES:
        raise ValueError(
            f"The variables {keys} have more than {MAX_LINES:,} distinct combinations, far more "
            "than an ordered table can show. Group numeric columns into a few ordered bands "
            "before counting."
        )
    if weight is None:
        return lines[keys], Tally(lines[RECORDS].to_numpy(dtype=np.int64))
    bad = (int(lines[name].sum()) for name in (BAD_NAN, BAD_INF, BAD_NEG))
    check_weights(weight, *bad)
    tally = Tally(
        records=lines[RECORDS].to_numpy(dtype=np.int64),
        weight_sum=lines[WEIGHT_SUM].to_numpy(dtype=float),
        weight_square_sum=lines[SQUARE_SUM].to_numpy(dtype=float),
    )
    return lines[keys], tally
