"""Export: charts to files, the code that rebuilds the table, the coded columns."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

import altair as alt
import ipywidgets as widgets

from rankfold import OrdinalTable

from . import formatting
from .table_mode import has_records

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["save_chart", "code_snippet", "ExportSection", "CHART_FORMATS"]

#: File formats a chart can be saved in; PNG and SVG need the vl-convert-python package.
CHART_FORMATS = ("html", "json", "png", "svg")
_CHART_NAMES = {"heatmap": "heatmap", "pairs": "pair view", "comparison": "comparison"}  # CHARTS


def save_chart(chart: alt.TopLevelMixin, path: str | Path) -> Path:
    """Save a chart; the format follows the file suffix.

    Parameters
    ----------
    chart : altair chart
        One of the explorer's charts (or any Altair chart).
    path : str or Path
        Ending in ``.html`` (a page that works offline: the Vega libraries are written into
        it), ``.json`` (the Vega-Lite specification), ``.png`` or ``.svg``.

    Returns
    -------
    Path
        The absolute path written.
    """
    path = Path(path)
    suffix = path.suffix.lower().lstrip(".")
    if suffix not in CHART_FORMATS:
        raise ValueError(
            f"Cannot tell the format of {path.name!r}: end the file name with one of "
            f"{['.' + f for f in CHART_FORMATS]}."
        )
    if suffix in ("png", "svg", "html"):
        try:
            import vl_convert  # noqa: F401
        except ImportError as err:
            raise ValueError(
                f"Saving as {suffix.upper()} needs the vl-convert-python package "
                "(pip install vl-convert-python); JSON works without it."
            ) from err
    if suffix == "html":
        chart.save(path, format="html", inline=True, embed_options={"actions": False})
    else:
        chart.save(path, format=suffix)
    return path.resolve()


def code_snippet(table: OrdinalTable, data_name: str = "df", records: bool = True) -> str:
    """Python that rebuilds ``table`` and its measures from the raw frame, then the coded columns.

    Parameters
    ----------
    table : OrdinalTable
        A table built from a DataFrame with :func:`rankfold.table`.
    data_name : str
        Name of the frame in the reader's code.
    records : bool
        Whether ``data_name`` is a pandas DataFrame of records; without one (a Dask frame,
        files, a ready table) the line that recodes the columns is left out.

    Returns
    -------
    str
        :meth:`OrdinalTable.to_code` followed by a line that applies the same coding to the two
        columns as new ordered Categoricals (:func:`rankfold.apply_steps`).
    """
    columns = [table.row_name, table.col_name]
    if not records:
        return table.to_code(data_name)
    return (
        table.to_code(data_name)
        + f"coded = rankfold.apply_steps({data_name}[{columns!r}], table.steps)\n"
    )


class ExportSection:
    """Buttons that save a chart or the coded columns, and the code of the current table.

    Parameters
    ----------
    propose : callable
        The explorer's entry point (unused: exporting does not change the state).
    notify : callable
        Shows where a file was written, or why it could not be.
    """

    title = "Export"

    def __init__(self, propose: Callable, notify: Callable) -> None:
        self._notify = notify
        self._rendered = None
        self._chart = widgets.Dropdown(options=[(v, k) for k, v in _CHART_NAMES.items()],
                                       description="chart")
        self._chart.add_class("rankfold-export-chart")
        self._stem = widgets.Text(value="rankfold", description="file name")
        self._stem.add_class("rankfold-export-name")
        buttons = []
        for fmt in CHART_FORMATS:
            button = widgets.Button(description=fmt.upper(), tooltip=f"Save the chart as {fmt}",
                                    layout=widgets.Layout(width="auto"))
            button.add_class(f"rankfold-export-{fmt}")
            button.on_click(self._saver(fmt))
            buttons.append(button)
        columns = widgets.Button(description="coded columns (CSV)",
                                 tooltip="Save the two columns with the current coding",
                                 layout=widgets.Layout(width="auto"))
        columns.add_class("rankfold-export-columns")
        columns.on_click(lambda _: self._save_columns())
        report = widgets.Button(description="report (one HTML file)", layout=columns.layout,
                                tooltip="Save a self-contained page of the current results")
        report.add_class("rankfold-export-report")
        report.on_click(lambda _: self._save_report())
        self._code = widgets.HTML()
        self._code.add_class("rankfold-code")
        self.widget = widgets.VBox([
            widgets.HBox([self._chart, self._stem]),
            widgets.HBox([*buttons, columns, report]),
            widgets.HTML("<p>Files go to the notebook's folder. The code below rebuilds the "
                         "current table and measures from <code>df</code> (your frame) and adds "
                         "the coded columns; <code>explorer.coded_columns()</code> returns them "
                         "directly.</p>"),
            self._code,
        ])
        self.widget.add_class("rankfold-export")

    def show(self, rendered: Rendered) -> None:
        """Show the code of the current table."""
        self._rendered = rendered
        records = has_records(rendered.source.data)
        code = code_snippet(rendered.table, records=records)
        self._code.value = f"<pre>{formatting.text(code)}</pre>"

    def _saver(self, fmt: str) -> Callable:
        def save(_) -> None:
            name = self._chart.value
            chart = self._rendered.chart(name)
            if chart is None:
                self._notify("There is no pair view to save yet: choose a cell first.", error=True)
                return
            try:
                written = save_chart(chart, f"{self._stem.value or 'rankfold'}-{name}.{fmt}")
            except (ValueError, OSError) as err:
                self._notify(f"Could not save the chart: {err}", error=True)
                return
            self._notify(f"Saved the {_CHART_NAMES[name]} to {written}")

        return save

    def _save_columns(self) -> None:
        path = Path(f"{self._stem.value or 'rankfold'}-coded-columns.csv")
        try:
            self._rendered.coded_columns().to_csv(path)
        except (ValueError, OSError) as err:
            self._notify(f"Could not save the coded columns: {err}", error=True)
            return
        self._notify(f"Saved the coded columns to {path.resolve()}")

    def _save_report(self) -> None:
        from .report import rendered_report, small_sweep  # report.py imports this module

        records = has_records(self._rendered.source.data)
        try:
            written = rendered_report(self._rendered, f"{self._stem.value or 'rankfold'}.html",
                                      small_sweep(self._rendered), records)
        except (ValueError, OSError) as err:
            self._notify(f"Could not save the report: {err}", error=True)
            return
        self._notify(f"Saved the report to {written}")
