"""Every column type's counting path gives pandas' own group-by sums.

``rankfold.table`` codes each column type its own way (a Categorical's codes, a boolean view,
an integer's offset from its smallest value, pyarrow's dictionary encoding of text, a
Categorical of object text, ``pandas.factorize`` for the rest) and counts blocks of records
with ``np.bincount``; with frequency weights it counts records only when the weight sums
cannot stand in for them. The outside reference throughout is pandas: ``DataFrame.groupby``
sums (records, sum of weights, sum of squared weights) over the records that remain after
dropping missing values and excluded categories, and plain ``isna``/``isin`` counts for the
dropped records. The data are invented, drawn from seeded generators, long enough to span
several counting blocks.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold import cell_sums

ROWS = 2 * cell_sums.BLOCK + 1234  # two blocks and a partial last one
ROW_LABELS = ["low", "mid", "high", "top"]
COL_LABELS = ["never", "sometimes", "often"]


def column_of(kind: str, codes: np.ndarray, labels: list, missing: np.ndarray) -> pd.Series:
    """Codes 0..k-1 as a column of ``kind`` (labels for text, numbers for numeric kinds), with
    missing values where ``missing`` is set when the kind can hold them."""
    if kind == "categorical":  # one unused category, kept in its place
        values = pd.Categorical.from_codes(np.where(missing, -1, codes),
                                           [*labels, "unused"], ordered=True)
        return pd.Series(values)
    if kind in ("int8", "int16", "int64", "uint8"):
        base = {"int8": -128, "int16": 3000, "int64": 2**40, "uint8": 250}[kind]  # range edges
        step = {"int8": 85, "int16": 7, "int64": 3, "uint8": 1}[kind]
        return pd.Series((base + step * codes.astype(np.int64)).astype(kind))
    if kind == "bool":
        return pd.Series(codes % 2 == 1)
    if kind == "float":
        return pd.Series(np.where(missing, np.nan, codes * 0.5))
    if kind == "Int64":
        return pd.Series(pd.array(np.where(missing, None, codes), dtype="Int64"))
    if kind == "boolean":
        return pd.Series(pd.array(np.where(missing, None, codes % 2 == 1), dtype="boolean"))
    text = np.array(labels, dtype=object)[codes]
    text[missing] = None
    if kind == "object":
        return pd.Series(text, dtype=object)
    if kind == "arrow":
        pa = pytest.importorskip("pyarrow")
        return pd.Series(pd.array(text, dtype=pd.ArrowDtype(pa.string())))
    return pd.Series(text, dtype=kind)  # "str", "string[python]", "string[pyarrow]"


KINDS = ["categorical", "int8", "int16", "int64", "uint8", "bool", "float", "Int64", "boolean",
         "object", "str", "string[python]", "string[pyarrow]", "arrow"]
TEXT = {"object", "str", "string[python]", "string[pyarrow]", "arrow"}


def invented_frame(kind: str, seed: int) -> tuple[pd.DataFrame, dict]:
    """Two associated columns of one kind, a third-of-a-percent missing where the kind allows,
    and weights of every kind the tests need; with the options (order, exclude) to pass."""
    if kind in TEXT and kind != "object":
        pytest.importorskip("pyarrow")
    rng = np.random.default_rng(seed)
    row = rng.integers(0, 4, ROWS)
    col = np.clip(row * 3 // 4 + rng.integers(-1, 2, ROWS), 0, 2)
    frame = pd.DataFrame({
        "x": column_of(kind, row, ROW_LABELS, rng.random(ROWS) < 0.003),
        "y": column_of(kind, col, COL_LABELS, rng.random(ROWS) < 0.003),
        "whole": rng.integers(1, 5, ROWS).astype(float),
        "with_zeros": rng.integers(0, 3, ROWS).astype(float),
        "fractional": rng.uniform(0.1, 3.0, ROWS),
        "survey": rng.gamma(3.0, 0.7, ROWS),
        "integers": rng.integers(1, 4, ROWS),
        "single": rng.uniform(0.5, 2.0, ROWS).astype(np.float32),
    })
    options = {}
    if kind in TEXT:
        # "often" is left out of order= and excluded: its records are dropped as excluded
        options = {"order": {"x": ROW_LABELS, "y": ["never", "sometimes"]},
                   "exclude": {"y": ["often"]}}
    elif kind != "bool":
        options = {"exclude": {"x": [frame["x"].dropna().iloc[0]]}}
    return frame, options


def pandas_reference(frame: pd.DataFrame, options: dict, weight: str | None,
                     t: rankfold.OrdinalTable) -> dict:
    """Cells, records, squared weights and dropped records from pandas' group-by."""
    exclude = options.get("exclude", {})
    missing = frame["x"].isna() | frame["y"].isna()
    excluded = (frame["x"].isin(exclude.get("x", [])) | frame["y"].isin(exclude.get("y", [])))
    kept = frame[~missing & ~excluded].copy()
    kept["w"] = 1.0 if weight is None else kept[weight].astype(float)
    kept["w2"] = kept["w"] ** 2
    sums = kept.groupby(["x", "y"], observed=True).agg(
        records=("w", "size"), total=("w", "sum"), squares=("w2", "sum"))
    shape = (len(t.row_labels), len(t.col_labels))
    out = {name: np.zeros(shape) for name in ("records", "total", "squares")}
    for (a, b), line in sums.iterrows():
        i, j = t.row_labels.index(_plain(a)), t.col_labels.index(_plain(b))
        for name in out:
            out[name][i, j] = line[name]
    out["n_missing"] = int(missing.sum())
    out["n_excluded"] = int((~missing & excluded).sum())
    return out


