"""Every pair of ordered columns of a frame at once: one row of association figures per pair.

Each column is coded once with :func:`rankfold.column_coding.code_column` (the ordering rules of
:func:`rankfold.table`), every pair table is counted from those codes with
:func:`numpy.bincount`, and pairs whose tables share a shape are measured in one batched call of
the core's measure functions. The frame is never re-read per pair.
"""

from __future__ import annotations

from collections.abc import Callable, Hashable, Mapping, Sequence
from dataclasses import dataclass
from itertools import combinations

import numpy as np
import pandas as pd

from .cell_sums import _weights
from .collapsing import _sparse_columns, rule_met, sweep
from .column_coding import code_column
from .control_variable import partial_design_note, partial_gamma_arrays
from .measure_table import _undefined_reasons, inference_frame, interval_quantile, sampling_note
from .non_substantive import flagged_labels, off_scale_note
from .ordinal_measures import ORDINAL_MEASURES, Sampling, ordinal_measure_arrays
from .ordinal_table import OrdinalTable
from .steps import label_list
from .table_checks import check_columns, check_total, refuse_unknown_keywords

__all__ = ["ADJUSTMENTS", "adjust_p_values", "coding_range", "fill_coding_ranges", "overview"]

#: Multiple-comparison adjustments :func:`overview` offers (None: none).
ADJUSTMENTS = ("holm", "bh")

COLUMNS = [
    "var_a", "var_b", "n", "estimate", "std_error", "ci_low", "ci_high", "p_value", "p_adjusted",
    "sparse", "non_substantive", "coding_min", "coding_max", "coding_sign_changes",
    "coding_significance_changes", "note",
]

# ----------------------------------------------------------------------------- adjustment
def adjust_p_values(p_values: Sequence[float] | np.ndarray, method: str | None = "holm"
                    ) -> np.ndarray:
    """p-values adjusted for the number of tests; NaN entries stay NaN and are not counted.

    Parameters
    ----------
    p_values : array_like
        Unadjusted p-values.
    method : {'holm', 'bh'} or None
        ``'holm'``: Holm's step-down adjustment, which controls the chance of any false finding
        (the family-wise error rate); ``'bh'``: Benjamini and Hochberg's step-up adjustment,
        which controls the expected share of false findings among those declared (the false
        discovery rate); None returns the p-values unchanged.

    Returns
    -------
    ndarray
        With ``p_(1) <= ... <= p_(m)`` the ``m`` defined p-values in order, Holm gives
        ``max_(j <= i) min(1, (m - j + 1) p_(j))`` and Benjamini–Hochberg
        ``min_(j >= i) min(1, m p_(j) / j)``, each put back in the original places.

    References
    ----------
    Holm, S. (1979). A simple sequentially rejective multiple test procedure. Scandinavian
    Journal of Statistics 6, 65-70.
    Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery rate: a practical and
    powerful approach to multiple testing. JRSS B 57, 289-300.
    """
    if method is not None and method not in ADJUSTMENTS:
        raise ValueError(
            f"adjust must be 'holm' (Holm 1979), 'bh' (Benjamini–Hochberg 1995) or None; "
            f"got {method!r}."
        )
    p = np.asarray(p_values, dtype=float)
    out = p.copy()
    if method is None:
        return out
    defined = np.flatnonzero(~np.isnan(p))
    m = defined.size
    if m == 0:
        return out
    order = defined[np.argsort(p[defined], kind="stable")]
    ranked = p[order]
    rank = np.arange(1, m + 1)
    if method == "holm":
        adjusted = np.maximum.accumulate(np.minimum(1.0, (m - rank + 1) * ranked))
    else:
        adjusted = np.minimum.accumulate(np.minimum(1.0, m * ranked / rank)[::-1])[::-1]
    out[order] = adjusted
    return out


# ------------------------------------------------------------------------------ the columns
@dataclass(frozen=True)
class _Column:
    """A column coded once: codes with missing values moved to a last slot, and its labels."""

    name: str
    slots: np.ndarray  # intp codes, missing or excluded -> len(labels)
    labels: tuple


