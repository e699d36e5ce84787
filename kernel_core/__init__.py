"""rankfold: association between ordered categorical variables.

The computation core: ordered tables, concordance-based measures with standard errors and
tests, and category merging. It depends on numpy, pandas and scipy only; the notebook explorer
lives in :mod:`rankfold.widgets` and is imported only when :func:`explore` (or :func:`report`,
the one-file HTML report) is first used.
"""

from __future__ import annotations

from typing import Any

from . import demo
from .cell_figures import cell_figures
from .collapsing import (
    apply_coding,
    count_codings,
    range_sentence,
    rule_met,
    suggest_collapsing,
    sweep,
    sweep_chunks,
    sweep_ranges,
)
from .concordance import cell_concordance, pair_counts
from .counting import table, table_from_counts
from .diagnostics import Diagnostics
from .independence import PermutationResult, independence_label
from .measure_comparison import compare_measures
from .measure_table import measure_label
from .ordinal_table import OrdinalTable
from .overview import fill_coding_ranges, overview
from .pair_regions import PairRegions, pair_regions
from .steps import ExcludeStep, MergeStep, OrderStep, apply_steps

__version__ = "0.3.0"

__all__ = [
    "Diagnostics",
    "ExcludeStep",
    "MergeStep",
    "OrderStep",
    "OrdinalTable",
    "PairRegions",
    "PermutationResult",
    "apply_coding",
    "apply_steps",
    "cell_concordance",
    "cell_figures",
    "compare_measures",
    "count_codings",
    "demo",
    "explore",
    "fill_coding_ranges",
    "independence_label",
    "measure_label",
    "overview",
    "pair_counts",
    "pair_regions",
    "range_sentence",
    "report",
    "rule_met",
    "suggest_collapsing",
    "sweep",
    "sweep_chunks",
    "sweep_ranges",
    "table",
    "table_from_counts",
]


def __dir__() -> list[str]:
    # so that tab completion offers explore, which is imported lazily by __getattr__
    return sorted(set(globals()) | {"explore"})


def __getattr__(name: str) -> Any:
    # The explorer needs ipywidgets and altair; import it only on first use so the core stays
    # usable (and light) in scripts and distributed jobs.
    if name == "explore":
        from .widgets import explore

        return explore
    if name == "report":  # draws its charts with altair and vl-convert
        from .widgets.report import report

        return report
    if name == "charts":  # Altair charts of tables and overviews, also imported on first use
        from .widgets import charts

        return charts
    raise AttributeError(f"module 'rankfold' has no attribute {name!r}")
