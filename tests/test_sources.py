"""Tables counted by Dask (on a two-process LocalCluster), DuckDB (over Parquet files) and polars.

Every engine must give the table pandas counting gives: same labels, steps, counts, weight sums,
sums of squared weights, record counts and dropped rows. The pandas counts themselves are
checked against pandas' own group-by sums, and the population-scale checks compare with exact
integer arithmetic on the published pair-count formulas.
"""

from __future__ import annotations

import ast
import re
import sys
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

import rankfold
import rankfold.sources

dd = pytest.importorskip("dask.dataframe")
distributed = pytest.importorskip("distributed")
duckdb = pytest.importorskip("duckdb")
pytest.importorskip("pyarrow")

DISTANCE = ["next door", "same town", "region", "far", "overseas"]  # "overseas" never occurs


def invented_parcels(n: int = 3000, seed: int = 7) -> pd.DataFrame:
    """Invented scenario, not real data: parcels of a made-up courier firm.

    Distance band (ordered, one band unused, some missing), delay in days (some missing),
    the depot that sent the parcel, a text rating needing an explicit order, a survey weight
    and a whole-number count of identical parcels.
    """
    rng = np.random.default_rng(seed)
    band = rng.integers(0, 4, n)
    delay = np.clip(band + rng.integers(-1, 3, n), 0, 4).astype(float)
    delay[rng.random(n) < 0.05] = np.nan
    distance = pd.Categorical.from_codes(np.where(rng.random(n) < 0.04, -1, band),
                                         categories=DISTANCE, ordered=True)
    return pd.DataFrame({
        "distance": distance,
        "delay_days": delay,
        "depot": rng.choice(["north", "south", "harbour"], n),
        "rating": rng.choice(["poor", "fair", "good", "no answer"], n),
        "weight": rng.uniform(0.2, 3.0, n),
        "parcels": rng.integers(0, 5, n),
    })


CALLS = {
    "plain": dict(row="distance", col="delay_days"),
    "controlled, excluded": dict(row="distance", col="rating", control="depot",
                              exclude={"rating": ["no answer"]}),
    "frequency weights": dict(row="distance", col="delay_days", weight="parcels"),
    "fractional frequency weights": dict(row="distance", col="delay_days", weight="weight"),
    "sampling weights": dict(row="distance", col="delay_days", control="depot", weight="weight",
                             weight_kind="sampling", exclude={"delay_days": [4.0]}),
    "missing kept": dict(row="distance", col="delay_days", dropna=False),
}
ORDER = {"distance": DISTANCE, "rating": ["poor", "fair", "good", "no answer"]}


def with_order(call: dict) -> dict:
    """The same explicit order for every engine (a Parquet file keeps no category order)."""
    keys = (call["row"], call["col"], call.get("control"))
    exclude = {k: v for k, v in call.get("exclude", {}).items() if k in keys}
    return {**call, "exclude": exclude, "order": {k: v for k, v in ORDER.items() if k in keys}}


@pytest.fixture(scope="module")
def parcels() -> pd.DataFrame:
    return invented_parcels()


@pytest.fixture(scope="module")
def parquet_glob(parcels, tmp_path_factory) -> str:
    folder = tmp_path_factory.mktemp("parcels")
    for k, part in enumerate(np.array_split(np.arange(len(parcels)), 3)):
        parcels.iloc[part].to_parquet(folder / f"part-{k}.parquet", index=False)
    return str(folder / "*.parquet")


@pytest.fixture(scope="module")
def client():
    cluster = distributed.LocalCluster(processes=True, n_workers=2, threads_per_worker=1,
                                       dashboard_address=None)
    with distributed.Client(cluster) as dask_client:
        yield dask_client
    cluster.close()


