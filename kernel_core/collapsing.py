"""Every coding of an ordered table by merging neighbouring categories, and a rule to pick one.

A coding of an axis with ``I`` ordered categories says which of the ``I - 1`` boundaries between
neighbours are kept; there are ``2**(I - 1)`` of them (the compositions of ``I``). A coding is
stored as a bitmask of kept boundaries, its *cuts*: bit ``k`` set means categories ``k`` and
``k + 1`` stay apart, so ``2**(I - 1) - 1`` is the axis as collected and ``0`` merges it all.

The sweep evaluates every pair of row and column codings at once: codings with the same
collapsed shape form one batch, whose merged tables come from two matrix products and whose
measures come from :mod:`rankfold.merge_sweep_kernel` (the formulas and the one variance rule
of :mod:`rankfold.ordinal_measures`, with the batch kept last so that tiny tables run fast).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property

import numpy as np
import pandas as pd

from .control_variable import partial_gamma_arrays
from .cumulative_logit import cumulative_logit_arrays
from .diagnostics import sparse_cell_figures
from .measure_table import measure_label
from .merge_sweep_kernel import (
    SWEEP_KERNEL_MEASURES,
    batch_view,
    interval_positions,
    merge_matrices,
    merged_cells,
    one_thread_product,
    paired_change_variance,
    rectangle_moments,
    sweep_measure_arrays,
)
from .ordinal_measures import ORDINAL_MEASURES, Sampling, delta_variance, ordinal_measure_arrays
from .ordinal_table import OrdinalTable
from .polychoric import polychoric_arrays
from .steps import MergeStep, merged_label

__all__ = [
    "DEFAULT_MAX_SCHEMES",
    "DEFAULT_SWEEP_MEASURES",
    "LATENT_MEASURES",
    "RULES",
    "CollapsingSuggestion",
    "apply_coding",
    "coding_groups",
    "coding_of",
    "count_codings",
    "range_sentence",
    "rule_met",
    "suggest_collapsing",
    "sweep",
    "sweep_chunks",
    "sweep_ranges",
]

DEFAULT_SWEEP_MEASURES = (
    "gamma",
    "somers_d_col_given_row",
    "somers_d_row_given_col",
    "tau_b",
    "tau_c",
)
DEFAULT_MAX_SCHEMES = 300_000
DEFAULT_CHUNK_SIZE = 10_000
AXES_CHOICES = ("both", "rows", "cols")
PARTIAL = "partial_gamma"
#: Measures of an assumed continuous scale underneath, which merging neighbouring categories
#: should leave unchanged under their models (opt in: they cost iterations per coding).
LATENT_MEASURES = ("polychoric", "cumulative_logit")

#: Sparse-cell rules :func:`suggest_collapsing` can apply, with their default thresholds.
RULES = {
    "cochran": None,
    "min_expected": 5.0,
    "min_category_size": None,
}

Progress = Callable[[int, int], None]


# --------------------------------------------------------------------------- axis codings
@dataclass(frozen=True)
class _AxisCodings:
    """The admissible codings of one axis, ordered by number of categories, then cuts."""

    size: int
    cuts: np.ndarray  # (M,) bitmasks
    groups: np.ndarray  # (M,) number of categories of each coding

    def group_of(self, selection: np.ndarray) -> np.ndarray:
        """For codings ``selection``, the merged category each original category falls in."""
        bits = (self.cuts[selection][:, None] >> np.arange(self.size - 1)) & 1
        return np.hstack([np.zeros((len(bits), 1), dtype=np.int64), np.cumsum(bits, axis=1)])

    def bounds(self, selection: np.ndarray) -> np.ndarray:
        """Category boundaries ``0 = b_0 < ... < b_g = size`` of codings with equal ``g``."""
        cuts = self.cuts[selection]
        bits = (cuts[:, None] >> np.arange(self.size - 1)) & 1
        _, kept = np.nonzero(bits)
        inner = (kept + 1).reshape(len(cuts), -1)
        edge = np.ones((len(cuts), 1), dtype=np.int64)
        return np.hstack([0 * edge, inner, self.size * edge])


def _count_codings(size: int, min_categories: int) -> int:
    """Codings of an axis of ``size`` categories keeping at least ``min_categories``."""
    return sum(math.comb(size - 1, g - 1) for g in range(min_categories, size + 1))


def _axis_codings(size: int, swept: bool, min_categories: int) -> _AxisCodings:
    full = (1 << (size - 1)) - 1
    cuts = np.arange(full + 1, dtype=np.int64) if swept else np.array([full], dtype=np.int64)
    groups = np.array([int(c).bit_count() + 1 for c in cuts], dtype=np.int64)
    if swept:
        keep = groups >= min_categories
        cuts, groups = cuts[keep], groups[keep]
    order = np.lexsort((cuts, groups))
    return _AxisCodings(size, cuts[order], groups[order])


def _split(labels: Sequence, cuts: int) -> tuple[tuple, ...]:
    """The groups of ``labels`` that a cuts bitmask keeps apart."""
    groups, current = [], [labels[0]]
    for k in range(1, len(labels)):
        if (cuts >> (k - 1)) & 1:
            groups.append(tuple(current))
            current = []
        current.append(labels[k])
    groups.append(tuple(current))
    return tuple(groups)


def _check_cuts(cuts: object, labels: Sequence, axis: str) -> int:
    top = (1 << (len(labels) - 1)) - 1
    if not _is_whole(cuts):
        raise ValueError(f"{axis}_cuts must be a whole number (a bitmask); got {cuts!r}.")
    if not 0 <= int(cuts) <= top:
        raise ValueError(
            f"{axis}_cuts must lie between 0 (all {len(labels)} categories merged) and {top} "
            f"(as collected); got {cuts}. Take it from the row_cuts/col_cuts columns of sweep()."
        )
    return int(cuts)


def coding_groups(table: OrdinalTable, row_cuts: int, col_cuts: int) -> dict[str, tuple]:
    """The label groups that a pair of cuts bitmasks makes of a table's categories.

    Parameters
    ----------
    table : OrdinalTable
        The table that was swept.
    row_cuts, col_cuts : int
        Bitmasks of kept boundaries, as in the ``row_cuts`` and ``col_cuts`` columns of
        :func:`sweep`: bit ``k`` set keeps categories ``k`` and ``k + 1`` apart.

    Returns
    -------
    dict
        ``{"rows": groups, "cols": groups}``, each a tuple of tuples of neighbouring labels,
        ready for :meth:`OrdinalTable.merge`.

    Notes
    -----
    The ``2**(I - 1)`` bitmasks of ``I - 1`` boundaries are the compositions of ``I``
    (Stanley 2012, Enumerative Combinatorics I, 2nd ed., sec. 1.2).
    """
    _check_table(table)
    rows = _split(table.row_labels, _check_cuts(row_cuts, table.row_labels, "row"))
    cols = _split(table.col_labels, _check_cuts(col_cuts, table.col_labels, "col"))
    return {"rows": rows, "cols": cols}


def apply_coding(table: OrdinalTable, row_cuts: int, col_cuts: int) -> OrdinalTable:
    """The table with one coding of the sweep applied through :meth:`OrdinalTable.merge`.

    Parameters
    ----------
    table : OrdinalTable
        The table that was swept (not modified).
    row_cuts, col_cuts : int
        The coding, as in the ``row_cuts`` and ``col_cuts`` columns of :func:`sweep`.

    Returns
    -------
    OrdinalTable
        A new table with the merges recorded as steps (the same table when nothing merges).
    """
    result = table
    for axis, groups in coding_groups(table, row_cuts, col_cuts).items():
        merged = [list(g) for g in groups if len(g) > 1]
        if merged:
            result = result.merge(axis, merged)
    return result


def coding_of(table: OrdinalTable, recoded: OrdinalTable) -> tuple[int, int] | None:
    """The coding of ``table`` that ``recoded`` is, as ``(row_cuts, col_cuts)``.

    Parameters
    ----------
    table : OrdinalTable
        The table that was swept.
    recoded : OrdinalTable
        A table derived from it.

    Returns
    -------
    tuple of int, or None
        The cuts bitmasks (as in :func:`sweep`) when ``recoded`` is ``table`` followed by
        merges only; None when it took other steps (an exclusion, a new order) or comes from
        another table, so that it is not one of the swept codings.
    """
    _check_table(table)
    _check_table(recoded)
    done = len(table.steps)
    if recoded.steps[:done] != table.steps or not all(
        isinstance(step, MergeStep) for step in recoded.steps[done:]
    ):
        return None
    members = {
        "rows": {label: (label,) for label in table.row_labels},
        "cols": {label: (label,) for label in table.col_labels},
    }
    for step in recoded.steps[done:]:
        old = members[step.axis]
        members[step.axis] = {
            label: tuple(x for member in group for x in old[member])
            for group, label in zip(step.groups, step.labels, strict=True)
        }
    cuts = []
    for axis, labels in (("rows", recoded.row_labels), ("cols", recoded.col_labels)):
        ends = np.cumsum([len(members[axis][label]) for label in labels])[:-1]
        cuts.append(int(sum(1 << int(end - 1) for end in ends)))
    return cuts[0], cuts[1]


# ----------------------------------------------------------------------- checks and batches
def _check_table(table: object) -> None:
    if not isinstance(table, OrdinalTable):
        raise ValueError(
            f"Expected an OrdinalTable (from rankfold.table or rankfold.table_from_counts); got "
            f"{type(table).__name__}."
        )


def _is_whole(value: object) -> bool:
    return isinstance(value, (int, np.integer)) and not isinstance(value, (bool, np.bool_))


def _check_whole(name: str, value: object, low: int, alternative: str = "") -> None:
    if not _is_whole(value) or value < low:
        raise ValueError(
            f"{name} must be a whole number of at least {low}{alternative}; got {value!r}."
        )


def count_codings(table: OrdinalTable, *, axes: str = "both", min_categories: int = 2) -> int:
    """How many codings :func:`sweep` would evaluate, without evaluating any.

    Parameters
    ----------
    table, axes, min_categories
        As in :func:`sweep`.

    Returns
    -------
    int
        ``A_I * A_J`` with ``A_I = sum_(g >= min_categories) C(I - 1, g - 1)`` for a recoded
        axis of ``I`` categories (a coding into ``g`` categories keeps ``g - 1`` of the
        ``I - 1`` boundaries) and 1 for an axis kept as it is.
    """
    _check_table(table)
    if axes not in AXES_CHOICES:
        raise ValueError(f"axes must be one of {list(AXES_CHOICES)}; got {axes!r}.")
    _check_whole("min_categories", min_categories, 2)
    total = 1
    for axis, labels, name in (("rows", table.row_labels, table.row_name),
                               ("cols", table.col_labels, table.col_name)):
        if axes not in ("both", axis):
            continue
        if len(labels) < min_categories:
            raise ValueError(
                f"{name!r} has {len(labels)} categories, fewer than min_categories="
                f"{min_categories}, so no coding of it is admissible; lower min_categories or "
                f"sweep the other axis only (axes={'cols' if axis == 'rows' else 'rows'!r})."
            )
        total *= _count_codings(len(labels), min_categories)
    return total


def _plan(
    table: object, axes: str, min_categories: int, max_schemes: int | None, chunk_size: int
) -> tuple[_AxisCodings, _AxisCodings]:
    """Check the arguments and enumerate each axis's codings."""
    total = count_codings(table, axes=axes, min_categories=min_categories)
    _check_whole("chunk_size", chunk_size, 1)
    if max_schemes is not None:
        _check_whole("max_schemes", max_schemes, 1, " or None")
    sizes = {"rows": len(table.row_labels), "cols": len(table.col_labels)}
    if max_schemes is not None and total > max_schemes:
        alone = {axis: _count_codings(size, min_categories) for axis, size in sizes.items()}
        raise ValueError(
            f"Sweeping axes={axes!r} of this {sizes['rows']} x {sizes['cols']} table means "
            f"{total:,} codings, more than max_schemes={max_schemes:,}. Sweep one axis at a time "
            f"(axes='rows': {alone['rows']:,} codings; axes='cols': {alone['cols']:,}), raise "
            "min_categories, merge some categories first, or pass a larger max_schemes= "
            "(sweep_chunks keeps memory bounded, but time grows with the count)."
        )
    rows, cols = (_axis_codings(sizes[axis], axes in ("both", axis), min_categories)
                  for axis in sizes)
    return rows, cols


