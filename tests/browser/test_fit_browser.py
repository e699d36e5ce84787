"""The explorer fits a laptop screen and explains its controls, in a real browser.

JupyterLab in headless Chromium at 1280 x 800 with the file browser open (JupyterLab opens it
by default), two explorers of the invented demo survey: one with a control variable and a chosen
cell, one whose column variable has 12 categories. In every tab of both:

- no element inside the explorer is wider than the space it has (``scrollWidth`` at most
  ``clientWidth + 1`` for every element, the output area included), so nothing is clipped or
  needs a scroll bar;
- every control (buttons, dropdowns, toggle buttons, text inputs) carries a tooltip (title);
- the page logs no console error and no Vega warning (the page guard of conftest.py).

The pair view's numbers are checked for contrast against their own cell: the WCAG 2.1 contrast
ratio (relative luminance, (L1 + 0.05) / (L2 + 0.05)) of the text and the cell behind it is at
least 3, the large-text level of WCAG 2.1 (1.4.3).
"""

from __future__ import annotations

import re

import nbformat
import pytest

pytestmark = pytest.mark.browser

VIEWPORT = {"width": 1280, "height": 800}
SETTLE_MS = 1500  # time for Vega to draw a chart after the kernel has sent it

CELLS = [
    "import rankfold\n"
    "df = rankfold.demo.transit_survey()  # invented data",
    'ex = rankfold.explore(df, "trip_length", "service_rating", control="age_band")\n'
    'ex.exclude("cols", ["no answer"])\n'
    'ex.set_view(chosen_cell=("2–5 km", "good"))\n'
    "ex",
    '# trips_per_week holds the whole numbers 1 to 12: a table with 12 columns\n'
    'wide = rankfold.explore(df, "trip_length", "trips_per_week")\n'
    'wide.set_view(chosen_cell=("2–5 km", 3))\n'
    "wide",
]

# Elements wider than their box (scrollWidth > clientWidth + 1), from the explorer down and
# from the explorer up to its output area.
_OVERFLOWING = """(explorer) => {
    const found = [];
    const right = explorer.getBoundingClientRect().right;
    const check = (el) => {
        if (el instanceof SVGSVGElement && el.getBoundingClientRect().right > right + 1) {
            found.push(`a chart ${el.getBoundingClientRect().width} px wide ends past the `
                       + `explorer's right edge: ${(el.textContent || '').slice(0, 60)}`);
        }
        if (!(el instanceof HTMLElement)) return;  // SVG parts: the chart as a whole above
        if (el.scrollWidth > el.clientWidth + 1 && el.clientWidth > 0) {
            const cls = (el.getAttribute('class') || '').split(/\\s+/).slice(0, 3).join('.');
            found.push(`${el.tagName.toLowerCase()}.${cls} scrollWidth ${el.scrollWidth} > `
                       + `clientWidth ${el.clientWidth}: ${(el.textContent || '').slice(0, 60)}`);
        }
    };
    explorer.querySelectorAll('*').forEach(check);
    for (let el = explorer; el && !el.classList.contains('jp-OutputArea'); el = el.parentElement) {
        check(el);
    }
    return found;
}"""

# Visible controls without a tooltip: the title is on the control, on its widget's element or
# on the widget's description label (where ipywidgets puts a Dropdown's tooltip).
_UNTITLED = """(explorer) => [...explorer.querySelectorAll(
        'button, select, input, textarea, .widget-toggle-button')]
    .filter((el) => el.offsetParent !== null)
    .filter((el) => {
        const widget = el.closest('.jupyter-widgets');
        const titles = [el, widget, widget?.querySelector(':scope > .widget-label')]
            .map((x) => (x?.getAttribute('title') || '').trim());
        return !titles.some((t) => t.length > 0);
    })
    .map((el) => `${el.tagName.toLowerCase()} "${(el.textContent || el.value || '').trim()}" `
                 + `in ${(el.closest('.jupyter-widgets')?.className || '')}`)"""