def assert_same_table(got: rankfold.OrdinalTable, want: rankfold.OrdinalTable) -> None:
    assert got.row_labels == want.row_labels
    assert got.col_labels == want.col_labels
    assert got.control_labels == want.control_labels
    assert got.steps == want.steps
    assert (got.n_missing, got.n_excluded) == (want.n_missing, want.n_excluded)
    assert got.cells.dtype == want.cells.dtype
    np.testing.assert_allclose(got.cells, want.cells, rtol=1e-12)
    for name in ("squared_weights", "records"):
        if getattr(want, name) is None:
            assert getattr(got, name) is None
        else:
            np.testing.assert_allclose(getattr(got, name), getattr(want, name), rtol=1e-12)


@pytest.mark.parametrize("case", list(CALLS))
def test_pandas_counts_match_pandas_groupby(parcels, case):
    # Outside reference: pandas' own group-by sums (size, sum of w, sum of w^2) per cell.
    call = with_order(CALLS[case])
    t = rankfold.table(parcels, **call)
    keys = [k for k in (call.get("control"), call["row"], call["col"]) if k is not None]
    w = call.get("weight")
    kept = parcels[keys + ([w] if w else [])]
    for name, drop in call["exclude"].items():
        kept = kept[~kept[name].isin(drop)]
    if call.get("dropna", True):
        kept = kept.dropna(subset=keys)
    else:
        kept = kept.assign(**{k: kept[k].astype(object).where(kept[k].notna(), "(missing)")
                              for k in keys})
    grouped = kept.assign(one=1, w2=kept[w] ** 2 if w else 1).groupby(keys, observed=True)
    levels = t.control_labels if call.get("control") else [None]
    for (position, total) in grouped[w or "one"].sum().items():
        *level, r, c = position
        k = levels.index(level[0]) if level else 0
        assert t.cells[k, t.row_labels.index(r), t.col_labels.index(c)] == pytest.approx(total)
    assert t.n == pytest.approx(kept[w].sum() if w else len(kept))
    if call.get("weight_kind") == "sampling":
        assert t.squared_weights.sum() == pytest.approx(grouped["w2"].sum().sum())
        assert t.records.sum() == len(kept)


@pytest.mark.parametrize("case", list(CALLS))
def test_duckdb_over_parquet_files_gives_the_pandas_table(parcels, parquet_glob, case):
    call = with_order(CALLS[case])
    assert_same_table(rankfold.table(parquet_glob, **call), rankfold.table(parcels, **call))


@pytest.mark.parametrize("case", list(CALLS))
def test_dask_on_a_local_cluster_gives_the_pandas_table(parcels, client, case):
    call = with_order(CALLS[case])
    frame = dd.from_pandas(parcels, npartitions=4)
    with distributed.get_task_stream(client) as stream:
        got = rankfold.table(frame, **call)
    assert stream.data, "the count did not run on the cluster's workers"
    assert_same_table(got, rankfold.table(parcels, **call))


def test_dask_reads_the_parquet_files_with_an_explicit_order(parcels, parquet_glob, client):
    frame = dd.read_parquet(parquet_glob)
    call = with_order(CALLS["sampling weights"])
    assert_same_table(rankfold.table(frame, **call), rankfold.table(parcels, **call))


@pytest.mark.parametrize("case", list(CALLS))
def test_duckdb_relation_and_polars_give_the_pandas_table(parcels, parquet_glob, case):
    pl = pytest.importorskip("polars")
    call = with_order(CALLS[case])
    want = rankfold.table(parcels, **call)
    connection = duckdb.connect()
    relation = connection.read_parquet(parquet_glob)
    assert_same_table(rankfold.table(relation, **call), want)
    connection.close()
    frame = pl.from_pandas(parcels)
    assert_same_table(rankfold.table(frame, **call), want)
    assert_same_table(rankfold.table(frame.lazy(), **call), want)


def test_dask_keeps_a_declared_order_without_order_argument(parcels, client):
    frame = dd.from_pandas(parcels, npartitions=3)
    got = rankfold.table(frame, "distance", "delay_days")
    assert got.steps[0].origin == "declared"
    assert_same_table(got, rankfold.table(parcels, "distance", "delay_days"))


