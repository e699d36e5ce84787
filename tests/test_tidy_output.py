"""Results print as short summaries in a notebook, not as dumps of their contents."""

from __future__ import annotations

import rankfold


def test_permutation_result_prints_one_line_with_the_p_value():
    t = rankfold.table_from_counts([[12, 5, 2], [6, 9, 7], [2, 6, 11]])
    result = t.permutation_test(n_resamples=499, seed=3)
    text = repr(result)
    assert "\n" not in text and len(text) < 120
    assert f"{result.p_value:.4g}" in text and "499" in text


def test_collapsing_suggestion_prints_a_short_summary():
    t = rankfold.table_from_counts([[8, 3, 1, 0], [4, 6, 3, 1], [1, 4, 7, 2], [0, 1, 3, 5]])
    found = rankfold.suggest_collapsing(t)
    text = repr(found)
    assert text.startswith("<CollapsingSuggestion") and "OrdinalTable" not in text
    assert f"{found.meeting:,} of {found.codings:,}" in text
