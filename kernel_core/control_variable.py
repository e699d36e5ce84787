"""Tables with a control variable: per-level counts and measures, partial gamma, homogeneity
and the CMH test.

A table with a control variable holds one I x J table per category (level) of a third
variable, ``cells`` of shape (K, I, J). Controlling for it means comparing units only with
units of the same level: pairs are formed within levels. For the standard error of partial
gamma, the level a unit falls in is random by default (one multinomial over the K x I x J
table; with sampling weights, all records one with-replacement sample); with
``control_totals="fixed"`` the level sizes are fixed by design (independent multinomials;
each level's records a sample of their own).
"""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import replace
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .concordance import cell_concordance
from .independence import _resolve_scores
from .measure_table import inference_frame, interval_quantile, measures_frames, sampling_note
from .ordinal_measures import Sampling, delta_variance, ordinal_measure_arrays
from .scipy_special import special

#: How the level sizes arose, for partial gamma's standard error (see partial_gamma_arrays).
CONTROL_TOTALS = ("random", "fixed")

if TYPE_CHECKING:
    from .ordinal_table import OrdinalTable

__all__ = [
    "cmh_correlation",
    "gamma_homogeneity",
    "CONTROL_TOTALS",
    "control_counts",
    "control_measures",
    "control_tests",
    "partial_gamma_arrays",
    "partial_measures",
    "single_level",
]


def _require_control(table: OrdinalTable, what: str) -> None:
    if table.control_name is None:
        raise ValueError(
            f"{what} needs a table with a control variable; this one has none. Build it with "
            "rankfold.table(df, row, col, control='your_column')."
        )


def _level_sampling(table: OrdinalTable) -> Sampling:
    """Per-level variance information: batch axis = levels."""
    if table.squared_weights is None:
        return Sampling()
    return Sampling(table.squared_weights, table.records.sum(axis=(-2, -1)))


def _level_index(table: OrdinalTable, inner: Sequence, inner_name: str) -> pd.MultiIndex:
    return pd.MultiIndex.from_product(
        [pd.Index(list(table.control_labels), dtype=object), pd.Index(list(inner), dtype=object)],
        names=[table.control_name, inner_name],
    )


def control_counts(table: OrdinalTable) -> pd.DataFrame:
    """The table of each level, stacked.

    Parameters
    ----------
    table : OrdinalTable
        A table with a control variable.

    Returns
    -------
    pandas.DataFrame
        Index ``(level, row)`` (a MultiIndex named after the two variables), one column per
        column category; ``.xs(label, level=0)`` gives one level's table.
    """
    _require_control(table, "control_counts")
    n_k, n_i, n_j = table.cells.shape
    return pd.DataFrame(
        table.cells.reshape(n_k * n_i, n_j),
        index=_level_index(table, table.row_labels, table.row_name),
        columns=pd.Index(list(table.col_labels), name=table.col_name, dtype=object),
    )


def single_level(table: OrdinalTable, label: Hashable) -> OrdinalTable:
    """One level of a table with a control variable as a table of its own.

    Parameters
    ----------
    table : OrdinalTable
        A table with a control variable.
    label : label
        One of ``table.control_labels``.

    Returns
    -------
    OrdinalTable
        Without a level; counts, sampling-weight sums and steps of that level only. Its
        :meth:`~OrdinalTable.to_code` rebuilds it from counts (the weights' squares are not
        carried into that code).
    """
    from .ordinal_table import Origin  # the table module imports this one

    _require_control(table, "control_table")
    if label not in table.control_labels:
        raise ValueError(
            f"{label!r} is not a category of the control variable {table.control_name!r}; "
            "its categories "
            f"are {list(table.control_labels)}."
        )
    k = table.control_labels.index(label)

    def pick(cells: np.ndarray | None) -> np.ndarray | None:
        return None if cells is None else cells[k : k + 1]

    return replace(
        table, cells=pick(table.cells), squared_weights=pick(table.squared_weights),
        records=pick(table.records), control_name=None, control_labels=(None,),
        origin=Origin("counts"), initial_steps=len(table.steps),
        collected_from=None, row_map=None, col_map=None,
    )


