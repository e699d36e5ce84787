"""Assemble the measures of one table into the public DataFrame, with notes for undefined cases."""

from __future__ import annotations

import functools
from collections.abc import Sequence

import numpy as np
import pandas as pd

from .ordinal_measures import ORDINAL_MEASURES, Sampling, delta_variance, ordinal_measure_arrays
from .polychoric import polychoric_arrays
from .scipy_special import special
from .two_by_two import two_by_two_measures

__all__ = [
    "BOUND_NOTE",
    "COLUMNS",
    "inference_frame",
    "interval_quantile",
    "measures_frame",
    "measures_frames",
    "measure_label",
    "normal_p_value",
    "sampling_note",
]

#: The note beside an estimate on an end of its range (gamma = +/-1, say).
BOUND_NOTE = (
    "estimate at its bound (the end of its range, such as +1 or -1), where no interval can be "
    "computed; a permutation test, which reshuffles the units, gives a p-value that does not "
    "need one (unweighted counts only)"
)

COLUMNS = ["estimate", "std_error", "ci_low", "ci_high", "std_error_null", "z", "p_value", "note"]


def measure_label(key: str, row_name: str, col_name: str) -> str:
    """Human-readable name of a measure key using the variable names.

    Parameters
    ----------
    key : str
        A measure key as in the index of :meth:`OrdinalTable.measures`.
    row_name, col_name : str
        The row and column variable names.

    Returns
    -------
    str
        For example ``"Somers' d (satisfaction | income band)"`` for
        ``somers_d_col_given_row`` with column variable ``satisfaction``: the variable before
        the bar is the response.
    """
    labels = {
        "gamma": "Goodman–Kruskal gamma",
        "partial_gamma": "partial gamma (within levels)",
        "somers_d_col_given_row": f"Somers' d ({col_name} | {row_name})",
        "somers_d_row_given_col": f"Somers' d ({row_name} | {col_name})",
        "somers_d_symmetric": "Somers' d (symmetric)",
        "tau_b": "Kendall's tau-b",
        "tau_c": "Stuart's tau-c",
        "spearman_rho": "Spearman's rho (midranks)",
        "polychoric": "polychoric correlation (latent normal)",
        "cumulative_logit": f"cumulative-logit slope ({col_name} on {row_name} steps)",
        "cramers_v": "Cramér's V (nominal)",
        "odds_ratio": "odds ratio",
        "yules_q": "Yule's Q",
        "yules_y": "Yule's Y",
        "risk_difference": f"risk difference ({col_name} = first category)",
        "relative_risk": f"relative risk ({col_name} = first category)",
    }
    return labels.get(key, key)


def normal_p_value(z: np.ndarray | float) -> np.ndarray:
    """Two-sided p-value of a standard normal statistic, NaN where z is NaN.

    Parameters
    ----------
    z : ndarray or float
        Standardised statistics.

    Returns
    -------
    ndarray
        ``2 Phi(-|z|)``, with ``Phi`` the standard normal distribution function (common
        practice); evaluated from the lower tail so tiny p-values keep their precision.
    """
    return 2 * special.ndtr(-np.abs(z))


def _undefined_reasons(counts: np.ndarray) -> dict[str, str]:
    """Plain-language reason each measure is undefined for this table ('' if defined)."""
    return dict.fromkeys((*ORDINAL_MEASURES, "cramers_v"), _undefined_reason(counts))


def _undefined_reason(counts: np.ndarray) -> str:
    """Why no measure is defined for this table, '' when they are."""
    rows = counts.sum(axis=1)
    cols = counts.sum(axis=0)
    if rows.sum() <= 0:
        return "the table is empty"
    one_row = "" if (rows > 0).sum() > 1 else "all units fall in one row category"
    one_col = "" if (cols > 0).sum() > 1 else "all units fall in one column category"
    # With one category on either variable P - Q is 0 by construction, not by data. With two
    # or more on each, some pair of units is untied on both, so gamma is defined too.
    return one_row or one_col


