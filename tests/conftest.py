"""Fixtures shared by the tests."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rankfold


@pytest.fixture
def rng() -> np.random.Generator:
    return np.random.default_rng(20240611)


@pytest.fixture
def df() -> pd.DataFrame:
    """The invented demo survey (a module may define its own ``df``)."""
    return rankfold.demo.transit_survey()


class _RemembersNothing(set):
    """A set of checked chart shapes that keeps none, so every chart is checked in full."""

    def add(self, item) -> None:
        pass


@pytest.fixture(autouse=True)
def check_every_chart(monkeypatch):
    """In the tests every chart a pane shows is checked against the Vega-Lite schema, not
    only the first of each shape (tests/test_chart_checks.py tests the once-per-shape path)."""
    from rankfold.widgets import chart_pane

    monkeypatch.setattr(chart_pane, "_CHECKED", _RemembersNothing())
