"""The codings view: every way to merge neighbouring categories, and how far each measure moves.

The numbers all come from :mod:`rankfold.sweep`; this module lays them out. Each measure gets a
strip of its estimates by the number of categories a coding keeps, with the codings that meet
Cochran's sparse-cell rule drawn to the right of each strip and the others to the left. The
table as collected, the current coding and the suggested coding are marked; clicking a coding
applies it as merge steps.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import altair as alt
import ipywidgets as widgets
import numpy as np
import pandas as pd

import rankfold
from rankfold import OrdinalTable, measure_label
from rankfold.collapsing import (
    DEFAULT_MAX_SCHEMES,
    DEFAULT_SWEEP_MEASURES,
    LATENT_MEASURES,
    CollapsingSuggestion,
    coding_groups,
    coding_of,
    count_codings,
    range_sentence,
    rule_met,
    sweep_ranges,
)
from rankfold.steps import merged_label

from . import formatting
from .chart_pane import CLICK, ChartPane
from .state import Edit

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["SweepSection", "SweptCodings", "sweep_chart", "swept_codings", "POINT_LIMIT",
           "AUTO_LIMIT"]

#: Up to this many codings every one is drawn (and can be clicked); beyond, each strip shows
#: the range and quartiles of the estimates instead.
POINT_LIMIT = 4000
#: Sweeps up to this size run as soon as the view opens; larger ones wait for the button.
AUTO_LIMIT = 4000

MEETS = "meets Cochran's rule"
FAILS = "does not meet it"
_RULE_COLOURS = {MEETS: "#1b8a5a", FAILS: "#9a9a9a"}
ROLES = {"as collected": ("#222222", "circle"), "current coding": ("#3a78b5", "diamond"),
         "suggested": ("#d9822b", "square")}
#: Buttons as wide as their text ("auto" alone lets a flex row squeeze them to "Sweep every co…").
_WHOLE_TEXT = {"width": "auto", "min_width": "fit-content", "flex": "0 0 auto"}
_HALF = 0.42  # half the width of a strip, in category units
_GOLDEN = (np.sqrt(5) - 1) / 2


@dataclass(frozen=True)
class SweptCodings:
    """One sweep and what the view needs around it.

    Attributes
    ----------
    table : OrdinalTable
        The table that was swept: as collected, with the exclusions and new orders applied.
    kept : tuple of Edit
        The explorer edits that made ``table`` (merges excluded).
    frame : pandas.DataFrame
        :func:`rankfold.sweep` of ``table``.
    suggestion : CollapsingSuggestion
        :func:`rankfold.suggest_collapsing` of ``table`` (Cochran's rule).
    """

    table: OrdinalTable
    kept: tuple
    frame: pd.DataFrame
    suggestion: CollapsingSuggestion


def swept_table(collected: OrdinalTable, edits: tuple) -> tuple[OrdinalTable, tuple]:
    """The table to sweep and the edits that make it: ``collected`` with every edit but merges.

    An exclusion or new order that names a merged category cannot stand without its merge;
    it is left out.
    """
    table, kept = collected, []
    for edit in edits:
        if edit.kind == "merge":
            continue
        try:
            table = edit.apply(table)
        except ValueError:
            continue
        kept.append(edit)
    return table, tuple(kept)


def current_coding(swept: OrdinalTable, current: OrdinalTable, edits: tuple) -> tuple | None:
    """The current table as a coding of the swept one, ``(row_cuts, col_cuts)``, or None.

    The merge edits are replayed on the swept table; when that gives the current table (same
    labels and counts, whatever the order of merges and exclusions), its cuts are returned.
    """
    recoded = swept
    try:
        for edit in edits:
            if edit.kind == "merge":
                recoded = edit.apply(recoded)
    except ValueError:
        return None
    same = (recoded.row_labels == current.row_labels and recoded.col_labels == current.col_labels
            and np.array_equal(recoded.cells, current.cells))
    return coding_of(swept, recoded) if same else None


def swept_codings(table: OrdinalTable, kept: tuple = (),
                  progress: Callable[[int, int], None] | None = None) -> SweptCodings:
    """Sweep a table and find the coding suggested by Cochran's rule.

    Parameters
    ----------
    table : OrdinalTable
        The table to sweep (see :func:`swept_table`).
    kept : tuple of Edit
        The edits that made it, carried along for applying a coding later.
    progress : callable, optional
        Passed to :func:`rankfold.sweep`.

    Returns
    -------
    SweptCodings
    """
    measures = (*DEFAULT_SWEEP_MEASURES, *LATENT_MEASURES,
                *(("partial_gamma",) if table.control_name else ()))
    frame = rankfold.sweep(table, measures=measures, progress=progress, changes=True)
    return SweptCodings(table, kept, frame, rankfold.suggest_collapsing(table))


def _measures_in(frame: pd.DataFrame) -> list[str]:
    return [m for m in (*DEFAULT_SWEEP_MEASURES, *LATENT_MEASURES, "partial_gamma")
            if m in frame.columns]


def _strip_offsets(categories: np.ndarray, meets: np.ndarray) -> np.ndarray:
    """Horizontal place of each coding inside its strip: codings meeting the rule to the right
    of the centre, the others to the left, spread evenly (a golden-ratio sequence)."""
    out = np.zeros(len(categories))
    for value in np.unique(categories):
        for side, chosen in ((1.0, meets), (-1.0, ~meets)):
            where = np.flatnonzero((categories == value) & chosen)
            spread = (np.arange(len(where)) * _GOLDEN) % 1.0
            out[where] = side * (0.06 + spread * (_HALF - 0.06))
    return out


def _records(frame: pd.DataFrame) -> list[dict]:
    """JSON-ready rows (NaN becomes null, numpy scalars become Python ones)."""
    clean = frame.astype(object).where(frame.notna(), None)
    return clean.to_dict(orient="records")


def _marked_rows(frame: pd.DataFrame, marked: dict) -> list[tuple[str, int]]:
    """(role, position in the frame) of each marked coding found in the frame."""
    found = []
    for role, cuts in marked.items():
        if cuts is None:
            continue
        hit = np.flatnonzero((frame["row_cuts"].to_numpy() == cuts[0])
                             & (frame["col_cuts"].to_numpy() == cuts[1]))
        if hit.size:
            found.append((role, int(hit[0])))
    return found


#: Suffix of the data field that says a coding's change exceeds its noise.
BEYOND = "__beyond_noise"


def _beyond_noise(frame: pd.DataFrame, measure: str) -> np.ndarray:
    """Codings whose change from the swept table exceeds 1.96 paired standard errors."""
    if f"{measure}_change_se" not in frame:
        return np.zeros(len(frame), dtype=bool)
    change, se = frame[f"{measure}_change"].to_numpy(), frame[f"{measure}_change_se"].to_numpy()
    with np.errstate(invalid="ignore"):
        return np.abs(change) > 1.959964 * se


def _point_data(frame, labels, x, meets, marks) -> pd.DataFrame:
    """One wide row per coding (estimates under the measure keys), then the marked ones."""
    wide = pd.DataFrame({
        "kind": "coding", "role": None, "x": np.round(x, 3),
        "rule": np.where(meets, MEETS, FAILS),
        "rows": frame["row_groups"].astype(str).to_numpy(),
        "cols": frame["col_groups"].astype(str).to_numpy(),
        "row_cuts": frame["row_cuts"].to_numpy(), "col_cuts": frame["col_cuts"].to_numpy(),
        **{m: np.round(frame[m].to_numpy(), 4) for m in labels},
        **{f"{m}{BEYOND}": _beyond_noise(frame, m).astype(int) for m in labels},
    })
    chosen = wide.iloc[[k for _, k in marks]].assign(kind="mark", role=[r for r, _ in marks])
    return pd.concat([wide, chosen], ignore_index=True)


def _range_data(frame, labels, x, meets, marks) -> pd.DataFrame:
    """Per measure, categories kept and rule: the spread (from the core), then marked codings."""
    ranges = sweep_ranges(frame, list(labels))
    spread = ranges.assign(
        kind="range", measure=ranges["measure"].map(labels),
        x=ranges["categories"] + np.where(ranges["meets_rule"], _HALF / 2, -_HALF / 2),
        rule=np.where(ranges["meets_rule"], MEETS, FAILS),
    ).drop(columns=["meets_rule"])
    categories = (frame["n_rows"] + frame["n_cols"]).to_numpy()
    points = [
        {"kind": "mark", "role": role, "measure": label, "estimate": frame[m].iloc[k],
         "x": categories[k] + (_HALF / 2 if meets[k] else -_HALF / 2),
         "rows": str(frame["row_groups"].iloc[k]), "cols": str(frame["col_groups"].iloc[k])}
        for role, k in marks for m, label in labels.items()
    ]
    return pd.concat([spread, pd.DataFrame(points)], ignore_index=True)


def sweep_chart(
    frame: pd.DataFrame,
    row_name: str,
    col_name: str,
    marked: dict[str, tuple[int, int] | None],
) -> alt.FacetChart:
    """Each measure's estimates across codings, by categories kept.

    Parameters
    ----------
    frame : pandas.DataFrame
        A :func:`rankfold.sweep` frame.
    row_name, col_name : str
        Variable names, for the measure labels.
    marked : dict
        ``{role: (row_cuts, col_cuts) or None}`` for the roles of :data:`ROLES`.

    Returns
    -------
    altair.FacetChart
        One row per measure. With at most :data:`POINT_LIMIT` codings every coding is a point
        (clicking it selects ``row_cuts`` and ``col_cuts`` through the selection named
        :data:`~rankfold.widgets.chart_pane.CLICK`); beyond, a line spans the lowest to highest
        estimate and a bar the quartiles, per number of categories and rule.
    """
    labels = {m: measure_label(m, row_name, col_name) for m in _measures_in(frame)}
    categories = (frame["n_rows"] + frame["n_cols"]).to_numpy()
    meets = rule_met(frame)
    x = categories + _strip_offsets(categories, meets)
    marks = _marked_rows(frame, marked)
    low, high = int(categories.min()), int(categories.max())
    x_enc = alt.X("x:Q", title="categories kept (rows + columns)",
                  scale=alt.Scale(domain=[low - 0.6, high + 0.6], nice=False),
                  axis=alt.Axis(values=list(range(low, high + 1)), format="d", grid=False))
    y_scale = alt.Scale(zero=False)
    colour = alt.Color("rule:N", title=None, legend=alt.Legend(orient="bottom"),
                       scale=alt.Scale(domain=list(_RULE_COLOURS),
                                       range=list(_RULE_COLOURS.values())))
    tooltip = [alt.Tooltip("rows:N", title=row_name), alt.Tooltip("cols:N", title=col_name),
               alt.Tooltip("estimate:Q", format=".4f")]
    base = alt.Chart()
    parts = []
    points = len(frame) <= POINT_LIMIT
    if points:
        data = _point_data(frame, labels, x, meets, marks)
        pick = alt.selection_point(name=CLICK, fields=["row_cuts", "col_cuts"], on="click")
        # A dark ring marks a coding whose change from the swept table exceeds its noise
        # (paired delta method, |change| > 1.96 SE). Drawn by the points' own stroke: a layer
        # of its own would be empty in some measures' strips, which Vega warns about.
        beyond = "datum.beyond == 1"
        parts.append(
            base.transform_calculate(beyond=f"datum[datum.key + '{BEYOND}']")
            .transform_filter("datum.kind == 'coding' && isValid(datum.estimate)")
            .mark_circle(opacity=0.6, strokeWidth=1.2)
            .encode(x=x_enc, y=alt.Y("estimate:Q", title=None, scale=y_scale), color=colour,
                    size=alt.condition(beyond, alt.value(60), alt.value(22)),
                    stroke=alt.condition(beyond, alt.value("#222222"), alt.value(None)),
                    tooltip=[*tooltip, alt.Tooltip("rule:N", title="sparse cells")])
            .add_params(pick)
        )
    else:
        data = _range_data(frame, labels, x, meets, marks)
        ranged = base.transform_filter("datum.kind == 'range' && isValid(datum.low)")
        parts.append(ranged.mark_rule(strokeWidth=1.5).encode(
            x=x_enc, y=alt.Y("low:Q", title=None, scale=y_scale), y2="high:Q", color=colour))
        parts.append(ranged.mark_bar(size=9, opacity=0.8).encode(
            x=x_enc, y=alt.Y("lower_quartile:Q", scale=y_scale), y2="upper_quartile:Q",
            color=colour,
            tooltip=[alt.Tooltip("codings:Q", title="codings"),
                     alt.Tooltip("low:Q", format=".3f"), alt.Tooltip("median:Q", format=".3f"),
                     alt.Tooltip("high:Q", format=".3f")]))
    role_scale = {"domain": list(ROLES)}
    parts.append(
        base.transform_filter("datum.kind == 'mark' && isValid(datum.estimate)")
        .mark_point(filled=False, size=170, strokeWidth=2.2)
        .encode(x=x_enc, y=alt.Y("estimate:Q", scale=y_scale),
                stroke=alt.Stroke("role:N", title=None, legend=alt.Legend(orient="bottom"),
                                  scale=alt.Scale(**role_scale,
                                                  range=[c for c, _ in ROLES.values()])),
                shape=alt.Shape("role:N", title=None, legend=alt.Legend(orient="bottom"),
                                scale=alt.Scale(**role_scale,
                                                range=[s for _, s in ROLES.values()])),
                tooltip=[alt.Tooltip("role:N", title="coding"), *tooltip])
    )
    chart = alt.layer(*parts, data=alt.Data(values=_records(data)), width=380, height=120)
    if points:
        # Fold the estimate columns into (key, estimate) rows, then name each key; labels stay
        # out of field names, where quotes and dots would need escaping.
        names = alt.LookupData(
            alt.Data(values=[{"key": m, "measure": label} for m, label in labels.items()]),
            key="key", fields=["measure"])
        chart = chart.transform_fold(list(labels), as_=["key", "estimate"]).transform_lookup(
            lookup="key", from_=names)
    return (
        chart.facet(row=alt.Row("measure:N", sort=list(labels.values()), title=None,
                                # each measure's name above its strip, not beside it: the
                                # chart then fits a narrow tab
                                header=alt.Header(labelAngle=0, labelAlign="left",
                                                  labelOrient="top", labelAnchor="start",
                                                  labelFontWeight="bold", labelLimit=420)))
        .resolve_scale(y="independent")
        .properties(title=alt.Title(
            "Every coding by merging neighbouring categories",
            subtitle=f"{len(frame):,} codings; green: Cochran's rule met (right of each strip)"
                     + ("; ringed: changed by more than its noise" if points else "")))
        .configure(background="#ffffff")
    )


def _groups_text(groups: tuple) -> str:
    return " | ".join(merged_label(g) for g in groups)


def summary_html(swept: SweptCodings, current: tuple[int, int] | None) -> str:
    """The range sentence, the rule count, the suggestion and notes, as HTML."""
    table, frame, found = swept.table, swept.frame, swept.suggestion
    meeting = int(rule_met(frame).sum())
    lines = [
        f'<p class="rankfold-sweep-range">'
        f"{formatting.text(range_sentence(frame, table.row_name, table.col_name))}</p>",
        f"<p>{meeting:,} of {len(frame):,} codings meet Cochran's rule (no expected count "
        "below 1, at most 20% of cells below 5), which reads only the margins, never the "
        "association.</p>",
    ]
    if found.table is None:
        lines.append(f'<p class="rankfold-sweep-suggestion">{formatting.text(found.note)}</p>')
    else:
        lines.append(
            '<p class="rankfold-sweep-suggestion">Suggested (fewest merges meeting the rule): '
            f"{formatting.text(table.row_name)}: {formatting.text(_groups_text(found.row_groups))}"
            f"; {formatting.text(table.col_name)}: "
            f"{formatting.text(_groups_text(found.col_groups))}. {formatting.text(found.note)}</p>"
        )
    notes = []
    if current is None:
        notes.append("The current coding is not one of these: it leaves out or reorders "
                     "categories that were merged.")
    if table.control_name:
        notes.append("Measures and the rule use the table pooled over the control variable's "
                     "levels; partial gamma "
                     "compares units only within a level.")
    if "cumulative_logit" in frame.columns:
        notes.append("The polychoric correlation and the cumulative-logit slope assume a "
                     "continuous scale underneath; under that assumption merging neighbouring "
                     "categories leaves them unchanged, so a wide range for gamma beside a "
                     "narrow one for them points to ties, not to a changed association. The "
                     "slope counts steps of the row variable: merging its categories changes "
                     "what one step means.")
    if table.weight_kind == "sampling":
        notes.append("With sampling weights the rule counts respondents (records) per cell, "
                     "not weighted totals.")
    lines += [f'<p class="rankfold-hint">{formatting.text(n)}</p>' for n in notes]
    lines.append('<p class="rankfold-hint">Click a coding to apply it as merge steps.</p>'
                 if len(frame) <= POINT_LIMIT else
                 '<p class="rankfold-hint">Too many codings to draw one by one: each strip '
                 "shows the lowest to highest estimate and the middle half.</p>")
    return "\n".join(lines)


class SweepSection:
    """The codings view (see the module docstring).

    Parameters
    ----------
    propose : callable
        Takes a function from state to new state (the explorer's only entry point).
    notify : callable
        ``notify(text, error=False)`` shows a message in the explorer.
    """

    title = "Codings"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._propose = propose
        self._notify = notify
        self._swept: SweptCodings | None = None
        self._key: tuple | None = None
        self._rendered = None
        self._summary = widgets.HTML()
        self._summary.add_class("rankfold-sweep-summary")
        # width "auto": the default width cuts the descriptions short
        self._run = widgets.Button(
            description="Sweep every coding", icon="play", layout=_WHOLE_TEXT,
            tooltip="Compute the measures for every way of merging neighbouring categories")
        self._run.add_class("rankfold-sweep-run")
        self._run.on_click(lambda _: self._sweep_now())
        self._use = widgets.Button(
            description="Use the suggested coding", icon="check", layout=_WHOLE_TEXT,
            tooltip="Apply the merges suggested from cell counts alone (not from the results)")
        self._use.add_class("rankfold-sweep-use")
        self._use.on_click(lambda _: self._apply_suggestion())
        self._bar = widgets.IntProgress(min=0, max=1, value=0, description="codings",
                                        layout=widgets.Layout(visibility="hidden"))
        self._bar.add_class("rankfold-sweep-progress")
        self._pane = ChartPane("rankfold-sweep", on_click=self._clicked)
        self.widget = widgets.VBox([
            self._summary,
            widgets.HBox([self._run, self._use, self._bar],
                         layout=widgets.Layout(flex_flow="row wrap")),
            self._pane.widget,
        ])

    # ------------------------------------------------------------------ showing
    def show(self, rendered: Rendered) -> None:
        """Display the rendered state; sweep at once when the sweep is small."""
        self._rendered = rendered
        table, kept = swept_table(rendered.collected, rendered.state.edits)
        key = (rendered.state.table_key, kept)
        if key != self._key:
            self._key, self._swept = key, None
        if self._swept is None:
            try:
                total = count_codings(table)
            except ValueError as err:
                self._waiting(str(err), runnable=False)
                return
            if total > DEFAULT_MAX_SCHEMES:
                self._waiting(
                    f"{total:,} codings: too many to sweep here. Merge some sparse categories "
                    "first (each merge roughly halves the count), or sweep one variable at a "
                    "time in code: rankfold.sweep(table, axes='rows').", runnable=False)
                return
            if total > AUTO_LIMIT:
                self._waiting(
                    f"{total:,} codings to evaluate: this takes a few seconds. Press the button "
                    "to sweep them.", runnable=True)
                return
            self._sweep(table, kept)
        self._draw()

    def _waiting(self, text: str, runnable: bool) -> None:
        self._summary.value = f'<p class="rankfold-hint">{formatting.text(text)}</p>'
        self._run.layout.display = None if runnable else "none"
        self._use.disabled = True
        self._pane.show(None)

    def _sweep(self, table: OrdinalTable, kept: tuple) -> None:
        def progress(done: int, total: int) -> None:
            self._bar.max, self._bar.value = total, done

        self._bar.layout.visibility = "visible"
        try:
            self._swept = swept_codings(table, kept, progress)
        finally:
            self._bar.layout.visibility = "hidden"

    def _draw(self) -> None:
        swept = self._swept
        full = tuple((1 << (n - 1)) - 1 for n in swept.table.shape)
        current = current_coding(swept.table, self._rendered.table,
                                 self._rendered.state.edits)
        found = swept.suggestion
        marked = {
            "as collected": full,
            "current coding": current,
            "suggested": None if found.table is None else (found.row_cuts, found.col_cuts),
        }
        self._summary.value = summary_html(swept, current)
        self._run.layout.display = "none"
        self._use.disabled = found.table is None or marked["suggested"] == current
        self._pane.show(sweep_chart(swept.frame, swept.table.row_name, swept.table.col_name,
                                    marked))

    # ------------------------------------------------------------------ actions
    def _sweep_now(self) -> None:
        rendered = self._rendered
        table, kept = swept_table(rendered.collected, rendered.state.edits)
        try:
            self._sweep(table, kept)
        except ValueError as err:
            self._notify(str(err), error=True)
            return
        self._draw()

    def _apply(self, row_cuts: int, col_cuts: int) -> None:
        swept = self._swept
        groups = coding_groups(swept.table, row_cuts, col_cuts)
        names = {"rows": swept.table.row_name, "cols": swept.table.col_name}
        merges = [
            Edit("merge", names[axis], tuple(g for g in groups[axis] if len(g) > 1))
            for axis in ("rows", "cols") if any(len(g) > 1 for g in groups[axis])
        ]

        kept = (*swept.kept, *merges)

        def recode(state):
            for variable in names.values():
                state = state.with_coding(
                    variable, tuple(e for e in kept if e.variable == variable))
            return state

        # Exclusions and new orders that name a merged category cannot be replayed on the
        # swept table: say which ones the coding leaves behind.
        lost = [e for e in self._rendered.state.edits if e.kind != "merge" and e not in kept]
        if self._propose(recode) and lost:
            self._notify(
                "Applied the coding; these steps named merged categories and could not be "
                "replayed on it, so they were taken back (undo restores them): "
                + "; ".join(e.describe() for e in lost) + ".")

    def _apply_suggestion(self) -> None:
        found = self._swept.suggestion if self._swept is not None else None
        if found is not None and found.table is not None:
            self._apply(found.row_cuts, found.col_cuts)

    def _clicked(self, point: dict) -> None:
        if self._swept is not None and "row_cuts" in point:
            self._apply(int(point["row_cuts"]), int(point["col_cuts"]))
