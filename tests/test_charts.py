"""rankfold.charts: diverging bars against a hand computation from pandas, the overview matrix,
valid specifications that render offline, and bad input."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
import vl_convert

import rankfold

SCALE = ["strongly disagree", "disagree", "neutral", "agree", "strongly agree"]


def invented_ratings(seed: int = 11, n: int = 800) -> pd.DataFrame:
    """Invented answers to an agreement item by age band, with some "don't know"."""
    rng = np.random.default_rng(seed)
    band = rng.integers(0, 4, n)
    score = np.clip(np.round(band * 0.5 + rng.normal(1.5, 1.1, n)), 0, 4).astype(int)
    answer = np.array(SCALE, dtype=object)[score]
    answer[rng.random(n) < 0.08] = "don't know"
    return pd.DataFrame({
        "age_band": pd.Categorical.from_codes(band, ["18-29", "30-44", "45-64", "65+"],
                                              ordered=True),
        "opinion": answer,
    })


def chart_values(spec: dict) -> list[dict]:
    """The inline records of the first data set found in a chart specification."""
    found = []

    def walk(node):
        if isinstance(node, dict):
            if "data" in node and isinstance(node["data"], dict) and "values" in node["data"]:
                values = node["data"]["values"]
                found.append(json.loads(values) if isinstance(values, str) else values)
            for value in node.values():
                walk(value)
        elif isinstance(node, list):
            for value in node:
                walk(value)

    walk(spec)
    return found[0]


def renders(chart) -> None:
    # vl-convert draws the specification with its bundled Vega: offline, no browser
    svg = vl_convert.vegalite_to_svg(chart.to_json())
    assert svg.startswith("<svg") and ("<rect" in svg or "<path" in svg)


@pytest.mark.parametrize("scale", [SCALE, SCALE[:4]])  # odd and even number of categories
def test_diverging_segments_against_pandas_crosstab(scale):
    df = invented_ratings()
    df = df[df["opinion"].isin([*scale, "don't know"])]
    t = rankfold.table(df, "age_band", "opinion", order={"opinion": [*scale, "don't know"]})
    chart = rankfold.charts.diverging_bars(t)
    spec = chart.to_dict()  # validates against the Vega-Lite schema
    records = pd.DataFrame(chart_values(spec))
    # outside reference: pandas crosstab shares within each row, positions by hand
    on_scale = df[df["opinion"] != "don't know"]
    shares = pd.crosstab(on_scale["age_band"], on_scale["opinion"], normalize="index")[scale]
    shares = 100 * shares
    apart = 100 * pd.crosstab(df["age_band"], df["opinion"], normalize="index")["don't know"]
    half = len(scale) // 2
    for band, row in shares.iterrows():
        p = row.to_numpy()
        middle = p[half] / 2 if len(scale) % 2 else 0.0
        expected = {}
        left = -middle
        for k in range(half - 1, -1, -1):  # lower categories, from the middle outwards
            expected[scale[k]] = (left - p[k], left)
            left -= p[k]
        if len(scale) % 2:
            expected[scale[half]] = (-middle, middle)
        right = middle
        for k in range(len(scale) - half, len(scale)):
            expected[scale[k]] = (right, right + p[k])
            right += p[k]
        expected["don't know"] = (0.0, apart[band])
        got = records[records["row"] == str(band)].set_index("category")
        for category, (start, end) in expected.items():
            assert got.loc[category, "start"] == pytest.approx(start, abs=1e-9)
            assert got.loc[category, "end"] == pytest.approx(end, abs=1e-9)
        # the scale's lower and upper halves meet at 0 (common practice for such bars)
        lower_end = got.loc[scale[half - 1], "end"]
        assert lower_end == pytest.approx(-middle, abs=1e-12)
    renders(chart)


def test_diverging_bars_without_off_scale_answers_and_with_weights():
    df = invented_ratings()
    df = df[df["opinion"] != "don't know"].copy()
    df["w"] = np.random.default_rng(2).uniform(0.5, 2.0, len(df))
    t = rankfold.table(df, "age_band", "opinion", order={"opinion": SCALE}, weight="w")
    chart = rankfold.charts.diverging_bars(t)
    records = pd.DataFrame(chart_values(chart.to_dict()))
    assert set(records["part"]) == {"lower", "middle", "upper"}
    # source: weighted shares by hand, sum of weights per cell over the row's sum
    sums = df.groupby(["age_band", "opinion"], observed=True)["w"].sum().unstack()[SCALE]
    expected = 100 * sums.div(sums.sum(axis=1), axis=0)
    got = records.pivot(index="row", columns="category", values="percent")
    np.testing.assert_allclose(got.loc[[str(x) for x in expected.index], SCALE], expected,
                               rtol=1e-12)
    renders(chart)


def test_diverging_bars_bad_input():
    t = rankfold.table_from_counts([[3, 1, 2], [1, 3, 2]], col_labels=["no", "yes", "n/a"])
    with pytest.raises(ValueError, match="OrdinalTable"):
        rankfold.charts.diverging_bars(t.counts)
    with pytest.raises(ValueError, match="not categories"):
        rankfold.charts.diverging_bars(t, non_substantive=["maybe"])
    with pytest.raises(ValueError, match="at least one scale category"):
        rankfold.charts.diverging_bars(t, non_substantive=["no", "yes", "n/a"])
    # "n/a" is set apart by default; the two scale categories meet at 0
    segments = rankfold.charts.diverging_segments(t)
    assert list(segments.loc[segments["part"] == "apart", "category"].unique()) == ["n/a"]
    first = segments[segments["row"] == 1].set_index("category")
    assert first.loc["no", "end"] == 0 and first.loc["yes", "start"] == 0


def test_overview_matrix_spec_selection_and_marks():
    df = invented_ratings()
    df["later"] = df["age_band"].cat.codes + np.random.default_rng(1).integers(0, 2, len(df))
    frame = rankfold.overview(df, order={"opinion": [*SCALE, "don't know"]},
                              coding_ranges=True)
    chart = rankfold.charts.overview_matrix(frame)
    spec = chart.to_dict()  # validates
    params = spec.get("params", []) + [p for layer in spec["layer"]
                                       for p in layer.get("params", [])]
    click = [p for p in params if p["name"] == rankfold.charts.PAIR_CLICK]
    assert click and click[0]["select"]["fields"] == ["var_a", "var_b"]
    records = pd.DataFrame(chart_values(spec))
    assert len(records) == 2 * len(frame)  # both triangles
    for row in frame.itertuples():
        cell = records[(records["var_a"] == row.var_a) & (records["var_b"] == row.var_b)].iloc[0]
        assert cell["estimate"] == pytest.approx(row.estimate, abs=1e-15)
        assert cell["sparse"] == row.sparse
        assert cell["unstable"] == bool(row.coding_sign_changes or
                                        row.coding_significance_changes)
    renders(chart)
    outlined = rankfold.charts.overview_matrix(frame, chosen=("age_band", "opinion"))
    filters = [t.get("filter") for layer in outlined.to_dict()["layer"]
               for t in layer.get("transform", [])]
    assert any('datum.var_a == "age_band"' in str(f) for f in filters)
    renders(outlined)
    # undefined estimates still draw
    renders(rankfold.charts.overview_matrix(frame.assign(estimate=np.nan)))
    with pytest.raises(ValueError, match="lacks the column"):
        rankfold.charts.overview_matrix(frame.drop(columns="estimate"))
    with pytest.raises(ValueError, match="rankfold.overview"):
        rankfold.charts.overview_matrix(frame.to_numpy())


def test_charts_reached_lazily_from_the_core():
    import rankfold.widgets.charts as module

    assert rankfold.charts is module


def test_readme_overview_example_runs():
    import re
    from pathlib import Path

    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.*?)```", readme, re.S)
    example = next(b for b in blocks if "rankfold.overview(" in b)
    namespace: dict = {}
    exec(blocks[0], namespace)  # noqa: S102 - our own README: the demo frame and table
    exec(example, namespace)  # noqa: S102
    assert set(namespace["frame"].attrs["skipped"]) == {"district", "survey_weight"}