@dataclass(frozen=True)
class _Batch:
    """Codings of one collapsed shape ``(I', J')``: positions in each axis's list and the
    merged tables, cells first (``(I', J', B)``, see :mod:`rankfold.merge_sweep_kernel`).

    ``counts`` pools the levels of a control variable and ``squared`` the sums of squared
    sampling weights (None without them). ``observed`` is what sparseness is judged on:
    records per cell when the cells are sums of sampling weights, the counts otherwise.
    :meth:`level_cells` gives each level's merged tables, for partial gamma.
    """

    row_index: np.ndarray
    col_index: np.ndarray
    row_merge: np.ndarray
    col_merge: np.ndarray
    sources: _Sources

    def _merged(self, cells: np.ndarray) -> np.ndarray:
        return merged_cells(cells, self.row_merge, self.col_merge)

    @cached_property
    def counts(self) -> np.ndarray:
        return self._merged(self.sources.pooled)

    @cached_property
    def squared(self) -> np.ndarray | None:
        squared = self.sources.squared
        return None if squared is None else self._merged(squared.sum(axis=0))

    @cached_property
    def observed(self) -> np.ndarray:
        records = self.sources.records
        return self.counts if records is None else self._merged(records.sum(axis=0))

    @cached_property
    def block_layout(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Where each merged cell's block sits among all blocks a merge can make.

        Returns ``(position, row_runs, col_runs)``: ``position`` (I', J', B) numbers each
        merged cell's block (row run x column run, see
        :func:`~rankfold.merge_sweep_kernel.interval_positions`) in a flattened
        ``(runs_I, runs_J)`` array; ``row_runs`` (M_r, runs_I) and ``col_runs``
        (M_c, runs_J) mark the runs each coding uses.
        """
        found = []
        for merge in (self.row_merge, self.col_merge):
            size = merge.shape[-1]
            starts = merge.argmax(axis=-1)
            runs = interval_positions(size)[starts, starts + merge.sum(axis=-1).astype(int)]
            used = np.zeros((len(runs), size * (size + 1) // 2))
            used[np.arange(len(runs))[:, None], runs] = 1.0
            found.append((runs, used))
        (row_runs, row_used), (col_runs, col_used) = found
        position = (row_runs.T[:, None, :, None] * col_used.shape[1]
                    + col_runs.T[None, :, None, :])
        return position.reshape(*position.shape[:2], -1), row_used, col_used

    def level_cells(self) -> tuple[np.ndarray, np.ndarray | None]:
        """Each level's merged cells and squared weights, ``(B, K, I', J')`` (views)."""
        found = []
        for source in (self.sources.cells, self.sources.squared):
            if source is None:
                found.append(None)
                continue
            levels = np.stack([self._merged(level) for level in source])  # (K, I', J', B)
            found.append(np.moveaxis(levels, -1, 0))
        return found[0], found[1]