def _plain(value):
    return value.item() if isinstance(value, np.generic) else value


WEIGHTINGS = {
    "none": {},
    "frequency, whole": {"weight": "whole"},
    "frequency, some zero": {"weight": "with_zeros"},
    "frequency, fractional": {"weight": "fractional"},
    "frequency, integer column": {"weight": "integers"},
    "sampling": {"weight": "survey", "weight_kind": "sampling"},
    "sampling, float32": {"weight": "single", "weight_kind": "sampling"},
}


@pytest.mark.parametrize("weighting", list(WEIGHTINGS))
@pytest.mark.parametrize("kind", KINDS)
def test_counts_equal_pandas_groupby(kind, weighting):
    frame, options = invented_frame(kind, seed=KINDS.index(kind))
    before = frame.copy(deep=True)
    call = WEIGHTINGS[weighting]
    t = rankfold.table(frame, "x", "y", **options, **call)
    assert frame.equals(before) and frame.dtypes.equals(before.dtypes)  # not modified
    want = pandas_reference(frame, options, call.get("weight"), t)
    assert (t.n_missing, t.n_excluded) == (want["n_missing"], want["n_excluded"])
    key = "records" if not call else "total"
    np.testing.assert_allclose(t.cells[0], want[key], rtol=1e-10)
    whole = np.all(np.mod(want[key], 1) == 0)
    assert np.issubdtype(t.cells.dtype, np.integer) == whole  # whole totals stay exact integers
    if call.get("weight_kind") == "sampling":
        np.testing.assert_allclose(t.squared_weights[0], want["squares"], rtol=1e-10)
        np.testing.assert_array_equal(t.records[0], want["records"])
    if kind == "categorical":
        assert t.row_labels[-1] == "unused" and not t.cells[0, -1].any()  # empty, kept


def test_pandas_crosstab_agrees_on_text_with_order():
    # Second outside reference for the text path: pd.crosstab of the same columns
    frame, options = invented_frame("str", seed=3)
    t = rankfold.table(frame, "x", "y", **options)
    kept = frame[frame["y"] != "often"]
    want = pd.crosstab(kept["x"], kept["y"]).reindex(index=ROW_LABELS,
                                                      columns=["never", "sometimes"])
    np.testing.assert_array_equal(t.cells[0], want.to_numpy())


def test_wide_code_combinations_do_not_wrap_around():
    # Three variables whose code combinations (40 x 40 x 3) need more than int8, from int8
    # codes: each product code * stride must be formed in the wider type. Reference: pandas
    # group-by sizes.
    rng = np.random.default_rng(5)
    labels = [f"c{k:02d}" for k in range(40)]
    codes = rng.integers(0, 40, (2, 100_000)).astype(np.int8)
    frame = pd.DataFrame({
        "x": pd.Categorical.from_codes(codes[0], labels, ordered=True),
        "y": pd.Categorical.from_codes(codes[1], labels, ordered=True),
        "level": rng.integers(0, 3, 100_000).astype(np.int8),
    })
    t = rankfold.table(frame, "x", "y", control="level")
    want = frame.groupby(["level", "x", "y"], observed=False).size().to_numpy().reshape(3, 40, 40)
    np.testing.assert_array_equal(t.cells, want)