def _code_all(
    df: pd.DataFrame, names: Sequence[str], order: Mapping[str, Sequence[Hashable]]
) -> tuple[list[_Column], dict[str, str]]:
    """Code each column once; the ones that cannot be ordered are skipped with the reason."""
    kept, skipped = [], {}
    for name in names:
        try:
            coded = code_column(df[name], name, "rows", order.get(name), None, dropna=True)
        except ValueError as err:
            skipped[name] = str(err)
            continue
        busy = np.count_nonzero(np.bincount(coded.codes[coded.codes >= 0],
                                            minlength=len(coded.labels)))
        if busy < 2:
            skipped[name] = (
                f"Column {name!r} has {'no category' if busy == 0 else 'one category'} with "
                "data; an association needs at least two."
            )
            continue
        slots = np.where(coded.codes >= 0, coded.codes, len(coded.labels)).astype(np.intp)
        kept.append(_Column(name, slots, coded.labels))
    return kept, skipped


def _check_arguments(
    df: object, columns: Sequence[str] | None, measure: str, control: str | None,
    weight: str | None, weight_kind: str, order: object,
) -> tuple[list[str], dict[str, tuple]]:
    if not isinstance(df, pd.DataFrame):
        raise ValueError(
            f"overview needs a pandas DataFrame; got {type(df).__name__}. Count other sources "
            "pair by pair with rankfold.table."
        )
    if measure not in ORDINAL_MEASURES:
        raise ValueError(f"measure must be one of {list(ORDINAL_MEASURES)}; got {measure!r}.")
    if control is not None and measure != "gamma":
        raise ValueError(
            "With a control variable the overview reports partial gamma (Davis 1967), the "
            f"pooled within-level measure rankfold has; pass measure='gamma', not {measure!r}."
        )
    if weight_kind not in ("frequency", "sampling"):
        raise ValueError(f"weight_kind must be 'frequency' or 'sampling'; got {weight_kind!r}.")
    if weight_kind == "sampling" and weight is None:
        raise ValueError("weight_kind='sampling' needs a weight column: pass weight='your_column'.")
    check_columns(df.columns, [None, None, control, weight])
    roles = {control, weight} - {None}
    if columns is None:
        names = [c for c in df.columns if c not in roles]
    else:
        if isinstance(columns, str) or not isinstance(columns, Sequence):
            raise ValueError(
                f"columns must be a list of column names, e.g. columns=['age_band', 'rating']; "
                f"got {columns!r}."
            )
        names = list(columns)
        absent = [c for c in names if c not in df.columns]
        if absent:
            raise ValueError(f"Column(s) {absent} not in the data; its columns are "
                             f"{list(df.columns)}.")
        if len(set(names)) != len(names):
            raise ValueError(f"columns lists a column twice: {names}.")
        both = [c for c in names if c in roles]
        if both:
            raise ValueError(
                f"{both} is the control or weight variable; leave it out of columns=."
            )
    check_columns(df.columns, [None, None, *[c for c in names if c in df.columns]])
    if order is not None and not isinstance(order, Mapping):
        raise ValueError(
            f"order= must be a dict {{column: [labels from lowest to highest]}}; got {order!r}."
        )
    order = {k: label_list(v, f"order[{k!r}]") for k, v in (order or {}).items()}
    stray = [k for k in order if k not in names and k != control]
    if stray:
        raise ValueError(f"order= names {stray}, which are not among the columns overviewed.")
    return names, order


# --------------------------------------------------------------------------------- counting
@dataclass(frozen=True)
class _PairCells:
    """The tables of one batch of pairs with equal shape, levels kept: (B, K, I, J)."""

    pairs: list[tuple[int, int]]
    cells: np.ndarray
    squared: np.ndarray | None
    records: np.ndarray | None


