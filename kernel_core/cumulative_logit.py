"""Proportional-odds cumulative-logit model of one ordered variable on the other's scores.

``logit P(Y <= j | x, level k) = alpha_kj - beta x`` (McCullagh 1980): one slope ``beta`` for
every cut-point, cut-points ``alpha_kj`` of their own for each level ``k`` of the control
variable. Under a latent logistic variable ``Y* = beta x + e`` cut at the ``alpha``s, merging
neighbouring categories of the response drops a cut-point and leaves ``beta`` unchanged;
merging categories of the scored variable changes what one step of ``x`` means, so ``beta``
changes with it.

The fit is Newton-Raphson on the grouped likelihood of the table: cost O(K I J P^2) per
iteration with P parameters, whatever the number of units. Every function works on count
arrays whose last two axes are the ordered rows and columns; the batched form serves the
collapsing sweep.
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .concordance import cell_concordance
from .measure_table import (
    COLUMNS,
    _frame,
    _notes,
    inference_frame,
    interval_quantile,
    sampling_note,
)
from .ordinal_measures import Sampling, delta_variance
from .scipy_special import special

__all__ = [
    "CumulativeLogitFit",
    "cumulative_logit",
    "cumulative_logit_arrays",
    "cumulative_logit_frame",
]

_MAX_ITERATIONS = 100
_HALVINGS = 40
_TOLERANCE = 1e-10  # a step taken this small ends the iteration (also after halvings)
_NEXT_STEP = 1e-12  # a Newton step this small is not taken: the point is the estimate

ONE_RESPONSE = "needs at least two non-empty categories of the response"
ONE_SCORE = "needs at least two non-empty categories of the scored variable"
NO_PAIRS = (
    "no two units within a level of the control variable differ on both variables: "
    "the slope is not identified"
)
SEPARATION = (
    "the categories are perfectly ordered ({which} pairs of units within levels): the slope "
    "grows without bound (perfect separation)"
)
NO_CONVERGENCE = "the Newton iteration did not converge"


# ------------------------------------------------------------------------- arguments
def _check_response(response: object) -> bool:
    """True when the response is the columns."""
    if response not in ("rows", "cols"):
        raise ValueError(
            f"response must be 'rows' or 'cols' (the variable whose cumulative odds are "
            f"modelled); got {response!r}."
        )
    return response == "cols"


def _scores(scores: object, margin: np.ndarray) -> np.ndarray:
    """Scores of the explanatory categories, shape (..., I), from the pooled margin (..., I)."""
    size = margin.shape[-1]
    if scores is None or (isinstance(scores, str) and scores == "positions"):
        return np.broadcast_to(np.arange(1.0, size + 1), margin.shape)
    if isinstance(scores, str) and scores == "midranks":
        return np.cumsum(margin, axis=-1) - margin / 2 + 0.5
    if isinstance(scores, str):
        raise ValueError(
            f"scores must be 'positions', 'midranks' or a sequence of numbers; got {scores!r}."
        )
    try:
        values = np.asarray(scores, dtype=float)
    except (TypeError, ValueError) as err:
        raise ValueError(
            "scores must be 'positions', 'midranks' or a sequence of numbers, one for each "
            "category of the scored variable."
        ) from err
    if values.shape != (size,):
        raise ValueError(
            f"scores need one number for each of the {size} categories of the scored "
            f"variable; got {values.size}."
        )
    if not np.isfinite(values).all() or not (np.diff(values) > 0).all():
        raise ValueError(
            "scores must be finite and strictly increasing along the category order "
            f"(they say how far apart ordered categories are); got {values.tolist()}."
        )
    return np.broadcast_to(values, margin.shape)


# ------------------------------------------------------------------------- the design
@dataclass(frozen=True)
class _Design:
    """Which parameter each cut-point of each level uses, for a batch (B, K, I, J).

    The cut after response category ``j`` at level ``k`` is -inf when no category up to ``j``
    has units there, +inf when none after it has, and otherwise the cut-point after the last
    non-empty category ``m <= j`` (an empty category in between gets probability 0). Slot
    ``k (J - 1) + m`` holds that cut-point; the slope slot follows them (one, or ``J - 1``
    for separate slopes). Unused slots are fixed by an identity row in the Hessian.
    """

    alpha: np.ndarray  # (B, K, J-1, P) one-hot
    beta: np.ndarray  # (B, K, J-1, P) one-hot
    offset: np.ndarray  # (B, K, J-1): 0, -inf or +inf
    used: np.ndarray  # (B, P) bool
    slope: int  # index of the (first) slope slot


def _design(n: np.ndarray, separate: bool) -> _Design:
    B, K, _, J = n.shape
    cuts = J - 1
    busy = n.sum(axis=-2) > 0  # (B, K, J)
    below = np.cumsum(busy, axis=-1)[..., :-1] > 0
    above = np.cumsum(busy[..., ::-1], axis=-1)[..., ::-1][..., 1:] > 0
    index = np.where(busy, np.arange(J), -1)
    last = np.maximum.accumulate(index, axis=-1)[..., :-1]  # last busy category <= j
    real = below & above
    slope = K * cuts
    P = slope + (cuts if separate else 1)
    alpha = np.zeros((B, K, cuts, P))
    beta = np.zeros((B, K, cuts, P))
    b, k, j = np.nonzero(real)
    m = last[b, k, j]
    alpha[b, k, j, k * cuts + m] = 1.0
    beta[b, k, j, slope + (m if separate else 0)] = 1.0
    offset = np.where(real, 0.0, np.where(below, np.inf, -np.inf))
    used = (alpha + beta).any(axis=(1, 2))
    return _Design(alpha, beta, offset, used, slope)


# ------------------------------------------------------------------ likelihood pieces
@dataclass(frozen=True)
class _Problem:
    """What a fit needs that does not depend on the parameters, computed once per fit.

    ``rows`` is the design of each (level, category of x, cut): ``d eta / d theta``, shape
    (B, K I (J - 1), P); ``rows_4d`` the same as (B, K, I, J - 1, P).
    """

    n: np.ndarray  # (B, K, I, J)
    rows: np.ndarray
    rows_4d: np.ndarray
    rows_t: np.ndarray  # (B, P, K I (J - 1))
    offset: np.ndarray  # (B, K, 1, J - 1): 0, -inf or +inf
    observed: np.ndarray  # (B, K, I, J): n > 0
    floor: np.ndarray  # (B, K, I, J): a valid pi exceeds it (0 where n > 0, -1e-12 in rows
    #                    with units, -inf in rows without)
    ends: tuple[np.ndarray, np.ndarray]  # zeros and ones (B, K, I, 1): F below and above all
    used: np.ndarray  # (B, P) bool
    unused: tuple[np.ndarray, np.ndarray]  # (table, slot) of slots fixed by an identity row


def _problem(n: np.ndarray, x: np.ndarray, design: _Design) -> _Problem:
    B, K, size_x, J = n.shape
    rows_4d = design.alpha[:, :, None] - x[:, None, :, None, None] * design.beta[:, :, None]
    rows = rows_4d.reshape(B, K * size_x * (J - 1), design.used.shape[1])
    observed = n > 0
    occupied = n.sum(axis=-1, keepdims=True) > 0
    floor = np.where(observed, 0.0, np.where(occupied, -1e-12, -np.inf))
    ends = (np.zeros((B, K, size_x, 1)), np.ones((B, K, size_x, 1)))
    return _Problem(n, rows, rows_4d, np.ascontiguousarray(rows.transpose(0, 2, 1)),
                    design.offset[:, :, None], observed, floor, ends, design.used,
                    np.nonzero(~design.used))


@dataclass
class _State:
    loglik: np.ndarray  # (B,)
    gradient: np.ndarray  # (B, P)
    hessian: np.ndarray  # (B, P, P)
    pi: np.ndarray  # (B, K, I, J)
    density: np.ndarray  # (B, K, I, J - 1): f = F (1 - F) at each cut
    valid: np.ndarray  # (B,)


def _state(problem: _Problem, theta: np.ndarray) -> _State:
    """Log-likelihood ``sum n log pi`` with its gradient and observed Hessian in ``theta``.

    With ``F_j = expit(eta_j)``, ``f_j = F_j (1 - F_j)``, ``pi_j = F_j - F_(j-1)`` and
    ``X_j = n_j / pi_j``, the derivatives in the linear predictors of one row are
    ``g_m = f_m (X_m - X_(m+1))``, ``H_mm = f_m (1 - 2 F_m)(X_m - X_(m+1)) - f_m^2 (X_m/pi_m +
    X_(m+1)/pi_(m+1))`` and ``H_m,m+1 = f_m f_(m+1) X_(m+1)/pi_(m+1)``; the chain rule through
    the linear design gives those in ``theta`` (McCullagh 1980, sec. 6; Agresti 2010,
    ch. 3). The tables are tiny, so the work is a few whole-array operations and two
    matrix products (the Hessian of a row is tridiagonal in its linear predictors).
    """
    n, A = problem.n, problem.rows_4d
    eta = (problem.rows @ theta[:, :, None]).reshape(A.shape[:-1]) + problem.offset
    F = special.expit(eta)
    f = F * (1 - F)
    padded = np.concatenate((problem.ends[0], F, problem.ends[1]), axis=-1)
    pi = padded[..., 1:] - padded[..., :-1]
    valid = (pi > problem.floor).all(axis=(1, 2, 3))
    safe = np.where(problem.observed & (pi > 0), pi, 1.0)
    X = n / safe
    loglik = np.where(valid, (n * np.log(safe)).sum(axis=(1, 2, 3)), -np.inf)
    ratio = X / safe
    spread = X[..., :-1] - X[..., 1:]
    h_diag = f * ((1 - 2 * F) * spread - f * (ratio[..., :-1] + ratio[..., 1:]))
    h_off = (f[..., :-1] * f[..., 1:] * ratio[..., 1:-1])[..., None]
    HA = h_diag[..., None] * A  # the tridiagonal H_eta times the design, row by row
    HA[..., :-1, :] += h_off * A[..., 1:, :]
    HA[..., 1:, :] += h_off * A[..., :-1, :]
    gradient = (problem.rows_t @ (f * spread).reshape(problem.rows.shape[:-1] + (1,)))[..., 0]
    hessian = problem.rows_t @ HA.reshape(problem.rows.shape)
    hessian[problem.unused[0], problem.unused[1], problem.unused[1]] = -1.0
    return _State(loglik, gradient, hessian, pi, f, valid)


def _start(n: np.ndarray, design: _Design) -> np.ndarray:
    """Cut-points from each level's cumulative response margin, slopes 0 (common practice)."""
    B, K, _, J = n.shape
    margin = n.sum(axis=-2)
    cum = np.cumsum(margin, axis=-1)
    share = cum[..., :-1] / np.maximum(cum[..., -1:], 1e-300)
    logits = special.logit(np.clip(share, 1e-6, 1 - 1e-6))  # (B, K, J-1)
    theta = np.zeros(design.used.shape)
    theta[:, : K * (J - 1)] = logits.reshape(B, -1)
    return theta