@dataclass(frozen=True)
class _Sources:
    """The swept table's cells as floats: per level ``(K, I, J)`` and pooled ``(I, J)``."""

    cells: np.ndarray
    squared: np.ndarray | None
    records: np.ndarray | None
    pooled: np.ndarray

    @classmethod
    def of(cls, table: OrdinalTable) -> _Sources:
        cells = np.asarray(table.cells, dtype=float)
        squared = (None if table.squared_weights is None
                   else np.asarray(table.squared_weights, dtype=float))
        records = None if squared is None else np.asarray(table.records, dtype=float)
        return cls(cells, squared, records, cells.sum(axis=0))


def _blocks(row_count: int, col_count: int, chunk_size: int) -> Iterator[tuple[slice, slice]]:
    """Rectangles of (row coding, column coding) positions of at most ``chunk_size`` pairs,
    in the order of the pairs flattened row by row."""
    if col_count <= chunk_size:
        step = chunk_size // col_count
        for start in range(0, row_count, step):
            yield slice(start, min(start + step, row_count)), slice(0, col_count)
        return
    for row in range(row_count):
        for start in range(0, col_count, chunk_size):
            yield slice(row, row + 1), slice(start, min(start + chunk_size, col_count))


def _batches(
    table: OrdinalTable,
    rows: _AxisCodings,
    cols: _AxisCodings,
    chunk_size: int,
    progress: Progress | None,
) -> Iterator[_Batch]:
    """Merged tables of every coding pair, by shape, at most ``chunk_size`` at a time."""
    sources = _Sources.of(table)
    total = len(rows.cuts) * len(cols.cuts)
    done = 0
    for r in np.unique(rows.groups):
        row_sel = np.flatnonzero(rows.groups == r)
        row_merge = merge_matrices(rows.group_of(row_sel), int(r))
        for c in np.unique(cols.groups):
            col_sel = np.flatnonzero(cols.groups == c)
            col_merge = merge_matrices(cols.group_of(col_sel), int(c))
            for row_block, col_block in _blocks(len(row_sel), len(col_sel), chunk_size):
                ri, ci = row_sel[row_block], col_sel[col_block]
                yield _Batch(
                    row_index=np.repeat(ri, len(ci)),
                    col_index=np.tile(ci, len(ri)),
                    row_merge=row_merge[row_block],
                    col_merge=col_merge[col_block],
                    sources=sources,
                )
                done += len(ri) * len(ci)
                if progress is not None:
                    progress(done, total)


