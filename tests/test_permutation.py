"""Monte Carlo permutation test: exact enumeration, large-sample agreement, reproducibility."""

from __future__ import annotations

import itertools
from math import factorial, prod

import numpy as np
import pytest

import rankfold
from rankfold.ordinal_measures import ordinal_measure_arrays

SMALL = np.array([[3, 1, 0], [1, 2, 2], [0, 1, 3]])


def tables_with_margins(rows, cols):
    """Every 3 x 3 table of non-negative integers with the given margins (brute force)."""
    for a, b, c, d in itertools.product(*(range(min(rows[i], cols[j]) + 1)
                                          for i in range(2) for j in range(2))):
        first = [a, b, rows[0] - a - b]
        second = [c, d, rows[1] - c - d]
        third = [cols[k] - first[k] - second[k] for k in range(3)]
        table = np.array([first, second, third])
        if (table >= 0).all() and table[2].sum() == rows[2]:
            yield table


def exact_permutation_p(counts, measure: str) -> float:
    # Source: exact conditional distribution given both margins, the multivariate
    # hypergeometric P(table) = prod r_i! prod c_j! / (n! prod n_ij!) (Agresti 2013, ch. 3),
    # summed over every table at least as extreme, by full enumeration.
    rows, cols = counts.sum(axis=1), counts.sum(axis=0)
    n = int(counts.sum())
    numerator = prod(factorial(int(x)) for x in (*rows, *cols))
    observed = abs(float(ordinal_measure_arrays(counts)[measure]["estimate"]))
    tail = total = 0.0
    for table in tables_with_margins(rows, cols):
        weight = numerator / (factorial(n) * prod(factorial(int(x)) for x in table.ravel()))
        total += weight
        value = abs(float(ordinal_measure_arrays(table)[measure]["estimate"]))
        if value >= observed - 1e-12:
            tail += weight
    assert total == pytest.approx(1.0)
    return tail


@pytest.mark.parametrize("measure", ["gamma", "tau_b", "somers_d_row_given_col"])
def test_monte_carlo_p_value_is_close_to_the_exact_one(measure):
    exact = exact_permutation_p(SMALL, measure)
    result = rankfold.table_from_counts(SMALL).permutation_test(measure, n_resamples=20000,
                                                                seed=4)
    # Monte Carlo error sqrt(p(1-p)/B) is below 0.001 for these p-values: allow 4 of those.
    assert result.p_value == pytest.approx(exact, abs=0.004)
    assert 0.005 < exact < 0.2  # the check is informative: neither trivially 0 nor 1


def test_p_value_is_counted_as_published():
    # Source: Davison & Hinkley (1997, ch. 4): p = (1 + #{|T*| >= |T|}) / (B + 1).
    result = rankfold.table_from_counts(SMALL).permutation_test("gamma", n_resamples=500, seed=1)
    count = int(np.sum(np.abs(result.null_distribution) >= abs(result.statistic) - 1e-12))
    assert result.p_value == (1 + count) / 501
    assert result.null_distribution.shape == (500,)


def test_moderate_table_agrees_with_the_large_sample_test():
    # Source: Brown & Benedetti (1977): for a moderate table the permutation distribution of
    # gamma is close to normal with the null standard error, so the spreads and the two-sided
    # p-values agree to within Monte Carlo and approximation error.
    counts = np.array([[12, 10, 9, 8], [11, 12, 10, 9], [9, 11, 12, 11], [8, 10, 11, 13]])
    t = rankfold.table_from_counts(counts)
    result = t.permutation_test("gamma", n_resamples=4000, seed=11)
    frame = t.measures()
    assert abs(np.mean(result.null_distribution)) < 0.01
    assert np.std(result.null_distribution) == pytest.approx(
        frame.loc["gamma", "std_error_null"], rel=0.07)
    # p is about 0.1 here; the Monte Carlo error of p is about 0.005.
    assert result.p_value == pytest.approx(frame.loc["gamma", "p_value"], abs=0.02)