def _newton(problem: _Problem, theta: np.ndarray) -> tuple[np.ndarray, _State, np.ndarray]:
    """Batched Newton-Raphson with step halving that keeps every fitted probability positive.

    The cumulative-logit log-likelihood is concave in the linear predictors (Pratt 1981,
    JASA 76:103), so Newton steps on the observed Hessian climb; halving guards the ordering
    of the cut-points. A table is done when its next Newton step (or the step just taken) is
    below the tolerance in every parameter; the state of the last point reached is returned
    as it is (no evaluation more). Returns the estimates, that state and a convergence flag,
    False also where halving had to shrink a long step to nothing (the likelihood rises
    towards the edge of valid probabilities: the model has no maximum inside it).
    """
    state = _state(problem, theta)
    done = np.zeros(theta.shape[0], dtype=bool)
    stuck = np.zeros(theta.shape[0], dtype=bool)
    for _ in range(_MAX_ITERATIONS):
        try:
            step = -np.linalg.solve(state.hessian, state.gradient[..., None])[..., 0]
        except np.linalg.LinAlgError:
            step = -np.linalg.lstsq(state.hessian[0], state.gradient[0], rcond=None)[0][None]
        size = np.abs(step).max(axis=-1)  # NaN where a step is not finite
        done |= size < _NEXT_STEP
        if done.all():
            break
        plain = not done.any() and bool(np.isfinite(size).all())
        if not plain:
            step = np.where(done[:, None] | ~np.isfinite(step), 0.0, step)
        lowest = state.loglik - 1e-9 * np.abs(state.loglik)
        trial = _state(problem, theta + step)
        scale = None  # the full step unless some table halves it
        for attempt in range(_HALVINGS):
            worse = ~trial.valid | (trial.loglik < lowest)
            if not worse.any():
                break
            scale = np.where(worse, 0.5, 1.0) * (1.0 if scale is None else scale)
            if attempt < _HALVINGS - 1:  # after the last halving the step is taken as it is
                trial = _state(problem, theta + scale[:, None] * step)
        taken = step if scale is None else scale[:, None] * step
        theta = theta + taken
        state = trial
        moved = (size if plain and scale is None else np.abs(taken).max(axis=-1)) < _TOLERANCE
        # Halvings that shrink a long Newton step to nothing mean the likelihood still rises
        # beyond where the fitted probabilities stay valid: no maximum inside, not converged.
        stuck |= moved & ~done & ~(size < _TOLERANCE)
        done |= moved
        if done.all():
            break
    return theta, state, done & ~stuck


