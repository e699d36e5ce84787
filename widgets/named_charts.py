"""The explorer's charts by name, for the scripting API, the Export tab and the report.

Each chart is built by the view module that shows it, from the numbers of a
:class:`~rankfold.widgets.render.Rendered`; this module only names them.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from typing import TYPE_CHECKING

from .comparison import rendered_comparison
from .heatmap import rendered_heatmap
from .pair_view import rendered_pairs

if TYPE_CHECKING:
    import altair as alt

    from .render import Rendered

__all__ = ["CHARTS", "named_chart"]

#: Name -> (what the chart is called in messages, the view's function drawing it).
CHARTS: dict[str, tuple[str, Callable[[Rendered], alt.TopLevelMixin | None]]] = {
    "heatmap": ("heatmap", rendered_heatmap),
    "pairs": ("pair view", rendered_pairs),
    "comparison": ("comparison with the table as collected",
                   partial(rendered_comparison, baseline="collected")),
    "comparison_previous": ("comparison with the previous step",
                            partial(rendered_comparison, baseline="previous")),
}


def named_chart(rendered: Rendered, name: str) -> alt.TopLevelMixin | None:
    """The chart ``name`` (a key of :data:`CHARTS`) of a rendered state.

    Parameters
    ----------
    rendered : Rendered
        The numbers of one explorer state.
    name : {'heatmap', 'pairs', 'comparison', 'comparison_previous'}
        Which chart.

    Returns
    -------
    altair.TopLevelMixin or None
        A new Altair chart; None for ``'pairs'`` while no cell is chosen.

    Raises
    ------
    ValueError
        For an unknown name.
    """
    if name not in CHARTS:
        raise ValueError(f"Unknown chart {name!r}; the explorer draws {list(CHARTS)}.")
    return CHARTS[name][1](rendered)
