"""Property-based tests (hypothesis) of invariances that hold for every table."""

from __future__ import annotations

import numpy as np
import pandas as pd
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

import rankfold

ORDINAL = ["gamma", "somers_d_col_given_row", "somers_d_row_given_col", "somers_d_symmetric",
           "tau_b", "tau_c", "spearman_rho"]
FAST = settings(max_examples=40, deadline=None)


@st.composite
def tables(draw, min_side: int = 2, max_side: int = 5):
    shape = (draw(st.integers(min_side, max_side)), draw(st.integers(min_side, max_side)))
    return draw(arrays(np.int64, shape, elements=st.integers(0, 25)))


def measures(counts) -> pd.DataFrame:
    return rankfold.table_from_counts(counts).measures()


def close(a, b, **kw) -> None:
    np.testing.assert_allclose(np.asarray(a, dtype=float), np.asarray(b, dtype=float),
                               equal_nan=True, atol=1e-12, **kw)


@st.composite
def adjacent_groups(draw, size: int):
    """A random partition of range(size) into runs of neighbours."""
    cuts = sorted(draw(st.sets(st.integers(1, size - 1), max_size=size - 1))) if size > 1 else []
    edges = [0, *cuts, size]
    return [list(range(lo, hi)) for lo, hi in zip(edges[:-1], edges[1:], strict=True)]


@FAST
@given(tables(), st.data())
def test_merging_equals_summing_rows_and_columns(counts, data):
    # Source: definition of merging categories (sum of member counts), checked with numpy sums.
    row_groups = data.draw(adjacent_groups(counts.shape[0]))
    col_groups = data.draw(adjacent_groups(counts.shape[1]))
    t = rankfold.table_from_counts(counts)
    merged = t.merge("rows", [[t.row_labels[k] for k in g] for g in row_groups])
    merged = merged.merge("cols", [[t.col_labels[k] for k in g] for g in col_groups])
    summed = np.array([[counts[np.ix_(rg, cg)].sum() for cg in col_groups] for rg in row_groups])
    np.testing.assert_array_equal(merged.counts.to_numpy(), summed)
    close(merged.measures()["estimate"], measures(summed)["estimate"])


@FAST
@given(tables(), st.sampled_from([2, 3, 7.5, 0.01]))
def test_estimates_do_not_change_when_all_counts_are_multiplied(counts, factor):
    # Common practice: the measures depend on the cell proportions only, and delta-method
    # standard errors shrink by sqrt(factor) (Agresti 2010, ch. 7: SE ~ 1/sqrt(n)).
    base, scaled = measures(counts), measures(counts * factor)
    close(scaled.loc[ORDINAL, "estimate"], base.loc[ORDINAL, "estimate"], rtol=1e-9)
    close(scaled.loc[ORDINAL, "std_error"] * np.sqrt(factor), base.loc[ORDINAL, "std_error"],
          rtol=1e-7)


@FAST
@given(tables(), st.sampled_from(["rows", "cols"]))
def test_reversing_one_axis_flips_every_ordinal_sign(counts, axis):
    # Common practice: reversing one variable's order turns concordant pairs into discordant
    # ones, so every ordinal measure changes sign and keeps its standard errors; Cramér's V
    # ignores order.
    flipped = counts[::-1, :] if axis == "rows" else counts[:, ::-1]
    base, other = measures(counts), measures(flipped)
    close(other.loc[ORDINAL, "estimate"], -base.loc[ORDINAL, "estimate"], rtol=1e-9)
    close(other.loc[ORDINAL, "std_error"], base.loc[ORDINAL, "std_error"], rtol=1e-7)
    close(other.loc["cramers_v", "estimate"], base.loc["cramers_v", "estimate"], rtol=1e-9)


@FAST
@given(tables())
def test_transposing_swaps_the_two_somers_d(counts):
    # Common practice (Somers 1962): d(Y | X) of the table is d(X | Y) of its transpose;
    # gamma and the tau's are symmetric.
    base = rankfold.table_from_counts(counts)
    swapped = base.transpose().measures()
    base = base.measures()
    for a, b in (("somers_d_col_given_row", "somers_d_row_given_col"),
                 ("somers_d_row_given_col", "somers_d_col_given_row")):
        close(swapped.loc[a, ["estimate", "std_error"]], base.loc[b, ["estimate", "std_error"]],
              rtol=1e-9)
    for key in ("gamma", "somers_d_symmetric", "tau_b", "tau_c", "spearman_rho"):
        close(swapped.loc[key, ["estimate", "std_error"]], base.loc[key, ["estimate", "std_error"]],
              rtol=1e-9)


@FAST
@given(tables())
def test_somers_d_and_tau_b_never_exceed_gamma_in_size(counts):
    # Common practice: the denominators of d and tau-b count at least the untied pairs that
    # gamma divides by, so |d| <= |gamma| and |tau_b| <= |gamma|.
    frame = measures(counts)
    assume(not np.isnan(frame.loc["gamma", "estimate"]))
    gamma = abs(frame.loc["gamma", "estimate"])
    for key in ("somers_d_col_given_row", "somers_d_row_given_col", "tau_b"):
        assert abs(frame.loc[key, "estimate"]) <= gamma + 1e-12, key


@FAST
@given(arrays(np.int64, st.integers(2, 5), elements=st.integers(1, 9)),
       arrays(np.int64, st.integers(2, 5), elements=st.integers(1, 9)))
def test_outer_product_table_has_no_association(row_margin, col_margin):
    # Common practice: in a table proportional to the product of its margins, concordant and
    # discordant pairs balance exactly, so P = Q and every ordinal measure is 0.
    counts = np.outer(row_margin, col_margin)
    pairs = rankfold.table_from_counts(counts).pairs()
    assert pairs["concordant"] == pairs["discordant"]
    close(measures(counts).loc[ORDINAL, "estimate"], np.zeros(len(ORDINAL)))


@st.composite
def records(draw):
    size = draw(st.integers(5, 60))
    values = st.lists(st.integers(0, 5), min_size=size, max_size=size)
    frame = pd.DataFrame({"x": draw(values), "y": draw(values)})
    assume(frame["x"].nunique() >= 2 and frame["y"].nunique() >= 2)
    return frame


@FAST
@given(records(), st.data())
def test_apply_steps_then_table_equals_table_then_steps(frame, data):
    # Source: direct recount with pandas.crosstab of the recoded records (independent of the
    # bincount path) and the table built the other way round.
    t = rankfold.table(frame, "x", "y")
    groups = data.draw(adjacent_groups(len(t.row_labels)))
    t = t.merge("rows", [[t.row_labels[k] for k in g] for g in groups])
    if len(t.col_labels) > 2 and data.draw(st.booleans()):
        t = t.exclude("cols", [t.col_labels[-1]])
    before = pd.util.hash_pandas_object(frame).to_numpy()
    recoded = rankfold.apply_steps(frame, t.steps)
    np.testing.assert_array_equal(pd.util.hash_pandas_object(frame).to_numpy(), before)
    again = rankfold.table(recoded, "x", "y")
    assert again.row_labels == t.row_labels and again.col_labels == t.col_labels
    np.testing.assert_array_equal(again.counts.to_numpy(), t.counts.to_numpy())
    crosstab = pd.crosstab(recoded["x"], recoded["y"], dropna=False)
    np.testing.assert_array_equal(
        crosstab.reindex(index=list(t.row_labels), columns=list(t.col_labels), fill_value=0),
        t.counts.to_numpy())
