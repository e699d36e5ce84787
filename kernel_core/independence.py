"""Tests of independence for one table: Pearson X², likelihood-ratio G², linear trend M²
(Agresti, Categorical Data Analysis, 3rd ed., 2013, ch. 3), and a permutation test."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .ordinal_measures import Sampling
from .scipy_special import special

__all__ = [
    "PERMUTATION_MAX_TOTAL", "tests_frame", "PermutationResult", "permutation_test",
    "midrank_scores", "independence_label",
]

TEST_KEYS = ("pearson_x2", "likelihood_ratio_g2", "trend_m2")

#: Readable names of the tests, in the notation of Agresti, Categorical Data Analysis (3rd ed.,
#: 2013, ch. 3); M^2 is Mantel's (1963) test of linear trend.
TEST_LABELS = {
    "pearson_x2": "Pearson X²",
    "likelihood_ratio_g2": "likelihood-ratio G²",
    "trend_m2": "linear trend M² = (n − 1) r²",
    "cmh_correlation": "Cochran–Mantel–Haenszel correlation",
    "gamma_homogeneity": "same gamma in every level",
    "latent_normal_fit": "fit of the latent normal (G²)",
}


def independence_label(key: str) -> str:
    """The readable name of a test of :meth:`OrdinalTable.tests` from its index key.

    Parameters
    ----------
    key : str
        An index key of :meth:`rankfold.OrdinalTable.tests`.

    Returns
    -------
    str
        E.g. ``"Pearson X²"`` for ``"pearson_x2"`` (notation of Agresti, Categorical Data
        Analysis, 3rd ed., 2013, ch. 3).
    """
    if key not in TEST_LABELS:
        raise ValueError(f"Unknown test key {key!r}; the keys are {list(TEST_LABELS)}.")
    return TEST_LABELS[key]


def midrank_scores(margin: np.ndarray) -> np.ndarray:
    """Midrank score of each category: units before it plus (its size + 1) / 2.

    Parameters
    ----------
    margin : ndarray, shape (K,)
        Units (or sums of weights) in each category, in order.

    Returns
    -------
    ndarray, shape (K,)
        The mean of the ranks the category's units would share if every unit were ranked.

    Notes
    -----
    ``s_k = sum_{l<k} n_l + (n_k + 1) / 2``: tied units share the average of their ranks
    (common practice; with these scores the linear-trend r is Spearman's rho, Agresti 2010, ch. 2).
    """
    margin = np.asarray(margin, dtype=float)
    return np.cumsum(margin) - margin / 2 + 0.5


def _resolve_scores(scores, rows: np.ndarray, cols: np.ndarray):
    if scores is None or (isinstance(scores, str) and scores == "positions"):
        return np.arange(1, rows.size + 1, dtype=float), np.arange(1, cols.size + 1, dtype=float)
    if isinstance(scores, str) and scores == "midranks":
        return midrank_scores(rows), midrank_scores(cols)
    if isinstance(scores, str):
        raise ValueError(
            "scores must be 'positions', 'midranks' or a pair (row_scores, col_scores); "
            f"got {scores!r}."
        )
    try:
        row_scores, col_scores = (np.asarray(s, dtype=float) for s in scores)
    except (TypeError, ValueError) as err:
        raise ValueError(
            "scores must be 'positions', 'midranks' or a pair (row_scores, col_scores) of numbers."
        ) from err
    if row_scores.shape != rows.shape or col_scores.shape != cols.shape:
        raise ValueError(
            f"scores need {rows.size} row scores and {cols.size} column scores; got "
            f"{row_scores.size} and {col_scores.size}."
        )
    if not (np.isfinite(row_scores).all() and np.isfinite(col_scores).all()):
        raise ValueError(
            f"scores must be finite numbers; got {row_scores.tolist()} and {col_scores.tolist()}."
        )
    return row_scores, col_scores


def tests_frame(
    counts: np.ndarray,
    scores: str | Sequence[Sequence[float]] | None = None,
    sampling: Sampling | None = None,
) -> pd.DataFrame:
    """Pearson X², likelihood-ratio G² and linear trend M² tests of independence.

    Parameters
    ----------
    counts : ndarray, shape (I, J)
        Cell counts.
    scores : {'positions', 'midranks'} or (row_scores, col_scores), optional
        Category scores of the linear trend test; integer positions 1, 2, ... by default.
    sampling : Sampling, optional
        With sampling weights the totals are not counts, so these count-based tests would be
        wrong (a weight of 2 doubles every statistic); they are then NaN with that reason.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``pearson_x2``, ``likelihood_ratio_g2``, ``trend_m2`` with
        columns ``statistic, df, p_value, note``.

    Notes
    -----
    ``X^2 = sum (n_ij - m_ij)^2 / m_ij`` and ``G^2 = 2 sum n_ij log(n_ij / m_ij)`` with
    ``m_ij = n_i+ n_+j / n``, on ``(I' - 1)(J' - 1)`` degrees of freedom where ``I'``, ``J'``
    count the non-empty rows and columns (empty categories carry no information).
    ``M^2 = (n - 1) r^2``, ``r`` the Pearson correlation of the category scores weighted by the
    counts, on 1 degree of freedom (Mantel 1963, JASA 58:690; Agresti 2010, ch. 2).

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 2.
    """
    n = np.asarray(counts, dtype=float)
    rows_all, cols_all = n.sum(axis=1), n.sum(axis=0)
    row_scores, col_scores = _resolve_scores(scores, rows_all, cols_all)
    keep_r, keep_c = rows_all > 0, cols_all > 0
    sub = n[keep_r][:, keep_c]
    total = sub.sum()
    df = (sub.shape[0] - 1) * (sub.shape[1] - 1)
    empty_note = ""
    if (~keep_r).any() or (~keep_c).any():
        empty_note = "empty categories left out of the degrees of freedom"
    out = {}
    if sampling is not None and sampling.squared is not None:
        reason = (
            "not shown with sampling weights (survey weights): weighted totals are not counts "
            "of units; read the p-values of the measures instead, which allow for the weights"
        )
        return _frame(dict.fromkeys(TEST_KEYS, (np.nan, np.nan, np.nan, reason)))
    if df < 1 or total <= 0:
        reason = "needs at least two non-empty categories on each variable"
        return _frame(dict.fromkeys(TEST_KEYS, (np.nan, np.nan, np.nan, reason)))
    expected = np.outer(sub.sum(axis=1), sub.sum(axis=0)) / total
    x2 = float(((sub - expected) ** 2 / expected).sum())
    with np.errstate(divide="ignore", invalid="ignore"):
        g2 = float(2 * np.where(sub > 0, sub * np.log(sub / expected), 0.0).sum())
    sparse = (expected < 5).mean()
    sparse_note = (
        f"{sparse:.0%} of expected counts are below 5: the chi-square approximation is doubtful"
        if sparse > 0.2 or expected.min() < 1
        else ""
    )
    note = "; ".join(x for x in (empty_note, sparse_note) if x)
    out["pearson_x2"] = (x2, df, float(special.chdtrc(df, x2)), note)
    out["likelihood_ratio_g2"] = (g2, df, float(special.chdtrc(df, g2)), note)

    u = row_scores - (rows_all * row_scores).sum() / n.sum()
    v = col_scores - (cols_all * col_scores).sum() / n.sum()
    s_uv = (n * np.outer(u, v)).sum()
    s_uu = (rows_all * u**2).sum()
    s_vv = (cols_all * v**2).sum()
    if s_uu > 0 and s_vv > 0:
        r = s_uv / np.sqrt(s_uu * s_vv)
        m2 = (n.sum() - 1) * r**2
        out["trend_m2"] = (float(m2), 1, float(special.chdtrc(1, m2)), "")
    else:
        out["trend_m2"] = (np.nan, np.nan, np.nan, "the scores do not vary")
    return _frame(out)


def _frame(out: dict) -> pd.DataFrame:
    frame = pd.DataFrame.from_dict(
        out, orient="index", columns=["statistic", "df", "p_value", "note"]
    )
    frame.index.name = "test"
    return frame


#: Largest table total the permutation test accepts: scipy.stats.random_table (scipy 1.17)
#: draws right tables up to 2**31 - 1 units in every case we tried, and above it may return
#: constant or wrong tables, or crash the process (totals of 3.5e9 split in two rows).
PERMUTATION_MAX_TOTAL = 2**31 - 1


@dataclass(frozen=True)
class PermutationResult:
    """Monte Carlo permutation test of one measure with both margins fixed.

    Attributes
    ----------
    measure : str
        The measure key.
    statistic : float
        The measure on the observed table.
    p_value : float
        Two-sided Monte Carlo p-value ``(1 + #{|T*| >= |T|}) / (B + 1)``.
    n_resamples : int
        ``B``, the number of random tables drawn.
    null_distribution : ndarray
        The measure on each random table (NaN where undefined).
    """

    measure: str
    statistic: float
    p_value: float
    n_resamples: int
    null_distribution: np.ndarray

    def __repr__(self) -> str:
        # one line: the resampled values are there to be inspected, not printed
        return (f"<PermutationResult {self.measure} = {self.statistic:.4f}, "
                f"p = {self.p_value:.4g} from {self.n_resamples:,} random tables>")


def permutation_test(
    counts: np.ndarray,
    measure: str = "gamma",
    n_resamples: int = 9999,
    seed: int | np.random.Generator | None = None,
) -> PermutationResult:
    """Monte Carlo permutation test of an ordinal measure, both margins fixed.

    Parameters
    ----------
    counts : ndarray, shape (I, J)
        Integer cell counts.
    measure : str
        One of the ordinal measure keys (``gamma``, ``somers_d_col_given_row``, ...).
        On a 2 x 2 table gamma is Yule's Q and every measure orders the tables by ``n11``,
        so this also tests the odds ratio, Q, Y and the risk difference and ratio.
    n_resamples : int
        Number of random tables.
    seed : int or numpy.random.Generator, optional
        For a reproducible result.

    Returns
    -------
    PermutationResult

    Raises
    ------
    ValueError
        For weighted totals, an undefined measure, a bad ``n_resamples`` or seed, or a table
        total above :data:`PERMUTATION_MAX_TOTAL` (2**31 - 1 units), beyond which the random
        table generator fails; at such sizes the asymptotic tests of ``measures()`` and
        ``tests()`` are exact enough.

    Notes
    -----
    Under independence with both margins fixed, the table is multivariate hypergeometric;
    tables are drawn with :func:`scipy.stats.random_table` (Patefield 1981, Appl. Stat. 30:91)
    and the p-value counts the observed table, ``(1 + #{|T*| >= |T|}) / (B + 1)`` (Davison &
    Hinkley 1997, ch. 4). Differences below 1e-12 count as ties, against rounding.

    References
    ----------
    Patefield, W. M. (1981). Algorithm AS 159: an efficient method of generating random
    R x C tables with given row and column totals. Applied Statistics 30, 91-97.
    Davison, A. C. & Hinkley, D. V. (1997). Bootstrap Methods and their Application.
    Cambridge University Press, ch. 4.
    """
    from .ordinal_measures import ORDINAL_MEASURES, ordinal_measure_arrays

    if measure not in ORDINAL_MEASURES:
        raise ValueError(f"measure must be one of {list(ORDINAL_MEASURES)}; got {measure!r}.")
    n = np.asarray(counts, dtype=float)
    if not np.all(np.mod(n, 1) == 0):
        raise ValueError(
            "The permutation test needs whole-number counts; this table holds weighted totals. "
            "Use the delta-method intervals of measures() instead."
        )
    total = float(n.sum())
    if total > PERMUTATION_MAX_TOTAL:
        raise ValueError(
            f"The table holds {total:,.0f} units; the permutation test draws random tables of "
            f"at most {PERMUTATION_MAX_TOTAL:,} (2**31 - 1) units, beyond which the table "
            "generator fails. At this size the large-sample p-values of measures() and tests() "
            "are the right tool: use them instead."
        )
    whole = isinstance(n_resamples, (int, np.integer)) and not isinstance(n_resamples, bool)
    if not whole or n_resamples < 1:
        raise ValueError(f"n_resamples must be a positive whole number; got {n_resamples!r}.")
    observed = float(ordinal_measure_arrays(n)[measure]["estimate"])
    if np.isnan(observed):
        raise ValueError(f"{measure} is undefined for this table, so it cannot be tested.")
    try:
        rng = np.random.default_rng(seed)
    except (TypeError, ValueError) as err:
        raise ValueError(
            f"seed must be a whole number, a numpy Generator or None; got {seed!r}."
        ) from err
    from scipy import stats  # imported here: scipy.stats takes about a second to import

    dist = stats.random_table(
        n.sum(axis=1).astype(np.int64), n.sum(axis=0).astype(np.int64), seed=rng
    )
    values = []
    remaining = int(n_resamples)
    chunk = max(1, min(remaining, 2_000_000 // max(n.size, 1)))
    while remaining > 0:
        size = min(chunk, remaining)
        tables = dist.rvs(size=size).astype(float)
        values.append(ordinal_measure_arrays(tables)[measure]["estimate"])
        remaining -= size
    null = np.concatenate(values)
    extreme = np.abs(null) >= abs(observed) - 1e-12
    p = (1 + int(np.sum(extreme))) / (int(n_resamples) + 1)
    return PermutationResult(measure, observed, p, int(n_resamples), null)