def _inverse(hessian: np.ndarray, used: np.ndarray) -> np.ndarray:
    """``-H^-1`` (the inverse observed information), NaN for unused slots."""
    with np.errstate(invalid="ignore"):
        try:
            cov = -np.linalg.inv(hessian)
        except np.linalg.LinAlgError:  # a singular fit (no information): NaN for that table
            cov = np.full(np.shape(hessian), np.nan)
            for b, one in enumerate(hessian):
                try:
                    cov[b] = -np.linalg.inv(one)
                except np.linalg.LinAlgError:
                    pass
    return np.where(used[:, :, None] & used[:, None, :], cov, np.nan)


def _linearised_variances(problem: _Problem, state: _State, cov: np.ndarray,
                          which: np.ndarray, sampling: Sampling) -> np.ndarray:
    """Sandwich variances of the parameters ``which`` by the library's one variance rule.

    ``theta_hat`` solves ``sum n_kij s_kij(theta) = 0`` with ``s_kij = d log pi_kij / d theta``,
    so ``d theta_hat / d n_kij = -H^-1 s_kij`` (implicit function theorem; Binder 1983, Int.
    Stat. Rev. 51:279), and :func:`rankfold.ordinal_measures.delta_variance` of that gradient
    is the linearised variance (Woodruff 1971).
    """
    n = problem.n
    B, K, rows_x, J = n.shape
    rows = np.nan_to_num(cov[:, which, :])  # (B, Q, P): -H^-1 for these parameters
    v = np.einsum("bkimp,bqp->bqkim", problem.rows_4d, rows)
    fv = state.density[:, None] * v
    shape = (*fv.shape[:-1], 1)
    padded = np.concatenate([np.zeros(shape), fv, np.zeros(shape)], axis=-1)
    safe = np.where(state.pi > 0, state.pi, 1.0)
    grad = np.diff(padded, axis=-1) / safe[:, None]
    counts = np.broadcast_to(n[:, None], grad.shape).reshape(B, len(which), K * rows_x, J)
    squared = None
    if sampling.squared is not None:
        squared = np.broadcast_to(np.reshape(sampling.squared, n.shape)[:, None], grad.shape)
        squared = squared.reshape(counts.shape)
    records = None if sampling.records is None else np.asarray(sampling.records)[..., None]
    return delta_variance(counts, grad.reshape(counts.shape), Sampling(squared, records))


