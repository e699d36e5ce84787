"""Checks of the arguments of :func:`rankfold.table` and of what it counted (weights, totals)."""

from __future__ import annotations

from collections.abc import Hashable, Mapping, Sequence
from typing import Any

from .steps import label_list

__all__ = ["check_columns", "check_total", "check_weights", "refuse_unknown_keywords"]

#: Keywords renamed in 0.2.0, with their new names.
RENAMED_KEYWORDS = {"layer": "control"}


def refuse_unknown_keywords(function: str, given: Mapping[str, Any]) -> None:
    """Raise the TypeError Python would for unknown keywords, naming the new name of renamed ones.

    Parameters
    ----------
    function : str
        The function's name, for the message.
    given : mapping
        The keywords a ``**unknown`` parameter collected.

    Raises
    ------
    TypeError
        For the first keyword given, e.g. ``layer=`` (renamed ``control=`` in 0.2.0).
    """
    for name in given:
        if name in RENAMED_KEYWORDS:
            new = RENAMED_KEYWORDS[name]
            raise TypeError(
                f"{function}() has no {name}= argument since rankfold 0.2.0: use {new}= instead, "
                f"e.g. {function}(df, 'income_band', 'satisfaction', {new}='region')."
            )
        raise TypeError(f"{function}() got an unexpected keyword argument {name!r}")


def check_columns(available: Sequence[Hashable], columns: Sequence[str | None]) -> None:
    """Raise unless every named role is one available column and no column has two roles;
    ``columns`` are the row, column, control and weight columns, in that order (None: unused)."""
    named = [c for c in columns if c is not None]
    if not all(isinstance(c, Hashable) for c in named):
        raise ValueError(f"Name each column by a single label, such as 'age'; got {named}.")
    absent = [c for c in named if c not in available]
    if absent:
        raise ValueError(f"Column(s) {absent} not in the data; its columns are {list(available)}.")
    if len(set(named)) != len(named):
        roles = [r for r, c in zip(("row", "column", "control", "weight"), columns, strict=True)
                 if c is not None]
        twice = next(c for c in named if named.count(c) > 1)
        both = [r for r, c in zip(roles, named, strict=True) if c == twice]
        raise ValueError(
            f"Column {twice!r} cannot be both the {both[0]} and the {both[1]} variable: each role "
            "needs its own column, so choose another one for one of them."
        )
    doubled = [c for c in named if sum(a == c for a in available) > 1]
    if doubled:
        raise ValueError(
            f"The data has more than one column named {doubled}; rename them so each name is "
            "used once (e.g. df.columns = [...])."
        )


def check_total(total: float, what: str) -> None:
    """Raise if a table's total is so large or small that products of counts (up to the
    fourth power, as in tau-b) would leave the range of double-precision numbers."""
    if total > 0 and not 1e-40 <= total <= 1e40:
        raise ValueError(
            f"The {what} add up to {total:.3g}; rankfold computes with totals between 1e-40 and "
            "1e40, beyond which products of counts leave the range of floating point. Rescale "
            "them (the estimates do not depend on scale; standard errors treat totals as counts)."
        )

def check_weights(weight: str, bad_nan: int, bad_inf: int, bad_neg: int) -> None:
    """Raise if a weight column had missing or non-numeric, infinite or negative values."""
    if bad_nan or bad_inf or bad_neg:
        kinds = ((bad_nan, "missing or non-numeric"), (bad_inf, "infinite"), (bad_neg, "negative"))
        problems = [f"{k} {what}" for k, what in kinds if k]
        raise ValueError(
            f"Weight column {weight!r} has {', '.join(problems)} value(s) in "
            f"{bad_nan + bad_inf + bad_neg} row(s). Weights must be finite and >= 0 (zero is "
            "allowed): fix or drop those rows before tabulating."
        )


def _check_arguments(
    row: str, col: str, control: str | None, weight: str | None, weight_kind: str,
    order: Mapping | None, exclude: Mapping | None, non_substantive: Sequence[Hashable] | bool,
) -> tuple[dict, dict, tuple | None]:
    """Check the arguments of :func:`table`; return the orders, exclusions and extra flags."""
    if weight_kind not in ("frequency", "sampling"):
        raise ValueError(f"weight_kind must be 'frequency' or 'sampling'; got {weight_kind!r}.")
    if weight_kind == "sampling" and weight is None:
        raise ValueError("weight_kind='sampling' needs a weight column: pass weight='your_column'.")
    if row is None or col is None:
        raise ValueError(f"table needs a row and a col column; got row={row!r}, col={col!r}.")
    options = {}
    for what, given in (("order", order), ("exclude", exclude)):
        if given is not None and not isinstance(given, Mapping):
            raise ValueError(
                f"{what}= must be a dict {{column: [labels]}}, e.g. {what}={{{row!r}: [...]}}; "
                f"got {given!r}."
            )
        stray = [k for k in (given or {}) if k not in (row, col, control)]
        if stray:
            raise ValueError(f"{what}= names {stray}, which are not among row, col or control.")
        options[what] = {k: label_list(v, f"{what}[{k!r}]") for k, v in (given or {}).items()}
    if non_substantive is False:
        extra_flags = None
    elif non_substantive is True:
        extra_flags = ()
    else:
        extra_flags = tuple(label_list(non_substantive, "non_substantive"))
    return options["order"], options["exclude"], extra_flags
