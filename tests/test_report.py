"""The one-file report, the explorer's report and Export button, and the "How it is computed"
tab.

What the page shows is compared with the core's measures and with figures computed here with
pandas from the sweep frame; the reproducing code in the report is run and must rebuild the
same table.
"""

from __future__ import annotations

import html
import re

import numpy as np
import pytest

import rankfold
from rankfold.widgets import explore, formatting
from rankfold.widgets.report import free_path
from rankfold.worked_formulas import step_change

# A resource can be asked for by a URL with a scheme, or by a src/href attribute at all.
OUTSIDE = re.compile(r"https?://|//[a-z0-9.-]+\.[a-z]{2,}/|\b(?:src|href)\s*=", re.I)


@pytest.fixture(scope="module")
def df():
    return rankfold.demo.transit_survey()


@pytest.fixture(scope="module")
def merged(df):
    return (rankfold.table(df, "trip_length", "service_rating",
                           exclude={"service_rating": ["no answer"]})
            .merge("rows", [["10–20 km", "over 20 km"]]))


def shown_estimates(page: str) -> dict[str, str]:
    return dict(re.findall(r'<td class="rankfold-estimate" data-measure="([^"]+)">([^<]+)</td>',
                           page))


def test_report_is_self_contained_and_shows_the_measures(df, merged, tmp_path):
    path = rankfold.report(merged, tmp_path / "report.html")
    page = path.read_text(encoding="utf-8")
    assert path == (tmp_path / "report.html").resolve()
    assert not OUTSIDE.search(page), OUTSIDE.search(page)
    assert "<script" not in page and "<svg" in page and "<link" not in page
    measures = merged.measures()
    shown = shown_estimates(page)
    for key in measures.index:
        assert shown[key] == formatting.estimate(measures.loc[key, "estimate"]), key
        low, high = measures.loc[key, ["ci_low", "ci_high"]]
        assert formatting.interval(low, high) in page
    for caution in ("not causation", "inflates false findings", "Sparse tables", "Weights"):
        assert caution in page
    assert "trip_length: merge [10–20 km, over 20 km]" in page
    assert "click" not in page.lower()  # a static page asks for no click
    assert f"n = {formatting.amount(merged.n)}" in page
    # the code in the report rebuilds the same table from the frame
    code = html.unescape(re.search(r'<pre class="rankfold-report-code">(.*?)</pre>', page,
                                   flags=re.S).group(1))
    scope = {"df": df}
    exec(code, scope)  # noqa: S102 - the report's own reproduction code
    np.testing.assert_array_equal(scope["table"].cells, merged.cells)


def test_report_never_overwrites(merged, tmp_path):
    first = rankfold.report(merged, tmp_path / "r.html")
    second = rankfold.report(merged, tmp_path / "r.html")
    assert (first.name, second.name) == ("r.html", "r-2.html")
    assert free_path(tmp_path / "r.html").name == "r-3.html"


def test_report_sweep_ranges_equal_the_sweep_frame(merged, tmp_path):
    table = merged.transpose()
    sweep = rankfold.sweep(table)
    page = rankfold.report(table, tmp_path / "s.html", sweep=sweep).read_text()
    row = re.search(r'<tr data-measure="gamma">(.*?)</tr>', page.split('id="codings"')[1]).group(1)
    cells = re.findall(r"<td>([^<]+)</td>", row)
    # lowest and highest over every coding, straight from the frame with pandas
    assert cells[:2] == [formatting.estimate(sweep["gamma"].min()),
                         formatting.estimate(sweep["gamma"].max())]
    assert f"Across {len(sweep):,} codings" in page


def test_explorer_report_tab_and_button(df, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    ex = explore(df, "trip_length", "service_rating")
    titles = [ex._tabs.get_title(k) for k in range(len(ex._sections))]
    assert "How it is computed" in titles
    ex.exclude("cols", ["no answer"])
    ex.merge("cols", [["very poor", "poor"]])
    written = ex.report("mine.html")
    page = (tmp_path / "mine.html").read_text()
    assert written == str((tmp_path / "mine.html").resolve())
    assert shown_estimates(page)["gamma"] == formatting.estimate(ex.measures.loc["gamma",
                                                                                 "estimate"])
    assert not OUTSIDE.search(page)
    assert page.count("<svg") == 2  # heatmap and comparison; no pair view before a cell
    assert "Across " in page  # the Codings tab's sweep is small enough to include
    # the Export tab's button writes the same kind of file, numbered beside the first
    export = ex._sections[[t for t in titles].index("Export")]
    export._stem.value = "mine"
    export.folder.value = "."
    export.show(ex._rendered)
    export._save_report()
    assert (tmp_path / "mine-2.html").exists()
    assert "Saved the report to" in ex._message.value


def test_computation_tab_shows_pairs_and_the_last_step(df):
    ex = explore(df, "trip_length", "service_rating")
    index = [ex._tabs.get_title(k) for k in range(len(ex._sections))].index("How it is computed")
    ex._tabs.selected_index = index
    view = ex._sections[index]._html
    assert "No coding step yet" in view.value
    before = ex.table
    ex.merge("rows", [["10–20 km", "over 20 km"]])
    page = view.value
    pairs = ex.table.pairs()
    for key in ("concordant", "discordant", "tied_row_only", "tied_col_only", "tied_both"):
        assert f'data-pairs="{key}"><th scope="row">' in page
        assert f'rankfold-pair-count">{pairs[key]:,}<' in page
    change = step_change(before, ex.table)
    assert html.escape(change["sentence"]) in page
    assert "http" not in page and "<script" not in page