# ------------------------------------------------------------------------ the fitting
def _reasons(n: np.ndarray) -> np.ndarray:
    """Plain reason each table (B, K, I, J) has no slope ('' where it has one)."""
    pooled = n.sum(axis=1)
    busy_x = (pooled.sum(axis=-1) > 0).sum(axis=-1)
    busy_y = (pooled.sum(axis=-2) > 0).sum(axis=-1)
    conc, disc = cell_concordance(n)
    P = (n * conc).sum(axis=(1, 2, 3))
    Q = (n * disc).sum(axis=(1, 2, 3))
    reason = np.full(n.shape[0], "", dtype=object)
    reason[(Q == 0) & (P > 0)] = SEPARATION.format(which="no discordant")
    reason[(P == 0) & (Q > 0)] = SEPARATION.format(which="no concordant")
    reason[(P == 0) & (Q == 0)] = NO_PAIRS
    reason[busy_x < 2] = ONE_SCORE
    reason[busy_y < 2] = ONE_RESPONSE
    return reason


def _orient(counts: np.ndarray, cols: bool, controlled: bool) -> np.ndarray:
    """Counts as (B, K, I, J) with the response on the last axis."""
    n = np.asarray(counts, dtype=float)
    if not cols:
        n = np.swapaxes(n, -1, -2)
    return n if controlled else n[..., None, :, :]


def cumulative_logit_arrays(
    counts: np.ndarray,
    *,
    response: str = "cols",
    scores: str | Sequence[float] | None = None,
    sampling: Sampling | None = None,
    start: np.ndarray | None = None,
) -> dict[str, np.ndarray]:
    """Proportional-odds slopes of a batch of tables (no control variable), for the sweep.

    Parameters
    ----------
    counts : ndarray, shape (..., I, J)
        Cell counts or sums of weights; leading axes are a batch.
    response : {'cols', 'rows'}
        The variable whose cumulative odds are modelled; the other one is scored.
    scores : {'positions', 'midranks'} or sequence of float, optional
        Scores of the scored variable: positions 1, 2, ... (default), midranks of its margin
        in each table, or one increasing number per category.
    sampling : Sampling, optional
        Survey-weight information (``squared`` shaped like ``counts`` as given, ``records``
        of the batch shape) for linearised standard errors.
    start : ndarray, optional
        Starting slopes of the batch shape (warm start); 0 by default.

    Returns
    -------
    dict of ndarray
        Batch-shaped ``estimate`` (beta), ``std_error`` and ``reason`` (object array, '' where
        defined).

    Notes
    -----
    The model, estimation and standard errors are those of :func:`cumulative_logit` with one
    level of the control variable; every table of the batch is fitted in the same Newton
    iteration.
    """
    cols = _check_response(response)
    n = np.asarray(counts, dtype=float)
    batch = n.shape[:-2]
    flat = _orient(n.reshape(-1, *n.shape[-2:]), cols, controlled=False)
    sq = None
    if sampling is not None and sampling.squared is not None:
        sq = _orient(np.reshape(sampling.squared, (-1, *n.shape[-2:])), cols, controlled=False)
        records = np.broadcast_to(np.asarray(sampling.records, float), batch).reshape(-1)
        sampling = Sampling(sq, records)
    fit = _fit(flat, _scores(scores, flat.sum(axis=(1, 3))), sampling or Sampling(),
               separate=False, start=None if start is None else np.reshape(start, -1))
    return {
        "estimate": fit.slope.reshape(batch),
        "std_error": fit.slope_se.reshape(batch),
        "reason": fit.reason.reshape(batch),
    }