def _count_pairs(
    cols: list[_Column], level: np.ndarray | None, n_levels: int, weights: np.ndarray | None,
    sampling: bool, frequency_whole: bool,
) -> list[_PairCells]:
    """Count every pair from the codes; one group per (I, J) shape."""
    groups: dict[tuple[int, int], list[tuple[int, int]]] = {}
    for a, b in combinations(range(len(cols)), 2):
        groups.setdefault((len(cols[a].labels), len(cols[b].labels)), []).append((a, b))
    squares = None if weights is None or not sampling else weights * weights
    out = []
    for (size_i, size_j), pairs in groups.items():
        shape = (n_levels + 1, size_i + 1, size_j + 1)
        size = int(np.prod(shape))
        stride = size_j + 1
        base = None if level is None else level * ((size_i + 1) * stride)
        cells, squared, records = [], [], []
        for a, b in pairs:
            flat = cols[a].slots * stride + cols[b].slots
            if base is not None:
                flat += base
            cells.append(np.bincount(flat, weights, minlength=size))
            if squares is not None:
                squared.append(np.bincount(flat, squares, minlength=size))
                records.append(np.bincount(flat, minlength=size))
        kept = (slice(None), slice(n_levels), slice(size_i), slice(size_j))
        out.append(_PairCells(
            pairs, _inner(cells, shape, kept, np.int64 if weights is None or frequency_whole
                          else float),
            _inner(squared, shape, kept, float) if squares is not None else None,
            _inner(records, shape, kept, np.int64) if squares is not None else None,
        ))
    return out


@dataclass(frozen=True)
class _Counted:
    """Every eligible column coded and every pair counted, with what was skipped and why."""

    cols: list[_Column]
    skipped: dict[str, str]
    batches: list[_PairCells]
    control_labels: tuple
    weights: np.ndarray | None
    whole: bool


def _counted_pairs(df: pd.DataFrame, names: Sequence[str],
                   order: Mapping[str, Sequence[Hashable]], control: str | None,
                   weight: str | None, weight_kind: str) -> _Counted:
    """Code each column once and count every pair from the codes (arguments checked)."""
    cols, skipped = _code_all(df, names, order)
    if len(cols) < 2:
        reasons = "; ".join(f"{k}: {v}" for k, v in skipped.items()) or "no columns given"
        raise ValueError(
            f"overview needs at least two eligible columns; found {len(cols)}. {reasons}"
        )
    level, n_levels, control_labels = None, 1, (None,)
    if control is not None:
        coded = code_column(df[control], control, "control", order.get(control), None, True,
                            nominal=True)
        if not coded.labels:
            raise ValueError(
                f"The control variable {control!r} has no category left to hold fixed: every "
                "value is missing. Leave out control=."
            )
        n_levels, control_labels = len(coded.labels), coded.labels
        level = np.where(coded.codes >= 0, coded.codes, n_levels).astype(np.intp)
    weights, whole = None, False
    if weight is not None:
        weights = _weights(df, weight)
        whole = weight_kind == "frequency" and bool(np.all(np.mod(weights, 1) == 0))
    batches = _count_pairs(cols, level, n_levels, weights, weight_kind == "sampling", whole)
    return _Counted(cols, skipped, batches, control_labels, weights, whole)


def _inner(parts: list[np.ndarray], shape: tuple[int, ...], kept: tuple[slice, ...],
           kind: type) -> np.ndarray:
    """Stacked counts without the slots of missing values (the last level, row and column)."""
    stacked = np.stack(parts).reshape(len(parts), *shape)
    return np.ascontiguousarray(stacked[kept], dtype=kind)


