"""Recorded coding steps (order, exclusion, merge) and their replay on raw columns.

A table remembers every step that shaped its categories, so the same coding can be shown to a
reader, turned back into code, and applied to the raw column for use in other analyses.
"""

from __future__ import annotations

from collections.abc import Hashable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = [
    "OrderStep", "ExcludeStep", "MergeStep", "Step", "apply_steps", "label_list", "merged_label",
    "collected_members", "default_merge_label", "MERGE_JOINER",
]

AXES = ("rows", "cols")


def label_list(labels: object, what: str) -> list:
    """``labels`` as a list, refusing a bare label (a string would be split into letters) and
    an unordered set; ``what`` names the argument in the message."""
    if not pd.api.types.is_list_like(labels) or isinstance(labels, (set, frozenset, Mapping)):
        raise ValueError(
            f"{what} must be a list of labels in order, e.g. ['low', 'high']; got {labels!r}."
        )
    return list(labels)


#: What joins the first and last category of a merged group in its default label. A word, not a
#: dash: labels often hold ranges ("2–5 km"), and "under 2 km–2–5 km" would be ambiguous.
MERGE_JOINER = " to "


def merged_label(group: Sequence[Hashable]) -> str:
    """Default label of a merged group: ``"first to last"`` (a single label stays as it is).

    The joiner is :data:`MERGE_JOINER` (``" to "``), so a merge of ``"10–20 km"`` and
    ``"over 20 km"`` reads ``"10–20 km to over 20 km"``: a range inside a label cannot be
    mistaken for the merge (common practice in table labelling; no published source).
    """
    if len(group) == 1:
        return str(group[0])
    return f"{group[0]}{MERGE_JOINER}{group[-1]}"


def collected_members(steps: Sequence[Step], variable: str) -> dict[Hashable, tuple]:
    """For each current category of ``variable``, the categories as counted that it covers.

    Parameters
    ----------
    steps : sequence of steps
        A table's complete ``steps``.
    variable : str
        The variable whose categories to trace.

    Returns
    -------
    dict
        Current label -> tuple of labels of the table as counted, in order (a category that
        was never merged covers only itself).
    """
    members: dict[Hashable, tuple] = {}
    for step in steps:
        if step.variable != variable:
            continue
        if isinstance(step, OrderStep) and not members:
            members = {label: (label,) for label in step.labels}
        elif isinstance(step, MergeStep):
            members = {new: sum((members.get(old, (old,)) for old in group), ())
                       for group, new in zip(step.groups, step.labels, strict=True)}
        elif isinstance(step, ExcludeStep):
            members = {k: v for k, v in members.items() if k not in step.labels}
    return members


def default_merge_label(steps: Sequence[Step], variable: str, group: Sequence[Hashable]) -> str:
    """The label :meth:`OrdinalTable.merge` gives ``group`` (current labels of ``variable``)
    by default: :func:`merged_label` of the categories as counted that the group covers, so
    merging ``"40 to 59"`` with ``"60+"`` gives ``"40 to 60+"``, not ``"40 to 59 to 60+"``.

    Parameters
    ----------
    steps : sequence of steps
        The complete ``steps`` of the table before the merge.
    variable : str
        The merged variable.
    group : sequence of labels
        Neighbouring current categories; a single one keeps its label.

    Returns
    -------
    str
    """
    if len(group) == 1:
        return merged_label(group)
    members = collected_members(steps, variable)
    return merged_label([original for label in group
                         for original in members.get(label, (label,))])


@dataclass(frozen=True)
class OrderStep:
    """The categories of ``variable`` take the order ``labels``.

    ``origin`` says where the order came from: ``"declared"`` (an ordered Categorical),
    ``"numeric"`` (sorted values), ``"given"`` (the ``order=`` argument) or ``"reorder"``
    (a later :meth:`OrdinalTable.reorder`). ``missing_label`` is the category that holds the
    missing values when the table kept them (``dropna=False``), else None.
    """

    axis: str
    variable: str
    labels: tuple
    origin: str
    missing_label: Hashable | None = None

    def describe(self) -> str:
        """One line for a list of steps.

        Returns
        -------
        str
            For example ``"size: order (given) S, M, L"``.
        """
        shown = ", ".join(map(str, self.labels))
        return f"{self.variable}: order ({self.origin}) {shown}"


@dataclass(frozen=True)
class ExcludeStep:
    """Units in the categories ``labels`` of ``variable`` are left out."""

    axis: str
    variable: str
    labels: tuple

    def describe(self) -> str:
        """One line for a list of steps.

        Returns
        -------
        str
            For example ``"size: exclude XL"``.
        """
        return f"{self.variable}: exclude {', '.join(map(str, self.labels))}"