@dataclass(frozen=True)
class _Fit:
    theta: np.ndarray
    cov: np.ndarray  # covariance used for the standard errors (model-based or linearised)
    se: np.ndarray  # (B, P)
    loglik: np.ndarray
    slope: np.ndarray
    slope_se: np.ndarray
    reason: np.ndarray
    design: _Design
    pi: np.ndarray


def _fit(n: np.ndarray, x: np.ndarray, sampling: Sampling, *, separate: bool,
         start: np.ndarray | None = None, theta: np.ndarray | None = None,
         design: _Design | None = None, all_errors: bool = False) -> _Fit:
    """Fit the common-slope (or separate-slopes) model to every table of (B, K, I, J)."""
    x = np.asarray(x, dtype=float)
    reason = _reasons(n) if not separate else np.full(n.shape[0], "", dtype=object)
    design = _design(n, separate) if design is None else design
    if theta is None:
        theta = _start(n, design)
        if start is not None:
            theta[:, design.slope] = np.nan_to_num(start)
    ok = reason == ""
    every = bool(ok.all())
    if every:
        problem = _problem(n, x, design)
    else:
        problem = _problem(n[ok], x[ok], _subset(design, ok))
        theta = theta[ok]
        sampling = Sampling(None if sampling.squared is None else sampling.squared[ok],
                            None if sampling.records is None
                            else np.asarray(sampling.records)[ok])
    theta, state, converged = _newton(problem, theta)
    cov = _inverse(state.hessian, problem.used)
    if sampling.squared is not None and theta.shape[0]:
        P = theta.shape[1]
        which = np.arange(P) if all_errors else np.arange(design.slope, P)
        se = np.full(theta.shape, np.nan)
        se[:, which] = np.sqrt(_linearised_variances(problem, state, cov, which, sampling))
    else:
        with np.errstate(invalid="ignore"):
            se = np.sqrt(np.diagonal(cov, axis1=-2, axis2=-1))
    fitted = (theta, cov, se, state.loglik, state.pi)
    if not every:  # back to the whole batch, NaN where no fit was made
        fitted = tuple(_spread(part, ok) for part in fitted)
    theta, cov, se, loglik, pi = fitted
    se = np.where(design.used, se, np.nan)
    failed = np.zeros(n.shape[0], dtype=bool)
    failed[ok] = ~converged | ~np.isfinite(se[ok][:, design.slope])
    reason[failed] = NO_CONVERGENCE
    defined = reason == ""
    slope = np.where(defined, theta[:, design.slope], np.nan)
    slope_se = np.where(defined, se[:, design.slope], np.nan)
    return _Fit(theta, cov, se, loglik, slope, slope_se, reason, design, pi)


def _spread(part: np.ndarray, ok: np.ndarray) -> np.ndarray:
    """The rows ``part`` of the tables ``ok`` in a batch of all tables, NaN elsewhere."""
    whole = np.full((ok.shape[0], *part.shape[1:]), np.nan)
    whole[ok] = part
    return whole


def _subset(design: _Design, keep: np.ndarray) -> _Design:
    return _Design(design.alpha[keep], design.beta[keep], design.offset[keep],
                   design.used[keep], design.slope)