def _measure_batch(batch: _PairCells, measure: str, controlled: bool) -> dict[str, np.ndarray]:
    """Estimates and standard errors of one batch, and the plain reasons of undefined values."""
    n = batch.cells.astype(float)
    pooled = n.sum(axis=1)
    if controlled:
        sampling = Sampling() if batch.squared is None else Sampling(
            batch.squared, batch.records.sum(axis=(-2, -1)).astype(float))
        found = partial_gamma_arrays(n, sampling)
        reasons = np.where(np.isnan(found["estimate"]),
                           "no pair of units within a level is untied on both variables", "")
    else:
        sampling = Sampling() if batch.squared is None else Sampling(
            batch.squared.sum(axis=1), batch.records.sum(axis=(-3, -2, -1)).astype(float))
        found = ordinal_measure_arrays(pooled, sampling)[measure]
        reasons = np.array([_undefined_reasons(table)[measure] for table in pooled], dtype=object)
    undefined = reasons != ""
    result = {key: np.where(undefined, np.nan, found[key])
              for key in ("estimate", "std_error", "std_error_null")}
    result["on_bound"] = found["on_bound"] & ~undefined
    totals = pooled.sum(axis=(-2, -1))
    squares = (np.full(len(totals), np.nan) if batch.squared is None
               else batch.squared.sum(axis=(-3, -2, -1)))
    if controlled:
        extra = [partial_design_note("random", None if batch.squared is None else (t, s))
                 for t, s in zip(totals, squares, strict=True)]
    elif batch.squared is not None:
        extra = [sampling_note(float(t), float(s)) for t, s in zip(totals, squares, strict=True)]
    else:
        extra = [""] * len(totals)
    reasons = np.array(["; ".join(x for x in (r, e) if x) for r, e in zip(reasons, extra,
                                                                         strict=True)],
                       dtype=object)
    result["reason"] = reasons
    observed = pooled if batch.records is None else batch.records.sum(axis=1)
    result["sparse"] = ~rule_met(_sparse_columns(observed), "cochran")
    result["n"] = pooled.sum(axis=(-2, -1))
    return result


# ------------------------------------------------------------------------------ the ranges
def coding_range(table: OrdinalTable, measure: str = "gamma") -> dict[str, float | bool]:
    """How far a measure moves across the codings of a table that meet Cochran's rule.

    Parameters
    ----------
    table : OrdinalTable
        The pair's table (never modified); with a control variable the measure is partial gamma.
    measure : str
        An ordinal measure key (``"gamma"`` by default); ignored with a control variable.

    Returns
    -------
    dict
        ``low`` and ``high``: the smallest and largest estimate over the codings of
        :func:`rankfold.sweep` (every merge of neighbouring categories, at least two
        categories per variable) whose table meets Cochran's rule (:func:`rankfold.collapsing.
        rule_met`), NaN when none does or too many codings are admissible; ``sign_changes``:
        estimates of both signs occur among them; ``significance_changes``: some of their
        95% intervals (estimate ± 1.96 × delta-method SE) exclude 0 and some include it;
        ``codings``: how many codings meet the rule; ``note``: the reason for a NaN.

    References
    ----------
    Cochran, W. G. (1954). Some methods for strengthening the common chi-square tests.
    Biometrics 10, 417-451.
    """
    key = "partial_gamma" if table.control_name is not None else measure
    empty = {"low": np.nan, "high": np.nan, "sign_changes": False,
             "significance_changes": False, "codings": 0, "note": ""}
    try:
        frame = sweep(table, measures=(key,))
    except ValueError as err:  # more codings than the sweep's limit
        return empty | {"note": str(err)}
    met = rule_met(frame, "cochran")
    values = frame[key].to_numpy()[met]
    errors = frame[f"{key}_std_error"].to_numpy()[met]
    defined = ~np.isnan(values)
    if not defined.any():
        reason = ("no coding meets Cochran's rule" if not met.any()
                  else "the measure is undefined in every coding that meets Cochran's rule")
        return empty | {"codings": int(met.sum()), "note": reason}
    values, errors = values[defined], errors[defined]
    crit = interval_quantile(0.95)
    excludes_zero = (np.abs(values) - crit * errors) > 0
    return {
        "low": float(values.min()),
        "high": float(values.max()),
        "sign_changes": bool(values.min() < 0 < values.max()),
        "significance_changes": bool(excludes_zero.any() and not excludes_zero.all()),
        "codings": int(met.sum()),
        "note": "",
    }