# WCAG 2.1 contrast of each pair-view number with the cell it sits on (matched by position).
_PAIR_CONTRAST = """(pane) => {
    const luminance = (colour) => {
        const m = colour.match(/\\d+(\\.\\d+)?/g).slice(0, 3).map(Number);
        const lin = m.map((c) => { c /= 255; return c <= 0.04045 ? c / 12.92
                                                   : Math.pow((c + 0.055) / 1.055, 2.4); });
        return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2];
    };
    const rects = [...pane.querySelectorAll("path[aria-roledescription='rect mark']")]
        .map((p) => ({box: p.getBoundingClientRect(), fill: getComputedStyle(p).fill}));
    return [...pane.querySelectorAll("text[aria-roledescription='text mark'], .mark-text text")]
        .map((t) => {
            const b = t.getBoundingClientRect();
            const x = b.left + b.width / 2, y = b.top + b.height / 2;
            const cell = rects.find((r) => r.box.left <= x && x <= r.box.right
                                           && r.box.top <= y && y <= r.box.bottom);
            if (!cell) return null;
            const [a, c] = [luminance(getComputedStyle(t).fill), luminance(cell.fill)];
            return {text: t.textContent, ratio: (Math.max(a, c) + 0.05) / (Math.min(a, c) + 0.05)};
        })
        .filter((x) => x !== null);
}"""


def _settle(page) -> None:
    page.locator(".jp-StatusBar-TextItem", has_text=re.compile(r"\| Idle$")).wait_for()
    page.wait_for_timeout(SETTLE_MS)


def test_every_tab_fits_and_every_control_explains_itself(
    lab_server, guarded_page, notebook_opener, tmp_path
) -> None:
    from playwright.sync_api import expect

    notebook = nbformat.v4.new_notebook()
    notebook.cells = [nbformat.v4.new_code_cell(source) for source in CELLS]
    notebook.metadata["kernelspec"] = {"name": "python3", "display_name": "Python 3",
                                       "language": "python"}
    source = tmp_path / "fit.ipynb"
    nbformat.write(notebook, source)

    page = guarded_page
    page.set_viewport_size(VIEWPORT)
    opened = notebook_opener(lab_server, page, source)
    expect(page.locator("#jp-left-stack")).to_be_visible()  # the file browser is open
    opened.run_all_cells()

    explorers = page.locator(".jp-OutputArea-output .rankfold-explorer")
    expect(explorers).to_have_count(2)
    problems: list[str] = []
    for e in range(2):
        explorer = explorers.nth(e)
        explorer.scroll_into_view_if_needed()
        tabs = explorer.locator(".rankfold-sections .lm-TabBar-tab")
        titles = [t.strip() for t in tabs.evaluate_all("ts => ts.map((t) => t.textContent)")]
        assert "Heatmap" in titles and "Pairs" in titles
        for k, title in enumerate(titles):
            tabs.nth(k).click()
            _settle(page)
            if k == 0:  # with the help beside the measures open
                explorer.locator(".rankfold-measures-help-toggle").click()
                expect(explorer.locator(".rankfold-measures-help")).to_be_visible()
            explorer.locator(".rankfold-sections").scroll_into_view_if_needed()
            page.screenshot(path=tmp_path / f"explorer{e}-{k}.png")
            problems += [f"explorer {e}, tab {title!r}: too wide: {x}"
                         for x in explorer.evaluate(_OVERFLOWING)]
            problems += [f"explorer {e}, tab {title!r}: no tooltip: {x}"
                         for x in explorer.evaluate(_UNTITLED)]
            if title == "Pairs":
                pane = explorer.locator(".rankfold-pair-view")
                pane.locator("svg").first.wait_for()
                numbers = pane.evaluate(_PAIR_CONTRAST)
                assert numbers, "the pair view shows no numbers on its cells"
                problems += [f"explorer {e}: pair-view number {x['text']} has contrast "
                             f"{x['ratio']:.2f} with its cell" for x in numbers
                             if x["ratio"] < 3]
    print(f"screenshots in {tmp_path}")
    assert not problems, "\n".join(problems)

    # Every measure row explains itself; a numeric variable's categories cannot be moved.
    first = explorers.nth(0)
    untitled_rows = first.locator("table.rankfold-measures tr[data-measure]:not([title])")
    expect(untitled_rows).to_have_count(0)
    wide = explorers.nth(1)
    expect(wide.locator(".rankfold-editor-cols .rankfold-move-up:visible")).to_have_count(0)
    expect(wide.locator(".rankfold-editor-rows .rankfold-exclude").first).to_be_visible()