# -------------------------------------------------------------------------- one table
@dataclass(frozen=True)
class CumulativeLogitFit:
    """Proportional-odds fit of one table, see :func:`cumulative_logit`.

    Attributes
    ----------
    slope, slope_se : float
        ``beta`` (log cumulative odds ratio per step of the scores) and its standard error.
    cut_points, cut_point_se : ndarray, shape (K, J' - 1)
        ``alpha_kj`` for each level of the control variable and cut after response category
        ``j`` (of the ``J'`` non-empty ones); NaN where category ``j`` has no units at level
        ``k`` (the cut coincides with the previous one).
    response_kept : ndarray of int
        Positions of the non-empty response categories (the cut-points follow them).
    deviance, deviance_df, deviance_p_value : float
        ``G^2`` against the saturated model of the K x I x J table.
    proportional_odds_statistic, proportional_odds_df, proportional_odds_p_value : float
        Likelihood-ratio test against separate slopes per cut-point.
    note, test_note : str
        Reasons for NaN values or remarks ('' for none).
    """

    slope: float
    slope_se: float
    cut_points: np.ndarray
    cut_point_se: np.ndarray
    response_kept: np.ndarray
    deviance: float
    deviance_df: float
    deviance_p_value: float
    proportional_odds_statistic: float
    proportional_odds_df: float
    proportional_odds_p_value: float
    note: str
    test_note: str


def cumulative_logit(
    counts: np.ndarray,
    *,
    response: str = "cols",
    scores: str | Sequence[float] | None = None,
    sampling: Sampling | None = None,
) -> CumulativeLogitFit:
    """Fit the proportional-odds cumulative-logit model to one table.

    Parameters
    ----------
    counts : array_like, shape (I, J) or (K, I, J)
        Cell counts or sums of weights; a leading axis holds the K levels of the control
        variable.
    response : {'cols', 'rows'}
        The variable whose cumulative odds are modelled; the other one is scored.
    scores : {'positions', 'midranks'} or sequence of float, optional
        Scores ``x`` of the scored variable's categories: positions 1, 2, ... (default),
        midranks of its margin pooled over the levels, or one strictly increasing number per
        category.
    sampling : Sampling, optional
        Survey-weight information, ``squared`` shaped like ``counts`` and ``records`` the number
        of data rows; the fit is then a pseudo-likelihood with linearised standard errors.

    Returns
    -------
    CumulativeLogitFit

    Raises
    ------
    ValueError
        For a response other than 'rows'/'cols', scores of the wrong length or not increasing,
        or counts that are not a 2-D or 3-D array of finite non-negative numbers.

    Notes
    -----
    *Model* (McCullagh 1980, eq. 2.4; Agresti 2010, ch. 3):
    ``logit P(Y <= j | x_i, k) = alpha_kj - beta x_i``, so ``beta > 0`` means higher scores go
    with higher response categories; ``beta`` is the log of the cumulative odds ratio for one
    step of ``x``, the same at every cut-point. With a control variable each level has its own
    cut-points and the slope is common (a conditional effect).

    *Estimation*: Newton-Raphson on the grouped log-likelihood
    ``sum n_kij log(F(alpha_kj - beta x_i) - F(alpha_k,j-1 - beta x_i))``, ``F`` the logistic
    distribution function, which is concave (Pratt 1981), with step halving to keep the
    cut-points ordered. Frequency weights are exact (cells are counts). With sampling weights
    the same equations are solved on the weighted totals (pseudo-likelihood, Binder 1983).

    *Standard errors*: counts, the inverse observed information; sampling weights, the
    linearised (sandwich) variance from ``d theta_hat / d n_kij = -H^-1 s_kij`` through
    :func:`rankfold.ordinal_measures.delta_variance` (Woodruff 1971; Binder 1983).

    *Deviance*: ``G^2 = 2 sum n log(n / (n_ki+ pi_kij))`` against the saturated model, on
    ``sum_k I_k (J_k - 1) - P`` degrees of freedom (``I_k``, ``J_k`` the non-empty categories
    at level k, ``P`` the parameters). *Proportional odds*: the likelihood-ratio statistic
    ``2 (l_separate - l_common)`` against the model with a slope ``beta_j`` for each cut-point
    (Peterson & Harrell 1990, Appl. Stat. 39:205 call it the unconstrained partial
    proportional-odds model), on ``J' - 2`` degrees of freedom. The separate-slopes model can
    lack a maximum (its cumulative probabilities may cross): the test is then NaN. Both are
    left out with sampling weights (the totals are not counts).

    *Undefined*: one non-empty category of either variable; no pair of units untied on both
    variables within a level; no discordant (or no concordant) pairs within levels, where the
    likelihood keeps rising as ``beta`` grows (perfect separation).

    *Merging*: merging neighbouring response categories leaves ``beta`` unchanged under a
    latent logistic model; merging categories of the scored variable changes what one step of
    ``x`` means, so ``beta`` changes with it.

    References
    ----------
    McCullagh, P. (1980). Regression models for ordinal data. JRSS B 42, 109-142.
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 3.
    Pratt, J. W. (1981). Concavity of the log likelihood. JASA 76, 103-106.
    Binder, D. A. (1983). On the variances of asymptotically normal estimators from complex
    surveys. International Statistical Review 51, 279-292.
    """
    cols = _check_response(response)
    n = np.asarray(counts, dtype=float)
    if n.ndim not in (2, 3) or not np.isfinite(n).all() or (n < 0).any():
        raise ValueError(
            "counts must be a 2-D table (rows x columns) or a 3-D array (control levels x rows "
            f"x columns) of finite, non-negative numbers; got an array of shape {n.shape}."
        )
    controlled = n.ndim == 3
    table = _orient(n, cols, controlled)[None]  # a batch of one (1, K, I, J)
    weighted = sampling is not None and sampling.squared is not None
    samp = Sampling()
    if weighted:
        squared = _orient(np.asarray(sampling.squared, dtype=float), cols, controlled)
        if squared.shape != table.shape[1:]:
            raise ValueError(
                f"sampling.squared must have the shape of counts, {n.shape}; "
                f"got {np.shape(sampling.squared)}."
            )
        samp = Sampling(squared[None], np.atleast_1d(np.sum(sampling.records)))
    keep = table.sum(axis=(0, 1, 2)) > 0  # drop response categories without units
    table = table[..., keep]
    if samp.squared is not None:
        samp = Sampling(samp.squared[..., keep], samp.records)
    x = _scores(scores, table.sum(axis=(1, 3)))
    common = _fit(table, x, samp, separate=False, all_errors=True)
    return _summarise(table, x, common, np.flatnonzero(keep), weighted)