def test_zero_weight_value_is_still_a_category():
    # A value present only with weight 0 is found in the data: it keeps a (zero) category, as
    # pandas' group-by lists it with a zero sum; records with weight 0 count as dropped rows.
    frame = pd.DataFrame({"x": [1, 1, 2, 2, 3, 3], "y": [1, 2, 1, 2, 1, 2],
                          "w": [1.0, 2.0, 1.0, 1.0, 0.0, 0.0]})
    t = rankfold.table(frame, "x", "y", weight="w")
    want = frame.groupby(["x", "y"])["w"].sum().unstack().to_numpy()
    assert t.row_labels == (1, 2, 3)
    np.testing.assert_array_equal(t.cells[0], want)
    t = rankfold.table(frame.assign(x=[1, 1, 2, 2, np.nan, 3]), "x", "y", weight="w")
    assert t.n_missing == 1


@pytest.mark.parametrize("bad, message", [
    (np.nan, "1 missing or non-numeric"),
    (-1.0, "1 negative"),
    (np.inf, "1 infinite"),
    (-np.inf, "1 infinite"),
])
@pytest.mark.parametrize("weight_kind", ["frequency", "sampling"])
def test_bad_weights_are_refused_with_the_count(bad, message, weight_kind):
    rng = np.random.default_rng(8)
    w = rng.uniform(0.5, 2, ROWS)
    w[ROWS - 5] = bad  # in the last block
    frame = pd.DataFrame({"x": rng.integers(0, 3, ROWS), "y": rng.integers(0, 3, ROWS), "w": w})
    with pytest.raises(ValueError, match=message):
        rankfold.table(frame, "x", "y", weight="w", weight_kind=weight_kind)


def test_bad_weights_in_integer_and_nullable_columns():
    frame = pd.DataFrame({"x": [1, 2, 1, 2], "y": [1, 1, 2, 2]})
    with pytest.raises(ValueError, match="1 negative"):
        rankfold.table(frame.assign(w=np.array([1, -2, 3, 1], dtype=np.int16)), "x", "y",
                       weight="w")
    with pytest.raises(ValueError, match="1 missing or non-numeric"):
        rankfold.table(frame.assign(w=pd.array([1.0, None, 2.0, 1.0], dtype="Float64")),
                       "x", "y", weight="w")
    with pytest.raises(ValueError, match="2 missing or non-numeric"):
        rankfold.table(frame.assign(w=["1", "two", None, "3"]), "x", "y", weight="w")


def test_fractional_weights_whose_cells_are_whole_give_integer_counts():
    # The whole-number rule reads each cell's total: halves that pair up make whole counts,
    # which equal the table of the same units counted once each (common practice: a cell
    # total is what the table holds, whatever the records' split).
    frame = pd.DataFrame({"x": [1, 1, 2, 2, 2], "y": [1, 1, 2, 2, 1],
                          "w": [0.5, 0.5, 1.5, 0.5, 3.0]})
    t = rankfold.table(frame, "x", "y", weight="w")
    assert t.cells.dtype == np.int64
    np.testing.assert_array_equal(t.cells[0], [[1, 0], [3, 2]])
    t = rankfold.table(frame.assign(w=[0.5, 0.25, 1.5, 0.5, 3.0]), "x", "y", weight="w")
    assert t.cells.dtype == np.float64


def test_missing_values_kept_with_small_frequency_weights():
    # dropna=False keeps missing values as a category whatever their weights' total, here
    # below 1; the cells are pandas' group-by sums with missing values as a group of their own.
    frame = pd.DataFrame({"x": [1.0, 2.0, np.nan, 1.0, 2.0], "y": [1, 1, 2, 2, 2],
                          "w": [1.0, 2.0, 0.25, 1.5, 1.0]})
    t = rankfold.table(frame, "x", "y", weight="w", dropna=False)
    assert t.row_labels == (1.0, 2.0, "(missing)")
    want = frame.groupby(["x", "y"], dropna=False)["w"].sum().unstack(fill_value=0)
    np.testing.assert_allclose(t.cells[0], want.to_numpy())


@pytest.mark.parametrize("dtype, rare", [("int64", 1990), ("int32", 1950),
                                         ("uint32", 2_000_000_000)])
def test_long_integer_column_with_a_rare_value(dtype, rare):
    # One record far from the others (within the offset coding's span, or far outside it, so
    # the column is coded another way) in a long column is counted in its place.
    # Reference: pandas group-by sizes.
    rng = np.random.default_rng(9)
    size = (1 << 20) + 4099
    x = rng.integers(1960, 1966, size).astype(dtype)
    x[1] = rare
    frame = pd.DataFrame({"x": x, "y": rng.integers(0, 3, size).astype(dtype)})
    t = rankfold.table(frame, "x", "y")
    want = frame.groupby(["x", "y"]).size().unstack(fill_value=0)
    assert list(t.row_labels) == sorted(set(x.tolist()))
    np.testing.assert_array_equal(t.cells[0], want.to_numpy())
