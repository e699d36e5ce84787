"""The invented transit survey: seeded, labelled as invented, and shaped as documented."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import rankfold
from rankfold.demo import AGE_BANDS, NO_ANSWER, RATINGS, TRIP_LENGTHS


@pytest.fixture(scope="module")
def big() -> pd.DataFrame:
    return rankfold.demo.transit_survey(n=20_000, seed=3)


def test_same_seed_same_frame_and_labelled_invented():
    a = rankfold.demo.transit_survey(n=300, seed=5)
    b = rankfold.demo.transit_survey(n=300, seed=5)
    c = rankfold.demo.transit_survey(n=300, seed=6)
    pd.testing.assert_frame_equal(a, b)
    assert not a.equals(c)
    assert "INVENTED" in a.attrs["note"] and "seed=5" in a.attrs["note"]
    assert "invented" in rankfold.demo.transit_survey.__doc__.lower()


def test_columns_types_and_orders():
    df = rankfold.demo.transit_survey(n=200)
    assert list(df["trip_length"].cat.categories) == list(TRIP_LENGTHS)
    assert list(df["service_rating"].cat.categories) == list(RATINGS)
    assert df["service_rating"].cat.categories[-1] == NO_ANSWER
    for name in ("trip_length", "service_rating", "age_band"):
        assert df[name].cat.ordered
    assert df["trips_per_week"].between(1, 12).all()
    assert not isinstance(df["district"].dtype, pd.CategoricalDtype)
    assert (df["survey_weight"] > 0).all()


def test_extreme_categories_are_sparse(big):
    # the documented design: "over 20 km" and "very poor" are rare (well under 5% each)
    assert (big["trip_length"] == "over 20 km").mean() < 0.05
    assert (big["service_rating"] == "very poor").mean() < 0.05


def test_no_answer_grows_with_trip_length(big):
    share = (big["service_rating"] == NO_ANSWER).groupby(big["trip_length"], observed=True).mean()
    # documented: 2% for the shortest trips rising to 14% for the longest (sampling error aside)
    assert share.iloc[0] == pytest.approx(0.02, abs=0.01)
    assert share.iloc[-1] == pytest.approx(0.14, abs=0.03)


def test_association_changes_across_age_bands(big):
    answered = big[big["service_rating"] != NO_ANSWER]
    tau = {}
    for band in AGE_BANDS:
        part = answered[answered["age_band"] == band]
        # source: scipy.stats.kendalltau (tau-b) on the category positions
        result = stats.kendalltau(part["trip_length"].cat.codes, part["service_rating"].cat.codes)
        tau[band] = (result.statistic, result.pvalue)
    assert tau["25–39"][0] < -0.15 and tau["25–39"][1] < 1e-6
    assert tau["60+"][0] > 0  # the documented slightly positive effect for the oldest riders
    assert tau["25–39"][0] < tau["40–59"][0] < tau["60+"][0]


def test_weights_average_one_and_favour_older_riders(big):
    assert big["survey_weight"].mean() == pytest.approx(1.0, abs=1e-3)
    by_age = big.groupby("age_band", observed=True)["survey_weight"].mean()
    assert by_age["60+"] > 1.5 * by_age["16–24"]


def test_leaving_no_answer_in_distorts_the_measure():
    # the reason the demo keeps the non-substantive code at the top of the order
    df = rankfold.demo.transit_survey()
    answered = df[df["service_rating"] != NO_ANSWER]
    codes = (answered["trip_length"].cat.codes, answered["service_rating"].cat.codes)
    with_code = stats.kendalltau(df["trip_length"].cat.codes, df["service_rating"].cat.codes)
    # source: scipy.stats.kendalltau with and without the "no answer" rows
    assert with_code.statistic > stats.kendalltau(*codes).statistic + 0.03


@pytest.mark.parametrize("n", [0, -3, 2.5, True, "100"])
def test_bad_size(n):
    with pytest.raises(ValueError, match="n must be a whole number"):
        rankfold.demo.transit_survey(n=n)


def test_does_not_share_state_between_calls():
    first = rankfold.demo.transit_survey(n=50, seed=1)
    first.loc[0, "trips_per_week"] = 99
    assert rankfold.demo.transit_survey(n=50, seed=1).loc[0, "trips_per_week"] != 99
    assert np.isfinite(first["survey_weight"]).all()
