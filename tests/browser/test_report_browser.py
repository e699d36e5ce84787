"""The one-file report opened from disk in headless Chromium, with no network.

Every request the page makes is recorded: only the file itself may be loaded, and nothing may
be logged to the console as an error. The numbers read from the rendered page are compared with
``measures()`` and with gamma from pairs enumerated cell against cell (Goodman & Kruskal 1954).
"""

from __future__ import annotations

import numpy as np
import pytest

import rankfold
from tables_for_tests import brute_force_pairs

pytestmark = pytest.mark.browser


def test_report_opens_offline_with_the_measures(browser, tmp_path):
    df = rankfold.demo.transit_survey()
    table = (rankfold.table(df, "trip_length", "service_rating",
                            exclude={"service_rating": ["no answer"]})
             .merge("cols", [["very poor", "poor"]]))
    path = rankfold.report(table, tmp_path / "report.html", sweep=rankfold.sweep(table))
    requests, errors = [], []
    context = browser.new_context(service_workers="block")

    def route(route) -> None:  # anything but the file itself is refused (and recorded below)
        if route.request.url == path.as_uri():
            route.continue_()
        else:
            route.abort("blockedbyclient")

    context.route("**/*", route)
    page = context.new_page()
    page.on("request", lambda request: requests.append(request.url))
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda err: errors.append(str(err)))
    try:
        page.goto(path.as_uri())
        page.wait_for_load_state("load")
        shown = {row.get_attribute("data-measure"): row.inner_text()
                 for row in page.locator("td.rankfold-estimate").all()}
        svg_count = page.locator("figure svg").count()
        svg_box = page.locator("figure svg").first.bounding_box()
    finally:
        context.close()
    assert [url for url in requests if url != path.as_uri()] == []
    assert errors == []
    measures = table.measures()
    for key in measures.index:
        expected = measures.loc[key, "estimate"]
        assert shown[key] == ("–" if np.isnan(expected) else f"{expected:.4f}"), key
    c, d = brute_force_pairs(table.counts.to_numpy())
    assert shown["gamma"] == f"{(c - d) / (c + d):.4f}"
    assert svg_count == 1 and svg_box["width"] > 100 and svg_box["height"] > 100