def control_measures(table: OrdinalTable, confidence: float = 0.95) -> pd.DataFrame:
    """The measures of every level's own table, stacked.

    Parameters
    ----------
    table : OrdinalTable
        A table with a control variable.
    confidence : float
        Confidence level of the intervals.

    Returns
    -------
    pandas.DataFrame
        Index ``(level, measure)``; columns and meaning as :meth:`OrdinalTable.measures`
        applied to each level alone (with sampling weights, each level's own records and
        effective size). ``.xs(label, level=0)`` gives one level's measures.

    Notes
    -----
    Computed for all levels at once (:func:`rankfold.measure_table.measures_frames`: one
    batched call of the ordinal measures and one of the polychoric fit); the values are those
    of each level's own table, :meth:`control_table`, measured alone.
    """
    _require_control(table, "control_measures")
    return measures_frames(
        np.asarray(table.cells, dtype=float), sampling=_level_sampling(table),
        confidence=confidence, extra_note=table._non_substantive_note(),
        levels=pd.Index(list(table.control_labels), dtype=object, name=table.control_name),
    )


def _check_control_totals(control_totals: object) -> str:
    if control_totals not in CONTROL_TOTALS:
        raise ValueError(
            f"control_totals must be 'random' (the level of a unit is random, as in an "
            f"ordinary survey) or 'fixed' (level sizes fixed by the design, as in a stratified "
            f"sample); got {control_totals!r}."
        )
    return str(control_totals)


def partial_gamma_arrays(
    cells: np.ndarray, sampling: Sampling | None = None, control_totals: str = "random"
) -> dict[str, np.ndarray]:
    """Partial gamma of tables with a control variable with delta-method standard errors.

    Parameters
    ----------
    cells : ndarray, shape (..., K, I, J)
        Counts (or sums of weights) of K levels; leading axes are a batch.
    sampling : Sampling, optional
        Survey-weight information per level: ``squared`` of shape (..., K, I, J) and
        ``records`` of shape (..., K). Multinomial counts by default.
    control_totals : {'random', 'fixed'}
        ``"random"`` (default): the level a unit falls in is random, as in an ordinary
        survey: one multinomial over the whole K x I x J table (with sampling weights, all
        records one with-replacement sample). ``"fixed"``: the level sizes are fixed by the
        design (a stratified sample): independent multinomials, one per level (with sampling
        weights, each level's records a sample of their own).

    Returns
    -------
    dict
        ``estimate``, ``std_error``, ``std_error_null`` and ``on_bound`` (no discordant or no
        concordant pair within any level: partial gamma is +/-1, its error exactly 0), each
        of the batch shape; NaN where no pair within a level is untied on both variables.
        Also ``gradient`` (..., K, I, J), the derivative in each cell the errors use.

    Notes
    -----
    With ``P = sum_k P_k`` and ``Q = sum_k Q_k`` the concordant and discordant pairs formed
    within levels, partial gamma is ``(P - Q) / (P + Q)`` (Davis 1967). Its derivative with
    respect to a count of level k is ``g_ijk = 4 (Q C_ijk - P D_ijk) / (P + Q)^2``, with
    ``C_ijk``, ``D_ijk`` the within-level concordance of :func:`cell_concordance`. With
    random level sizes the one-table rule of :func:`rankfold.ordinal_measures.delta_variance`
    runs over all K x I x J cells,
    ``Var = sum_ijk n_ijk g_ijk^2 - (sum_ijk n_ijk g_ijk)^2 / n``; with fixed sizes the levels
    are independent samples and the rule is applied within each and summed,
    ``Var = sum_k [sum_ij n_ijk g_ijk^2 - (sum_ij n_ijk g_ijk)^2 / n_k]`` (the delta method
    for multinomial and product-multinomial sampling, Bishop, Fienberg & Holland 1975,
    ch. 14). The second form is never larger. The null standard error applies the same rule
    to the numerator's gradient ``2 (C_ijk - D_ijk) / (P + Q)``, as Brown & Benedetti
    (1977) do for one table.

    References
    ----------
    Davis, J. A. (1967). A partial coefficient for Goodman and Kruskal's gamma. JASA 62,
    189-193.
    Bishop, Y. M. M., Fienberg, S. E. & Holland, P. W. (1975). Discrete Multivariate
    Analysis. MIT Press, ch. 14.
    Brown, M. B. & Benedetti, J. K. (1977). JASA 72, 309-315.
    """
    n = np.asarray(cells, dtype=float)
    sampling = sampling or Sampling()
    fixed = _check_control_totals(control_totals) == "fixed"
    conc, disc = cell_concordance(n)
    P = (n * conc).sum(axis=(-3, -2, -1))
    Q = (n * disc).sum(axis=(-3, -2, -1))
    untied = P + Q
    occupied = n.sum(axis=(-2, -1)) > 0  # an empty level adds nothing (and would give 0/0)
    with np.errstate(invalid="ignore", divide="ignore"):
        estimate = np.where(untied > 0, (P - Q) / untied, np.nan)
        scale = np.where(untied > 0, untied, np.nan)[..., None, None, None]
        grad = 4 * (Q[..., None, None, None] * conc - P[..., None, None, None] * disc) / scale**2
        grad_null = 2 * (conc - disc) / scale
    # On the bound from the pair counts of the 0/1 table of non-empty cells (exact integers).
    filled = (n > 0).astype(float)
    f_conc, f_disc = cell_concordance(filled)
    on_bound = ~np.isnan(estimate) & (
        ((filled * f_conc).sum(axis=(-3, -2, -1)) == 0)
        | ((filled * f_disc).sum(axis=(-3, -2, -1)) == 0)
    )

    def whole(x: np.ndarray) -> np.ndarray:  # (..., K, I, J) -> (..., K * I, J)
        return x.reshape(*x.shape[:-3], x.shape[-3] * x.shape[-2], x.shape[-1])

    if fixed:
        def spread(gradient: np.ndarray) -> np.ndarray:
            per_level = delta_variance(n, gradient, sampling)
            return np.sqrt(np.where(occupied, per_level, 0.0).sum(axis=-1))
    else:
        overall = sampling
        if sampling.squared is not None:
            overall = Sampling(whole(np.asarray(sampling.squared, dtype=float)),
                               np.asarray(sampling.records, dtype=float).sum(axis=-1))

        def spread(gradient: np.ndarray) -> np.ndarray:
            # an empty level's gradient may be NaN (0/0 nowhere needed): it carries no weight
            used = np.where(occupied[..., None, None], gradient, 0.0)
            return np.sqrt(delta_variance(whole(n), whole(used), overall))

    se, se_null = spread(grad), spread(grad_null)
    undefined = np.isnan(estimate)
    return {
        "estimate": np.where(on_bound, np.sign(estimate), estimate),
        "std_error": np.where(undefined, np.nan, np.where(on_bound, 0.0, se)),
        "std_error_null": np.where(undefined, np.nan, se_null),
        "on_bound": on_bound,
        "gradient": grad,
    }


