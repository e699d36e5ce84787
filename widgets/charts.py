"""Charts of whole tables and of overviews, as plain Altair charts (``rankfold.charts``).

Both functions take data and return a chart; nothing here holds state, so the explorer and
scripts draw the same pictures. Colours are our own: warm browns for the lower end of a scale,
teals for the upper end, a stone grey for the middle and greys for answers set apart.
"""

from __future__ import annotations

import json
import math
from collections.abc import Hashable, Sequence

import altair as alt
import numpy as np
import pandas as pd

from rankfold.ordinal_table import OrdinalTable

from .chart_pane import building, inline_data

__all__ = ["PAIR_CLICK", "diverging_bars", "diverging_segments", "overview_matrix"]

#: Name of the point selection of :func:`overview_matrix`; its fields are ``var_a``, ``var_b``.
PAIR_CLICK = "pair_click"

_LOW, _MIDDLE, _HIGH = "#9c4a1a", "#ded9cc", "#1d6b74"
_APART = ("#8c8c8c", "#b3b3b3", "#5f5f5f", "#cccccc")
_EMPTY = "#f4f4f4"
_SMALLEST_LABEL = 7.0  # percent: shares below this are not printed on their segment


def _mix(a: str, b: str, t: float) -> str:
    """The colour a fraction ``t`` of the way from ``a`` to ``b`` (straight RGB mixing)."""
    x = [int(a[k : k + 2], 16) for k in (1, 3, 5)]
    y = [int(b[k : k + 2], 16) for k in (1, 3, 5)]
    return "#" + "".join(f"{round(p + (q - p) * t):02x}" for p, q in zip(x, y, strict=True))


def _scale_colours(size: int) -> list[str]:
    """``size`` colours from the lower end through the middle to the upper end of a scale."""
    if size == 1:
        return [_MIDDLE]
    half = size // 2
    steps = [0.6 * k / max(half - 1, 1) for k in range(half)]
    lower = [_mix(_LOW, _MIDDLE, t) for t in steps]
    upper = [_mix(_HIGH, _MIDDLE, t) for t in steps][::-1]
    return lower + ([_MIDDLE] if size % 2 else []) + upper


def _check_table(table: object) -> OrdinalTable:
    if not isinstance(table, OrdinalTable):
        raise ValueError(
            "diverging_bars needs an OrdinalTable (from rankfold.table or "
            f"rankfold.table_from_counts); got {type(table).__name__}."
        )
    return table


def diverging_segments(
    table: OrdinalTable, non_substantive: Sequence[Hashable] | None = None
) -> pd.DataFrame:
    """The bar segments of :func:`diverging_bars`, one row per row category and column category.

    Parameters
    ----------
    table : OrdinalTable
        The table (pooled over a control variable; sums of weights when weighted).
    non_substantive : sequence of labels, optional
        Column categories to set apart from the scale; default: those the table flags as
        answers off the scale (:attr:`OrdinalTable.non_substantive`, "don't know", ...).

    Returns
    -------
    pandas.DataFrame
        Columns ``row``, ``category``, ``part`` (``"lower"``, ``"middle"``, ``"upper"`` or
        ``"apart"``), ``count``, ``percent``, ``start`` and ``end``. Scale categories: percent
        of the row's answers on the scale; the lower half of the categories lies left of 0
        (the nearest to the middle next to 0), the upper half right of it, and with an odd
        number the middle category spans ``-percent/2`` to ``+percent/2``. Answers set apart:
        percent of all the row's answers, stacked from 0 in their own panel. A row with no
        answer on the scale has NaN percents.
    """
    table = _check_table(table)
    labels = list(table.col_labels)
    if non_substantive is None:
        apart = list(table.non_substantive["cols"])
    else:
        apart = list(non_substantive)
        unknown = [x for x in apart if x not in labels]
        if unknown:
            raise ValueError(
                f"non_substantive lists {unknown}, which are not categories of "
                f"{table.col_name!r}; its categories are {labels}."
            )
    scale = [x for x in labels if x not in apart]
    if not scale:
        raise ValueError(
            f"Every category of {table.col_name!r} is set apart as non-substantive; leave at "
            "least one scale category out of non_substantive=."
        )
    counts = table.counts
    half = len(scale) // 2
    middle = scale[half] if len(scale) % 2 else None
    records = []
    for row, values in counts.iterrows():
        on_scale = values[scale].to_numpy(dtype=float)
        base = on_scale.sum()
        with np.errstate(invalid="ignore", divide="ignore"):
            share = 100 * on_scale / base if base > 0 else np.full(len(scale), np.nan)
        centre = share[half] / 2 if middle is not None else 0.0
        # lower categories run leftwards from the middle, upper ones rightwards
        left_edge = -(centre + np.cumsum(share[:half][::-1]))[::-1]
        right_start = centre + np.concatenate([[0.0], np.cumsum(share[len(scale) - half:])[:-1]])
        for k, label in enumerate(scale):
            if k < half:
                part, start = "lower", left_edge[k]
            elif label == middle:
                part, start = "middle", -centre
            else:
                part, start = "upper", right_start[k - (len(scale) - half)]
            records.append((row, label, part, values[label], share[k], start, start + share[k]))
        everything = float(values.sum())
        stacked = 0.0
        for label in apart:
            pct = 100 * float(values[label]) / everything if everything > 0 else np.nan
            records.append((row, label, "apart", values[label], pct, stacked, stacked + pct))
            stacked += pct
    return pd.DataFrame(records, columns=["row", "category", "part", "count", "percent",
                                          "start", "end"])