def _sparse_columns(counts: np.ndarray) -> dict[str, np.ndarray]:
    """Sparse-cell figures of a batch (as in diagnose), with the category sizes the rules use."""
    n = counts.astype(float)
    rows, cols = n.sum(axis=-1), n.sum(axis=-2)
    figures = sparse_cell_figures(n)
    figures["smallest_category"] = np.minimum(rows.min(axis=-1), cols.min(axis=-1))
    figures["category_square_sum"] = (rows**2).sum(axis=-1) + (cols**2).sum(axis=-1)
    return figures


# ------------------------------------------------------------------------------- the sweep
def _check_measures(table: OrdinalTable, measures: Sequence[str]) -> tuple[str, ...]:
    if isinstance(measures, str):
        measures = (measures,)
    measures = tuple(measures)
    known = (*ORDINAL_MEASURES, *LATENT_MEASURES)
    if table.control_name is not None:
        known = (*known, PARTIAL)
    unknown = [m for m in measures if m not in known]
    if unknown or not measures or len(set(measures)) != len(measures):
        controlled = (
            "" if table.control_name is not None
            else f" ({PARTIAL!r} needs a table with a control variable)"
        )
        raise ValueError(
            f"measures must list distinct keys from {list(known)}{controlled}; "
            f"got {list(measures)}."
        )
    return measures


class _ChangeBase:
    """The swept table's own measures and gradients, for each coding's paired change.

    Variances run over every cell of every level of the control variable as one sample (the
    level of a unit random), as :func:`rankfold.coding_change.coding_change` does.
    """

    def __init__(self, table: OrdinalTable, measures: tuple[str, ...]) -> None:
        cells = table.cells.astype(float)
        self.counts = cells.reshape(-1, cells.shape[-1])  # (K * I, J)
        self.pooled_counts = cells.sum(axis=0)
        self.sampling = self.pooled = Sampling()
        if table.squared_weights is not None:
            records = float(np.asarray(table.records).sum())
            squared = np.asarray(table.squared_weights, dtype=float)
            self.sampling = Sampling(squared.reshape(self.counts.shape), records)
            self.pooled = Sampling(squared.sum(axis=0), records)
        found = ordinal_measure_arrays(self.pooled_counts, self.pooled, gradients=True)
        if "polychoric" in measures:
            found["polychoric"] = polychoric_arrays(self.pooled_counts, self.pooled)
        if PARTIAL in measures:
            weights = None if table.squared_weights is None else Sampling(
                table.squared_weights, np.asarray(table.records, float).sum(axis=(-2, -1)))
            found[PARTIAL] = partial_gamma_arrays(cells, weights)
        self.found = found
        self._moments: dict[str, tuple] = {}

    def moments(self, key: str) -> tuple[np.ndarray, np.ndarray, float]:
        """The swept table's gradient over every block a merge can make (for
        :func:`~rankfold.merge_sweep_kernel.paired_change_variance`), and ``sum n g0``."""
        if key not in self._moments:
            g0 = np.asarray(self.found[key]["gradient"], dtype=float)
            squared = self.pooled.squared
            weights = self.pooled_counts if squared is None else squared
            mean, within = rectangle_moments(weights, g0)
            self._moments[key] = mean.ravel(), within, float((self.pooled_counts * g0).sum())
        return self._moments[key]

    def change(self, key: str, estimate: np.ndarray, gradient: np.ndarray | None,
               batch: _Batch, groups: Callable[[], tuple[np.ndarray, np.ndarray]],
               ) -> tuple[np.ndarray, np.ndarray]:
        """Each coding's change from the swept table and its paired delta-method error.

        The coding's gradient is carried back to the swept table's cells it sums
        (``A^T g``), less the swept table's own gradient; the variance is the one rule on
        the swept table's counts (see :func:`rankfold.coding_change.coding_change`). A
        gradient of the pooled table is the same in every level of a control variable, so
        its variance over the levels' cells is that over the pooled cells; a gradient of the
        levels' cells (partial gamma) runs over every cell of every level. ``groups()`` gives
        the merged category of each original row and column of each coding.
        """
        base = self.found.get(key)
        if base is None or gradient is None:  # no gradient for this measure (yet): NaN
            return np.full(estimate.shape, np.nan), np.full(estimate.shape, np.nan)
        change = estimate - float(base["estimate"])
        g = np.asarray(gradient, dtype=float)
        if g.ndim == 3:  # pooled, (B, I', J')
            mean, within, base_linear = self.moments(key)
            position, row_used, col_used = batch.block_layout
            squared = self.pooled.squared
            var = paired_change_variance(
                np.moveaxis(g, 0, -1), batch.counts,
                batch.counts if squared is None else batch.squared, mean[position],
                one_thread_product(row_used, one_thread_product(within, col_used.T)).ravel(),
                base_linear,
                self.pooled.records)
            return change, np.where(np.isnan(change), np.nan, np.sqrt(var))
        row_groups, col_groups = groups()
        carried = np.take_along_axis(g, row_groups[:, None, :, None], axis=-2)
        carried = np.take_along_axis(carried, col_groups[:, None, None, :], axis=-1)
        difference = carried.reshape(len(g), -1, carried.shape[-1]) - np.asarray(
            base["gradient"], dtype=float).reshape(-1, carried.shape[-1])
        se = np.sqrt(delta_variance(self.counts, difference, self.sampling))
        return change, np.where(np.isnan(change), np.nan, se)