def _cramers_v_arrays(n: np.ndarray, sampling: Sampling) -> dict[str, np.ndarray]:
    """Cramér's V of a batch (B, I, J) of tables without empty rows or columns.

    ``phi^2 = sum n_ij^2 / (n_i+ n_+j) - 1`` and ``V = sqrt(phi^2 / (m - 1))`` (Cramér 1946,
    sec. 21.9); the gradient of ``phi^2`` is
    ``2 n_kl/(n_k+ n_+l) - sum_j n_kj^2/(n_k+^2 n_+j) - sum_i n_il^2/(n_i+ n_+l^2)``
    (Bishop, Fienberg & Holland 1975, sec. 11.3).
    """
    rows = n.sum(axis=-1)[..., :, None]
    cols = n.sum(axis=-2)[..., None, :]
    m = min(n.shape[-2:])
    outer = rows * cols
    share = n**2 / outer
    phi2 = np.maximum(share.sum(axis=(-2, -1)) - 1, 0.0)
    v = np.sqrt(phi2 / (m - 1))
    grad_phi2 = (2 * n / outer - (share / rows).sum(axis=-1, keepdims=True)
                 - (share / cols).sum(axis=-2, keepdims=True))
    var_phi2 = delta_variance(n, grad_phi2, sampling)
    with np.errstate(divide="ignore", invalid="ignore"):
        scale = np.where(v > 0, 1 / (2 * v * (m - 1)), np.nan)
        gradient = grad_phi2 * scale[..., None, None]
    # Pearson's X^2 = n phi^2 on (I' - 1)(J' - 1) df (Cramer 1946, sec. 21.9); weighted
    # totals under sampling weights are not counts, so no p-value then.
    df = (n.shape[-2] - 1) * (n.shape[-1] - 1)
    p = (special.chdtrc(df, n.sum(axis=(-2, -1)) * phi2) if sampling.squared is None
         else np.full(v.shape, np.nan))
    return {"estimate": v, "std_error": np.sqrt(var_phi2) * scale, "p_value": p,
            "gradient": gradient}


def _cramers_v(counts: np.ndarray, sampling: Sampling) -> dict[str, float]:
    """Cramér's V over the non-empty rows and columns, with a delta-method SE (one table;
    see :func:`_cramers_v_arrays`); the gradient is 0 in empty categories."""
    keep = np.ix_(counts.sum(axis=1) > 0, counts.sum(axis=0) > 0)
    sq = sampling.squared
    found = _cramers_v_arrays(
        counts[keep][None], Sampling(None if sq is None else sq[keep][None], sampling.records))
    gradient = np.zeros(counts.shape)
    gradient[keep] = found["gradient"][0]
    return {"estimate": float(found["estimate"][0]), "std_error": float(found["std_error"][0]),
            "p_value": float(found["p_value"][0]), "gradient": gradient}


def measures_frame(
    counts: np.ndarray,
    *,
    sampling: Sampling | None = None,
    confidence: float = 0.95,
    extra_note: str = "",
    arrays: dict | None = None,
    latent: dict | None = None,
) -> pd.DataFrame:
    """The measures of one 2-D table as a DataFrame (see :meth:`OrdinalTable.measures`).

    Parameters
    ----------
    counts : ndarray, shape (I, J)
        Cell counts or sums of weights.
    sampling : Sampling, optional
        Survey-weight information for the standard errors.
    confidence : float
        Confidence level of the intervals, strictly between 0 and 1.
    extra_note : str
        A remark added to every row's note (e.g. the table's non-substantive categories).
    arrays : dict, optional
        This table's result of :func:`ordinal_measure_arrays` when already computed in a batch
        (as for the levels of a control variable); computed here otherwise.
    latent : dict, optional
        This table's result of :func:`rankfold.polychoric.polychoric_arrays` when already
        fitted (a table fits once for its measures and its tests); fitted here otherwise.

    Returns
    -------
    pandas.DataFrame
        Indexed by measure key with columns :data:`COLUMNS`.
    """
    if sampling is not None and sampling.squared is not None:
        sampling = Sampling(np.asarray(sampling.squared, dtype=float)[None],
                            np.asarray(sampling.records, dtype=float)[None])
    return measures_frames(np.asarray(counts, dtype=float)[None], sampling=sampling,
                           confidence=confidence, extra_note=extra_note,
                           arrays=None if arrays is None else _batched(arrays),
                           latent=None if latent is None else _batched({"": latent})[""])


def _batched(arrays: dict) -> dict:
    """One table's measure arrays with a batch axis of length 1 in front."""
    return {key: {f: np.asarray(v)[None] for f, v in found.items()}
            for key, found in arrays.items()}


