"""A saved notebook keeps the explorer's results for readers without a kernel.

The quickstart is executed with nbclient, written to disk, read back and converted with
nbconvert's HTMLExporter without executing: the page must show the explorer's last state (its
gamma as the measures panel prints it, the coding steps) and the heatmap as an inline image,
and the snapshot cell its frozen copy. The expected gamma is computed here by the core from a
table built directly with rankfold.table, and checked against pairs enumerated cell by cell
(Goodman & Kruskal 1954).
"""

from __future__ import annotations

import re
from pathlib import Path

import nbformat
import pytest
from nbclient import NotebookClient
from nbconvert import HTMLExporter

import rankfold
from rankfold.widgets import formatting
from tables_for_tests import brute_force_pairs

QUICKSTART = Path(__file__).parent.parent / "example_notebooks" / "quickstart.ipynb"


def record_blocks(page: str, css_class: str) -> list[str]:
    """The HTML of each record with this class (up to the start of the next output)."""
    return re.findall(rf'<div class="rankfold-record {css_class}">.*?</svg>', page, flags=re.S)


@pytest.mark.slow
def test_saved_quickstart_converted_without_kernel_shows_results(tmp_path):
    notebook = nbformat.read(QUICKSTART, as_version=4)
    NotebookClient(notebook, kernel_name="python3", timeout=600,
                   resources={"metadata": {"path": str(tmp_path)}}).execute()
    saved = tmp_path / "quickstart-saved.ipynb"
    nbformat.write(notebook, saved)
    page, _ = HTMLExporter().from_notebook_node(nbformat.read(saved, as_version=4))

    df = rankfold.demo.transit_survey()
    after_merges = (rankfold.table(df, "trip_length", "service_rating")
                    .exclude("cols", ["no answer"])
                    .merge("rows", [["10–20 km", "over 20 km"]])
                    .merge("cols", [["very poor", "poor"]]))
    gamma = after_merges.measures().loc["gamma", "estimate"]
    c, d = brute_force_pairs(after_merges.counts.to_numpy())
    assert gamma == pytest.approx((c - d) / (c + d), rel=1e-12)
    printed = f'data-measure="gamma">{formatting.estimate(gamma)}</td>'

    # the record beside the explorer follows it to its last state (the last cells only
    # choose a cell and a colouring, which leave the measures as after the merges)
    saved_records = record_blocks(page, "rankfold-saved-record")
    assert len(saved_records) == 1
    record = saved_records[0]
    assert printed in record
    assert "service_rating: merge [very poor, poor]" in record
    assert re.search(r"<svg[^>]*>.*<rect", record, flags=re.S), "no inline chart image"
    # the snapshot taken after the merges
    snapshots = record_blocks(page, "rankfold-snapshot")
    assert len(snapshots) == 1 and printed in snapshots[0] and "<svg" in snapshots[0]
    # the table as collected has a different gamma: the record is not stuck at the start
    first = rankfold.table(df, "trip_length", "service_rating").measures()
    assert formatting.estimate(first.loc["gamma", "estimate"]) != formatting.estimate(gamma)