class _Columns:
    """Builds the sweep's columns for batches of one table."""

    def __init__(self, table: OrdinalTable, rows: _AxisCodings, cols: _AxisCodings,
                 measures: tuple[str, ...], changes: bool = False) -> None:
        self.rows, self.cols, self.measures = rows, cols, measures
        self.base = _ChangeBase(table, measures) if changes else None
        self.text = {
            axis: (
                pd.Index([" | ".join(merged_label(g) for g in _split(labels, int(c)))
                          for c in codings.cuts]),
                pd.Index(["+".join(str(len(g)) for g in _split(labels, int(c)))
                          for c in codings.cuts]),
            )
            for axis, labels, codings in (("row", table.row_labels, rows),
                                          ("col", table.col_labels, cols))
        }
        levels = len(table.control_labels)
        self.level_records = (
            None if table.records is None
            else np.asarray(table.records, dtype=float).reshape(levels, -1).sum(axis=-1)
        )

    def arrays(self, batch: _Batch) -> dict[str, np.ndarray]:
        out: dict[str, np.ndarray] = {
            "row_index": batch.row_index,
            "col_index": batch.col_index,
        }
        counts = batch.counts  # cells first, (I', J', B)
        if batch.squared is None:
            pooled = controlled = Sampling()
            records = None
        else:
            records = self.level_records.sum()
            pooled = Sampling(batch_view(batch.squared), records)
        gradients = self.base is not None
        found = sweep_measure_arrays(
            counts, [m for m in self.measures if m in SWEEP_KERNEL_MEASURES], batch.squared,
            records, gradients)
        if gradients:  # the changes take gradients batch first, (B, I', J')
            for key in found:
                found[key]["gradient"] = batch_view(found[key]["gradient"])
        others = [m for m in self.measures
                  if m in ORDINAL_MEASURES and m not in SWEEP_KERNEL_MEASURES]
        if others:  # spearman_rho: from the core's batched function, on a view of the batch
            general = ordinal_measure_arrays(batch_view(counts), pooled, gradients=gradients)
            found.update({m: general[m] for m in others})
        if PARTIAL in self.measures:
            cells, squared = batch.level_cells()
            if squared is not None:
                controlled = Sampling(squared, self.level_records)
            found[PARTIAL] = partial_gamma_arrays(cells, controlled)
        if "polychoric" in self.measures:
            found["polychoric"] = polychoric_arrays(np.ascontiguousarray(batch_view(counts)),
                                                    pooled)
        if "cumulative_logit" in self.measures:
            found["cumulative_logit"] = cumulative_logit_arrays(
                np.ascontiguousarray(batch_view(counts)), sampling=pooled)
        # As in measures(): with one non-empty category on either variable, every measure is
        # undefined (P - Q is 0 by construction, not by the data).
        busy = np.minimum((counts.sum(axis=1) > 0).sum(axis=0),
                          (counts.sum(axis=0) > 0).sum(axis=0)) >= 2
        for key in self.measures:
            estimate = np.where(busy, found[key]["estimate"], np.nan)
            out[key] = estimate
            out[f"{key}_std_error"] = np.where(np.isnan(estimate), np.nan, found[key]["std_error"])
            if self.base is not None:
                out[f"{key}_change"], out[f"{key}_change_se"] = self.base.change(
                    key, estimate, found[key].get("gradient"), batch,
                    lambda: (self.rows.group_of(batch.row_index),
                             self.cols.group_of(batch.col_index)))
        figures = _sparse_columns(batch_view(batch.observed))
        for key in ("share_expected_below_5", "min_expected", "zero_cells", "smallest_category"):
            out[key] = figures[key]
        return out

    def frame(self, arrays: Mapping[str, np.ndarray]) -> pd.DataFrame:
        ri, ci = arrays["row_index"], arrays["col_index"]
        data: dict[str, object] = {}
        for axis, index in (("row", ri), ("col", ci)):
            groups, sizes = self.text[axis]
            data[f"{axis}_groups"] = pd.Categorical.from_codes(index, categories=groups)
            data[f"{axis}_sizes"] = pd.Categorical.from_codes(index, categories=sizes)
        data["n_rows"] = self.rows.groups[ri]
        data["n_cols"] = self.cols.groups[ci]
        data["row_cuts"] = self.rows.cuts[ri]
        data["col_cuts"] = self.cols.cuts[ci]
        for key, values in arrays.items():
            if key not in ("row_index", "col_index"):
                data[key] = values
        return pd.DataFrame(data)


def sweep_chunks(
    table: OrdinalTable,
    *,
    axes: str = "both",
    min_categories: int = 2,
    measures: Sequence[str] = DEFAULT_SWEEP_MEASURES,
    max_schemes: int | None = DEFAULT_MAX_SCHEMES,
    chunk_size: int = DEFAULT_CHUNK_SIZE,
    progress: Progress | None = None,
    changes: bool = False,
) -> Iterator[pd.DataFrame]:
    """The collapsing sweep of :func:`sweep`, streamed as DataFrame chunks.

    Parameters
    ----------
    table, axes, min_categories, measures, max_schemes, progress, changes
        As in :func:`sweep`.
    chunk_size : int
        Most codings per chunk; memory use is bounded by it, whatever the number of codings.

    Yields
    ------
    pandas.DataFrame
        Consecutive rows of the :func:`sweep` frame (its columns, with a fresh index); every
        chunk holds codings of one collapsed shape.

    Raises
    ------
    ValueError
        For bad arguments, or when the codings outnumber ``max_schemes`` (checked before any
        work, so a chunk is never silently the last one).
    """
    rows, cols = _plan(table, axes, min_categories, max_schemes, chunk_size)
    columns = _Columns(table, rows, cols, _check_measures(table, measures), changes)
    for batch in _batches(table, rows, cols, chunk_size, progress):
        yield columns.frame(columns.arrays(batch))


