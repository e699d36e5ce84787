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