def _number(value: float) -> float | None:
    return None if value is None or (isinstance(value, float) and math.isnan(value)) else value


def diverging_bars(
    table: OrdinalTable,
    non_substantive: Sequence[Hashable] | None = None,
    *,
    title: str | None = None,
    width: int = 420,
) -> alt.LayerChart | alt.HConcatChart:
    """The column variable's distribution within each row category, centred on the scale's middle.

    Parameters
    ----------
    table : OrdinalTable
        The table; the column variable is the rating scale, one bar per row category.
    non_substantive : sequence of labels, optional
        Column categories shown apart, in a panel of their own; default: the labels that read
        as non-substantive answers ("don't know", "no answer", "refused", ...).
    title : str, optional
        Chart title (default names both variables).
    width : int
        Width of the bars' panel in pixels.

    Returns
    -------
    altair.LayerChart or altair.HConcatChart
        A diverging stacked bar chart; with answers set apart, the two panels side by side.
        Segment positions are those of :func:`diverging_segments`.

    Notes
    -----
    Bars centred on the middle of the scale so that agreement and disagreement read as lengths
    from one line (Robbins & Heiberger 2011, "Plotting Likert and other rating scales",
    Proceedings of the Survey Research Methods Section, ASA). Shares are of the answers on the
    scale; answers set apart are shares of all answers. With weights the shares are weighted.
    """
    segments = diverging_segments(table, non_substantive)
    scale = [str(x) for x in dict.fromkeys(segments.loc[segments["part"] != "apart", "category"])]
    apart = [str(x) for x in dict.fromkeys(segments.loc[segments["part"] == "apart", "category"])]
    rows = [str(x) for x in table.row_labels]
    colours = _scale_colours(len(scale)) + [_APART[k % len(_APART)] for k in range(len(apart))]
    reach = segments.loc[segments["part"] != "apart", ["start", "end"]].abs().max().max()
    reach = 10 * math.ceil((reach if reach == reach and reach > 0 else 50) / 10)
    records = [
        {"row": str(r.row), "category": str(r.category), "part": r.part,
         "count": float(r.count), "percent": _number(float(r.percent)),
         "start": _number(float(r.start)), "end": _number(float(r.end)),
         "middle": _number((float(r.start) + float(r.end)) / 2),
         "text": f"{r.percent:.0f}%" if r.percent >= _SMALLEST_LABEL else "",
         "label": "" if r.percent != r.percent else f"{r.percent:.0f}%"}
        for r in segments.itertuples()
    ]
    weighted = " (weighted)" if table.weight is not None else ""
    with building():
        colour = alt.Color(
            field="category", type="nominal", title=table.col_name,
            scale=alt.Scale(domain=scale + apart, range=colours),
            sort=scale + apart, legend=alt.Legend(orient="bottom", direction="horizontal"),
        )
        y = alt.Y(field="row", type="nominal", sort=rows, title=table.row_name,
                  axis=alt.Axis(labelLimit=160))
        tooltip = [alt.Tooltip(field="row", type="nominal", title=table.row_name),
                   alt.Tooltip(field="category", type="nominal", title=table.col_name),
                   alt.Tooltip(field="percent", type="quantitative", format=".1f", title="%"),
                   alt.Tooltip(field="count", type="quantitative", format=",.4~g",
                               title="count" + weighted)]

        def panel(filter_: str, x_scale: alt.Scale, x_title: str, label_expr: str | None,
                  side: bool) -> alt.LayerChart:
            axis = alt.Axis(labelExpr=label_expr) if label_expr else alt.Axis()
            bars = alt.Chart().mark_bar(stroke="#ffffff", strokeWidth=0.5).encode(
                x=alt.X(field="start", type="quantitative", scale=x_scale, title=x_title,
                        axis=axis),
                x2=alt.X2(field="end"), y=y if not side else y.axis(None), color=colour,
                tooltip=tooltip,
            ).transform_filter(filter_)
            # on the scale the share sits inside its segment; set apart, just after the bar
            mark = (alt.Chart().mark_text(fontSize=10, color="#1a1a1a", align="left", dx=3)
                    if side else alt.Chart().mark_text(fontSize=10, color="#1a1a1a"))
            text = mark.encode(
                x=alt.X(field="end" if side else "middle", type="quantitative", scale=x_scale),
                y=y, text=alt.Text(field="label" if side else "text", type="nominal"),
            ).transform_filter(filter_)
            return alt.layer(bars, text)

        main = panel("datum.part != 'apart'", alt.Scale(domain=[-reach, reach]),
                     "% of answers on the scale: lower ← middle → upper",
                     "abs(datum.value) + '%'", False)
        centre = alt.Chart().mark_rule(color="#333333", strokeWidth=1).encode(
            x=alt.X(datum=0, type="quantitative"))
        main = alt.layer(*main.layer, centre, data=inline_data(records), width=width,
                         height=alt.Step(24))
        heading = alt.Title(
            title or f"{table.col_name} within each category of {table.row_name}",
            subtitle="bars centred on the middle of the scale"
            + ("; answers off the scale on the right, as % of all answers" if apart else ""),
        )
        if not apart:
            return main.properties(title=heading, background="#ffffff")
        side = panel("datum.part == 'apart'", alt.Scale(domain=[0, 100]), "% of all answers",
                     None, True)
        side = side.properties(data=inline_data(records), width=max(width // 4, 90),
                               height=alt.Step(24))
        return alt.hconcat(main, side, title=heading, background="#ffffff").resolve_scale(
            color="shared", y="shared")


def _matrix_records(frame: pd.DataFrame, names: list[str]) -> list[dict]:
    has_ranges = "coding_min" in frame and frame["coding_min"].notna().any()
    records = []
    for r in frame.to_dict("records"):
        estimate = _number(float(r["estimate"]))
        unstable = None
        if has_ranges and not pd.isna(r.get("coding_sign_changes", pd.NA)):
            unstable = bool(r["coding_sign_changes"]) or bool(
                r.get("coding_significance_changes") is True)
        base = {
            "estimate": estimate,
            "text": "–" if estimate is None else f"{estimate:+.2f}",
            "ink": "light" if estimate is not None and abs(estimate) > 0.55 else "dark",
            "ci": "" if estimate is None else f"{r['ci_low']:+.2f} to {r['ci_high']:+.2f}",
            "p_adjusted": _number(float(r.get("p_adjusted", np.nan))),
            "n": float(r["n"]) if "n" in r else None,
            "sparse": bool(r.get("sparse", False)),
            "unstable": unstable,
            "codings": "" if not has_ranges or pd.isna(r.get("coding_min"))
            else f"{r['coding_min']:+.2f} to {r['coding_max']:+.2f}",
            "non_substantive": bool(r.get("non_substantive", False)),
        }
        for a, b in ((r["var_a"], r["var_b"]), (r["var_b"], r["var_a"])):
            records.append(base | {"var_a": str(a), "var_b": str(b)})
    return records


def overview_matrix(
    frame: pd.DataFrame, *, cell: int | None = None, chosen: tuple[str, str] | None = None
) -> alt.LayerChart:
    """A matrix of the columns of an overview, each cell coloured by the pair's estimate.

    Parameters
    ----------
    frame : pandas.DataFrame
        The result of :func:`rankfold.overview` (columns ``var_a``, ``var_b``, ``estimate``;
        ``sparse``, ``coding_*`` and the others are used when present).
    cell : int, optional
        Side of a cell in pixels (default 44 up to 12 columns, with the estimates printed,
        and 22 beyond).
    chosen : (str, str), optional
        A pair ``(var_a, var_b)`` to outline (in both triangles), e.g. the pair open in the
        explorer.

    Returns
    -------
    altair.LayerChart
        Both triangles filled (the pair (a, b) appears twice), estimates on a diverging colour
        scale from -1 to 1 centred on 0, undefined estimates in light grey; a small ring marks
        pairs whose table fails Cochran's rule, and a cross pairs whose sign or significance
        (95% interval excluding 0) changes across the codings that meet the rule (only when
        the ranges were computed). Clicking a cell sets the point selection
        :data:`PAIR_CLICK` (``"pair_click"``) to the cell's ``var_a`` (its row) and ``var_b``
        (its column).

    Notes
    -----
    The colour shows the estimate only: compare ``p_adjusted`` (in the tooltip) rather than
    the colour when deciding which pairs stand out, since scanning many pairs makes some look
    strong by chance (Holm 1979, Scand. J. Statist. 6:65).
    """
    if not isinstance(frame, pd.DataFrame):
        raise ValueError(f"overview_matrix needs the frame from rankfold.overview; got "
                         f"{type(frame).__name__}.")
    needed = ["var_a", "var_b", "estimate", "ci_low", "ci_high"]
    missing = [c for c in needed if c not in frame.columns]
    if missing:
        raise ValueError(
            f"The frame lacks the column(s) {missing}; pass the result of rankfold.overview()."
        )
    names = [str(x) for x in frame.attrs.get("columns") or
             dict.fromkeys([*frame["var_a"], *frame["var_b"]])]
    records = _matrix_records(frame, names)
    printed = len(names) <= 12
    cell = cell or (44 if printed else 22)
    measure = frame.attrs.get("measure", "estimate")
    with building():
        x = alt.X(field="var_b", type="nominal", sort=names, title=None,
                  axis=alt.Axis(orient="top", labelAngle=-45, labelLimit=120))
        y = alt.Y(field="var_a", type="nominal", sort=names, title=None,
                  axis=alt.Axis(labelLimit=140))
        click = alt.selection_point(name=PAIR_CLICK, fields=["var_a", "var_b"], on="click")
        tooltip = [
            alt.Tooltip(field="var_a", type="nominal", title="down the side"),
            alt.Tooltip(field="var_b", type="nominal", title="across the top"),
            alt.Tooltip(field="text", type="nominal", title=str(measure)),
            alt.Tooltip(field="ci", type="nominal", title="95% interval"),
            alt.Tooltip(field="p_adjusted", type="quantitative", format=".3g",
                        title="adjusted p"),
            alt.Tooltip(field="n", type="quantitative", format=",.6~g", title="n"),
            alt.Tooltip(field="codings", type="nominal", title="across codings"),
            alt.Tooltip(field="sparse", type="nominal", title="sparse"),
            alt.Tooltip(field="non_substantive", type="nominal", title="off-scale answers"),
        ]
        blank = alt.Chart().mark_rect(fill=_EMPTY, stroke="#ffffff", strokeWidth=1,
                                      cursor="pointer").encode(x=x, y=y, tooltip=tooltip
                                                               ).add_params(click)
        legend = alt.Legend(orient="bottom", type="symbol", direction="horizontal",
                            symbolType="square", symbolSize=160, symbolStrokeWidth=0,
                            values=[-1, -0.5, 0, 0.5, 1])
        colour = alt.Chart().mark_rect(stroke="#ffffff", strokeWidth=1, cursor="pointer").encode(
            x=x, y=y, tooltip=tooltip,
            color=alt.Color(field="estimate", type="quantitative", title=str(measure),
                            scale=alt.Scale(domain=[-1, 0, 1], range=[_LOW, "#f3f0ea", _HIGH]),
                            legend=legend),
        ).transform_filter("datum.estimate != null")
        shape = alt.Shape(field="flag", type="nominal", title=None, scale=alt.Scale(
            domain=["sparse", "unstable"], range=["circle", "cross"]),
            legend=alt.Legend(orient="bottom", labelLimit=320, labelExpr=(
                "datum.label == 'sparse' ? 'sparse table (Cochran)' "
                ": 'sign or significance changes across codings'")))
        corner = cell / 2 - 5  # marks sit in the cell's upper corners, clear of the number
        flags = [
            alt.Chart().transform_filter(f"datum.{flag} == true").transform_calculate(
                flag=f"'{flag}'").mark_point(
                filled=False, strokeWidth=1.3, color="#222222", size=28,
                xOffset=offset * corner, yOffset=-corner,
            ).encode(x=x, y=y, tooltip=tooltip, shape=shape)
            for flag, offset in (("sparse", 1), ("unstable", -1))
        ]
        layers = [blank, colour, *flags]
        if chosen is not None:
            a, b = (str(v) for v in chosen)
            pick = (f"(datum.var_a == {json.dumps(a)} && datum.var_b == {json.dumps(b)}) || "
                    f"(datum.var_a == {json.dumps(b)} && datum.var_b == {json.dumps(a)})")
            layers.append(alt.Chart().mark_rect(fill=None, stroke="#111111", strokeWidth=2.5)
                          .encode(x=x, y=y).transform_filter(pick))
        if printed:
            layers.append(alt.Chart().mark_text(fontSize=9).encode(
                x=x, y=y, text=alt.Text(field="text", type="nominal"),
                color=alt.Color(field="ink", type="nominal", legend=None, scale=alt.Scale(
                    domain=["dark", "light"], range=["#1a1a1a", "#ffffff"])),
            ).transform_filter("datum.estimate != null"))
        adjust = frame.attrs.get("adjust")
        return alt.LayerChart(
            data=inline_data(records), layer=layers, width=alt.Step(cell),
            height=alt.Step(cell),
            title=alt.Title(
                f"{measure} of every pair of columns",
                subtitle=f"click a cell to open that pair; p-values adjusted ({adjust})"
                if adjust else "click a cell to open that pair; p-values not adjusted"),
            background="#ffffff",
        ).resolve_scale(color="independent")