def sweep(
    table: OrdinalTable,
    *,
    axes: str = "both",
    min_categories: int = 2,
    measures: Sequence[str] = DEFAULT_SWEEP_MEASURES,
    max_schemes: int | None = DEFAULT_MAX_SCHEMES,
    progress: Progress | None = None,
    changes: bool = False,
) -> pd.DataFrame:
    """Every coding obtained by merging neighbouring categories, with its measures.

    Parameters
    ----------
    table : OrdinalTable
        The table to recode (never modified). A table with a control variable is pooled over
        its levels, as
        in :meth:`OrdinalTable.measures`.
    axes : {'both', 'rows', 'cols'}
        Which variables to recode; the other keeps its categories as they are.
    min_categories : int
        Fewest categories a recoded axis may keep (at least 2).
    measures : sequence of str
        Keys from :data:`rankfold.ordinal_measures.ORDINAL_MEASURES`; ``"polychoric"``
        (:func:`rankfold.polychoric.polychoric_arrays`) and ``"cumulative_logit"`` (the
        proportional-odds slope of the column variable on the row positions,
        :func:`rankfold.cumulative_logit.cumulative_logit_arrays`), which assume a continuous
        scale underneath and should not move when neighbouring categories merge (the slope
        only for merges of the column variable: merging rows changes what one step means);
        and, for a table with a control variable, ``"partial_gamma"`` (within-level pairs
        pooled, Davis 1967, JASA 62:189; see
        :func:`rankfold.control_variable.partial_gamma_arrays`; its standard error takes the
        level of each unit as random, the default of ``partial_measures()``).
    max_schemes : int or None
        Refuse (with a ValueError saying what to do instead) when there are more codings than
        this; None for no limit. The default admits a full 10 x 10 sweep (261,121 codings).
    progress : callable, optional
        ``progress(done, total)`` is called after each batch with the number of codings
        evaluated so far and in all, e.g. to drive a progress bar.
    changes : bool
        Also give each measure's change from the swept table (``<key>_change``, this
        coding's estimate less the table's own) and its paired delta-method standard error
        (``<key>_change_se``; see :func:`rankfold.coding_change.coding_change`): both come
        from the same units, so this error is far smaller than either estimate's. Pass
        ``t.collected`` to measure changes from the table as collected. Not (yet) for
        ``cumulative_logit``, whose change columns are then NaN.

    Returns
    -------
    pandas.DataFrame
        One row per coding, ordered by ``n_rows``, ``n_cols`` and then the cuts. Columns:
        ``row_groups`` / ``col_groups`` (the merged categories, e.g. ``"1 to 2 | 3 | 4 to 5"``),
        ``row_sizes`` / ``col_sizes`` (how many original categories each keeps, e.g.
        ``"2+1+2"``), ``n_rows`` / ``n_cols``, ``row_cuts`` / ``col_cuts`` (the coding as a
        bitmask of kept boundaries, for :func:`apply_coding`), each measure's estimate (column
        named by its key) and ``<key>_std_error``, and the sparse-cell figures
        ``share_expected_below_5``, ``min_expected`` and ``zero_cells`` (over non-empty rows
        and columns, as in :meth:`OrdinalTable.diagnostics`) and ``smallest_category`` (the
        smallest row or column total); with sampling weights these count records per cell,
        not weighted totals. An undefined measure is NaN, with its standard error;
        ``apply_coding(table, ...).measures()`` gives the reason.

    Raises
    ------
    ValueError
        For bad arguments or more codings than ``max_schemes``.

    See Also
    --------
    sweep_chunks : the same rows in chunks, with bounded memory.
    suggest_collapsing : a coding chosen by a sparse-cell rule that never looks at the measures.

    Notes
    -----
    An axis with ``I`` categories has ``2**(I - 1)`` codings (the compositions of ``I``;
    Stanley 2012, Enumerative Combinatorics I, 2nd ed., sec. 1.2), of which those with fewer
    than ``min_categories`` categories are left out; a 5 x 4 table gives 15 x 7 = 105 rows.
    Each merged table is ``R N C^T`` with 0/1 merge matrices ``R`` and ``C``; the estimates and
    delta-method standard errors are those of :meth:`OrdinalTable.measures` (sources in
    :func:`rankfold.ordinal_measures.ordinal_measure_arrays`; Agresti 2010, ch. 7).

    Each standard error holds for its coding fixed in advance. Picking the coding whose
    measure looks best after seeing this frame inflates false findings: fix the coding by a
    rule that ignores the association (:func:`suggest_collapsing`) or report the whole range.
    An association, under any coding, is not evidence of a cause.

    References
    ----------
    Agresti, A. (2010). Analysis of Ordinal Categorical Data, 2nd ed., Wiley, ch. 7.
    Cochran, W. G. (1954). Some methods for strengthening the common chi-square tests.
    Biometrics 10, 417-451.

    Examples
    --------
    >>> import rankfold
    >>> t = rankfold.table_from_counts([[8, 3, 1, 0], [4, 6, 3, 1], [1, 4, 7, 2], [0, 1, 3, 5],
    ...                                 [0, 0, 1, 2]])
    >>> len(rankfold.sweep(t))
    105
    """
    rows, cols = _plan(table, axes, min_categories, max_schemes, DEFAULT_CHUNK_SIZE)
    columns = _Columns(table, rows, cols, _check_measures(table, measures), changes)
    parts = [columns.arrays(b) for b in _batches(table, rows, cols, DEFAULT_CHUNK_SIZE, progress)]
    return columns.frame({key: np.concatenate([p[key] for p in parts]) for key in parts[0]})


