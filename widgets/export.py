"""Export: charts and the measures table to files, the code that rebuilds the table, the coded
columns, and a copy button for the measures table.

Files from the Export tab go to a folder the user sets (default :data:`DEFAULT_FOLDER`, relative
to the kernel's working directory, which is the notebook's folder in Jupyter); an existing file
is never overwritten (``-2``, ``-3``... are added, :func:`~rankfold.widgets.report.free_path`).
"""

from __future__ import annotations

import contextlib
import math
import re
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import TYPE_CHECKING

import altair as alt
import anywidget
import ipywidgets as widgets
import pandas as pd
import traitlets

from rankfold import OrdinalTable, measure_label

from . import formatting
from .chart_pane import as_altair, specification
from .named_charts import CHARTS, named_chart
from .pickers import labelled
from .table_mode import has_records

if TYPE_CHECKING:
    from .render import Rendered

__all__ = ["save_chart", "static_spec", "code_snippet", "measures_text", "save_measures",
           "coding_caption", "CopyButton", "ExportSection", "CHART_FORMATS", "TABLE_FORMATS",
           "DEFAULT_FOLDER"]

#: File formats a chart can be saved in; PNG and SVG need the vl-convert-python package.
CHART_FORMATS = ("html", "json", "png", "svg")
#: Formats of the measures table, with their file suffixes.
TABLE_FORMATS = {"csv": ".csv", "markdown": ".md", "latex": ".tex"}
#: Where the Export tab writes, relative to the kernel's working directory.
DEFAULT_FOLDER = "rankfold-exports"
#: Words that mark a phrase of a chart title as a hint for the live chart.
_HINT = re.compile(r"\b(click|clicking|hover|tap|drag)\b", re.IGNORECASE)


