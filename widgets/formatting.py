"""How numbers and labels are written in the explorer's HTML views and chart cells."""

from __future__ import annotations

import html
import math
from collections.abc import Hashable, Sequence

__all__ = ["amount", "sample_size", "estimate", "interval", "p_value", "text", "signed_amount",
           "shared_note"]

DASH = "–"


def text(value: Hashable) -> str:
    """A label, escaped for HTML."""
    return html.escape(str(value))


def estimate(value: float) -> str:
    """A measure's estimate to 4 decimals (what browser tests read), or a dash when undefined."""
    return DASH if value is None or math.isnan(value) else f"{value:.4f}"


def interval(low: float, high: float) -> str:
    """A confidence interval ``[low, high]`` to 3 decimals, or a dash when undefined."""
    if math.isnan(low) or math.isnan(high):
        return DASH
    return f"[{low:.3f}, {high:.3f}]"


def p_value(value: float) -> str:
    """A p-value to 4 decimals, ``< 0.0001`` below that, or a dash when undefined."""
    if value is None or math.isnan(value):
        return DASH
    return "< 0.0001" if value < 0.0001 else f"{value:.4f}"


def amount(value: float) -> str:
    """A count or sum of weights: whole numbers with thousands separators, else 1 decimal;
    very large values with 3 significant digits and k/M/G/T."""
    if value is None or math.isnan(value):
        return DASH
    size = abs(value)
    if size >= 1e5:
        for scale, suffix in ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k")):
            if size >= scale * 0.9995:  # so 999,999 reads "1M", not "1e+03k"
                return f"{value / scale:.3g}{suffix}"
    if float(value).is_integer():
        return f"{value:,.0f}"
    return f"{value:,.1f}"


def sample_size(total: float, weighted: bool, respondents: float | None = None) -> str:
    """How many units a table holds, said so that a weighted total, the number of respondents
    and an effective sample size cannot be confused.

    Parameters
    ----------
    total : float
        The table's total (a sum of weights when ``weighted``).
    weighted : bool
        Whether ``total`` is a sum of weights.
    respondents : float, optional
        Records behind a weighted total (known for sampling weights).

    Returns
    -------
    str
        ``"n = 1,204"``, ``"weighted total 208.6"`` or ``"weighted total 208.6 from 300
        respondents"``.
    """
    if not weighted:
        return f"n = {amount(total)}"
    shown = f"weighted total {amount(total)}"
    if respondents is not None:
        shown += f" from {amount(respondents)} respondents"
    return shown


def signed_amount(value: float) -> str:
    """Like :func:`amount` with an explicit sign for positive values."""
    shown = amount(value)
    return f"+{shown}" if value > 0 else shown


def shared_note(notes: Sequence[str]) -> tuple[str, list[str]]:
    """Split the notes of a table's rows into what every row says and what is left of each.

    The core writes a note as parts joined by ``"; "``; a part found in every note (such as
    the sampling-weights caution) is returned once, so a panel can show it above or below the
    table instead of on every row. With fewer than two notes nothing is shared.

    Returns
    -------
    (str, list of str)
        The shared parts joined by ``"; "`` (empty if none), and each note without them.
    """
    parts = [[part for part in note.split("; ") if part] for note in notes]
    shared = ([part for part in parts[0] if all(part in other for other in parts[1:])]
              if len(parts) > 1 else [])
    return "; ".join(shared), ["; ".join(p for p in own if p not in shared) for own in parts]