def test_same_seed_same_result_other_seed_other_draws():
    t = rankfold.table_from_counts(SMALL)
    first = t.permutation_test("tau_b", n_resamples=300, seed=123)
    again = t.permutation_test("tau_b", n_resamples=300, seed=123)
    other = t.permutation_test("tau_b", n_resamples=300, seed=124)
    assert first.p_value == again.p_value
    np.testing.assert_array_equal(first.null_distribution, again.null_distribution)
    assert not np.array_equal(first.null_distribution, other.null_distribution)
    generator = np.random.default_rng(123)
    assert t.permutation_test("tau_b", n_resamples=300, seed=generator).p_value == first.p_value


def test_permutation_test_refuses_what_it_cannot_do():
    with pytest.raises(ValueError, match="whole-number"):
        rankfold.table_from_counts([[1.5, 2], [3, 4]]).permutation_test()
    with pytest.raises(ValueError, match="measure must be one of"):
        rankfold.table_from_counts(SMALL).permutation_test("cramers_v")
    with pytest.raises(ValueError, match="undefined"):
        rankfold.table_from_counts([[1, 2, 3]]).permutation_test("tau_b")
    with pytest.raises(ValueError, match="positive"):
        rankfold.table_from_counts(SMALL).permutation_test(n_resamples=0)


@pytest.mark.parametrize("counts", [
    [[2**32, 1], [1, 2**32]],
    [[10**12, 10**11], [10**11, 10**12]],
    [[3_500_000_000, 0], [0, 3_500_000_000]],
    [[2**30, 2**30], [2**30, 2**30]],  # 2**32 units
    [[2**31 - 1, 1], [0, 0]],  # one above the limit
])
def test_huge_totals_are_refused_before_anything_is_drawn(counts, monkeypatch):
    # scipy.stats.random_table breaks above 2**31 - 1 units (measured in subprocesses: wrong
    # or constant tables, or a crash); the test must refuse before calling it.
    from scipy import stats

    def refuse(*args, **kwargs):
        raise AssertionError("random_table was called")

    monkeypatch.setattr(stats, "random_table", refuse)
    with pytest.raises(ValueError, match=r"2\*\*31 - 1.*measures\(\) and tests\(\)"):
        rankfold.table_from_counts(counts).permutation_test("gamma", n_resamples=10, seed=1)


def test_largest_total_accepted_gives_a_right_null(tmp_path):
    # At the limit (2**31 - 1 units) the drawn tables must follow the hypergeometric law of
    # n11 given both margins (scipy.stats.hypergeom mean and variance). Run in a subprocess,
    # so that a generator failure could never take the test process down.
    import subprocess
    import sys

    script = tmp_path / "at_limit.py"
    script.write_text(
        "import numpy as np, rankfold\n"
        "from scipy import stats\n"
        "t = np.array([[900_000_000, 173_741_823], [173_741_824, 900_000_000]])\n"
        "assert t.sum() == 2**31 - 1\n"
        "r = rankfold.table_from_counts(t).permutation_test('tau_b', 400, seed=5)\n"
        "rows, cols, n = t.sum(1), t.sum(0), int(t.sum())\n"
        "law = stats.hypergeom(n, int(cols[0]), int(rows[0]))\n"
        "d = stats.random_table(rows, cols, seed=5).rvs(size=400)[:, 0, 0].astype(float)\n"
        "print(r.p_value, d.mean() - law.mean(), d.var() / law.var())\n"
    )
    done = subprocess.run([sys.executable, str(script)], capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr
    p_value, shift, ratio = map(float, done.stdout.split())
    assert p_value == pytest.approx(1 / 401)  # a strong association: no null table as far
    assert abs(shift) < 4 * np.sqrt(2**31 / 16 / 400) and 0.8 < ratio < 1.25
