"""The quotient measures' denominators and gradients, in the sweep's cells-first layout."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from rankfold.merge_sweep_kernel import concordance_cells_first
from rankfold.quotient_measures import (
    QUOTIENT_MEASURES,
    PairSums,
    quotient_denominator,
    quotient_rule,
)


def defined_denominators(n: np.ndarray) -> dict[str, float]:
    """Each denominator from its definition, pairs counted by a loop over pairs of cells.

    Goodman & Kruskal (1954): gamma divides by the pairs untied on both variables; Somers
    (1962): by the pairs untied on the conditioning variable (``n^2 - sum n_i+^2``, ordered
    pairs); Kendall (1945): tau-b by the geometric mean of the two; Stuart (1953): tau-c by
    ``(m - 1) n^2 / m``.
    """
    untied = sum(n[i, j] * n[a, b]
                 for i, j, a, b in itertools.product(*map(range, n.shape), *map(range, n.shape))
                 if (a - i) * (b - j) != 0)
    total = n.sum()
    w_r = total**2 - (n.sum(axis=1) ** 2).sum()
    w_c = total**2 - (n.sum(axis=0) ** 2).sum()
    m = min(n.shape)
    return {
        "gamma": untied,
        "somers_d_col_given_row": w_r,
        "somers_d_row_given_col": w_c,
        "somers_d_symmetric": (w_r + w_c) / 2,
        "tau_b": np.sqrt(w_r * w_c),
        "tau_c": (m - 1) * total**2 / m,
    }


def cells_first_sums(n: np.ndarray) -> tuple[PairSums, np.ndarray, np.ndarray]:
    """PairSums of a cells-first batch (I, J, B), with S and d."""
    rows, cols = n.sum(axis=1), n.sum(axis=0)
    total = rows.sum(axis=0)
    conc, disc = concordance_cells_first(n)
    P, Q = (n * conc).sum(axis=(0, 1)), (n * disc).sum(axis=(0, 1))
    row_rest, col_rest = total - rows, total - cols
    m = np.minimum((rows > 0).sum(axis=0), (cols > 0).sum(axis=0)).astype(float)
    sums = PairSums(conc, disc, row_rest[:, None], col_rest[None, :], total, P, Q,
                    (rows * row_rest).sum(axis=0), (cols * col_rest).sum(axis=0), m)
    return sums, P - Q, conc - disc


@pytest.mark.parametrize("key", QUOTIENT_MEASURES)
def test_denominator_gradient_matches_finite_differences_of_definition(key):
    # Source: the denominators' definitions (Goodman & Kruskal 1954; Somers 1962; Kendall
    # 1945; Stuart 1953), pairs counted by brute-force enumeration and differentiated by
    # central finite differences; three invented tables batched cells first.
    rng = np.random.default_rng(5)
    batch = rng.poisson(6.0, size=(3, 4, 5)).astype(float) + 0.5
    cells_first = np.ascontiguousarray(batch.transpose(1, 2, 0))
    sums, _, _ = cells_first_sums(cells_first)
    den, den_grad = quotient_denominator(key, sums)
    den_grad = np.broadcast_to(den_grad, cells_first.shape)
    step = 1e-3
    for b, table in enumerate(batch):
        assert den[b] == pytest.approx(defined_denominators(table)[key], rel=1e-12)
        for i, j in itertools.product(*map(range, table.shape)):
            up, down = table.copy(), table.copy()
            up[i, j] += step
            down[i, j] -= step
            numerical = (defined_denominators(up)[key] - defined_denominators(down)[key]) / (
                2 * step)
            assert den_grad[i, j, b] == pytest.approx(numerical, rel=1e-7), (key, b, i, j)


def test_quotient_rule_matches_finite_differences_of_the_ratio():
    # Source: the quotient S / den from the definitions above and S = sum n_ij (C_ij - D_ij)
    # with pairs counted by enumeration (Goodman & Kruskal 1954), differentiated by central
    # finite differences.
    rng = np.random.default_rng(6)
    table = rng.poisson(5.0, size=(3, 4)).astype(float) + 0.5

    def ratio(n, key):
        s = sum(n[i, j] * n[a, b] * np.sign((a - i) * (b - j))
                for i, j, a, b in itertools.product(*map(range, n.shape), *map(range, n.shape)))
        return s / defined_denominators(n)[key]

    sums, S, d = cells_first_sums(table[:, :, None])
    for key in QUOTIENT_MEASURES:
        den, den_grad = quotient_denominator(key, sums)
        estimate, gradient = quotient_rule(S, den, d, den_grad)
        assert estimate[0] == pytest.approx(ratio(table, key), rel=1e-12)
        for i, j in itertools.product(*map(range, table.shape)):
            up, down = table.copy(), table.copy()
            up[i, j] += 1e-4
            down[i, j] -= 1e-4
            numerical = (ratio(up, key) - ratio(down, key)) / 2e-4
            assert gradient[i, j, 0] == pytest.approx(numerical, rel=1e-6, abs=1e-10), (key, i, j)
