"""A coded table is a linear map of the table as collected: OrdinalTable.collected and
coding_maps() must reproduce the coded cells from the collected ones."""

from __future__ import annotations

import numpy as np
import pytest

import rankfold


def mapped(collected: np.ndarray, rows: np.ndarray, cols: np.ndarray, shape) -> np.ndarray:
    """Brute force: add every collected cell into the coded cell its categories went to."""
    out = np.zeros(shape)
    for k, a, b in np.ndindex(collected.shape):
        if rows[a] >= 0 and cols[b] >= 0:
            out[k, rows[a], cols[b]] += collected[k, a, b]
    return out


@pytest.fixture(scope="module")
def collected():
    # invented rider survey from the package's seeded demo generator
    df = rankfold.demo.transit_survey(n=600, seed=4)
    return rankfold.table(df, "trip_length", "service_rating", control="age_band",
                          weight="survey_weight", weight_kind="sampling")


def test_merges_exclusions_and_reorders_are_a_linear_map_of_the_collected_cells(collected):
    coded = (collected.exclude("cols", ["no answer"])
             .merge("rows", [[collected.row_labels[3], collected.row_labels[4]]])
             .merge("cols", [list(collected.col_labels[:2])]))
    coded = coded.reorder("rows", list(reversed(coded.row_labels)))
    assert coded.collected is collected
    rows, cols = coded.coding_maps()
    for name in ("cells", "squared_weights", "records"):
        expected = mapped(getattr(collected, name), rows, cols, coded.cells.shape)
        np.testing.assert_allclose(getattr(coded, name), expected, rtol=1e-12)


def test_a_table_as_collected_maps_to_itself(collected):
    rows, cols = collected.coding_maps()
    assert collected.collected is collected
    assert rows.tolist() == list(range(len(collected.row_labels)))
    assert cols.tolist() == list(range(len(collected.col_labels)))


def test_transposing_or_taking_one_level_starts_afresh(collected):
    merged = collected.merge("cols", [list(collected.col_labels[:2])])
    for fresh in (merged.transpose(), merged.control_table(collected.control_labels[0])):
        assert fresh.collected is fresh