def _summarise(n, x, common: _Fit, kept, weighted: bool) -> CumulativeLogitFit:
    K, J = n.shape[1], n.shape[3]
    note = str(common.reason[0])
    cuts = common.theta[0, : K * (J - 1)].reshape(K, J - 1)
    cut_se = common.se[0, : K * (J - 1)].reshape(K, J - 1)
    test = dict.fromkeys(("dev", "dev_df", "dev_p", "po", "po_df", "po_p"), np.nan)
    test_note = ""
    if note:
        cuts, cut_se = np.full_like(cuts, np.nan), np.full_like(cut_se, np.nan)
        test_note = f"no tests: {note}"
    elif weighted:
        test_note = ("no deviance or proportional-odds test with sampling weights: "
                     "the totals are not counts")
    else:
        test, test_note = _tests(n, x, common)
    return CumulativeLogitFit(
        slope=float(common.slope[0]),
        slope_se=float(common.slope_se[0]),
        cut_points=cuts,
        cut_point_se=cut_se,
        response_kept=kept,
        deviance=test["dev"],
        deviance_df=test["dev_df"],
        deviance_p_value=test["dev_p"],
        proportional_odds_statistic=test["po"],
        proportional_odds_df=test["po_df"],
        proportional_odds_p_value=test["po_p"],
        note=note,
        test_note=test_note,
    )


def _tests(n: np.ndarray, x: np.ndarray, common: _Fit) -> tuple[dict[str, float], str]:
    """Deviance of the common-slope fit and the LR test against separate slopes."""
    row_totals = n.sum(axis=-1, keepdims=True)
    fitted = row_totals * common.pi
    with np.errstate(divide="ignore", invalid="ignore"):
        deviance = float(2 * np.where(n > 0, n * np.log(n / fitted), 0.0).sum())
    busy_x = (n.sum(axis=-1) > 0).sum(axis=-1)  # (1, K)
    busy_y = (n.sum(axis=-2) > 0).sum(axis=-1)
    params = int(common.design.used[0].sum())
    dev_df = float((busy_x * (busy_y - 1)).sum() - params)
    notes = []
    if dev_df <= 0:
        notes.append("no degrees of freedom left for the deviance")
        deviance = dev_df = np.nan
    out = {"dev": deviance, "dev_df": dev_df,
           "dev_p": float(special.chdtrc(dev_df, deviance)) if dev_df > 0 else np.nan}
    separate_design = _design(n, separate=True)
    start = common.theta.copy()
    theta = np.zeros(separate_design.used.shape)
    slope = separate_design.slope
    theta[:, :slope] = start[:, :slope]
    theta[:, slope:] = start[:, [common.design.slope]]
    separate = _fit(n, x, Sampling(), separate=True, theta=np.nan_to_num(theta),
                    design=separate_design)
    po_df = float(separate.design.used[0, slope:].sum() - 1)
    lr = float(2 * (separate.loglik[0] - common.loglik[0]))
    if po_df < 1:
        notes.append("two response categories: nothing to test for proportional odds")
        out.update(po=np.nan, po_df=np.nan, po_p=np.nan)
    elif separate.reason[0] or not np.isfinite(lr):
        notes.append("the separate-slopes model has no maximum here (its cumulative "
                     "probabilities cross): no proportional-odds test")
        out.update(po=np.nan, po_df=np.nan, po_p=np.nan)
    else:
        lr = max(lr, 0.0)
        out.update(po=lr, po_df=po_df, po_p=float(special.chdtrc(po_df, lr)))
    return out, "; ".join(notes)


