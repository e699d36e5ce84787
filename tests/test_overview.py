"""rankfold.overview: every pair's row against rankfold.table of that pair, p-value adjustments
against statsmodels, coding ranges against the sweep, and bad input."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.multitest import multipletests

import rankfold
from rankfold import fill_coding_ranges
from rankfold.collapsing import rule_met
from rankfold.overview import adjust_p_values


def invented_survey(n: int = 3000, seed: int = 7) -> pd.DataFrame:
    """Invented survey: ordered items driven by one latent trait, plus columns to skip."""
    rng = np.random.default_rng(seed)
    latent = rng.normal(size=n)
    data = {}
    for k, levels in enumerate((4, 5, 5, 3)):
        x = (0.6 if k != 3 else -0.4) * latent + rng.normal(size=n)
        cuts = np.quantile(x, np.linspace(0, 1, levels + 1)[1:-1])
        labels = [f"level {i}" for i in range(levels)]
        data[f"item{k}"] = pd.Categorical.from_codes(np.searchsorted(cuts, x), labels,
                                                     ordered=True)
    rating = np.array(["low", "mid", "high", "no answer"])[
        np.clip(np.digitize(latent + rng.normal(size=n), [-0.7, 0.7]), 0, 2)]
    rating[rng.random(n) < 0.05] = "no answer"
    data["rating"] = rating  # text: needs order=
    data["visits"] = rng.poisson(2 + latent.clip(-1, 3))  # numeric, few values
    data["flag"] = latent + rng.normal(size=n) > 0  # boolean
    data["free_text"] = rng.choice(["a", "b", "c"], n)  # text without order: skipped
    data["income"] = rng.lognormal(10, 1, n)  # numeric with many values: skipped
    data["region"] = rng.choice(["north", "south", "east"], n)
    data["w"] = rng.uniform(0.3, 3.0, n)
    data["fw"] = rng.integers(1, 4, n)
    frame = pd.DataFrame(data)
    frame.loc[rng.random(n) < 0.03, "item1"] = np.nan
    frame.loc[rng.random(n) < 0.02, "visits"] = np.nan
    return frame


ORDER = {"rating": ["low", "mid", "high", "no answer"]}
ITEMS = ["item0", "item1", "item2", "item3", "rating", "visits", "flag"]


@pytest.fixture(scope="module")
def survey() -> pd.DataFrame:
    return invented_survey()


@pytest.mark.parametrize("options", [
    {},
    {"measure": "tau_b"},
    {"measure": "somers_d_col_given_row"},
    {"weight": "fw"},
    {"weight": "w"},
    {"weight": "w", "weight_kind": "sampling"},
    {"control": "region"},
    {"control": "region", "weight": "w", "weight_kind": "sampling"},
])
def test_every_row_equals_table_of_that_pair(survey, options):
    # source: rankfold.table(...).measures() / .partial_measures() of each pair, counted from
    # the frame on its own (an independent path through counting.py's table()); the overview
    # must reproduce it to rounding
    measure = options.pop("measure", "gamma")
    before = survey.copy()
    frame = rankfold.overview(survey, ITEMS, measure=measure, order=ORDER, **options)
    pd.testing.assert_frame_equal(survey, before)  # the user's frame is not modified
    assert len(frame) == len(ITEMS) * (len(ITEMS) - 1) // 2
    for row in frame.itertuples():
        order = {k: v for k, v in ORDER.items() if k in (row.var_a, row.var_b)}
        t = rankfold.table(survey, row.var_a, row.var_b, order=order, **options)
        m = (t.partial_measures().iloc[0] if "control" in options
             else t.measures().loc[measure])
        for field in ("estimate", "std_error", "ci_low", "ci_high", "p_value"):
            assert getattr(row, field) == pytest.approx(m[field], abs=1e-12, nan_ok=True), field
        assert row.note == m["note"]
        assert row.n == pytest.approx(t.n, rel=1e-12)


def test_sparse_and_non_substantive_flags(survey):
    frame = rankfold.overview(survey, ITEMS, order=ORDER)
    for row in frame.itertuples():
        order = {k: v for k, v in ORDER.items() if k in (row.var_a, row.var_b)}
        t = rankfold.table(survey, row.var_a, row.var_b, order=order)
        d = t.diagnostics()
        # Cochran (1954): no expected count below 1 and at most 20% of them below 5
        assert row.sparse == (not (d.min_expected >= 1 and d.share_expected_below_5 <= 0.2))
        assert row.non_substantive == ("rating" in (row.var_a, row.var_b))
    assert frame.attrs["non_substantive"] == {"rating": ["no answer"]}


def test_skipped_columns_are_listed_with_reasons(survey):
    frame = rankfold.overview(survey, order=ORDER, control="region", weight="w")
    skipped = frame.attrs["skipped"]
    assert set(skipped) == {"free_text", "income"}
    assert "order=" in skipped["free_text"] and "at most 30" in skipped["income"]
    assert frame.attrs["columns"] == [*ITEMS, "fw"]  # fw: whole numbers, 3 values
    assert "region" not in set(frame["var_a"]) | set(frame["var_b"])


def test_pairs_missing_values_left_out_per_pair(survey):
    frame = rankfold.overview(survey, ["item0", "item1", "item2"]).set_index(["var_a", "var_b"])
    # common practice (pairwise deletion): a record missing item1 still counts for item0-item2
    assert frame.loc[("item0", "item2"), "n"] == len(survey)
    assert frame.loc[("item0", "item1"), "n"] == survey["item1"].notna().sum()


@pytest.mark.parametrize("method, reference", [("holm", "holm"), ("bh", "fdr_bh")])
def test_adjustments_match_statsmodels(method, reference):
    rng = np.random.default_rng(3)
    p = np.concatenate([rng.uniform(0, 1, 40), rng.uniform(0, 0.01, 10), [0.02, 0.02, 1.0]])
    p[[4, 17]] = np.nan
    ours = adjust_p_values(p, method)
    defined = ~np.isnan(p)
    # source: statsmodels.stats.multitest.multipletests (Holm 1979; Benjamini & Hochberg 1995)
    expected = multipletests(p[defined], method=reference)[1]
    np.testing.assert_allclose(ours[defined], expected, rtol=1e-13, atol=0)
    assert np.isnan(ours[~defined]).all()


@pytest.mark.parametrize("adjust, reference", [("holm", "holm"), ("bh", "fdr_bh")])
def test_overview_adjusts_its_p_values(survey, adjust, reference):
    frame = rankfold.overview(survey, ITEMS, order=ORDER, adjust=adjust)
    # source: statsmodels multipletests on the overview's own unadjusted p-values
    expected = multipletests(frame["p_value"], method=reference)[1]
    np.testing.assert_allclose(frame["p_adjusted"], expected, rtol=1e-13)
    plain = rankfold.overview(survey, ITEMS, order=ORDER, adjust=None)
    np.testing.assert_array_equal(plain["p_adjusted"], plain["p_value"])


@pytest.mark.parametrize("later", [False, True], ids=["at-once", "filled-later"])
@pytest.mark.parametrize("options", [{}, {"control": "region"},
                                     {"weight": "w", "weight_kind": "sampling"}])
def test_coding_range_equals_sweep_restricted_to_rule(survey, options, later):
    columns = ["item0", "item3", "rating"]
    frame = rankfold.overview(survey, columns, order=ORDER, coding_ranges=not later, **options)
    if later:
        fill_coding_ranges(frame, survey)
    key = "partial_gamma" if "control" in options else "gamma"
    for row in frame.itertuples():
        order = {k: v for k, v in ORDER.items() if k in (row.var_a, row.var_b)}
        t = rankfold.table(survey, row.var_a, row.var_b, order=order, **options)
        # source: rankfold.sweep over every coding, kept where Cochran's rule holds (rule_met)
        swept = rankfold.sweep(t, measures=(key,))
        kept = swept[rule_met(swept, "cochran")]
        assert row.coding_min == pytest.approx(kept[key].min(), abs=1e-12)
        assert row.coding_max == pytest.approx(kept[key].max(), abs=1e-12)
        assert row.coding_sign_changes == bool(kept[key].min() < 0 < kept[key].max())
        excludes = (kept[key].abs() - 1.959963984540054 * kept[f"{key}_std_error"]) > 0
        assert row.coding_significance_changes == bool(excludes.any() and not excludes.all())


def test_ranges_absent_unless_asked(survey):
    frame = rankfold.overview(survey, ["item0", "item1"])
    assert frame["coding_min"].isna().all() and frame["coding_sign_changes"].isna().all()


def test_undefined_pair_is_nan_with_a_reason():
    df = pd.DataFrame({"a": [1, 1, 2, 2], "b": [1, 2, 1, 2], "c": [1, 1, 2, 2],
                       "d": [1.0, np.nan, 2.0, np.nan]})
    frame = rankfold.overview(df).set_index(["var_a", "var_b"])
    # b and d share records only where d = 1 or 2 and b = 1: one b category
    row = frame.loc[("b", "d")]
    assert np.isnan(row["estimate"]) and "one row category" in row["note"]
    assert np.isnan(row["p_adjusted"])
    assert frame.loc[("a", "c"), "estimate"] == 1.0  # a = c: perfectly concordant


@pytest.mark.parametrize("call, words", [
    (lambda df: rankfold.overview(df.to_numpy()), "pandas DataFrame"),
    (lambda df: rankfold.overview(df, ["item0", "nope"]), "not in the data"),
    (lambda df: rankfold.overview(df, "item0"), "list of column names"),
    (lambda df: rankfold.overview(df, ["item0", "item0"]), "twice"),
    (lambda df: rankfold.overview(df, ["item0", "free_text"]), "at least two eligible"),
    (lambda df: rankfold.overview(df, measure="kappa"), "measure must be"),
    (lambda df: rankfold.overview(df, measure="tau_b", control="region"), "partial gamma"),
    (lambda df: rankfold.overview(df, adjust="bonferroni"), "adjust must be"),
    (lambda df: rankfold.overview(df, weight_kind="sampling"), "needs a weight column"),
    (lambda df: rankfold.overview(df, weight_kind="survey", weight="w"), "weight_kind"),
    (lambda df: rankfold.overview(df, ["item0", "region"], control="region"), "control or"),
    (lambda df: rankfold.overview(df, order={"ghost": [1, 2]}), "not among the columns"),
    (lambda df: rankfold.overview(df, order=["low"]), "must be a dict"),
    (lambda df: rankfold.overview(df, coding_ranges="yes"), "True or False"),
    (lambda df: rankfold.overview(df.assign(w=-df["w"]), ITEMS[:2], weight="w"), "negative"),
])
def test_bad_input_raises_clear_value_error(survey, call, words):
    with pytest.raises(ValueError, match=words):
        call(survey)


def test_non_substantive_flags_are_the_tables_own(survey):
    # the overview flags exactly what OrdinalTable.non_substantive flags for each column
    frame = rankfold.overview(survey, ITEMS, order=ORDER)
    flagged = frame.attrs["non_substantive"]
    for row in frame.itertuples():
        order = {k: v for k, v in ORDER.items() if k in (row.var_a, row.var_b)}
        t = rankfold.table(survey, row.var_a, row.var_b, order=order)
        assert flagged.get(row.var_a, []) == t.non_substantive["rows"]
        assert flagged.get(row.var_b, []) == t.non_substantive["cols"]


def test_old_layer_keyword_names_control(survey):
    with pytest.raises(TypeError, match=r"layer=.*control="):
        rankfold.overview(survey, ITEMS[:2], layer="region")


def test_progress_reports_every_pair_of_the_ranges(survey):
    calls = []
    rankfold.overview(survey, ITEMS[:3], coding_ranges=True,
                      progress=lambda done, total: calls.append((done, total)))
    assert calls == [(1, 3), (2, 3), (3, 3)]


def test_progress_returning_false_stops_the_filling(survey):
    frame = rankfold.overview(survey, ITEMS[:3])
    fill_coding_ranges(frame, survey, progress=lambda done, total: done < 2)
    assert frame["coding_min"].notna().sum() == 2  # the third pair was not reached
    assert frame["coding_sign_changes"].isna().sum() == 1


@pytest.mark.parametrize("frame, words", [
    (pd.DataFrame({"var_a": ["a"], "var_b": ["b"]}), "made by rankfold.overview"),
    (None, "made by rankfold.overview"),
])
def test_filling_needs_an_overview(survey, frame, words):
    with pytest.raises(ValueError, match=words):
        fill_coding_ranges(frame, survey)
    with pytest.raises(ValueError, match="pandas DataFrame"):
        fill_coding_ranges(rankfold.overview(survey, ITEMS[:2]), survey.to_numpy())
