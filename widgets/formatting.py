"""How numbers and labels are written in the explorer's HTML views and chart cells."""

from __future__ import annotations

import html
import math
from collections.abc import Hashable

__all__ = ["amount", "estimate", "interval", "p_value", "text", "signed_amount"]

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


def signed_amount(value: float) -> str:
    """Like :func:`amount` with an explicit sign for positive values."""
    shown = amount(value)
    return f"+{shown}" if value > 0 else shown