def measures_frames(
    cells: np.ndarray,
    *,
    sampling: Sampling | None = None,
    confidence: float = 0.95,
    extra_note: str = "",
    arrays: dict | None = None,
    levels: pd.Index | None = None,
    latent: dict | None = None,
) -> pd.DataFrame:
    """The measures of K tables of one shape as one DataFrame, computed batched.

    Parameters
    ----------
    cells : ndarray, shape (K, I, J)
        Cell counts or sums of weights of K tables (the levels of a control variable).
    sampling : Sampling, optional
        Survey-weight information per table: ``squared`` of shape (K, I, J) and ``records``
        of shape (K,); each table is a sample of its own.
    confidence : float
        Confidence level of the intervals, strictly between 0 and 1.
    extra_note : str
        A remark added to every row's note.
    arrays : dict, optional
        The result of :func:`ordinal_measure_arrays` on ``cells`` when already computed.
    levels : pandas.Index, optional
        The K tables' labels, named; required when K > 1.
    latent : dict, optional
        The result of :func:`rankfold.polychoric.polychoric_arrays` on ``cells`` when already
        fitted; fitted here otherwise (only for the tables that have no empty category).

    Returns
    -------
    pandas.DataFrame
        Columns :data:`COLUMNS`; indexed by measure key when ``levels`` is None (K = 1),
        else by ``(level, measure)``. Each table's rows are those of :func:`measures_frame`
        on it alone: the ordinal measures and their errors come from one call of
        :func:`ordinal_measure_arrays` and the polychoric correlations from one call of
        :func:`rankfold.polychoric.polychoric_arrays` over all K tables.
    """
    crit = interval_quantile(confidence)
    sampling = sampling or Sampling()
    cells = np.asarray(cells, dtype=float)
    arrays = ordinal_measure_arrays(cells, sampling) if arrays is None else arrays
    reasons = [_undefined_reasons(level) for level in cells]
    fit = [k for k, why in enumerate(reasons) if not why["cramers_v"]]
    # Cramér's V batched over the tables without empty categories, alone for the others
    full = (cells.sum(axis=-1) > 0).all(axis=-1) & (cells.sum(axis=-2) > 0).all(axis=-1)
    batch = [k for k in fit if full[k]]
    nominal = {}
    if batch:
        found = _cramers_v_arrays(cells[batch], _pick(sampling, batch))
        nominal = {k: {f: float(found[f][i]) for f in ("estimate", "std_error", "p_value")}
                   for i, k in enumerate(batch)}
    if fit:
        latent = (polychoric_arrays(cells[fit], _pick(sampling, fit)) if latent is None
                  else {f: np.asarray(v)[fit] for f, v in latent.items()})
    else:
        latent = None
    records = []
    for k, level in enumerate(cells):
        part = _pick(sampling, [k])
        part = Sampling(None if part.squared is None else part.squared[0],
                        None if part.records is None else part.records[0])
        found = None if latent is None or k not in fit else {
            f: latent[f][fit.index(k)] for f in ("estimate", "std_error", "std_error_null",
                                                  "reason")}
        records += _rows(level, part, {key: {f: v[k] for f, v in entry.items()}
                                       for key, entry in arrays.items()},
                         reasons[k], found, nominal.get(k), extra_note)
    keys, est, se, se0, notes, bounds, log_scale, on_bound, p_values = zip(*records, strict=True)
    index = None
    if levels is not None:
        per_level = len(records) // len(levels)
        names = list(keys[:per_level])
        index = pd.MultiIndex(
            levels=[levels, pd.Index(names, dtype=object)],
            codes=[np.repeat(np.arange(len(levels)), per_level),
                   np.tile(np.arange(per_level), len(levels))],
            names=[levels.name, "measure"], verify_integrity=False,
        )
    return inference_frame(keys, est, se, se0, notes, crit=crit, bounds=bounds,
                           log_scale=log_scale, p_values=p_values, on_bound=on_bound,
                           index=index)


def _pick(sampling: Sampling, chosen: list[int]) -> Sampling:
    """The survey-weight information of some tables of a batch."""
    if sampling.squared is None:
        return sampling
    return Sampling(np.asarray(sampling.squared)[chosen],
                    np.broadcast_to(np.asarray(sampling.records, float),
                                    np.shape(sampling.squared)[:-2])[chosen])