def sweep_ranges(
    frame: pd.DataFrame,
    measures: Sequence[str] | None = None,
    rule: str = "cochran",
    threshold: float | None = None,
) -> pd.DataFrame:
    """How each measure spreads across codings, by categories kept and by a sparse-cell rule.

    Parameters
    ----------
    frame : pandas.DataFrame
        A :func:`sweep` frame.
    measures : sequence of str, optional
        Measure columns of the frame (default: every one it has).
    rule, threshold
        The sparse-cell rule that splits the codings, see :func:`rule_met`.

    Returns
    -------
    pandas.DataFrame
        One row per measure, number of categories kept (``n_rows + n_cols``) and whether the
        rule is met, with ``codings`` (how many, undefined values included), ``defined`` and
        the ``low``, ``lower_quartile``, ``median``, ``upper_quartile`` and ``high``
        estimates (quartiles by linear interpolation, numpy's default; NaN when none is
        defined).
    """
    known = [m for m in (*ORDINAL_MEASURES, *LATENT_MEASURES, PARTIAL) if m in frame.columns]
    measures = known if measures is None else list(measures)
    unknown = [m for m in measures if m not in known]
    if unknown or not measures:
        raise ValueError(
            f"measures must be among the frame's measure columns {known}; got {measures}."
        )
    keys = pd.DataFrame({
        "categories": frame["n_rows"].to_numpy() + frame["n_cols"].to_numpy(),
        "meets_rule": rule_met(frame, rule, threshold),
    })
    parts = []
    for measure in measures:
        grouped = frame[measure].groupby([keys["categories"], keys["meets_rule"]])
        part = pd.DataFrame({"codings": grouped.size(), "defined": grouped.count(),
                             "low": grouped.min()})
        quartiles = grouped.quantile([0.25, 0.5, 0.75]).unstack()
        part["lower_quartile"], part["median"], part["upper_quartile"] = (
            quartiles[0.25], quartiles[0.5], quartiles[0.75])
        part["high"] = grouped.max()
        parts.append(part.reset_index().assign(measure=measure))
    columns = ["measure", "categories", "meets_rule", "codings", "defined", "low",
               "lower_quartile", "median", "upper_quartile", "high"]
    return pd.concat(parts, ignore_index=True)[columns]


def range_sentence(frame: pd.DataFrame, row_name: str, col_name: str,
                   measures: Sequence[str] | None = None) -> str:
    """One plain sentence on how far the measures move across the swept codings, with a caution.

    Parameters
    ----------
    frame : pandas.DataFrame
        A :func:`sweep` frame.
    row_name, col_name : str
        Variable names, for the measure labels.
    measures : sequence of str, optional
        Measure columns to describe (default: every one the frame has).

    Returns
    -------
    str
        For example ``"Across 3,969 codings, Goodman–Kruskal gamma runs from 0.21 to 0.48;
        ..."``, followed by the caution against choosing a coding for its result.
    """
    ranges = sweep_ranges(frame, measures)
    parts = []
    for measure, rows in ranges.groupby("measure", sort=False):
        label = measure_label(measure, row_name, col_name)
        if rows["defined"].sum() == 0:
            parts.append(f"{label} is undefined throughout")
        else:
            parts.append(f"{label} runs from {rows['low'].min():.3f} to {rows['high'].max():.3f}")
    return (
        f"Across {len(frame):,} codings, " + "; ".join(parts) + ". Each interval and p-value "
        "assumes the coding was fixed before looking at the association: picking the coding "
        "whose result looks best inflates false findings, so fix it by a rule that ignores the "
        "association (such as a sparse-cell rule) and report this range beside your value."
    )


# --------------------------------------------------------------------------- the guidance
def _check_rule(rule: str, threshold: float | None) -> float | None:
    if rule not in RULES:
        raise ValueError(f"rule must be one of {list(RULES)}; got {rule!r}.")
    if rule == "cochran":
        if threshold is not None:
            raise ValueError("rule='cochran' has fixed limits (1 and 5); leave threshold unset.")
        return None
    if threshold is None:
        threshold = RULES[rule]
    if threshold is None:
        raise ValueError(
            f"rule={rule!r} needs threshold=, the fewest units every row and column category "
            "must hold (e.g. threshold=30)."
        )
    if isinstance(threshold, bool) or not isinstance(threshold, (int, float, np.number)) or not (
        np.isfinite(threshold) and threshold > 0
    ):
        raise ValueError(f"threshold must be a positive number; got {threshold!r}.")
    return float(threshold)


def _describe_rule(rule: str, threshold: float | None) -> str:
    if rule == "cochran":
        return ("Cochran's rule: no expected count below 1 and at most 20% of cells below 5 "
                "(Cochran 1954, Biometrics 10:417)")
    if rule == "min_expected":
        return f"every expected count at least {threshold:g}"
    return f"every row and column category holds at least {threshold:g} units"