def partial_design_note(control_totals: str, weighted: tuple[float, float] | None) -> str:
    """The note saying which sampling a partial gamma's standard error assumes.

    Parameters
    ----------
    control_totals : {'random', 'fixed'}
        As in :func:`partial_gamma_arrays`.
    weighted : (float, float) or None
        Total and total squared sampling weight, or None without sampling weights.

    Returns
    -------
    str
        E.g. ``"each unit's level taken as random (level sizes not fixed in advance)"``; with
        sampling weights the Kish note of
        :func:`rankfold.measure_table.sampling_note` comes first.
    """
    fixed = control_totals == "fixed"
    if weighted is None:
        random = "each unit's level taken as random (level sizes not fixed in advance)"
        return "level sizes fixed by design" if fixed else random
    return sampling_note(*weighted) + ("; each level's records a sample of their own" if fixed
                                      else "; all records one sample, the level of each random")


def partial_measures(
    table: OrdinalTable, confidence: float = 0.95, control_totals: str = "random"
) -> pd.DataFrame:
    """Association within levels of the control variable, pooled: partial gamma.

    Parameters
    ----------
    table : OrdinalTable
        A table with a control variable.
    confidence : float
        Confidence level of the interval, strictly between 0 and 1.
    control_totals : {'random', 'fixed'}
        How the level sizes arose: ``"random"`` (default; the level of a unit is random, as
        in an ordinary survey) or ``"fixed"`` (fixed by the design, as in a stratified
        sample). See :func:`partial_gamma_arrays`.

    Returns
    -------
    pandas.DataFrame
        One row, ``partial_gamma``, with the columns of :meth:`OrdinalTable.measures`.

    Notes
    -----
    Estimate and standard errors as in :func:`partial_gamma_arrays` (Davis 1967, JASA 62:189).
    Pooled versions of Somers' d and tau-b are left out: we know of no published definition
    with a standard error that we could check against. A single partial value can hide
    levels that disagree; look at :func:`control_measures` and the ``gamma_homogeneity`` row
    of :meth:`OrdinalTable.tests`. Holding one variable fixed does not remove other
    confounders: the value is still an association, not a causal effect.

    References
    ----------
    Davis, J. A. (1967). A partial coefficient for Goodman and Kruskal's gamma. JASA 62,
    189-193.
    """
    _require_control(table, "partial_measures")
    crit = interval_quantile(confidence)
    arrays = partial_gamma_arrays(table.cells, _level_sampling(table),
                                  _check_control_totals(control_totals))
    est, se, se0 = (float(arrays[f]) for f in ("estimate", "std_error", "std_error_null"))
    note = "no pair of units within a level is untied on both variables" if np.isnan(est) else ""
    weighted = None if table.squared_weights is None else (
        float(table.cells.sum()), float(table.squared_weights.sum()))
    design = partial_design_note(control_totals, weighted)
    note = f"{note}; {design}" if note else design
    return inference_frame(["partial_gamma"], [est], [se], [se0], [note], crit=crit,
                           on_bound=[bool(arrays["on_bound"])])