def _rows(counts: np.ndarray, sampling: Sampling, arrays: dict, reasons: dict,
          latent: dict | None, nominal: dict | None, extra_note: str) -> list[tuple]:
    """One table's rows: (key, estimate, se, se0, note, bounds, log scale, on bound, p)."""
    records = []
    for key in ORDINAL_MEASURES:
        found = arrays[key]
        est, se, se0 = (float(found[f]) for f in ("estimate", "std_error", "std_error_null"))
        note = reasons[key]
        if note:
            est = se = se0 = np.nan
        records.append((key, est, se, se0, note, (-1.0, 1.0), False,
                        bool(found["on_bound"]) and not note, None))
    if latent is None:  # the table itself leaves nothing to estimate
        records.append(("polychoric", np.nan, np.nan, np.nan, reasons["cramers_v"], (-1.0, 1.0),
                        False, False, None))
    else:
        note = str(latent["reason"])
        est, se, se0 = (np.nan,) * 3 if note else (
            float(latent[f]) for f in ("estimate", "std_error", "std_error_null"))
        records.append(("polychoric", est, se, se0, note, (-1.0, 1.0), False, False, None))
    v_note = reasons["cramers_v"]
    if v_note:
        records.append(("cramers_v", np.nan, np.nan, np.nan, v_note, (0.0, 1.0), False, False,
                        np.nan))
    else:
        v = nominal or _cramers_v(counts, sampling)
        v_note = "nominal measure; p-value from Pearson's X² test"
        if sampling.squared is not None:
            v_note = "nominal measure; no p-value with sampling weights"
        if not v["estimate"] > 0:
            v_note += "; V = 0 is on the boundary: no delta-method interval"
        # Pearson's test, reported on the Cramér's V row
        records.append(("cramers_v", v["estimate"], v["std_error"], np.nan, v_note, (0.0, 1.0),
                        False, False, v["p_value"]))
    if counts.shape == (2, 2) and counts.sum() > 0:
        for key, m in two_by_two_measures(counts, sampling).items():
            bounds = (-1.0, 1.0) if not m["log_scale"] else (0.0, np.inf)
            records.append((key, m["estimate"], m["std_error"], m["std_error_null"], m["note"],
                            bounds, m["log_scale"], m["on_bound"], None))
    extras = [extra_note] if extra_note else []
    if sampling.squared is not None:
        extras.insert(0, sampling_note(counts.sum(), sampling.squared.sum()))
    for extra in extras:
        records = [(*r[:4], f"{r[4]}; {extra}" if r[4] else extra, *r[5:]) for r in records]
    return records


def interval_quantile(confidence: object) -> float:
    """The normal quantile ``z_(1 - alpha/2)`` of a two-sided interval at ``confidence``.

    Parameters
    ----------
    confidence : float
        Confidence level, strictly between 0 and 1; anything else is refused.

    Returns
    -------
    float
        For example 1.959964 for 0.95 (the standard normal quantile; common practice).
    """
    number = isinstance(confidence, (int, float, np.integer, np.floating))
    if isinstance(confidence, bool) or not number or not 0 < confidence < 1:
        raise ValueError(
            f"confidence must be a number strictly between 0 and 1 (e.g. 0.95); got {confidence!r}."
        )
    return float(special.ndtri(0.5 + confidence / 2))


def sampling_note(total: float, squared: float) -> str:
    """Plain note for results from sampling weights, with Kish's effective sample size.

    Parameters
    ----------
    total, squared : float
        Sum of the weights and sum of their squares over the records counted.

    Returns
    -------
    str
        The note; the effective size is ``(sum w)^2 / sum w^2`` (Kish 1965, Survey
        Sampling), the number of unweighted records that would give about the same precision.
    """
    size = f"{total**2 / squared:,.1f}" if squared > 0 else "undefined (no weight)"
    return (
        "sampling weights (survey weights): the intervals allow for the weights, treating the "
        "rows as drawn independently (no clusters or strata; Taylor-linearised errors); effective "
        "sample size "
        f"(Kish) = {size} respondents: the weighted data hold about as much information as "
        "that many unweighted ones"
    )