def rule_met(
    figures: Mapping[str, object], rule: str = "cochran", threshold: float | None = None
) -> np.ndarray:
    """Which codings meet a sparse-cell rule, from their sparse-cell figures.

    Parameters
    ----------
    figures : DataFrame or mapping of arrays
        A :func:`sweep` frame, or anything with its ``share_expected_below_5``,
        ``min_expected`` and ``smallest_category`` columns.
    rule : {'cochran', 'min_expected', 'min_category_size'}
        ``'cochran'``: no expected count below 1 and at most 20% below 5 (Cochran 1954,
        Biometrics 10:417-451). ``'min_expected'``: every expected count at least
        ``threshold`` (default 5; common practice). ``'min_category_size'``: every row and
        column total at least ``threshold`` (no default; common practice).
    threshold : float, optional
        The limit of the last two rules.

    Returns
    -------
    ndarray of bool
        One entry per coding. Expected counts are over non-empty rows and columns; with
        sampling weights they count records (respondents), with frequency weights units.
    """
    threshold = _check_rule(rule, threshold)
    needed = ("share_expected_below_5", "min_expected", "smallest_category")
    missing = [k for k in needed if k not in figures]
    if missing:
        raise ValueError(f"figures lacks the column(s) {missing}; pass a frame from sweep().")
    share, smallest, category = (np.asarray(figures[k], dtype=float) for k in needed)
    if rule == "cochran":
        return (smallest >= 1) & (share <= 0.2)
    if rule == "min_expected":
        return smallest >= threshold
    return category >= threshold


@dataclass(frozen=True)
class CollapsingSuggestion:
    """The coding :func:`suggest_collapsing` proposes, and how it was found.

    Attributes
    ----------
    rule : str
        The sparse-cell rule, in words.
    table : OrdinalTable or None
        The recoded table; None when no admissible coding meets the rule.
    row_groups, col_groups : tuple of tuples
        The merged categories (empty when none is found).
    row_cuts, col_cuts : int or None
        The coding as bitmasks, as in :func:`sweep`.
    merges : int or None
        Categories given up: ``(I - I') + (J - J')``.
    meeting : int
        How many admissible codings meet the rule.
    codings : int
        How many admissible codings there are.
    note : str
        A plain sentence on the outcome.
    """

    rule: str
    table: OrdinalTable | None
    row_groups: tuple
    col_groups: tuple
    row_cuts: int | None
    col_cuts: int | None
    merges: int | None
    meeting: int
    codings: int
    note: str

    def __repr__(self) -> str:
        # a short summary; the recoded table is in .table
        if self.table is None:
            return f"<CollapsingSuggestion: none ({self.rule}); {self.note}>"
        shown = " ; ".join(f"{name}: " + " | ".join(merged_label(g) for g in groups)
                           for name, groups in ((self.table.row_name, self.row_groups),
                                                (self.table.col_name, self.col_groups)))
        return (f"<CollapsingSuggestion ({self.rule}), {self.merges} merge(s), "
                f"{self.meeting:,} of {self.codings:,} codings meet the rule: {shown}>")


def suggest_collapsing(
    table: OrdinalTable,
    rule: str = "cochran",
    *,
    threshold: float | None = None,
    axes: str = "both",
    min_categories: int = 2,
    max_schemes: int | None = DEFAULT_MAX_SCHEMES,
) -> CollapsingSuggestion:
    """The coding with the fewest merges that meets a sparse-cell rule.

    The choice uses only the table's margins and expected counts: no measure of association is
    computed, so the coding cannot be tuned to the result.

    Parameters
    ----------
    table : OrdinalTable
        The table to recode (never modified); a table with a control variable is judged on its
        pooled table.
    rule : {'cochran', 'min_expected', 'min_category_size'}
        See :func:`rule_met`; the default is Cochran's rule.
    threshold : float, optional
        The limit of the ``'min_expected'`` (default 5) or ``'min_category_size'`` (required)
        rule.
    axes, min_categories, max_schemes
        Which codings are admissible, as in :func:`sweep`.

    Returns
    -------
    CollapsingSuggestion
        With ``table`` None and a ``note`` saying so when no coding meets the rule.

    Notes
    -----
    Among the admissible codings meeting the rule, the suggestion keeps the most categories
    (``I' + J'``, i.e. the fewest merges). Ties are broken, still without looking at any
    measure, by the most balanced category sizes, i.e. the smallest sum of squared row and
    column totals, and then by the first coding in the order of :func:`sweep`.

    References
    ----------
    Cochran, W. G. (1954). Some methods for strengthening the common chi-square tests.
    Biometrics 10, 417-451.
    """
    threshold = _check_rule(rule, threshold)
    rows, cols = _plan(table, axes, min_categories, max_schemes, DEFAULT_CHUNK_SIZE)
    balance, row_index, col_index = [], [], []
    for batch in _batches(table, rows, cols, DEFAULT_CHUNK_SIZE, None):
        figures = _sparse_columns(batch_view(batch.observed))
        meets = rule_met(figures, rule, threshold)
        balance.append(figures["category_square_sum"][meets])
        row_index.append(batch.row_index[meets])
        col_index.append(batch.col_index[meets])
    description = _describe_rule(rule, threshold)
    codings = len(rows.cuts) * len(cols.cuts)
    ri, ci = np.concatenate(row_index), np.concatenate(col_index)
    if ri.size == 0:
        return CollapsingSuggestion(
            description, None, (), (), None, None, None, 0, codings,
            f"None of the {codings:,} admissible codings meets the rule ({description}); the "
            "table is too sparse for large-sample results even after merging. Use the "
            "permutation test, or collect more data.",
        )
    size = rows.groups[ri] + cols.groups[ci]
    best = np.lexsort((np.arange(ri.size), np.concatenate(balance), -size))[0]
    row_cuts, col_cuts = int(rows.cuts[ri[best]]), int(cols.cuts[ci[best]])
    groups = coding_groups(table, row_cuts, col_cuts)
    merges = sum(table.shape) - int(size[best])
    note = (
        "The table as collected already meets the rule; no merge is needed."
        if merges == 0
        else f"{merges} {'merge gives' if merges == 1 else 'merges give'} the most detailed "
        f"coding that meets the rule ({ri.size:,} of {codings:,} codings meet it)."
    )
    return CollapsingSuggestion(
        description, apply_coding(table, row_cuts, col_cuts), groups["rows"], groups["cols"],
        row_cuts, col_cuts, merges, int(ri.size), codings, note,
    )