def test_source_is_not_modified(parcels, client):
    frame = dd.from_pandas(parcels, npartitions=2)
    before = frame.dtypes.copy()
    rankfold.table(frame, **with_order(CALLS["sampling weights"]))
    assert frame.dtypes.equals(before)
    assert list(frame.columns) == list(parcels.columns)


def test_unknown_dask_categories_ask_for_order(parquet_glob, client):
    frame = dd.read_parquet(parquet_glob)  # categories of 'distance' are unknown here
    with pytest.raises(ValueError, match=r"unknown categories.*order=\{'distance'"):
        rankfold.table(frame, "distance", "delay_days")


def test_text_needs_order_before_any_counting(parquet_glob, parcels, client, monkeypatch):
    def refuse(*args, **kwargs):
        raise AssertionError("counted although the order was missing")

    monkeypatch.setattr(rankfold.sources, "_aggregate_frame", refuse)
    with pytest.raises(ValueError, match=r"order=\{'rating'"):
        rankfold.table(dd.from_pandas(parcels, npartitions=2), "distance", "rating")
    with pytest.raises(ValueError, match=r"order=\{'rating'"):  # text in Parquet is VARCHAR
        rankfold.table(parquet_glob, "delay_days", "rating")


def test_engines_share_the_pandas_errors(parcels, parquet_glob):
    # The same rule, so the same message, whichever engine counted; only the order in which
    # the values are listed may differ (a group-by returns its lines in no set order).
    bad_order = {"distance": DISTANCE[:2]}
    messages = []
    for source in (parcels, parquet_glob):
        with pytest.raises(ValueError, match="leaves out values found") as caught:
            rankfold.table(source, "distance", "delay_days", order=bad_order)
        message = str(caught.value)
        listed = re.search(r"found in the column: (\[.*?\])", message).group(1)
        messages.append((message.replace(listed, "..."), sorted(ast.literal_eval(listed))))
    assert messages[0] == messages[1]
    assert messages[0][1] == ["far", "region"]


def test_bad_weights_are_refused_like_pandas(parcels):
    frame = parcels.assign(weight=parcels["weight"].where(parcels.index % 50 != 0, -1.0))
    with pytest.raises(ValueError) as from_pandas:
        rankfold.table(frame, "delay_days", "parcels", weight="weight")
    connection = duckdb.connect()
    relation = connection.from_df(frame)
    with pytest.raises(ValueError) as from_duckdb:
        rankfold.table(relation, "delay_days", "parcels", weight="weight")
    connection.close()
    assert "60 negative" in str(from_duckdb.value)  # rows 0, 50, ..., 2950
    assert str(from_duckdb.value) == str(from_pandas.value)


@pytest.mark.parametrize(
    "module, extra, make_source",
    [
        ("duckdb", "duckdb", lambda frame, path: path),
        ("dask.dataframe", "dask", lambda frame, path: dd.from_pandas(frame, npartitions=1)),
    ],
)
def test_missing_extra_names_what_to_install(parcels, parquet_glob, monkeypatch, module, extra,
                                             make_source):
    source = make_source(parcels, parquet_glob)
    monkeypatch.setitem(sys.modules, module, None)  # as if the package were not installed
    with pytest.raises(ValueError, match=rf'pip install "rankfold\[{extra}\]"'):
        rankfold.table(source, "delay_days", "parcels")


def test_missing_polars_names_what_to_install(parcels, monkeypatch):
    pl = pytest.importorskip("polars")
    source = pl.from_pandas(parcels)
    monkeypatch.setitem(sys.modules, "polars", None)
    with pytest.raises(ValueError, match=r'pip install "rankfold\[polars\]"'):
        rankfold.table(source, "delay_days", "parcels")


def test_unknown_sources_and_files_are_refused(tmp_path):
    with pytest.raises(ValueError, match="cannot count a numpy.ndarray"):
        rankfold.table(np.zeros((3, 2)), "a", "b")
    with pytest.raises(ValueError, match="file type"):
        rankfold.table(str(tmp_path), "a", "b")
    with pytest.raises(ValueError, match="could not read"):
        rankfold.table(str(tmp_path / "nothing-*.parquet"), "a", "b")


