"""The immutable ordered contingency table and its coding operations."""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from .concordance import pair_counts
from .control_variable import (
    control_counts,
    control_measures,
    control_tests,
    partial_measures,
    single_level,
)
from .cumulative_logit import cumulative_logit_frame
from .diagnostics import Diagnostics, diagnose
from .independence import PermutationResult, permutation_test, tests_frame
from .measure_table import interval_quantile, measures_frame
from .non_substantive import flagged_labels, off_scale_note
from .ordinal_measures import Sampling
from .polychoric import polychoric, polychoric_arrays
from .steps import (
    ExcludeStep,
    MergeStep,
    OrderStep,
    Step,
    collected_members,
    default_merge_label,
    label_list,
)

__all__ = ["OrdinalTable"]

AXIS_NAMES = {"rows": 1, "cols": 2}


def _check_axis(axis: str) -> int:
    if axis not in AXIS_NAMES:
        raise ValueError(f"axis must be 'rows' or 'cols'; got {axis!r}.")
    return AXIS_NAMES[axis]


def label_literal(label: Hashable) -> str:
    """Python source that evaluates to ``label`` given ``import pandas as pd``.

    numpy scalars become plain Python values (numpy 2 prints ``np.float64(1.5)``), and pandas
    Intervals (e.g. from ``pd.cut``), Timestamps and Timedeltas are spelled with ``pd.``.
    """
    if isinstance(label, np.datetime64):
        label = pd.Timestamp(label)
    elif isinstance(label, np.generic):
        label = label.item()
    if isinstance(label, pd.Interval):
        return (f"pd.Interval({label_literal(label.left)}, {label_literal(label.right)}, "
                f"closed={label.closed!r})")
    if isinstance(label, (pd.Timestamp, pd.Timedelta)):
        return f"pd.{type(label).__name__}({str(label)!r})"
    return repr(label)


def _list_literal(labels: Sequence[Hashable]) -> str:
    return "[" + ", ".join(label_literal(x) for x in labels) + "]"