def gamma_homogeneity(
    estimates: np.ndarray, std_errors: np.ndarray, on_bound: np.ndarray | None = None
) -> dict[str, float | str]:
    """Test that gamma is the same in every level.

    Parameters
    ----------
    estimates, std_errors : ndarray, shape (K,)
        Gamma of each level and its delta-method standard error.
    on_bound : ndarray of bool, shape (K,), optional
        Levels whose gamma is +/-1 (no discordant or no concordant pair, as
        :func:`rankfold.ordinal_measures.bound_flags` decides from the pair counts). By
        default a level counts as on its bound when its gamma is exactly +/-1, which is what
        ``(P - Q)/(P + Q)`` gives with ``Q = 0`` or ``P = 0``.

    Returns
    -------
    dict
        ``statistic``, ``df``, ``p_value``, ``weighted_mean`` and ``note``. Levels whose gamma
        is undefined or on its bound (gamma = +/-1, no standard error to weigh it by) cannot
        enter the inverse-variance weights; they are left out, whatever floating residue
        their standard error shows, and the note names how many.

    Notes
    -----
    ``X^2 = sum_k (g_k - gbar)^2 / SE_k^2`` with
    ``gbar = sum_k (g_k / SE_k^2) / sum_k (1 / SE_k^2)``, referred to chi-square on ``K' - 1``
    degrees of freedom, ``K'`` the levels used: the heterogeneity statistic for combining
    independent estimates (Cochran 1954; common practice for any asymptotically normal
    measure). It has little power with few or small levels, so a large p-value does not show
    that the levels agree.

    References
    ----------
    Cochran, W. G. (1954). The combination of estimates from different experiments.
    Biometrics 10, 101-129.
    """
    g = np.asarray(estimates, dtype=float)
    se = np.asarray(std_errors, dtype=float)
    bound = np.abs(g) == 1 if on_bound is None else np.asarray(on_bound, dtype=bool)
    usable = np.isfinite(g) & np.isfinite(se) & (se > 0) & ~bound
    left_out = int((~usable).sum())
    notes = []
    if left_out:
        notes.append(
            f"{left_out} level(s) left out: gamma undefined or at +/-1 (no standard error)"
        )
    if usable.sum() < 2:
        notes.insert(0, "needs at least two levels with a defined gamma and standard error")
        return {"statistic": np.nan, "df": np.nan, "p_value": np.nan, "weighted_mean": np.nan,
                "note": "; ".join(notes)}
    w = 1 / se[usable] ** 2
    mean = float((w * g[usable]).sum() / w.sum())
    statistic = float((w * (g[usable] - mean) ** 2).sum())
    df = int(usable.sum()) - 1
    notes.insert(0, f"inverse-variance weighted mean gamma = {mean:.4f} over {df + 1} levels")
    return {"statistic": statistic, "df": df, "p_value": float(special.chdtrc(df, statistic)),
            "weighted_mean": mean, "note": "; ".join(notes)}


