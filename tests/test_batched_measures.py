"""The fast paths of the measures: batched levels, the frame built from columns, the polychoric
fit's short steps.

Outside references: scipy.stats (somersd, kendalltau, contingency.association,
multivariate_normal) and brute-force enumeration of pairs; and each fast path against the
slower path it replaces (a level's own table measured alone). The data are invented: seeded
multinomial counts with an association.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.stats.contingency import association

import rankfold
from rankfold import measure_table
from rankfold.measure_table import measures_frame, measures_frames
from rankfold.ordinal_measures import Sampling
from rankfold.polychoric import _Corners, bivariate_normal_cdf, polychoric


def invented_levels(seed: int = 3) -> np.ndarray:
    """Eight invented 4 x 5 tables of differing association; some with awkward shapes."""
    rng = np.random.default_rng(seed)
    grid = np.outer(np.linspace(-1, 1, 4), np.linspace(-1, 1, 5))
    slopes = rng.uniform(-1.5, 1.5, size=8)
    cells = rng.poisson(6 * np.exp(slopes[:, None, None] * grid)).astype(float)
    cells[1, 2] = 0  # an empty row category
    cells[2, :, 0] = 0  # an empty column category
    cells[3] = 0  # an empty level
    cells[4, 1:] = 0  # one row category only: nothing defined
    cells[5] = np.diag([3.0, 4.0, 2.0, 5.0, 0.0])[:4]  # no discordant pair: on the bound
    return cells


def records_of(level: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """One record per unit of a table of counts (row code, column code)."""
    i, j = np.nonzero(level)
    repeats = level[i, j].astype(int)
    return np.repeat(i, repeats), np.repeat(j, repeats)


def level_frame(cells: np.ndarray, seed: int = 8) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = [(f"site {k}", i, j) for k, i, j in np.ndindex(*cells.shape)
            for _ in range(int(cells[k, i, j]))]
    frame = pd.DataFrame(rows, columns=["site", "x", "y"])
    frame["w"] = rng.gamma(2.0, 0.8, size=len(frame))
    return frame


@pytest.fixture(scope="module")
def cells() -> np.ndarray:
    return invented_levels()


@pytest.mark.parametrize("weighted", [False, True])
def test_batched_levels_equal_each_levels_own_table(cells, weighted):
    frame = level_frame(cells)
    options = {"weight": "w", "weight_kind": "sampling"} if weighted else {}
    table = rankfold.table(frame, "x", "y", control="site",
                           order={"site": [f"site {k}" for k in range(8)]}, **options)
    batched = table.control_measures()
    assert batched.index.names == ["site", "measure"]
    for label in table.control_labels:
        # the fast path against the path it replaces: the level measured on its own
        alone = table.control_table(label).measures()
        pd.testing.assert_frame_equal(batched.xs(label, level=0), alone, rtol=1e-10)


def test_batched_levels_match_scipy_per_level(cells):
    table = rankfold.table(level_frame(cells), "x", "y", control="site",
                           order={"site": [f"site {k}" for k in range(8)]})
    batched = table.control_measures()
    for label in table.control_labels:
        level = table.control_counts.xs(label, level=0).to_numpy()
        mine = batched.xs(label, level=0)
        x, y = records_of(level)
        defined = (level.sum(axis=1) > 0).sum() > 1 and (level.sum(axis=0) > 0).sum() > 1
        if not defined:
            assert mine["estimate"].isna().all()
            assert (mine["note"] != "").all()
            continue
        # Outside reference: scipy.stats.somersd on the level's table (rows independent)
        somers = stats.somersd(level)
        assert mine.loc["somers_d_col_given_row", "estimate"] == pytest.approx(
            somers.statistic, abs=1e-12)
        # Outside reference: scipy.stats.kendalltau (tau-b) on the level's records
        assert mine.loc["tau_b", "estimate"] == pytest.approx(
            stats.kendalltau(x, y, variant="b").statistic, abs=1e-12)
        # Outside reference: scipy's Cramér's V on the non-empty rows and columns
        busy = level[level.sum(axis=1) > 0][:, level.sum(axis=0) > 0]
        assert mine.loc["cramers_v", "estimate"] == pytest.approx(
            association(busy.astype(int), method="cramer"), abs=1e-12)
        # Outside reference: brute-force enumeration of every pair of the level's records
        sx = np.sign(x[:, None] - x[None, :])
        sy = np.sign(y[:, None] - y[None, :])
        concordant, discordant = ((sx * sy) > 0).sum(), ((sx * sy) < 0).sum()
        assert mine.loc["gamma", "estimate"] == pytest.approx(
            (concordant - discordant) / (concordant + discordant), abs=1e-12)


def test_measures_frames_equal_one_table_at_a_time(cells):
    rng = np.random.default_rng(4)
    squared = cells * rng.uniform(0.5, 2.0, size=cells.shape)
    records = cells.sum(axis=(1, 2)) + 3
    levels = pd.Index([f"t{k}" for k in range(len(cells))], name="table", dtype=object)
    for sampling in (None, Sampling(squared, records)):
        together = measures_frames(cells, sampling=sampling, levels=levels, confidence=0.9)
        for k, label in enumerate(levels):
            one = None if sampling is None else Sampling(squared[k], records[k])
            alone = measures_frame(cells[k], sampling=one, confidence=0.9)
            pd.testing.assert_frame_equal(together.xs(label, level=0), alone, rtol=1e-10)


def test_results_are_not_shared_between_tables_or_calls():
    rng = np.random.default_rng(9)
    first = rankfold.table_from_counts(rng.poisson(9, size=(4, 6)))
    second = rankfold.table_from_counts(rng.poisson(9, size=(4, 6)))
    a, b = first.measures(), second.measures()
    # Outside reference: scipy.stats.somersd of each table
    for table, frame in ((first, a), (second, b)):
        assert frame.loc["somers_d_col_given_row", "estimate"] == pytest.approx(
            stats.somersd(table.counts.to_numpy()).statistic, abs=1e-12)
    # changing one result's values or names leaves later results alone
    a.loc["gamma", "estimate"] = 5.0
    a.index.name = "renamed"
    a.columns.name = "renamed too"
    again = first.measures()
    assert again.loc["gamma", "estimate"] != 5.0
    assert again.index.name == "measure"
    assert again.columns.name is None
    assert b.index.name == "measure"


def test_frame_without_pandas_private_constructor_is_the_same(monkeypatch):
    rng = np.random.default_rng(10)
    table = rankfold.table_from_counts(rng.poisson(7, size=(2, 2)))
    fast = table.measures()
    monkeypatch.delattr(pd.DataFrame, "_from_arrays")
    public = table.measures()
    pd.testing.assert_frame_equal(fast, public)
    # and the note column has the type pandas gives text in a DataFrame
    assert public["note"].dtype == pd.DataFrame({"t": ["a"]})["t"].dtype
    assert measure_table._note_dtype() == public["note"].dtype


def test_short_steps_move_phi2_as_owens_t_gives_it():
    # Outside reference: scipy.stats.multivariate_normal.cdf at the new correlation; and the
    # Owen's T evaluation that the short step replaces.
    a = np.array([[-1.2, -0.3, 0.0, 0.8, 1.9]])
    b = np.array([[-0.7, 0.4, 1.1]])
    row_cum = stats.norm.cdf(a)
    col_cum = stats.norm.cdf(b)
    corners = _Corners(a, b, row_cum, col_cum)
    # the longest steps the fit moves this way: (1 - |rho|) / 20
    for rho, step in ((0.3, 0.034), (-0.6, -0.0195), (0.8, 0.0095), (0.97, 0.0015)):
        start = corners.at(np.array([rho]))
        moved = corners.moved(start, np.array([rho]), np.array([rho + step]))
        exact = corners.at(np.array([rho + step]))
        np.testing.assert_allclose(moved.corner, exact.corner, rtol=0, atol=1e-15)
        np.testing.assert_allclose(moved.pi, exact.pi, rtol=0, atol=1e-15)
        law = stats.multivariate_normal(cov=[[1, rho + step], [rho + step, 1]])
        scipy_cdf = np.array([[law.cdf([h, k]) for k in b[0]] for h in a[0]])
        np.testing.assert_allclose(moved.corner[0], scipy_cdf, atol=1e-7)
        np.testing.assert_allclose(
            moved.corner[0], bivariate_normal_cdf(a[0][:, None], b[0][None, :], rho + step),
            rtol=0, atol=1e-15)


def test_polychoric_in_measures_equals_the_fit_alone():
    # the polychoric row starts from tau-b: the same maximum as the default start
    rng = np.random.default_rng(11)
    counts = rng.multinomial(900, rng.dirichlet(np.ones(30))).reshape(5, 6)
    row = rankfold.table_from_counts(counts).measures().loc["polychoric"]
    alone = polychoric(counts)
    assert row["estimate"] == pytest.approx(alone.estimate, abs=1e-10)
    assert row["std_error"] == pytest.approx(alone.std_error, rel=1e-9)
    assert row["std_error_null"] == pytest.approx(alone.std_error_null, rel=1e-9)


def test_kept_results_are_per_table_and_per_confidence():
    rng = np.random.default_rng(12)
    counts = rng.poisson(8, size=(4, 5))
    table = rankfold.table_from_counts(counts)
    first = table.measures()
    # Outside reference: scipy.stats.somersd; a second call gives the same, a copy
    somers = stats.somersd(counts).statistic
    again = table.measures()
    assert again.loc["somers_d_col_given_row", "estimate"] == pytest.approx(somers, abs=1e-12)
    pd.testing.assert_frame_equal(first, again)
    assert again is not first
    # another confidence is another result: a wider interval at 99%
    wide = table.measures(0.99)
    assert (wide.loc["gamma", "ci_high"] - wide.loc["gamma", "ci_low"]
            > first.loc["gamma", "ci_high"] - first.loc["gamma", "ci_low"])
    # a coding step makes a new table with results of its own
    merged = table.merge("cols", [[1, 2]])
    assert merged.measures().loc["somers_d_col_given_row", "estimate"] == pytest.approx(
        stats.somersd(merged.counts.to_numpy()).statistic, abs=1e-12)
    assert table.measures().loc["somers_d_col_given_row", "estimate"] == pytest.approx(
        somers, abs=1e-12)


def test_kept_level_measures_are_copies(cells):
    table = rankfold.table(level_frame(cells), "x", "y", control="site")
    first = table.control_measures()
    first.iloc[:, 0] = 7.0
    again = table.control_measures()
    label = table.control_labels[0]
    pd.testing.assert_frame_equal(again.xs(label, level=0),
                                  table.control_table(label).measures(), rtol=1e-10)
