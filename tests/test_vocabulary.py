"""The 0.2.0 vocabulary: a control variable (not a "layer") and the textbook test names."""

from __future__ import annotations

import pytest

import rankfold
from rankfold.independence import TEST_KEYS


@pytest.fixture(scope="module")
def riders():
    return rankfold.demo.transit_survey(n=400, seed=3)


def test_control_keyword_builds_one_table_per_level(riders):
    t = rankfold.table(riders, "trip_length", "service_rating", control="age_band")
    assert t.control_name == "age_band"
    # Outside reference: pandas counts the levels of the column itself.
    assert list(t.control_labels) == list(riders["age_band"].cat.categories)
    first = t.control_labels[0]
    assert t.control_table(first).n == (riders["age_band"] == first).sum()


@pytest.mark.parametrize("call", [rankfold.table, rankfold.explore])
def test_the_old_layer_keyword_raises_a_type_error_naming_control(riders, call):
    with pytest.raises(TypeError, match=r"layer=.*control="):
        call(riders, "trip_length", "service_rating", layer="age_band")


def test_unknown_keywords_still_raise_the_usual_type_error(riders):
    with pytest.raises(TypeError, match="unexpected keyword argument 'colour'"):
        rankfold.table(riders, "trip_length", "service_rating", colour="red")


def test_tests_use_the_textbook_keys_and_none_of_the_old_ones(riders):
    plain = rankfold.table(riders, "trip_length", "service_rating").tests()
    assert list(plain.index) == ["pearson_x2", "likelihood_ratio_g2", "trend_m2",
                                 "latent_normal_fit"]
    controlled = rankfold.table(riders, "trip_length", "service_rating", control="age_band").tests()
    assert list(controlled.index) == [*TEST_KEYS, "latent_normal_fit", "cmh_correlation",
                                      "gamma_homogeneity"]
    old = {"pearson_chi_square", "likelihood_ratio", "linear_by_linear"}
    assert not old & set(controlled.index)


def test_every_test_key_has_a_readable_label(riders):
    controlled = rankfold.table(riders, "trip_length", "service_rating", control="age_band").tests()
    labels = {key: rankfold.independence_label(key) for key in controlled.index}
    # Agresti, Categorical Data Analysis (3rd ed., 2013), sec. 3.2 and 3.4: X², G², M².
    assert labels["pearson_x2"] == "Pearson X²"
    assert labels["likelihood_ratio_g2"] == "likelihood-ratio G²"
    assert labels["trend_m2"] == "linear trend M² = (n − 1) r²"
    with pytest.raises(ValueError, match="Unknown test key"):
        rankfold.independence_label("chi_square")