def save_chart(chart: alt.TopLevelMixin | dict, path: str | Path,
               caption: str | None = None) -> Path:
    """Save a chart; the format follows the file suffix.

    Parameters
    ----------
    chart : altair chart or dict
        One of the explorer's charts (or any Altair chart or Vega-Lite dictionary).
    path : str or Path
        Ending in ``.html`` (a page that works offline: the Vega libraries are written into
        it), ``.json`` (the Vega-Lite specification), ``.png`` or ``.svg``. PNG and SVG are
        still pictures: they are drawn from :func:`static_spec` (no hints such as "click a
        cell", and ``caption`` below the chart).
    caption : str, optional
        Lines (separated by newlines) written below a PNG or SVG chart, e.g.
        :func:`coding_caption`.

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
    if isinstance(chart, dict) and suffix in ("html", "json"):
        chart = as_altair(chart)
    if suffix == "html":
        chart.save(path, format="html", inline=True, embed_options={"actions": False})
    elif suffix == "json":
        chart.save(path, format=suffix)
    else:
        import vl_convert

        spec = static_spec(chart, caption)
        version = "_".join(alt.SCHEMA_VERSION.lstrip("v").split(".")[:2])
        if suffix == "svg":
            path.write_text(vl_convert.vegalite_to_svg(spec, vl_version=version),
                            encoding="utf-8")
        else:
            path.write_bytes(vl_convert.vegalite_to_png(spec, vl_version=version, scale=2))
    return path.resolve()


def _without_hints(value: object) -> object:
    """A title (text or list of lines) without the phrases that only make sense on screen."""
    if isinstance(value, str):
        kept = [part for part in re.split(r";\s*", value) if not _HINT.search(part)]
        return "; ".join(kept)
    if isinstance(value, list):
        return [line for line in (_without_hints(v) for v in value) if line]
    return value


def _strip_hints(spec: object) -> object:
    if isinstance(spec, dict):
        return {k: v if k == "data" else _without_hints(v)
                if k in ("title", "subtitle", "text") and not isinstance(v, dict)
                else _strip_hints(v) for k, v in spec.items()}
    if isinstance(spec, list):
        return [_strip_hints(v) for v in spec]
    return spec


def static_spec(chart: alt.TopLevelMixin | dict, caption: str | None = None) -> dict:
    """The chart's Vega-Lite specification for a still picture.

    Title phrases that address the live chart ("click a cell to see its pairs") are dropped
    (a ``;``-separated phrase naming click, hover, tap or drag), and ``caption`` is written
    below the chart as a bottom title, one line per line of text.

    Parameters
    ----------
    chart : altair chart
    caption : str, optional
        Lines separated by newlines.

    Returns
    -------
    dict
        A Vega-Lite specification (the data stay inline).
    """
    spec = _strip_hints(specification(chart))
    if not caption:
        return spec
    top = {k: spec.pop(k) for k in ("$schema", "config", "background", "padding", "autosize")
           if k in spec}
    lines = caption.splitlines()
    return {**top, "vconcat": [spec], "title": {
        "text": lines, "orient": "bottom", "anchor": "start", "fontSize": 11,
        "fontWeight": "normal", "color": "#333333", "offset": 12}}


def coding_caption(table: OrdinalTable) -> str:
    """The coding steps of ``table`` since counting, one per line, for a picture's caption.

    Parameters
    ----------
    table : OrdinalTable

    Returns
    -------
    str
        ``"Coding: none (the table as collected)"`` or ``"Coding steps:"`` followed by each
        step's :meth:`describe` line, and the number of units.
    """
    steps = table.steps[table.initial_steps:]
    units = f"{formatting.amount(table.n)} units"
    if not steps:
        return f"Coding: none (the table as collected); {units}"
    return "\n".join(["Coding steps:", *(f"{k}. {step.describe()}" for k, step in
                                         enumerate(steps, 1)), units])


def _readable(measures: pd.DataFrame, row_name: str, col_name: str) -> pd.DataFrame:
    frame = measures.copy()
    frame.insert(0, "label", [measure_label(k, row_name, col_name) for k in frame.index])
    return frame


def _cell(value: object, column: str) -> str:
    """A number to 4 decimals (p-values below 0.0001 in 2 significant digits), a blank for
    NaN; text as it is."""
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        small = column == "p_value" and value < 0.0001 or abs(value) >= 1e4
        return f"{value:.2g}" if small else f"{value:.4f}"
    return str(value)


_LATEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                  "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                  "^": r"\textasciicircum{}"}


def _latex(text: str) -> str:
    return "".join(_LATEX_SPECIAL.get(ch, ch) for ch in text)


def measures_text(measures: pd.DataFrame, fmt: str, row_name: str, col_name: str,
                  caption: str = "") -> str:
    """The measures table as text: CSV, Markdown or LaTeX.

    Parameters
    ----------
    measures : pandas.DataFrame
        :meth:`OrdinalTable.measures` (any index of measure keys, any columns).
    fmt : {'csv', 'markdown', 'latex'}
    row_name, col_name : str
        Variable names, for the readable ``label`` column put first.
    caption : str
        For Markdown and LaTeX: written under the table (Markdown) or as its caption (LaTeX),
        e.g. :func:`coding_caption`; CSV stays plain data.

    Returns
    -------
    str
        CSV with every digit (pandas ``to_csv``); Markdown and LaTeX with estimates to 4
        decimals (our own writers: pandas would need the tabulate or jinja2 packages). LaTeX
        is a ``tabular`` inside a ``table`` float, special characters escaped.
    """
    if fmt not in TABLE_FORMATS:
        raise ValueError(f"The measures table can be written as {list(TABLE_FORMATS)}; "
                         f"got {fmt!r}.")
    frame = _readable(measures, row_name, col_name)
    if fmt == "csv":
        return frame.to_csv()
    header = [frame.index.name or "measure", *map(str, frame.columns)]
    rows = [[str(key), *(_cell(v, c) for v, c in zip(values, frame.columns, strict=True))]
            for key, values in zip(frame.index, frame.itertuples(index=False), strict=True)]
    if fmt == "markdown":
        def line(cells: list[str]) -> str:
            return "| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |"

        text = [line(header), "|" + "|".join("---" for _ in header) + "|",
                *(line(r) for r in rows)]
        if caption:
            text += ["", *caption.splitlines()]
        return "\n".join(text) + "\n"
    align = "ll" + "r" * (len(header) - 3) + "p{5cm}" if header[-1] == "note" else \
        "ll" + "r" * (len(header) - 2)
    text = [r"\begin{table}", r"\centering", rf"\begin{{tabular}}{{{align}}}", r"\hline",
            " & ".join(map(_latex, header)) + r" \\", r"\hline",
            *(" & ".join(map(_latex, r)) + r" \\" for r in rows), r"\hline",
            r"\end{tabular}"]
    if caption:
        text.append(rf"\caption{{{_latex('; '.join(caption.splitlines()))}}}")
    text.append(r"\end{table}")
    return "\n".join(text) + "\n"


def table_target(path_or_format: str | Path, folder: str | Path = DEFAULT_FOLDER,
                 stem: str = "rankfold") -> tuple[str, Path]:
    """The format and file asked for by ``path_or_format``.

    A format name (``'csv'``, ``'markdown'`` or ``'md'``, ``'latex'`` or ``'tex'``) means
    ``<folder>/<stem>-measures<suffix>``; a file name ending in ``.csv``, ``.md`` or ``.tex``
    is used as given.

    Returns
    -------
    (str, Path)
        The format (a key of :data:`TABLE_FORMATS`) and the path asked for (not yet made
        free of existing files).
    """
    aliases = {"md": "markdown", "tex": "latex"}
    text = str(path_or_format)
    fmt = aliases.get(text.lower(), text.lower())
    if fmt in TABLE_FORMATS:
        return fmt, Path(folder) / f"{stem}-measures{TABLE_FORMATS[fmt]}"
    suffix = Path(text).suffix.lower()
    by_suffix = {v: k for k, v in TABLE_FORMATS.items()}
    if suffix not in by_suffix:
        raise ValueError(
            f"Cannot tell the format of {text!r}: give one of {list(TABLE_FORMATS)} or a file "
            f"name ending in {list(by_suffix)}."
        )
    return by_suffix[suffix], Path(text)


def save_measures(rendered: Rendered, path_or_format: str | Path = "csv",
                  folder: str | Path = DEFAULT_FOLDER, stem: str = "rankfold") -> Path:
    """Write the measures table of a rendered state to a file that did not exist before.

    Parameters
    ----------
    rendered : Rendered
    path_or_format : str or Path
        A format or a file name (see :func:`table_target`).
    folder, stem : str
        Where a format name writes, and the start of its file name; the folder is made if
        needed.

    Returns
    -------
    Path
        The absolute path written; ``-2``, ``-3``... are added rather than overwrite a file.
    """
    from .report import free_path  # report.py imports this module

    fmt, asked = table_target(path_or_format, folder, stem)
    table = rendered.table
    text = measures_text(rendered.measures, fmt, table.row_name, table.col_name,
                         coding_caption(table))
    asked.parent.mkdir(parents=True, exist_ok=True)
    target = free_path(asked)
    target.write_text(text, encoding="utf-8")
    return target.resolve()


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


_COPY_ESM = """
function render({ model, el }) {
  const button = document.createElement("button");
  button.className = "rankfold-copy-button jupyter-button";
  button.title = "Put the measures table on the clipboard, to paste into a document";
  const label = () => { button.textContent = model.get("description"); };
  label();
  model.on("change:description", label);
  const done = (ok) => {
    button.textContent = ok ? "copied" : "copy failed: select the text below";
    model.set("copied", model.get("copied") + (ok ? 1 : 0));
    model.save_changes();
    setTimeout(label, 1500);
  };
  const fallback = (text) => {
    const area = document.createElement("textarea");
    area.value = text;
    area.style.position = "fixed";
    area.style.opacity = "0";
    document.body.appendChild(area);
    area.select();
    let ok = false;
    try { ok = document.execCommand("copy"); } catch (e) { ok = false; }
    area.remove();
    return ok;
  };
  button.addEventListener("click", () => {
    const text = model.get("text");
    if (navigator.clipboard && window.isSecureContext) {
      navigator.clipboard.writeText(text).then(() => done(true), () => done(fallback(text)));
    } else {
      done(fallback(text));
    }
  });
  el.appendChild(button);
}
export default { render };
"""


class CopyButton(anywidget.AnyWidget):
    """A button that puts ``text`` on the clipboard, in the browser (no network needed).

    Attributes
    ----------
    text : str
        What a click copies.
    description : str
        The button's label.
    copied : int
        How many clicks copied successfully (counted by the browser).
    """

    _esm = _COPY_ESM
    text = traitlets.Unicode("").tag(sync=True)
    description = traitlets.Unicode("copy").tag(sync=True)
    copied = traitlets.Int(0).tag(sync=True)


def _with_label(control: widgets.DOMWidget) -> widgets.HBox:
    """The control with its description as a label that shows the same tooltip."""
    return labelled(control, control.description, control.tooltip)


class ExportSection:
    """Save charts, the measures table or the coded columns; copy the measures table; the code
    of the current table.

    Every file goes to the folder in the ``folder`` box (made when needed) under the name in
    the ``file name`` box, numbered rather than overwriting. PNG, HTML and the report show a
    busy line while they are written.

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
        wide = widgets.Layout(width="auto", max_width="100%")
        self._chart = widgets.Dropdown(options=[(v[0], k) for k, v in CHARTS.items()],
                                       description="chart", layout=wide,
                                       tooltip="Which chart the buttons save")
        self._chart.add_class("rankfold-export-chart")
        self.folder = widgets.Text(value=DEFAULT_FOLDER, description="folder", layout=wide,
                                   tooltip="Where files go, relative to the "
                                   "notebook's folder (made when needed)")
        self.folder.add_class("rankfold-export-folder")
        self._stem = widgets.Text(value="rankfold", description="file name", layout=wide,
                                  tooltip="How saved files start; a number is "
                                  "added rather than overwrite a file")
        self._stem.add_class("rankfold-export-name")
        self._buttons = []
        chart_buttons = []
        for fmt in CHART_FORMATS:
            still = " (a still picture with the coding steps below)" if fmt in ("png",
                                                                                "svg") else ""
            button = self._button(fmt.upper(), f"rankfold-export-{fmt}",
                                  f"Save the chart as {fmt.upper()}{still}", self._saver(fmt))
            chart_buttons.append(button)
        columns = self._button("coded columns (CSV)", "rankfold-export-columns",
                               "Save the two columns with the current coding",
                               lambda _: self._save_columns())
        report = self._button("report (one HTML file)", "rankfold-export-report",
                              "Save a self-contained page of the current results",
                              lambda _: self._save_report())
        self._table_format = widgets.Dropdown(
            options=[("CSV", "csv"), ("Markdown", "markdown"), ("LaTeX", "latex")],
            value="csv", description="measures as", layout=wide,
            tooltip="The text format of the measures table, for saving or copying")
        self._table_format.add_class("rankfold-export-table-format")
        self._table_format.observe(lambda _: self._update_copy(), "value")
        table_button = self._button("save the measures table", "rankfold-export-measures",
                                    "Save the measures table in the chosen format",
                                    lambda _: self._save_measures())
        self.copy = CopyButton(description="copy the measures table")
        self.copy.add_class("rankfold-copy-measures")
        self._busy = widgets.HTML()
        self._busy.add_class("rankfold-export-busy")
        self._code = widgets.HTML()
        self._code.add_class("rankfold-code")
        wrap = widgets.Layout(flex_flow="row wrap", max_width="100%")
        self.widget = widgets.VBox([
            widgets.HBox([_with_label(self.folder), _with_label(self._stem)], layout=wrap),
            widgets.HBox([_with_label(self._chart), *chart_buttons], layout=wrap),
            widgets.HBox([_with_label(self._table_format), table_button, self.copy],
                         layout=wrap),
            widgets.HBox([columns, report], layout=wrap),
            self._busy,
            widgets.HTML("<p>Pictures (PNG, SVG) leave out hints meant for the live chart and "
                         "carry the coding steps below. The code below rebuilds the current "
                         "table and measures from <code>df</code> (your frame) and adds the "
                         "coded columns; <code>explorer.coded_columns()</code> returns them "
                         "directly, and <code>explorer.export_measures('latex')</code> writes "
                         "the measures table from code.</p>"),
            self._code,
        ])
        self.widget.add_class("rankfold-export")

    def _button(self, text: str, css: str, tooltip: str, action: Callable) -> widgets.Button:
        button = widgets.Button(description=text, tooltip=tooltip,
                                layout=widgets.Layout(width="auto"))
        button.add_class(css)
        button.on_click(action)
        self._buttons.append(button)
        return button

    def show(self, rendered: Rendered) -> None:
        """Show the code of the current table and ready the copy button."""
        self._rendered = rendered
        records = has_records(rendered.source.data)
        code = code_snippet(rendered.table, records=records)
        self._code.value = f"<pre>{formatting.text(code)}</pre>"
        self._update_copy()

    def _update_copy(self) -> None:
        if self._rendered is None:
            return
        table = self._rendered.table
        self.copy.text = measures_text(self._rendered.measures, self._table_format.value,
                                       table.row_name, table.col_name, coding_caption(table))

    def _target(self, name: str) -> Path:
        """A free path for ``name`` in the chosen folder (the folder is made)."""
        from .report import free_path  # report.py imports this module

        folder = Path(self.folder.value.strip() or DEFAULT_FOLDER)
        folder.mkdir(parents=True, exist_ok=True)
        return free_path(folder / f"{self._stem.value.strip() or 'rankfold'}{name}")

    @contextlib.contextmanager
    def _busy_while(self, what: str) -> Iterator[None]:
        """Show a busy line (and disable the buttons) while ``what`` is written."""
        self._busy.value = (f'<p class="rankfold-busy" role="status">Writing {what}… '
                            "(this can take a few seconds)</p>")
        for button in self._buttons:
            button.disabled = True
        try:
            yield
        finally:
            for button in self._buttons:
                button.disabled = False
            self._busy.value = ""

    def _saver(self, fmt: str) -> Callable:
        def save(_) -> None:
            name = self._chart.value
            chart = named_chart(self._rendered, name)
            if chart is None:
                self._notify("There is no pair view to save yet: choose a cell first.", error=True)
                return
            busy = (self._busy_while(f"the {fmt.upper()} file") if fmt in ("png", "html")
                    else contextlib.nullcontext())
            try:
                with busy:
                    written = save_chart(chart, self._target(f"-{name}.{fmt}"),
                                         coding_caption(self._rendered.table))
            except (ValueError, OSError) as err:
                self._notify(f"Could not save the chart: {err}", error=True)
                return
            self._notify(f"Saved the {CHARTS[name][0]} to {written}")

        return save

    def _save_measures(self) -> None:
        fmt = self._table_format.value
        try:
            written = save_measures(self._rendered, fmt, self.folder.value.strip()
                                    or DEFAULT_FOLDER, self._stem.value.strip() or "rankfold")
        except (ValueError, OSError) as err:
            self._notify(f"Could not save the measures table: {err}", error=True)
            return
        self._notify(f"Saved the measures table to {written}")

    def _save_columns(self) -> None:
        try:
            path = self._target("-coded-columns.csv")
            self._rendered.coded_columns().to_csv(path)
        except (ValueError, OSError) as err:
            self._notify(f"Could not save the coded columns: {err}", error=True)
            return
        self._notify(f"Saved the coded columns to {path.resolve()}")

    def _save_report(self) -> None:
        from .report import rendered_report, small_sweep  # report.py imports this module

        records = has_records(self._rendered.source.data)
        try:
            with self._busy_while("the report"):
                written = rendered_report(self._rendered, self._target(".html"),
                                          small_sweep(self._rendered), records)
        except (ValueError, OSError) as err:
            self._notify(f"Could not save the report: {err}", error=True)
            return
        self._notify(f"Saved the report to {written}")