def cumulative_logit_frame(
    counts: np.ndarray,
    *,
    response: str = "cols",
    scores: str | Sequence[float] | None = None,
    sampling: Sampling | None = None,
    confidence: float = 0.95,
    row_labels: Sequence[Hashable] | None = None,
    col_labels: Sequence[Hashable] | None = None,
    control_labels: Sequence[Hashable] | None = None,
) -> pd.DataFrame:
    """The proportional-odds fit of one table as a DataFrame (for ``OrdinalTable``).

    Parameters
    ----------
    counts : array_like, shape (I, J) or (K, I, J)
        Cell counts or sums of weights; a leading axis holds the levels of the control
        variable.
    response, scores, sampling
        As in :func:`cumulative_logit`.
    confidence : float
        Confidence level of the Wald intervals.
    row_labels, col_labels, control_labels : sequence, optional
        Category labels, used to name the cut-points (positions 1, 2, ... by default).

    Returns
    -------
    pandas.DataFrame
        Indexed by ``term``: ``slope``, then one row per cut-point named ``"≤ label"`` (with
        a control variable ``"level: ≤ label"``), with the columns of
        :data:`rankfold.measure_table.COLUMNS`. ``frame.attrs`` holds ``deviance``,
        ``deviance_df``, ``deviance_p_value``, ``proportional_odds_statistic``,
        ``proportional_odds_df``, ``proportional_odds_p_value``, ``proportional_odds_test``
        (its name), ``test_note``, ``response`` and ``scores``.

    Notes
    -----
    The slope's ``z = beta / std_error`` and its two-sided normal p-value are the Wald test
    of ``beta = 0`` (so ``std_error_null`` repeats ``std_error``); intervals are Wald
    intervals (Agresti 2010, ch. 3). Cut-points get intervals but no test (``alpha = 0``
    has no meaning). Model, estimation and tests: :func:`cumulative_logit`.
    """
    crit = interval_quantile(confidence)
    fit = cumulative_logit(counts, response=response, scores=scores, sampling=sampling)
    n = np.asarray(counts, dtype=float)
    K = n.shape[0] if n.ndim == 3 else 1
    labels = col_labels if response == "cols" else row_labels
    size = n.shape[-1] if response == "cols" else n.shape[-2]
    labels = list(labels) if labels is not None else list(range(1, size + 1))
    levels = list(control_labels) if control_labels is not None else list(range(1, K + 1))
    keys, est, se, notes = ["slope"], [fit.slope], [fit.slope_se], [fit.note]
    weighted = sampling is not None and sampling.squared is not None
    for k in range(K):
        for c, position in enumerate(fit.response_kept[:-1]):
            name = f"≤ {labels[position]}"
            keys.append(name if n.ndim == 2 else f"{levels[k]}: {name}")
            est.append(fit.cut_points[k, c])
            se.append(fit.cut_point_se[k, c])
            empty = np.isnan(fit.cut_points[k, c]) and not fit.note
            notes.append("no units in this category at this level" if empty else fit.note)
    if weighted:
        extra = sampling_note(float(n.sum()), float(np.sum(sampling.squared)))
        notes = [f"{x}; {extra}" if x else extra for x in notes]
    frame = inference_frame(keys, est, se, se, notes, crit=crit,
                            bounds=[(-np.inf, np.inf)] * len(keys))
    frame.index.name = "term"
    # a test of the slope only; the frame is rebuilt from its columns (setting columns of a
    # frame in place splits its block of numbers, which costs more than building it)
    blank = np.full(len(keys) - 1, np.nan)
    columns = [*frame.iloc[:, :-1].to_numpy(dtype=float, copy=True).T,
               _notes(frame["note"].tolist())]
    for name in ("std_error_null", "z", "p_value"):
        position = COLUMNS.index(name)
        columns[position] = np.concatenate([columns[position][:1], blank])
    frame = _frame(columns, frame.index)
    frame.attrs.update(
        deviance=fit.deviance,
        deviance_df=fit.deviance_df,
        deviance_p_value=fit.deviance_p_value,
        proportional_odds_statistic=fit.proportional_odds_statistic,
        proportional_odds_df=fit.proportional_odds_df,
        proportional_odds_p_value=fit.proportional_odds_p_value,
        proportional_odds_test="likelihood ratio against separate slopes per cut-point",
        test_note=fit.test_note,
        response=response,
        scores="positions" if scores is None else scores,
    )
    return frame
