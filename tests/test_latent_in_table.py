"""The polychoric correlation and the cumulative-logit slope as parts of a table's results:
the ``polychoric`` row of ``measures()``, the ``latent_normal_fit`` row of ``tests()``,
``OrdinalTable.cumulative_logit`` and the sweep's columns."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from statsmodels.miscmodels.ordinal_model import OrderedModel

import rankfold


@pytest.fixture(scope="module")
def riders():
    # invented rider survey from the package's seeded demo generator
    return rankfold.demo.transit_survey(n=900, seed=5)


@pytest.fixture(scope="module")
def rated(riders):
    return rankfold.table(riders, "trip_length", "service_rating",
                          exclude={"service_rating": ["no answer"]})


def test_cumulative_logit_slope_matches_statsmodels_on_the_records(riders, rated):
    # Outside reference: statsmodels' OrderedModel (logit link) fitted on the survey's own
    # records, the column variable as response and the row positions 1, 2, ... as regressor.
    kept = riders[riders["service_rating"] != "no answer"]
    x = kept["trip_length"].cat.codes.to_numpy(dtype=float) + 1
    position = {label: k for k, label in enumerate(rated.col_labels)}
    y = kept["service_rating"].map(position).to_numpy(dtype=float)  # 0, 1, ... in order
    fit = OrderedModel(y, x[:, None], distr="logit").fit(method="newton", disp=False,
                                                        maxiter=200)
    slope = rated.cumulative_logit().loc["slope"]
    assert slope["estimate"] == pytest.approx(fit.params[0], rel=1e-4)
    assert slope["std_error"] == pytest.approx(fit.bse[0], rel=1e-4)


def test_cumulative_logit_with_frequency_weights_equals_the_expanded_records(riders):
    # Frequency weights: the fit must equal the one on records repeated w times (definition).
    weighted = riders.assign(times=np.arange(len(riders)) % 3 + 1)
    expanded = weighted.loc[weighted.index.repeat(weighted["times"])]
    a = rankfold.table(weighted, "trip_length", "age_band", weight="times").cumulative_logit()
    b = rankfold.table(expanded, "trip_length", "age_band").cumulative_logit()
    pd.testing.assert_frame_equal(a, b, rtol=1e-9)


def test_measures_and_tests_carry_the_polychoric_rows(rated):
    measures, tests = rated.measures(), rated.tests()
    direct = rankfold.polychoric.polychoric(rated.counts.to_numpy())
    assert measures.loc["polychoric", "estimate"] == pytest.approx(direct.estimate, rel=1e-12)
    assert measures.loc["polychoric", "std_error"] == pytest.approx(direct.std_error, rel=1e-12)
    # IJ - I - J degrees of freedom for the two-step fit (Olsson 1979, Psychometrika 44:443)
    i, j = rated.shape
    assert tests.loc["latent_normal_fit", "df"] == i * j - i - j
    assert 0 <= tests.loc["latent_normal_fit", "p_value"] <= 1


def test_sweep_latent_columns_equal_each_coding_measured_alone(rated):
    frame = rankfold.sweep(rated, measures=("gamma", "polychoric", "cumulative_logit"))
    for k in np.random.default_rng(2).choice(len(frame), size=12, replace=False):
        row = frame.iloc[k]
        coded = rankfold.apply_coding(rated, int(row["row_cuts"]), int(row["col_cuts"]))
        assert row["polychoric"] == pytest.approx(
            coded.measures().loc["polychoric", "estimate"], rel=1e-8, nan_ok=True)
        assert row["cumulative_logit_std_error"] == pytest.approx(
            coded.cumulative_logit().loc["slope", "std_error"], rel=1e-6, nan_ok=True)


def test_a_table_with_one_category_gives_nan_with_reasons():
    t = rankfold.table_from_counts([[5, 3, 2]])
    assert np.isnan(t.measures().loc["polychoric", "estimate"])
    assert t.measures().loc["polychoric", "note"]
    slope = t.cumulative_logit().loc["slope"]
    assert np.isnan(slope["estimate"]) and slope["note"]


def test_measures_and_tests_share_one_latent_fit(rated, monkeypatch):
    import rankfold.ordinal_table as ordinal_table
    from rankfold.polychoric import polychoric

    fits = []
    real = ordinal_table.polychoric_arrays
    monkeypatch.setattr(ordinal_table, "polychoric_arrays",
                        lambda *args, **kw: fits.append(1) or real(*args, **kw))
    table = rankfold.table_from_counts(rated.cells[0], rated.row_labels, rated.col_labels)
    row, fit = table.measures().loc["polychoric"], table.tests().loc["latent_normal_fit"]
    table.measures(confidence=0.9)
    assert len(fits) == 1
    # the same numbers as the fit of that table on its own (whose estimate and G^2 the tests
    # of test_polychoric.py check against simulation and the likelihood written out)
    alone = polychoric(rated.cells[0])
    assert row["estimate"] == alone.estimate and row["std_error"] == alone.std_error
    assert fit["statistic"] == alone.fit_statistic and fit["df"] == alone.fit_df