@dataclass(frozen=True)
class Origin:
    """How a table was first built, so :meth:`OrdinalTable.to_code` can rebuild it."""

    kind: str  # "frame" or "counts"
    arguments: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class OrdinalTable:
    """An ordered two-way table of counts (optionally one per level), immutable.

    Build one with :func:`rankfold.table` or :func:`rankfold.table_from_counts`; every coding
    operation (:meth:`merge`, :meth:`exclude`, :meth:`reorder`) returns a new table and
    records a step.

    Attributes
    ----------
    row_name, col_name : str
        Variable names.
    row_labels, col_labels : tuple
        Category labels in order.
    steps : tuple
        Every order, exclusion and merge applied, oldest first.
    n_missing, n_excluded : int
        Data rows dropped while counting because a value was missing, or in an excluded
        category (0 for tables built from counts).
    control_name : str or None, control_labels : tuple
        The control variable and its categories (a single unnamed level when there is none).
    weight, weight_kind : str or None
        The weight column and whether its weights are ``"frequency"`` or ``"sampling"``.
    non_substantive_extra : tuple or None
        Labels flagged as non-substantive besides the common phrasings (``non_substantive=``
        of :func:`rankfold.table`); None turns the check off.
    """

    cells: np.ndarray  # (K, I, J) counts or sums of weights
    row_name: str
    col_name: str
    row_labels: tuple
    col_labels: tuple
    steps: tuple[Step, ...] = ()
    n_missing: int = 0
    n_excluded: int = 0
    control_name: str | None = None
    control_labels: tuple = (None,)
    weight: str | None = None
    weight_kind: str | None = None
    squared_weights: np.ndarray | None = None  # (K, I, J) when weight_kind == "sampling"
    records: np.ndarray | None = None  # (K, I, J) data rows per cell when weight_kind == "sampling"
    origin: Origin = field(default_factory=lambda: Origin("counts"))
    initial_steps: int = 0
    non_substantive_extra: tuple | None = ()
    # The table as collected (None: this one) and where each of its categories went here: the
    # position in this table, or -1 when left out. Kept so that two codings of the same data
    # can be compared with a paired standard error (see rankfold.coding_change).
    collected_from: OrdinalTable | None = field(default=None, repr=False)
    row_map: tuple[int, ...] | None = field(default=None, repr=False)
    col_map: tuple[int, ...] | None = field(default=None, repr=False)
    # Results computed once per table (it is immutable) and handed out as copies; a new table
    # (every coding step, replace()) starts with an empty one.
    _kept: dict = field(default_factory=dict, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        for name in ("cells", "squared_weights", "records"):
            value = getattr(self, name)
            if value is not None:
                value = np.array(value)
                value.setflags(write=False)
                object.__setattr__(self, name, value)

    # ----------------------------------------------------------------- views of the counts
    @property
    def counts(self) -> pd.DataFrame:
        """The table (pooled over the control variable) with ordered labels as index and columns."""
        return pd.DataFrame(
            self.cells.sum(axis=0),
            index=pd.Index(list(self.row_labels), name=self.row_name, dtype=object),
            columns=pd.Index(list(self.col_labels), name=self.col_name, dtype=object),
        )

    @property
    def n(self) -> int | float:
        """Total count (sum of weights for a weighted table)."""
        total = self.cells.sum()
        return int(total) if np.issubdtype(self.cells.dtype, np.integer) else float(total)

    @property
    def shape(self) -> tuple[int, int]:
        """Number of row and column categories."""
        return len(self.row_labels), len(self.col_labels)

    @property
    def non_substantive(self) -> dict[str, list]:
        """Categories that look like answers off the scale ("don't know", "no answer", ...).

        Returns
        -------
        dict
            ``{"rows": [...], "cols": [...]}``: labels of each variable that are, or (after a
            merge) cover, one of :data:`rankfold.non_substantive.NON_SUBSTANTIVE_PHRASES`
            (compared case-insensitively) or a label given in ``non_substantive=``. Counted
            as a position on the scale they distort every ordinal measure; leave them out
            with :meth:`exclude`. Nothing is excluded automatically.
        """
        return {
            axis: flagged_labels(labels, collected_members(self.steps, name),
                                 self.non_substantive_extra)
            for axis, labels, name in (("rows", self.row_labels, self.row_name),
                                       ("cols", self.col_labels, self.col_name))
        }

    def _non_substantive_note(self) -> str:
        flagged = self.non_substantive
        return off_scale_note({self.row_name: flagged["rows"], self.col_name: flagged["cols"]})

    def _pooled(self) -> np.ndarray:
        return self.cells.sum(axis=0)

    def _sampling(self) -> Sampling:
        if self.squared_weights is None:
            return Sampling()
        return Sampling(self.squared_weights.sum(axis=0), self.records.sum())

    @property
    def collected(self) -> OrdinalTable:
        """The table as collected, before any merge, exclusion or reorder made here.

        Every coding of one table shares it (by identity), which is how
        :func:`rankfold.compare_measures` knows two tables are codings of the same data.
        :meth:`transpose` and :meth:`control_table` start afresh: their result is its own
        collected table.
        """
        return self if self.collected_from is None else self.collected_from

    def coding_maps(self) -> tuple[np.ndarray, np.ndarray]:
        """Where each row and column category of :attr:`collected` went in this table.

        Returns
        -------
        (ndarray, ndarray)
            For each collected row (column) category, its position in this table, or -1 when
            it was left out; merged categories share a position. The coded cells are
            ``n[k, i, j] = sum of collected n[k, a, b] over row_map[a] == i, col_map[b] == j``,
            a linear map of the collected counts.
        """
        if self.collected_from is None:
            return np.arange(len(self.row_labels)), np.arange(len(self.col_labels))
        return np.asarray(self.row_map), np.asarray(self.col_map)

    # ----------------------------------------------------------------------- statistics
    def pairs(self) -> dict[str, int | float]:
        """Counts of concordant, discordant and tied pairs of units.

        Returns
        -------
        dict
            See :func:`rankfold.concordance.pair_counts`; exact Python integers when the counts
            are whole numbers.

        Notes
        -----
        Counted on the table pooled over the control variable; the formulas and their source are in
        :func:`rankfold.concordance.pair_counts` (Agresti 2010, ch. 7).
        """
        return pair_counts(self._pooled())

    def measures(self, confidence: float = 0.95) -> pd.DataFrame:
        """Ordinal (and, for contrast, nominal) measures of association with inference.

        Parameters
        ----------
        confidence : float
            Confidence level of the intervals.

        Returns
        -------
        pandas.DataFrame
            Indexed by measure key: ``gamma``, ``somers_d_col_given_row``,
            ``somers_d_row_given_col``, ``somers_d_symmetric``, ``tau_b``, ``tau_c``,
            ``spearman_rho``, ``polychoric``, ``cramers_v`` and, for 2 x 2 tables, ``odds_ratio``,
            ``yules_q``, ``yules_y``, ``risk_difference``, ``relative_risk``. Columns
            ``estimate, std_error, ci_low, ci_high, std_error_null, z, p_value, note``.

        Notes
        -----
        ``std_error`` is the delta-method asymptotic standard error and the interval is
        ``estimate +/- z_(1-alpha/2) std_error`` clipped to the measure's range;
        ``std_error_null`` is the standard error under independence, ``z`` = estimate /
        ``std_error_null`` and ``p_value`` is two-sided normal. For the ratio measures
        (``odds_ratio``, ``relative_risk``) both standard errors and ``z`` refer to the
        logarithm of the estimate, and the interval is ``exp(log(estimate) +/- z_(1-alpha/2)
        std_error)``. An estimate on an end of its range (gamma = +/-1 when no pair is
        discordant, say) has no delta-method interval: NaN, with a note. With a control
        variable the table is pooled over its levels and treated as one sample. Formulas and
        sources are in :func:`rankfold.ordinal_measures.ordinal_measure_arrays` and
        :func:`rankfold.two_by_two.two_by_two_measures`; undefined measures are NaN with the
        reason in ``note``. An association is not evidence of a cause, and choosing
        a coding because it gives the strongest value inflates false findings.

        The table keeps the result for each confidence level (it is immutable), so a second
        call costs a copy; every call returns a frame of its own.

        References
        ----------
        Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
        """
        return self._once(("measures", confidence), lambda: measures_frame(
            self._pooled(), sampling=self._sampling(), confidence=confidence,
            extra_note=self._non_substantive_note(), latent=self._latent_fit()))

    def _latent_fit(self) -> dict:
        """:func:`~rankfold.polychoric.polychoric_arrays` of the pooled table, fitted once per
        table: :meth:`measures` (its polychoric row) and :meth:`tests` (the fit of the latent
        normal) share it."""
        found = self._kept.get("latent fit")
        if found is None:
            found = self._kept["latent fit"] = polychoric_arrays(self._pooled(), self._sampling())
        return found

    def _once(self, key: tuple, compute) -> pd.DataFrame:
        """``compute()``'s frame, computed on the first call with this key (the last item the
        confidence level) and copied out."""
        interval_quantile(key[-1])  # a bad confidence is refused before it is looked up
        found = self._kept.get(key)
        if found is None:
            found = compute()
            self._kept[key] = found
        return found.copy()

    def tests(self, scores: str | Sequence[Sequence[float]] | None = None) -> pd.DataFrame:
        """Tests of independence: Pearson X², likelihood-ratio G², linear trend M² = (n − 1) r².

        Parameters
        ----------
        scores : {'positions', 'midranks'} or (row_scores, col_scores), optional
            Category scores of the linear trend test (default: positions 1, 2, ...).

        Returns
        -------
        pandas.DataFrame
            See :func:`rankfold.independence.tests_frame` (on the table pooled over the control
            variable). A table with a control variable adds ``cmh_correlation`` (association
            within levels, same
            scores, midranks taken within each level) and ``gamma_homogeneity``, see
            :func:`rankfold.control_variable.control_tests`. The row ``latent_normal_fit`` is
            the G² test of the latent bivariate normal behind the polychoric correlation, on
            ``IJ - I - J`` degrees of freedom (Olsson 1979, Psychometrika 44:443; see
            :func:`rankfold.polychoric.polychoric`).
        """
        frame = tests_frame(self._pooled(), scores, sampling=self._sampling())
        latent = polychoric(self._pooled(), self._sampling(), fitted=self._latent_fit())
        fit = pd.DataFrame(
            {"statistic": latent.fit_statistic, "df": latent.fit_df,
             "p_value": latent.fit_p_value, "note": latent.fit_note},
            index=pd.Index(["latent_normal_fit"], name=frame.index.name),
        )
        parts = [frame, fit]
        if self.control_name is not None:
            parts.append(control_tests(self, scores))
        return pd.concat(parts)

    def permutation_test(
        self,
        measure: str = "gamma",
        n_resamples: int = 9999,
        seed: int | np.random.Generator | None = None,
    ) -> PermutationResult:
        """Monte Carlo permutation p-value of a measure with both margins fixed.

        It permutes units, so it is not available for sampling weights, and it ignores levels
        (it tests the pooled table).

        Parameters
        ----------
        measure : str
            An ordinal measure key such as ``gamma`` or ``tau_b``.
        n_resamples : int
            Number of random tables drawn.
        seed : int or numpy.random.Generator, optional
            For a reproducible result.

        Returns
        -------
        PermutationResult

        Raises
        ------
        ValueError
            For a table with sampling weights.

        Notes
        -----
        Tables are drawn and the p-value counted as in
        :func:`rankfold.independence.permutation_test` (Patefield 1981; Davison & Hinkley
        1997, ch. 4), which lists the references.
        """
        if self.weight_kind == "sampling":
            raise ValueError(
                "The permutation test shuffles units, which sampling weights do not describe; "
                "use the design-based z tests of measures() instead."
            )
        return permutation_test(self._pooled(), measure, n_resamples, seed)

    def diagnostics(self) -> Diagnostics:
        """Expected counts, adjusted residuals, pair contributions and sparse-cell figures.

        Returns
        -------
        Diagnostics
            Computed by :func:`rankfold.diagnostics.diagnose` on the table pooled over
            levels; :attr:`Diagnostics.sources` names the published source of each figure.
            With sampling weights the sparse-cell figures count records per cell, not
            weighted totals.
        """
        if self.weight_kind != "sampling" or self.records is None:
            return diagnose(self.counts)
        counts = self.counts
        records = pd.DataFrame(
            np.asarray(self.records).sum(axis=0), index=counts.index, columns=counts.columns
        )
        return diagnose(counts, records=records)

    # ---------------------------------------------------------------------------- levels
    @property
    def control_counts(self) -> pd.DataFrame:
        """Each level's table, stacked, index (level, row).

        See :func:`rankfold.control_variable.control_counts`.
        """
        return control_counts(self)

    def control_table(self, label: Hashable) -> OrdinalTable:
        """One level as a table of its own; see :func:`rankfold.control_variable.single_level`.

        Parameters
        ----------
        label : hashable
            One of :attr:`control_labels`.

        Returns
        -------
        OrdinalTable
            Without a level, with that level's cells (and survey-weight figures).
        """
        return single_level(self, label)

    def control_measures(self, confidence: float = 0.95) -> pd.DataFrame:
        """The measures of each level's own table, index (level, measure).

        Parameters
        ----------
        confidence : float
            Confidence level of the intervals, strictly between 0 and 1, the same for every
            level.

        Returns
        -------
        pandas.DataFrame
            See :func:`rankfold.control_variable.control_measures`; each level's rows are computed
            as in
            :meth:`measures`, which gives the formulas and sources. Kept per confidence level
            like :meth:`measures`; every call returns a frame of its own.
        """
        return self._once(("control_measures", confidence),
                          lambda: control_measures(self, confidence))

    def partial_measures(
        self, confidence: float = 0.95, control_totals: str = "random"
    ) -> pd.DataFrame:
        """Partial gamma: the association within levels, pooled (Davis 1967, JASA 62:189).

        Compare with :meth:`control_measures` and the ``gamma_homogeneity`` row of :meth:`tests`
        before reporting a single value.

        Parameters
        ----------
        confidence : float
            Level of its Wald interval, strictly between 0 and 1.
        control_totals : {'random', 'fixed'}
            How the level sizes arose, for the standard error: ``"random"`` (default; the
            level of a unit is random, one multinomial over every cell, or with sampling
            weights all records one sample) or ``"fixed"`` (sizes fixed by the design:
            each level a sample of its own).

        Returns
        -------
        pandas.DataFrame
            A single ``partial_gamma`` row (see :func:`rankfold.control_variable.partial_measures`)
            with the columns of :meth:`measures`.

        References
        ----------
        Davis, J. A. (1967). A partial coefficient for Goodman and Kruskal's gamma. JASA 62,
        189-193.
        """
        return partial_measures(self, confidence, control_totals)

    def cumulative_logit(
        self,
        response: str = "cols",
        scores: str | Sequence[float] | None = None,
        confidence: float = 0.95,
    ) -> pd.DataFrame:
        """The proportional-odds (cumulative-logit) model of one variable on the other.

        Fits ``logit P(Y <= j | x) = alpha_j - beta x`` (McCullagh 1980, JRSS B 42:109), with
        ``Y`` the ``response`` variable and ``x`` the other variable's scores; with a control
        variable, each level has its own cut-points ``alpha_kj`` and the slope is common.

        Parameters
        ----------
        response : {'cols', 'rows'}
            The variable whose cumulative odds are modelled.
        scores : {'positions', 'midranks'} or sequence of float, optional
            Scores of the other variable: positions 1, 2, ... (default), midranks, or one
            increasing number per category. Merging categories of the scored variable
            changes what one step of ``x`` means, so the slope is only comparable across
            codings that keep that variable's categories.
        confidence : float
            Confidence level of the Wald intervals.

        Returns
        -------
        pandas.DataFrame
            Row ``slope`` (beta, the log cumulative odds ratio per step of ``x``, with its
            standard error, interval, z and p), then one row per cut-point; ``frame.attrs``
            holds the deviance and the likelihood-ratio test of proportional odds against
            separate slopes per cut-point. See
            :func:`rankfold.cumulative_logit.cumulative_logit_frame`.

        References
        ----------
        McCullagh, P. (1980). Regression models for ordinal data. JRSS B 42, 109-142.
        """
        controlled = self.control_name is not None
        sampling = Sampling()
        if self.squared_weights is not None:
            squared = self.squared_weights if controlled else self.squared_weights.sum(axis=0)
            sampling = Sampling(squared, float(np.asarray(self.records).sum()))
        return cumulative_logit_frame(
            self.cells if controlled else self._pooled(), response=response, scores=scores,
            sampling=sampling, confidence=confidence, row_labels=self.row_labels,
            col_labels=self.col_labels,
            control_labels=self.control_labels if controlled else None,
        )

    # --------------------------------------------------------------------- coding steps
    def _labels(self, axis: int) -> tuple:
        return self.row_labels if axis == 1 else self.col_labels

    def _variable(self, axis: int) -> str:
        return self.row_name if axis == 1 else self.col_name

    def _with_axis(
        self, axis: int, labels: tuple, index: list[list[int]], step: Step
    ) -> OrdinalTable:
        """New table whose category k on ``axis`` sums old categories ``index[k]``."""

        def regroup(cells: np.ndarray | None) -> np.ndarray | None:
            if cells is None:
                return None
            parts = [np.take(cells, idx, axis=axis).sum(axis=axis) for idx in index]
            if not parts:
                shape = list(cells.shape)
                shape[axis] = 0
                return np.zeros(shape, dtype=cells.dtype)
            return np.stack(parts, axis=axis)

        key = "row_labels" if axis == 1 else "col_labels"
        maps = list(self.coding_maps())
        moved = np.full(len(self._labels(axis)), -1)
        for k, members in enumerate(index):
            moved[members] = k
        old = maps[axis - 1]
        maps[axis - 1] = np.where(old >= 0, moved[np.maximum(old, 0)], -1)
        return replace(
            self,
            collected_from=self.collected,
            row_map=tuple(int(x) for x in maps[0]),
            col_map=tuple(int(x) for x in maps[1]),
            cells=regroup(self.cells),
            squared_weights=regroup(self.squared_weights),
            records=regroup(self.records),
            steps=(*self.steps, step),
            **{key: labels},
        )

    def _positions(self, axis: int, labels: Sequence[Hashable], what: str) -> list[int]:
        current = self._labels(axis)
        where = {label: k for k, label in enumerate(current)}
        missing = [x for x in labels if x not in where]
        if missing:
            raise ValueError(
                f"Cannot {what}: {missing} not among the {self._variable(axis)!r} categories "
                f"{list(current)}."
            )
        if len(set(labels)) != len(labels):
            raise ValueError(f"Cannot {what}: a label is given twice in {list(labels)}.")
        return [where[x] for x in labels]

    def merge(
        self,
        axis: str,
        groups: Sequence[Sequence[Hashable]],
        labels: Sequence[Hashable] | None = None,
    ) -> OrdinalTable:
        """Merge groups of adjacent categories into one category each.

        Parameters
        ----------
        axis : {'rows', 'cols'}
            Which variable to recode.
        groups : sequence of sequences of labels
            Each group lists neighbouring categories to merge; categories in no group stay
            as they are.
        labels : sequence, optional
            New label for each group; default ``"first to last"`` of the categories as
            counted that the group covers (merging an earlier ``"40 to 59"`` with ``"60+"``
            gives ``"40 to 60+"``; see :func:`rankfold.steps.default_merge_label`). The joiner
            is a word, so ranges inside labels (``"2–5 km"``) stay unambiguous.

        Returns
        -------
        OrdinalTable
            A new table; the counts of a merged category are the sums of its members.

        Raises
        ------
        ValueError
            If a label is unknown or used twice, or a group is not a run of neighbours in the
            order (merging non-neighbours would break the order).
        """
        ax = _check_axis(axis)
        current = self._labels(ax)
        if isinstance(groups, (str, bytes)) or not all(
            isinstance(g, Sequence) and not isinstance(g, (str, bytes)) for g in groups
        ):
            raise ValueError(
                "groups must be a list of lists of labels, e.g. [['agree', 'strongly agree']]."
            )
        flat = [x for g in groups for x in g]
        self._positions(ax, flat, "merge")
        if labels is not None:
            labels = label_list(labels, "labels")
        if labels is not None and len(labels) != len(groups):
            raise ValueError(
                f"Give one label per group: {len(groups)} groups, {len(labels)} labels."
            )
        owner: dict[int, int] = {}
        for k, group in enumerate(groups):
            pos = sorted(self._positions(ax, list(group), "merge"))
            if not pos:
                raise ValueError("A merge group is empty; every group needs at least one label.")
            if pos != list(range(pos[0], pos[-1] + 1)):
                raise ValueError(
                    f"Cannot merge {list(group)}: they are not neighbours in the order of "
                    f"{self._variable(ax)!r} ({list(current)}). Merging categories that are not "
                    "adjacent would break the ordering; reorder first if the order is wrong."
                )
            for p in pos:
                owner[p] = k
        new_groups: list[list[int]] = []
        new_labels: list[Hashable] = []
        k = 0
        while k < len(current):
            if k in owner:
                g = owner[k]
                members = [p for p in range(len(current)) if owner.get(p) == g]
                new_groups.append(members)
                chosen = labels[g] if labels is not None else None
                new_labels.append(chosen if chosen is not None else default_merge_label(
                    self.steps, self._variable(ax), [current[p] for p in members]))
                k = members[-1] + 1
            else:
                new_groups.append([k])
                new_labels.append(current[k])
                k += 1
        if len(set(new_labels)) != len(new_labels):
            raise ValueError(
                f"The merged labels {new_labels} are not all distinct; "
                "pass labels= to name the groups."
            )
        step = MergeStep(
            axis=axis,
            variable=self._variable(ax),
            groups=tuple(tuple(current[p] for p in g) for g in new_groups),
            labels=tuple(new_labels),
        )
        return self._with_axis(ax, tuple(new_labels), new_groups, step)

    def exclude(self, axis: str, labels: Sequence[Hashable]) -> OrdinalTable:
        """Leave out the units in some categories (e.g. a non-substantive answer).

        Parameters
        ----------
        axis : {'rows', 'cols'}
            Which variable.
        labels : sequence of labels
            Categories to drop (a single label may be given alone).

        Returns
        -------
        OrdinalTable
            A new table without those categories.
        """
        ax = _check_axis(axis)
        if not pd.api.types.is_list_like(labels):  # one label, of any type
            labels = [labels]
        drop = set(self._positions(ax, list(labels), "exclude"))
        current = self._labels(ax)
        keep = [k for k in range(len(current)) if k not in drop]
        if not keep:
            raise ValueError(
                f"Excluding {list(labels)} would leave {self._variable(ax)!r} with no category."
            )
        step = ExcludeStep(axis=axis, variable=self._variable(ax), labels=tuple(labels))
        return self._with_axis(ax, tuple(current[k] for k in keep), [[k] for k in keep], step)

    def reorder(self, axis: str, labels: Sequence[Hashable]) -> OrdinalTable:
        """Put the categories of one variable in a new order.

        Parameters
        ----------
        axis : {'rows', 'cols'}
            Which variable.
        labels : sequence of labels
            All current categories, in the new order.

        Returns
        -------
        OrdinalTable
        """
        ax = _check_axis(axis)
        current = self._labels(ax)
        labels = label_list(labels, "labels")
        pos = self._positions(ax, labels, "reorder")
        if len(pos) != len(current):
            left = [x for x in current if x not in set(labels)]
            raise ValueError(f"reorder needs every category once; missing: {left}.")
        step = OrderStep(
            axis=axis, variable=self._variable(ax), labels=tuple(labels), origin="reorder"
        )
        return self._with_axis(ax, tuple(labels), [[p] for p in pos], step)

    def transpose(self) -> OrdinalTable:
        """The same table with rows and columns swapped (steps are kept).

        Returns
        -------
        OrdinalTable
            Rows become columns and columns rows, so ``somers_d_col_given_row`` of the result
            is ``somers_d_row_given_col`` of this table.
        """

        def swap(cells):
            return None if cells is None else np.swapaxes(cells, 1, 2)

        return replace(
            self,
            cells=swap(self.cells),
            squared_weights=swap(self.squared_weights),
            records=swap(self.records),
            row_name=self.col_name,
            col_name=self.row_name,
            row_labels=self.col_labels,
            col_labels=self.row_labels,
            steps=tuple(
                replace(s, axis="cols" if s.axis == "rows" else "rows") for s in self.steps
            ),
            # the counts as transposed, so that to_code replays only the steps taken after
            origin=Origin(
                "counts",
                {
                    "cells": swap(self.cells).sum(axis=0).tolist(),
                    "row_labels": self.col_labels,
                    "col_labels": self.row_labels,
                    "row_name": self.col_name,
                    "col_name": self.row_name,
                },
            ),
            initial_steps=len(self.steps),
            collected_from=None,
            row_map=None,
            col_map=None,
        )

    # ------------------------------------------------------------------- reproducibility
    def to_code(self, data_name: str = "df") -> str:
        """Python source that rebuilds this table (and its measures) with rankfold calls.

        Parameters
        ----------
        data_name : str
            Name of the DataFrame variable in the reader's notebook (a table counted from
            files names their path instead).

        Returns
        -------
        str
            Code that runs as printed, given ``data_name`` bound to the original data.
        """
        args = self.origin.arguments
        if self.origin.kind == "frame":
            source = repr(args["source"]) if "source" in args else data_name  # files by path
            parts = [source, repr(args["row"]), repr(args["col"])]
            for key in ("control", "weight"):
                if args.get(key) is not None:
                    parts.append(f"{key}={args[key]!r}")
            if args.get("weight_kind", "frequency") != "frequency":
                parts.append(f"weight_kind={args['weight_kind']!r}")
            for key in ("order", "exclude"):
                if args.get(key):
                    inner = ", ".join(f"{k!r}: {_list_literal(v)}" for k, v in args[key].items())
                    parts.append(f"{key}={{{inner}}}")
            if not args.get("dropna", True):
                parts.append("dropna=False")
            if self.non_substantive_extra is None:
                parts.append("non_substantive=False")
            elif self.non_substantive_extra:
                parts.append(f"non_substantive={_list_literal(self.non_substantive_extra)}")
            call = f"rankfold.table({', '.join(parts)})"
        else:
            counts = np.asarray(
                self.cells.sum(axis=0) if args.get("cells") is None else args["cells"]
            )
            as_list = counts.tolist()
            call = (
                f"rankfold.table_from_counts(\n        {as_list!r},\n"
                f"        row_labels={_list_literal(args.get('row_labels', self.row_labels))},\n"
                f"        col_labels={_list_literal(args.get('col_labels', self.col_labels))},\n"
                f"        row_name={args.get('row_name', self.row_name)!r}, "
                f"col_name={args.get('col_name', self.col_name)!r},\n    )"
            )
        lines = ["import pandas as pd", "import rankfold", "", "table = (", f"    {call}"]
        for index, step in enumerate(self.steps[self.initial_steps :], self.initial_steps):
            if isinstance(step, MergeStep):
                pairs = [
                    (g, lab) for g, lab in zip(step.groups, step.labels, strict=True) if len(g) > 1
                ]
                groups = "[" + ", ".join(_list_literal(g) for g, _ in pairs) + "]"
                custom = [lab for g, lab in pairs
                          if lab != default_merge_label(self.steps[:index], step.variable, g)]
                tail = f", labels={_list_literal([lab for _, lab in pairs])}" if custom else ""
                lines.append(f"    .merge({step.axis!r}, {groups}{tail})")
            elif isinstance(step, ExcludeStep):
                lines.append(f"    .exclude({step.axis!r}, {_list_literal(step.labels)})")
            else:
                lines.append(f"    .reorder({step.axis!r}, {_list_literal(step.labels)})")
        lines += [")", "measures = table.measures()", ""]
        return "\n".join(lines)

    def __repr__(self) -> str:
        control = (
            f", controlled by {self.control_name!r} ({len(self.control_labels)})"
            if self.control_name
            else ""
        )
        weight = f", weighted by {self.weight!r} ({self.weight_kind})" if self.weight else ""
        n = self.n
        total = f"n={n}" if isinstance(n, int) else f"weighted total={n:,.1f}"
        if self.records is not None:
            total += f", respondents={int(self.records.sum()):,}"
        return (
            f"<OrdinalTable {self.row_name!r} ({len(self.row_labels)}) x {self.col_name!r} "
            f"({len(self.col_labels)}), {total}{control}{weight}, {len(self.steps)} steps>\n"
            f"{self.counts!r}"
        )
