"""Exports of the measures table (CSV, Markdown, LaTeX, copy), still pictures without hints and
with the coding steps, numbered file names, and the busy line while slow files are written."""

from __future__ import annotations

import io
import json
import re

import numpy as np
import pandas as pd
import pytest

import rankfold
from rankfold.widgets import export as export_module
from rankfold.widgets.export import coding_caption, measures_text, static_spec, table_target

ROW, COL = "trip_length", "service_rating"


@pytest.fixture
def ex():
    explorer = rankfold.explore(rankfold.demo.transit_survey(), ROW, COL)
    explorer.exclude("cols", ["no answer"])
    explorer.merge("rows", [["10–20 km", "over 20 km"]])
    return explorer


def export_tab(ex):
    titles = [ex._tabs.get_title(k) for k in range(len(ex._sections))]
    index = titles.index("Export")
    ex._tabs.selected_index = index
    return ex._sections[index]


def test_csv_export_reads_back_as_the_measures(ex, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    written = ex.export_measures("csv")
    assert written == str(tmp_path / "rankfold-exports" / "rankfold-measures.csv")
    # Source: pandas' own CSV reader, a parser independent of our writer.
    back = pd.read_csv(written, index_col=0)
    numeric = [c for c in ex.measures.columns if c != "note"]
    np.testing.assert_allclose(back[numeric].to_numpy(dtype=float),
                               ex.measures[numeric].to_numpy(dtype=float), rtol=1e-12)
    assert list(back.index) == list(ex.measures.index)
    assert back.loc["gamma", "label"] == "Goodman–Kruskal gamma"
    # never overwritten: the second file is numbered
    assert ex.export_measures("csv").endswith("rankfold-measures-2.csv")
    assert ex.export_measures(str(tmp_path / "mine.md")) == str(tmp_path / "mine.md")
    assert ex.export_measures(str(tmp_path / "mine.md")) == str(tmp_path / "mine-2.md")
    with pytest.raises(ValueError, match="Cannot tell the format"):
        ex.export_measures("table.xlsx")


def test_markdown_table_is_well_formed(ex):
    text = measures_text(ex.measures, "markdown", ROW, COL, coding_caption(ex.table))
    lines = text.splitlines()
    table = [line for line in lines if line.startswith("|")]
    # GitHub-flavoured Markdown tables: a header, a delimiter row, then one row per measure,
    # each with the same number of unescaped pipes (the GFM specification, "Tables").
    cells = [len(re.split(r"(?<!\\)\|", line)) for line in table]
    assert len(set(cells)) == 1 and len(table) == 2 + len(ex.measures)
    assert re.fullmatch(r"\|(---\|)+", table[1])
    gamma = next(line for line in table if line.startswith("| gamma |"))
    assert f"| {ex.measures.loc['gamma', 'estimate']:.4f} |" in gamma
    assert "Somers' d (service_rating \\| trip_length)" in text  # a pipe in a label is escaped
    assert "trip_length: merge [10–20 km, over 20 km] -> 10–20 km to over 20 km" in text


def test_latex_table_escapes_and_balances(ex):
    text = measures_text(ex.measures, "latex", ROW, COL, coding_caption(ex.table))
    body = [line for line in text.splitlines() if line.endswith(r"\\")]
    columns = re.search(r"\\begin\{tabular\}\{([^}]*(?:\{[^}]*\})?)\}", text).group(1)
    n_columns = len(re.findall(r"[lrc]|p\{[^}]*\}", columns.replace("p{5cm}", "P")))
    # LaTeX's tabular: each row has one column more than its unescaped & separators
    # (Lamport, LaTeX: A Document Preparation System, 2nd ed., sec. 3.6.2).
    assert all(len(re.findall(r"(?<!\\)&", line)) == n_columns - 1 for line in body)
    assert len(body) == 1 + len(ex.measures)
    assert r"somers\_d\_symmetric" in text and "somers_d" not in text.replace(r"\_", "")
    assert text.count(r"\begin{") == text.count(r"\end{")
    assert r"\caption{Coding steps:" in text


def test_static_pictures_drop_hints_and_carry_the_coding(ex):
    live = json.dumps(ex.chart("heatmap").to_dict())
    assert re.search(r"click", live, re.I)  # the live chart tells how to use it
    still = static_spec(ex.chart("heatmap"), coding_caption(ex.table))
    text = json.dumps({k: v for k, v in still.items() if k != "vconcat"}) + json.dumps(
        still["vconcat"][0].get("title"))
    assert not re.search(r"click", text, re.I)
    assert still["title"]["orient"] == "bottom"
    assert still["title"]["text"] == coding_caption(ex.table).splitlines()
    assert [s.describe() for s in ex.steps] == [line.split(". ", 1)[1]
                                               for line in still["title"]["text"][1:-1]]


def test_svg_export_has_the_caption_and_no_hint(ex, tmp_path):
    path = ex.save_chart("heatmap", str(tmp_path / "h.svg"))
    svg = open(path, encoding="utf-8").read()
    assert "Coding steps:" in svg and "exclude no answer" in svg
    assert "click" not in svg.lower()


def test_export_tab_saves_copies_and_shows_busy(ex, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    tab = export_tab(ex)
    tab.folder.value = "out/tables"
    for fmt, suffix in (("csv", "csv"), ("markdown", "md"), ("latex", "tex")):
        tab._table_format.value = fmt
        assert tab.copy.text == measures_text(ex.measures, fmt, ROW, COL,
                                              coding_caption(ex.table))
        tab._save_measures()
        written = tmp_path / "out" / "tables" / f"rankfold-measures.{suffix}"
        assert written.read_text(encoding="utf-8") == tab.copy.text
        assert str(written) in ex._message.value
    tab._save_measures()
    assert (tmp_path / "out" / "tables" / "rankfold-measures-2.tex").exists()
    seen = []

    def slow_save(chart, path, caption=None):
        seen.append((tab._busy.value, [b.disabled for b in tab._buttons], caption))
        return path

    monkeypatch.setattr(export_module, "save_chart", slow_save)
    tab._saver("png")(None)
    tab._saver("json")(None)
    assert "Writing the PNG file" in seen[0][0] and all(seen[0][1])
    assert seen[1][0] == "" and not any(seen[1][1])  # JSON is quick: no busy line
    assert seen[0][2] == coding_caption(ex.table)
    assert tab._busy.value == "" and not any(b.disabled for b in tab._buttons)


def test_table_target_formats():
    assert table_target("md") == ("markdown", table_target("markdown")[1])
    assert table_target("tex", "x", "s")[1].as_posix() == "x/s-measures.tex"
    with pytest.raises(ValueError, match="csv"):
        measures_text(pd.DataFrame(), "xlsx", ROW, COL)


def test_csv_export_of_a_measure_note_with_commas(tmp_path):
    # a note holding commas and quotes survives the CSV round trip (RFC 4180 quoting)
    frame = pd.DataFrame({"estimate": [np.nan], "note": ['undefined: "no pairs", so NaN']},
                         index=pd.Index(["gamma"], name="measure"))
    back = pd.read_csv(io.StringIO(measures_text(frame, "csv", "a", "b")), index_col=0)
    assert back.loc["gamma", "note"] == 'undefined: "no pairs", so NaN'
