"""CredenceClassifier under scikit-learn's own estimator checks (an outside suite:
sklearn.utils.estimator_checks.check_estimator), in a Pipeline and in cross_val_score."""

import pickle

import numpy as np
import pytest
from sklearn.datasets import load_iris
from sklearn.model_selection import cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.utils.estimator_checks import check_estimator

import credence

# check_estimator fits the estimator about fifty times. The checks run with adam (an
# optimizer: one kept iterate) and 400 steps on one hidden layer of 16 units, set here
# through the constructor, so the suite takes seconds rather than minutes; the
# defaults (sgld with budgets sized to the table) are exercised by the tests below.
QUICK = dict(method="adam", steps=400, hidden=[16])


def test_check_estimator_passes():
    check_estimator(credence.CredenceClassifier(**QUICK))


def test_pipeline_and_cross_val_score_on_iris():
    # Iris (scikit-learn's copy of the UCI table): a multinomial linear model reaches
    # about 0.95-0.97 accuracy under 5-fold cross-validation (common practice, from memory).
    x, y = load_iris(return_X_y=True)
    pipe = make_pipeline(StandardScaler(), credence.CredenceClassifier(
        method="sghmc", chains=2, samples=20, burn_in=300, thin=5, hidden=[8]))
    scores = cross_val_score(pipe, x, y, cv=3)
    assert scores.mean() > 0.85, scores


def test_default_settings_fit_and_pickle(tmp_path):
    x, y = load_iris(return_X_y=True)
    names = np.array(["setosa", "versicolor", "virginica"])[y]
    model = credence.CredenceClassifier().fit(x, names)  # sgld, budget sized to the table
    assert list(model.classes_) == ["setosa", "versicolor", "virginica"]
    proba = model.predict_proba(x)
    np.testing.assert_allclose(proba.sum(axis=1), 1.0, atol=1e-7)
    assert model.score(x, names) > 0.9
    assert model.run_.method == "sgld"
    clone = pickle.loads(pickle.dumps(model))
    assert clone.run_path_ != model.run_path_
    np.testing.assert_array_equal(clone.predict_proba(x), proba)


def test_linear_path_is_a_parameter_that_reaches_the_network():
    x, y = load_iris(return_X_y=True)
    model = credence.CredenceClassifier(linear_path=True, **QUICK)
    assert model.get_params()["linear_path"] is True
    model.fit(x, y)
    # 4 inputs, 16 hidden units, 3 classes: 5*16 + 17*3 = 131 parameters, and the
    # linear path's 5*3 = 15 more.
    assert model.run_.samples.shape[1] == 131 + 15
    assert model.score(x, y) > 0.9


def test_one_class_is_refused():
    with pytest.raises(ValueError, match="1 class"):
        credence.CredenceClassifier(**QUICK).fit(np.zeros((5, 2)), np.ones(5))