def _pair_table(batch: _PairCells, k: int, cols: list[_Column], control: str | None,
                control_labels: tuple, weight: str | None, weight_kind: str) -> OrdinalTable:
    a, b = batch.pairs[k]
    return OrdinalTable(
        cells=batch.cells[k], row_name=cols[a].name, col_name=cols[b].name,
        row_labels=cols[a].labels, col_labels=cols[b].labels, control_name=control,
        control_labels=control_labels, weight=weight,
        weight_kind=weight_kind if weight is not None else None,
        squared_weights=None if batch.squared is None else batch.squared[k],
        records=None if batch.records is None else batch.records[k],
    )


# ------------------------------------------------------------------------------ the overview
def overview(
    df: pd.DataFrame,
    columns: Sequence[str] | None = None,
    *,
    measure: str = "gamma",
    control: str | None = None,
    weight: str | None = None,
    weight_kind: str = "frequency",
    order: Mapping[str, Sequence[Hashable]] | None = None,
    adjust: str | None = "holm",
    coding_ranges: bool = False,
    progress: Callable[[int, int], None] | None = None,
    **unknown: object,
) -> pd.DataFrame:
    """The association of every pair of ordered columns of a frame, one row per pair.

    Parameters
    ----------
    df : pandas.DataFrame
        The records (never modified).
    columns : sequence of str, optional
        The columns to pair (default: every column but ``control`` and ``weight``). Eligible
        are ordered Categoricals, booleans, numbers with at most 30 distinct values and text or
        unordered categories given an order in ``order=``, as in :func:`rankfold.table`, with
        at least two categories holding data; the others are skipped, with the reason.
    measure : str
        An ordinal measure key of :meth:`OrdinalTable.measures` (default ``"gamma"``). With a
        control variable only ``"gamma"``, and the rows report partial gamma.
    control : str, optional
        A variable to hold fixed: each pair's estimate is partial gamma over its levels, as in
        :meth:`OrdinalTable.partial_measures` (Davis 1967, JASA 62:189).
    weight, weight_kind
        A weight column and its kind, as in :func:`rankfold.table`.
    order : dict, optional
        ``{column: [labels from lowest to highest]}``.
    adjust : {'holm', 'bh'} or None
        How ``p_adjusted`` allows for testing every pair: Holm (1979), the default, or
        Benjamini–Hochberg (1995), see :func:`adjust_p_values`; None copies ``p_value``.
    coding_ranges : bool
        Also compute, for each pair, the range of the measure over the codings that meet
        Cochran's rule (:func:`coding_range`, one :func:`rankfold.sweep` per pair; the slow
        part, seconds for dozens of pairs).
    progress : callable, optional
        ``progress(done, total)`` after each pair's coding range; returning ``False`` stops
        the filling (see :func:`fill_coding_ranges`, which does the same later).

    Returns
    -------
    pandas.DataFrame
        One row per pair, ``var_a`` before ``var_b`` in column order, with: ``n`` (units, or
        sum of weights), ``estimate``, ``std_error``, ``ci_low``, ``ci_high`` and ``p_value``
        exactly as :meth:`OrdinalTable.measures` (or :meth:`~OrdinalTable.partial_measures`
        with a control variable) reports them for ``rankfold.table(df, var_a, var_b, ...)``;
        ``p_adjusted``; ``sparse`` (the pair's table fails Cochran's rule: an expected count
        below 1 or more than 20% below 5, records counted with sampling weights);
        ``non_substantive`` (either variable has a category such as "don't know" or "no
        answer", which then sits inside the order: look at the pair before trusting it);
        ``coding_min``, ``coding_max``, ``coding_sign_changes`` and
        ``coding_significance_changes`` (see :func:`coding_range`; NaN and missing unless
        ``coding_ranges=True``) and ``note`` (why a value is undefined; sampling weights).
        ``frame.attrs`` holds ``"skipped"`` (``{column: reason}`` for every column left out),
        ``"columns"`` (the eligible columns, in order), ``"non_substantive"``
        (``{column: flagged labels}``), ``"measure"``, ``"adjust"``, ``"control"``,
        ``"weight"``, ``"weight_kind"`` and ``"order"``.

    Raises
    ------
    ValueError
        For bad arguments, or fewer than two eligible columns (the message lists the reasons).

    Notes
    -----
    Each column is coded once and each pair table counted from the codes with
    :func:`numpy.bincount`; tables of equal shape are measured in one batched call
    (formulas and sources in :func:`rankfold.ordinal_measures.ordinal_measure_arrays`).
    Records missing on either variable (or the control variable) are left out of that pair
    only. Scanning many pairs makes some look strong by chance: compare ``p_adjusted``, not
    ``p_value``, with your threshold, and treat the strongest pair found by scanning as a
    lead to examine on new data, not as a finding. An association is not evidence of a cause.

    References
    ----------
    Holm, S. (1979). Scandinavian Journal of Statistics 6, 65-70.
    Benjamini, Y. & Hochberg, Y. (1995). JRSS B 57, 289-300.
    Cochran, W. G. (1954). Biometrics 10, 417-451.

    Examples
    --------
    >>> import pandas as pd, rankfold
    >>> df = pd.DataFrame({"a": [1, 1, 2, 2, 3, 3], "b": [1, 2, 2, 3, 3, 3],
    ...                    "c": [3, 3, 2, 2, 1, 1], "note": list("uvwxyz")})
    >>> frame = rankfold.overview(df)
    >>> frame[["var_a", "var_b"]].values.tolist()
    [['a', 'b'], ['a', 'c'], ['b', 'c']]
    >>> list(frame.attrs["skipped"])
    ['note']
    """
    refuse_unknown_keywords("overview", unknown)
    names, order = _check_arguments(df, columns, measure, control, weight, weight_kind, order)
    if not isinstance(coding_ranges, bool):
        raise ValueError(f"coding_ranges must be True or False; got {coding_ranges!r}.")
    adjust_p_values([], adjust)  # checks the name before any work
    counted = _counted_pairs(df, names, order, control, weight, weight_kind)
    cols, skipped, batches = counted.cols, counted.skipped, counted.batches
    weights, whole = counted.weights, counted.whole
    parts = []
    for batch in batches:
        found = _measure_batch(batch, measure, control is not None)
        if weight is not None:
            for total in found["n"]:
                check_total(float(total), f"weights in {weight!r}")
        parts.append({
            "a": np.array([a for a, _ in batch.pairs]), "b": np.array([b for _, b in batch.pairs]),
            **found,
        })
    merged = {key: np.concatenate([p[key] for p in parts]) for key in parts[0]}
    where = np.lexsort((merged["b"], merged["a"]))
    merged = {key: value[where] for key, value in merged.items()}
    key = "partial_gamma" if control is not None else measure
    flagged = {c.name: tuple(flagged_labels(c.labels, {}, ())) for c in cols}
    if control is None:  # as measures() notes them (partial_measures() does not)
        merged["reason"] = np.array([
            "; ".join(x for x in (reason, off_scale_note(
                {cols[a].name: flagged[cols[a].name], cols[b].name: flagged[cols[b].name]}))
                if x)
            for reason, a, b in zip(merged["reason"], merged["a"], merged["b"], strict=True)
        ], dtype=object)
    inference = inference_frame(
        [key] * len(where), merged["estimate"], merged["std_error"], merged["std_error_null"],
        list(merged["reason"]), crit=interval_quantile(0.95),
        on_bound=list(merged["on_bound"]),
    )
    var_a = [cols[a].name for a in merged["a"]]
    var_b = [cols[b].name for b in merged["b"]]
    n_values = merged["n"]
    if weights is None or whole:
        n_values = n_values.astype(np.int64)
    frame = pd.DataFrame({
        "var_a": var_a,
        "var_b": var_b,
        "n": n_values,
        "estimate": merged["estimate"],
        "std_error": merged["std_error"],
        "ci_low": inference["ci_low"].to_numpy(),
        "ci_high": inference["ci_high"].to_numpy(),
        "p_value": inference["p_value"].to_numpy(),
        "p_adjusted": adjust_p_values(inference["p_value"].to_numpy(), adjust),
        "sparse": merged["sparse"].astype(bool),
        "non_substantive": [bool(flagged[a] or flagged[b]) for a, b in zip(var_a, var_b,
                                                                           strict=True)],
        "coding_min": np.nan,
        "coding_max": np.nan,
        "coding_sign_changes": pd.array([pd.NA] * len(where), dtype="boolean"),
        "coding_significance_changes": pd.array([pd.NA] * len(where), dtype="boolean"),
        "note": inference["note"].to_numpy(),
    })
    frame.attrs.update({
        "skipped": skipped, "columns": [c.name for c in cols],
        "non_substantive": {k: list(v) for k, v in flagged.items() if v},
        "measure": key, "adjust": adjust, "control": control, "weight": weight,
        "weight_kind": weight_kind, "order": order,
    })
    if coding_ranges:
        _fill_ranges(frame, counted, progress)
    return frame