def test_too_many_combinations_are_refused(monkeypatch):
    monkeypatch.setattr(rankfold.sources, "MAX_LINES", 5)
    relation = duckdb.sql("SELECT i % 4 AS a, i % 3 AS b FROM range(100) t(i)")
    with pytest.raises(ValueError, match="more than 5 distinct combinations"):
        rankfold.table(relation, "a", "b")


def test_csv_files_and_code_that_rebuilds_the_table(parcels, tmp_path):
    path = tmp_path / "parcels.csv"
    parcels.to_csv(path, index=False)
    t = rankfold.table(str(path), "delay_days", "parcels", control="depot")
    assert_same_table(t, rankfold.table(parcels, "delay_days", "parcels", control="depot"))
    namespace: dict = {}
    exec(t.merge("rows", [[0.0, 1.0]]).to_code(), namespace)
    np.testing.assert_array_equal(namespace["table"].cells, t.merge("rows", [[0.0, 1.0]]).cells)


# ----------------------------------------------------------------- exact at population scale

def brute_force_pairs(cells: list[list[int]]) -> dict[str, int]:
    """Goodman & Kruskal (1954) definitions, enumerating pairs of cells in Python integers."""
    flat = [(i, j, n) for i, row in enumerate(cells) for j, n in enumerate(row)]
    out = dict(concordant=0, discordant=0, tied_row_only=0, tied_col_only=0, tied_both=0)
    for a, (i, j, n) in enumerate(flat):
        out["tied_both"] += n * (n - 1) // 2
        for i2, j2, n2 in flat[a + 1:]:
            key = ("tied_row_only" if i == i2 else "tied_col_only" if j == j2
                   else "concordant" if (i - i2) * (j - j2) > 0 else "discordant")
            out[key] += n * n2
    return out


def test_pair_counts_exact_with_a_cell_of_ten_to_the_eleven():
    cells = [[10**11, 3, 1], [7, 10**11 + 1, 2], [0, 5, 2**60 + 3]]
    t = rankfold.table_from_counts(np.array(cells, dtype=np.int64))
    got = t.pairs()
    want = brute_force_pairs(cells)
    for key, value in want.items():
        assert got[key] == value and isinstance(got[key], int), key
    n = sum(map(sum, cells))
    assert t.n == n and isinstance(t.n, int)
    assert got["total"] == n * (n - 1) // 2


def test_engine_counts_stay_exact_at_population_scale():
    # Frequency weights of 10^11 per record: each cell a population-size count.
    relation = duckdb.sql(
        "SELECT * FROM (VALUES (1, 1, 100000000000), (1, 2, 3), (2, 1, 5), "
        "(2, 2, 100000000007), (2, 2, 0)) t(a, b, units)"
    )
    t = rankfold.table(relation, "a", "b", weight="units")
    assert t.cells.dtype == np.int64
    assert t.counts.to_numpy().tolist() == [[10**11, 3], [5, 10**11 + 7]]
    # 2 x 2 case of Agresti (2010, ch. 7): C = n11 n22, D = n12 n21.
    assert t.pairs()["concordant"] == 10**11 * (10**11 + 7)
    assert t.pairs()["discordant"] == 15


@pytest.mark.parametrize("engine", ["pandas", "duckdb", "polars"])
def test_frequency_weights_beyond_int64_never_wrap(engine):
    # Six records of weight 5e18: cell totals of 1e19 exceed int64 (2**63 - 1 = 9.2e18, numpy
    # iinfo). They must stay the sums of the weights (by hand: 2 x 5e18 on the diagonal),
    # never wrap to negative counts, and the estimates follow the proportions (gamma of
    # [[2, 1], [1, 2]] is (4 - 1)/(4 + 1) = 0.6 by hand).
    frame = pd.DataFrame({"a": [1, 1, 2, 2, 1, 2], "b": [1, 2, 1, 2, 1, 2], "w": [5e18] * 6})
    if engine == "duckdb":
        source = duckdb.from_df(frame)
    elif engine == "polars":
        source = pytest.importorskip("polars").from_pandas(frame)
    else:
        source = frame
    t = rankfold.table(source, "a", "b", weight="w")
    assert t.counts.to_numpy().tolist() == [[1e19, 5e18], [5e18, 1e19]]
    assert t.n == 3e19
    assert t.measures().loc["gamma", "estimate"] == pytest.approx(0.6)