def cmh_correlation(
    cells: np.ndarray, scores: str | Sequence[Sequence[float]] | None = None
) -> dict[str, float | str]:
    """Generalized Cochran-Mantel-Haenszel test of correlation within levels of the control.

    Parameters
    ----------
    cells : ndarray, shape (K, I, J)
        Counts of K levels.
    scores : {'positions', 'midranks'} or (row_scores, col_scores), optional
        Category scores, as in :meth:`OrdinalTable.tests`; midranks are computed within
        each level from that level's margins.

    Returns
    -------
    dict
        ``statistic``, ``df`` (1), ``p_value`` and ``note``.

    Notes
    -----
    With ``T_k = sum_ij u_i v_j n_ijk`` and, given both margins of each level (hypergeometric
    under conditional independence),
    ``E_k = (sum_i u_i n_i+k)(sum_j v_j n_+jk) / n_k`` and
    ``V_k = A_k B_k / (n_k^2 (n_k - 1))``, where
    ``A_k = n_k sum_i u_i^2 n_i+k - (sum_i u_i n_i+k)^2`` and ``B_k`` is its column twin, the
    statistic is ``(sum_k (T_k - E_k))^2 / sum_k V_k`` on 1 degree of freedom (Mantel 1963;
    Landis, Heyman & Koch 1978). For 2 x 2 x K tables it is the Mantel-Haenszel
    statistic without continuity correction. Levels with fewer than two units add nothing.

    References
    ----------
    Mantel, N. (1963). Chi-square tests with one degree of freedom; extensions of the
    Mantel-Haenszel procedure. JASA 58, 690-700.
    Landis, J. R., Heyman, E. R. & Koch, G. G. (1978). Average partial association in
    three-way contingency tables: a review and discussion of alternative tests.
    Int. Stat. Rev. 46, 237-254.
    """
    n = np.asarray(cells, dtype=float)
    difference = variance = 0.0
    for level in n:
        total = level.sum()
        rows, cols = level.sum(axis=1), level.sum(axis=0)
        u, v = _resolve_scores(scores, rows, cols)
        if total < 2:
            continue
        su, sv = u @ rows, v @ cols
        difference += u @ level @ v - su * sv / total
        variance += (
            (total * (u**2 @ rows) - su**2) * (total * (v**2 @ cols) - sv**2)
            / (total**2 * (total - 1))
        )
    if not variance > 0:
        return {"statistic": np.nan, "df": np.nan, "p_value": np.nan,
                "note": "the scores do not vary within any level"}
    statistic = float(difference**2 / variance)
    return {"statistic": statistic, "df": 1, "p_value": float(special.chdtrc(1, statistic)),
            "note": "association within levels, pooled over them (categories scored as in the "
                     "linear-trend test M²)"}


def control_tests(
    table: OrdinalTable, scores: str | Sequence[Sequence[float]] | None = None
) -> pd.DataFrame:
    """The two tests a table with a control variable adds to :meth:`OrdinalTable.tests`.

    Parameters
    ----------
    table : OrdinalTable
        A table with a control variable.
    scores : {'positions', 'midranks'} or (row_scores, col_scores), optional
        Scores of the CMH correlation test.

    Returns
    -------
    pandas.DataFrame
        Rows ``cmh_correlation`` (:func:`cmh_correlation`; NaN with a reason for sampling
        weights, whose totals are not counts) and ``gamma_homogeneity``
        (:func:`gamma_homogeneity` on the per-level gammas and their standard errors, which
        follow the weights); columns ``statistic, df, p_value, note``.
    """
    _require_control(table, "control_tests")
    sampling = _level_sampling(table)
    if sampling.squared is None:
        cmh = cmh_correlation(table.cells, scores)
    else:
        cmh = {"statistic": np.nan, "df": np.nan, "p_value": np.nan,
               "note": "not shown with sampling weights (survey weights): weighted totals are not "
                       "counts of units; read the p-value of partial gamma instead"}
    gamma = ordinal_measure_arrays(table.cells, sampling)["gamma"]
    homogeneity = gamma_homogeneity(gamma["estimate"], gamma["std_error"], gamma["on_bound"])
    frame = pd.DataFrame.from_dict(
        {key: {c: value[c] for c in ("statistic", "df", "p_value", "note")}
         for key, value in (("cmh_correlation", cmh), ("gamma_homogeneity", homogeneity))},
        orient="index",
    )
    frame.index.name = "test"
    return frame