@dataclass(frozen=True)
class MergeStep:
    """Adjacent categories of ``variable`` are merged: ``groups[k]`` becomes ``labels[k]``."""

    axis: str
    variable: str
    groups: tuple
    labels: tuple

    def describe(self) -> str:
        """One line for a list of steps, naming only the groups of two or more categories.

        Returns
        -------
        str
            For example ``"size: merge [S, M] -> S to M"``.
        """
        parts = [
            f"[{', '.join(map(str, g))}] -> {lab}"
            for g, lab in zip(self.groups, self.labels, strict=True)
            if len(g) > 1
        ]
        return f"{self.variable}: merge " + "; ".join(parts)


Step = OrderStep | ExcludeStep | MergeStep


def _replay(values: pd.Series, steps: Sequence[Step]) -> pd.Categorical:
    name = values.name
    if not isinstance(steps[0], (OrderStep, ExcludeStep)):
        raise ValueError(
            f"The steps for {name!r} do not start from an order; pass the complete `.steps` "
            "of a table, not a slice of them."
        )
    current = values
    categorical: pd.Categorical | None = None
    for step in steps:
        if isinstance(step, ExcludeStep):
            if categorical is None:
                current = current.where(~current.isin(list(step.labels)))
            else:
                categorical = categorical.remove_categories(list(step.labels))
        elif isinstance(step, OrderStep):
            if categorical is None:
                categorical = _first_order(values, current, step)
            else:
                categorical = categorical.reorder_categories(list(step.labels))
        else:
            assert categorical is not None
            position = {label: k for k, group in enumerate(step.groups) for label in group}
            lookup = np.array(
                [position[label] for label in categorical.categories] + [-1], dtype=np.int64
            )
            codes = lookup[np.asarray(categorical.codes)]
            categorical = pd.Categorical.from_codes(
                codes, categories=list(step.labels), ordered=True
            )
    assert categorical is not None
    return categorical


def _first_order(values: pd.Series, current: pd.Series, step: OrderStep) -> pd.Categorical:
    """The raw column (``current``: excluded values already missing) as the step's categories;
    values missing in the raw column go to ``step.missing_label`` when the table kept them."""
    raw = current.astype(object) if isinstance(current.dtype, pd.CategoricalDtype) else current
    labels = list(step.labels)
    # the same lookup as counting: each distinct value by hash, missing values to -1
    found, uniques = pd.factorize(raw, use_na_sentinel=True)
    position = {label: k for k, label in enumerate(labels)}
    lookup = np.array([position.get(u, -1) for u in uniques] + [-1], dtype=np.int64)
    codes = lookup[found]
    lost = (found >= 0) & (codes < 0)
    if lost.any():  # checked before building the Categorical, which would warn
        unknown = sorted({str(v) for v in raw[lost].unique()})
        raise ValueError(
            f"Column {values.name!r} holds values the steps do not place: {unknown}. "
            "Apply the steps to the same column the table was built from."
        )
    if step.missing_label is not None:
        codes[values.isna().to_numpy()] = labels.index(step.missing_label)
    return pd.Categorical.from_codes(codes, categories=labels, ordered=True)


def apply_steps(data: pd.Series | pd.DataFrame, steps: Sequence[Step]) -> pd.Series | pd.DataFrame:
    """Apply a table's recorded order, exclusions and merges to raw data.

    Parameters
    ----------
    data : pandas.Series or pandas.DataFrame
        A raw column (its name must be a variable named in ``steps``) or a frame holding the
        variables. It is not modified.
    steps : sequence of steps
        Usually ``OrdinalTable.steps``.

    Returns
    -------
    pandas.Series or pandas.DataFrame
        For a Series, a new Series (same index) of ordered Categorical dtype whose categories
        are the table's final categories; excluded values become missing, and missing values
        go to the table's missing category when it kept one (``dropna=False``). For a DataFrame,
        a copy in which every variable named in ``steps`` is replaced that way.

    Examples
    --------
    >>> import pandas as pd, rankfold
    >>> df = pd.DataFrame({"x": [1, 2, 3, 3], "y": [1, 1, 2, 3]})
    >>> t = rankfold.table(df, "x", "y").merge("rows", [[1, 2], [3]])
    >>> rankfold.apply_steps(df["x"], t.steps).tolist()
    ['1 to 2', '1 to 2', '3', '3']
    """
    steps = list(steps)
    variables = list(dict.fromkeys(step.variable for step in steps))
    if isinstance(data, pd.DataFrame):
        present = [v for v in variables if v in data.columns]
        if not present:
            raise ValueError(
                f"None of the variables the steps refer to ({variables}) is a column of the frame."
            )
        out = data.copy()  # column names need not be strings, so no assign(**...)
        for v in present:
            out[v] = pd.Series(
                _replay(data[v], [s for s in steps if s.variable == v]), index=data.index, name=v
            )
        return out
    if not isinstance(data, pd.Series):
        raise ValueError(
            f"apply_steps takes a pandas Series or DataFrame, not {type(data).__name__}."
        )
    own = [s for s in steps if s.variable == data.name]
    if not own:
        raise ValueError(
            f"No step refers to a variable named {data.name!r}; the steps refer to {variables}. "
            "Name the Series after the column the table was built from (series.rename(...))."
        )
    return pd.Series(_replay(data, own), index=data.index, name=data.name)