def test_whole_counts_stay_int64_only_while_their_total_fits():
    # numpy int64 holds up to 2**63 - 1: four cells of 2**62 - 1 add up beyond it, so the
    # table keeps floating totals instead of a wrapped negative n.
    big = rankfold.table_from_counts(np.full((2, 2), 2**62 - 1, dtype=np.int64))
    assert big.n == pytest.approx(4.0 * (2**62 - 1)) and big.n > 0
    small = rankfold.table_from_counts(np.full((2, 2), 2**59, dtype=np.int64))
    assert small.cells.dtype == np.int64 and small.n == 2**61


def test_measures_scale_with_counts_times_ten_to_the_nine():
    base = np.array([[31, 12, 5, 2], [9, 40, 14, 6], [3, 11, 38, 17]])
    small = rankfold.table_from_counts(base).measures()
    large_table = rankfold.table_from_counts(base * 10**9)
    large = large_table.measures()
    # Every measure here is a function of the cell proportions only (common practice).
    np.testing.assert_allclose(large["estimate"], small["estimate"], rtol=1e-10)
    # Delta-method standard errors shrink as 1/sqrt(n) (Agresti 2010, ch. 7).
    np.testing.assert_allclose(large["std_error"], small["std_error"] * 10**-4.5, rtol=1e-8)
    null = [k for k in small.index if k not in ("spearman_rho", "cramers_v")]
    np.testing.assert_allclose(large.loc[null, "std_error_null"],
                               small.loc[null, "std_error_null"] * 10**-4.5, rtol=1e-8)
    # Spearman's null error is the permutation value 1/sqrt(n - 1) (Kendall & Gibbons,
    # Rank Correlation Methods, 1990, ch. 2; from memory), which scales as 1/sqrt(n) only
    # in the limit.
    n = int(base.sum()) * 10**9
    assert large.loc["spearman_rho", "std_error_null"] == pytest.approx((n - 1) ** -0.5)
    # Against the published definitions in exact integer arithmetic: gamma = (C - D)/(C + D)
    # (Goodman & Kruskal 1954) and tau-b = (C - D)/sqrt((n0 - n1)(n0 - n2)) (Kendall 1945).
    pairs = large_table.pairs()
    c, d = pairs["concordant"], pairs["discordant"]
    assert large.loc["gamma", "estimate"] == pytest.approx(float(Fraction(c - d, c + d)),
                                                           rel=1e-12)
    untied_rows = pairs["total"] - pairs["tied_row_only"] - pairs["tied_both"]
    untied_cols = pairs["total"] - pairs["tied_col_only"] - pairs["tied_both"]
    tau_b = (c - d) / (Fraction(untied_rows) * untied_cols) ** 0.5
    assert large.loc["tau_b", "estimate"] == pytest.approx(float(tau_b), rel=1e-12)


def test_schema_lists_columns_without_reading_records(parcels, parquet_glob, client):
    # The types pandas itself gives these columns are the reference (pandas.read_parquet).
    from_files = rankfold.sources.schema(parquet_glob)
    assert len(from_files) == 0
    assert list(from_files.columns) == list(parcels.columns)
    read_back = pd.read_parquet(parquet_glob.replace("*", "part-0"))
    for name in ("delay_days", "weight", "parcels"):
        assert from_files[name].dtype == read_back[name].dtype, name
    from_dask = rankfold.sources.schema(dd.from_pandas(parcels, npartitions=2))
    assert len(from_dask) == 0
    assert from_dask["distance"].dtype == parcels["distance"].dtype