def fill_coding_ranges(frame: pd.DataFrame, df: pd.DataFrame,
                       progress: Callable[[int, int], object] | None = None) -> None:
    """Fill in the coding-range columns of an overview, pair by pair, in place.

    The work of ``overview(..., coding_ranges=True)`` done later, for instance in a background
    thread while the rest of the overview is already on screen.

    Parameters
    ----------
    frame : pandas.DataFrame
        A result of :func:`overview` (its ``attrs`` say which columns, control variable,
        weight and orders it used). Its ``coding_min``, ``coding_max``,
        ``coding_sign_changes``, ``coding_significance_changes`` and ``note`` are written.
    df : pandas.DataFrame
        The records the overview was made from (never modified); columns are coded and pairs
        counted again from them, once.
    progress : callable, optional
        ``progress(done, total)`` after each pair; when it returns ``False`` the filling stops
        there and the pairs not reached keep NaN.

    Notes
    -----
    Each pair's range is :func:`coding_range` of its table (one :func:`rankfold.sweep` per
    pair). The ranges show how much the coding choice can move a pair's measure; picking,
    after looking, the coding that suits is the post-hoc choice that inflates false findings.

    References
    ----------
    Cochran, W. G. (1954). Biometrics 10, 417-451 (the rule the codings must meet).
    """
    needed = {"columns", "control", "weight", "weight_kind", "order", "measure"}
    if not isinstance(frame, pd.DataFrame) or not needed <= set(frame.attrs):
        raise ValueError(
            "fill_coding_ranges needs a frame made by rankfold.overview (its attrs name the "
            "columns and settings); call rankfold.overview(df) first."
        )
    if not isinstance(df, pd.DataFrame):
        raise ValueError(f"fill_coding_ranges needs the records as a pandas DataFrame; got "
                         f"{type(df).__name__}.")
    attrs = frame.attrs
    counted = _counted_pairs(df, attrs["columns"], attrs["order"], attrs["control"],
                             attrs["weight"], attrs["weight_kind"])
    _fill_ranges(frame, counted, progress)