def inference_frame(
    keys: Sequence[str],
    estimate: Sequence[float],
    std_error: Sequence[float],
    std_error_null: Sequence[float],
    notes: Sequence[str],
    *,
    crit: float,
    bounds: Sequence[tuple[float, float]] | None = None,
    log_scale: Sequence[bool] | None = None,
    p_values: Sequence[float | None] | None = None,
    on_bound: Sequence[bool] | None = None,
    index: pd.Index | None = None,
) -> pd.DataFrame:
    """Measures table: Wald interval, z statistic, p-value and notes for each estimate.

    Parameters
    ----------
    keys : sequence of str
        Measure keys (the index).
    estimate, std_error, std_error_null : sequence of float
        Estimates, delta-method standard errors and standard errors under independence
        (NaN when undefined).
    notes : sequence of str
        Reason or remark each note starts with ('' for none).
    crit : float
        Normal quantile of the interval, e.g. 1.96 for 95%.
    bounds : sequence of (float, float), optional
        Range of each measure (default [-1, 1]); intervals are clipped to it.
    log_scale : sequence of bool, optional
        Where True, the standard errors refer to ``log(estimate)`` (ratios) and the interval
        is ``exp(log(estimate) +/- crit * std_error)``.
    p_values : sequence of float or None, optional
        A p-value from another test where not None (Cramér's V uses Pearson's X²);
        otherwise the two-sided normal p-value of ``z = estimate / std_error_null``.
    on_bound : sequence of bool, optional
        Where True the estimate sits on an end of its range (decided by the caller from the
        data, e.g. no discordant pair for gamma, never from a floating standard error): the
        delta method gives no interval there, so the interval is NaN and the note says so.
    index : pandas.Index, optional
        The frame's index (e.g. levels and measure keys); by default ``keys``, named
        ``measure``.

    Returns
    -------
    pandas.DataFrame
        Indexed by ``measure`` with the columns of :data:`COLUMNS`.

    Notes
    -----
    Wald intervals and z tests, as in Agresti (2010, ch. 7); the clipping to the
    measure's range is common practice.
    """
    size = len(keys)
    est = np.asarray(estimate, dtype=float)
    se = np.asarray(std_error, dtype=float)
    se0 = np.asarray(std_error_null, dtype=float)
    lo, hi = (-1.0, 1.0) if bounds is None else np.asarray(bounds, dtype=float).T
    logs = np.asarray(log_scale if log_scale is not None else [False] * size, dtype=bool)
    bound = np.asarray(on_bound if on_bound is not None else [False] * size, dtype=bool)
    # overflow: a log-scale interval whose end is beyond floating point is +inf (tiny totals)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        half = crit * se
        ci_low = np.minimum(np.maximum(est - half, lo), hi)
        ci_high = np.minimum(np.maximum(est + half, lo), hi)
        centre = est
        if logs.any():  # ratios: the interval and z on the log scale
            centre = np.where(logs, np.log(np.where(est > 0, est, np.nan)), est)
            ci_low = np.where(logs, np.exp(centre - half), ci_low)
            ci_high = np.where(logs, np.exp(centre + half), ci_high)
        if bound.any():
            ci_low = np.where(bound, np.nan, ci_low)
            ci_high = np.where(bound, np.nan, ci_high)
        z = np.where(se0 > 0, centre / np.where(se0 > 0, se0, 1.0), np.nan)
    p = normal_p_value(z)
    if p_values is not None:
        other = np.array([np.nan if v is None else v for v in p_values], dtype=float)
        p = np.where([v is None for v in p_values], p, other)
    full_notes = []
    for key, note, e, s0, at_bound in zip(
        keys, notes, est.tolist(), se0.tolist(), bound.tolist(), strict=True
    ):
        parts = [note] if note else []
        defined = e == e  # not NaN
        if defined and at_bound:
            parts.append(BOUND_NOTE)
        if defined and key != "cramers_v" and not s0 > 0:
            parts.append("no variation under independence: no z test")
        full_notes.append("; ".join(parts))
    if index is None:  # a view: a frame's index name can be set in place
        index = _measure_index(tuple(keys)).view()
    return _frame([est, se, ci_low, ci_high, se0, z, p, _notes(full_notes)], index)


@functools.lru_cache(maxsize=64)
def _measure_index(keys: tuple) -> pd.Index:
    """The index of a measures table, made once per set of keys (frames get views)."""
    return pd.Index(list(keys), name="measure", dtype=object)


@functools.cache
def _note_dtype() -> object:
    """The dtype pandas gives a column of text (``str`` in pandas 3, object before)."""
    return pd.DataFrame({"note": np.array([""], dtype=object)}).dtypes["note"]


def _notes(notes: list[str]) -> object:
    """The note column as the array pandas would make of it (see :func:`_note_dtype`)."""
    values = np.array(notes, dtype=object)
    dtype = _note_dtype()
    if dtype == np.dtype(object):
        return values
    return dtype.construct_array_type()._from_sequence(values, dtype=dtype)


_COLUMN_INDEX = pd.Index(COLUMNS)


def _frame(columns: list, index: pd.Index) -> pd.DataFrame:
    """The measures DataFrame from its columns (in :data:`COLUMNS` order), built directly.

    ``DataFrame._from_arrays`` skips the checks and copies of the public constructor, which
    cost most of the time of a small table's measures; the public constructor gives the same
    frame where that method is missing.
    """
    build = getattr(pd.DataFrame, "_from_arrays", None)
    if build is not None:
        try:
            return build(columns, _COLUMN_INDEX.view(), index, verify_integrity=False)
        except TypeError:  # another signature in some pandas version
            pass
    return pd.DataFrame(dict(zip(COLUMNS, columns, strict=True)), index=index, copy=False)