def _fill_ranges(frame: pd.DataFrame, counted: _Counted,
                 progress: Callable[[int, int], object] | None) -> None:
    attrs, cols = frame.attrs, counted.cols
    position = {(a, b): i for i, (a, b) in enumerate(
        zip(frame["var_a"], frame["var_b"], strict=True))}
    total, done = len(frame), 0
    for batch in counted.batches:
        for k, (a, b) in enumerate(batch.pairs):
            row = position.get((cols[a].name, cols[b].name))
            if row is None:  # a pair the frame does not hold
                continue
            table = _pair_table(batch, k, cols, attrs["control"], counted.control_labels,
                                attrs["weight"], attrs["weight_kind"])
            found = coding_range(table, attrs["measure"])
            frame.loc[row, ["coding_min", "coding_max"]] = (found["low"], found["high"])
            if found["codings"] and not np.isnan(found["low"]):
                frame.loc[row, "coding_sign_changes"] = found["sign_changes"]
                frame.loc[row, "coding_significance_changes"] = found["significance_changes"]
            if found["note"]:
                note = frame.at[row, "note"]
                frame.at[row, "note"] = f"{note}; coding range: {found['note']}" if note else (
                    f"coding range: {found['note']}")
            done += 1
            if progress is not None and progress(done, total) is False:
                return
