"""CredenceClassifier: credence's ensembles behind scikit-learn's estimator conventions."""

import os
import shutil
import tempfile
import weakref

import numpy as np
import pandas as pd
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.utils.multiclass import check_classification_targets
from sklearn.utils.validation import check_is_fitted

from ._tables import feature_names
from .api import predict as predict_run
from .training import train


class CredenceClassifier(ClassifierMixin, BaseEstimator):
    """A dense network trained by a stochastic-gradient sampler (or its optimizer
    limit), averaged over its kept samples.

    Parameters are `credence train`'s settings, None keeping the command's default:
    method ("sgld", "psgld", "sghmc", "rsghmc", "hmc", "rhmc", or the optimizers "sgd",
    "momentum", "rsgd", "adam"); prior_scale ("auto" learns the prior's scale, a number
    fixes it); linear_path (True: a linear map from the inputs to the outputs beside the
    hidden layers, docs/prior.md "The linear path"; default False); the budget: chains,
    samples, burn_in, thin (samplers), steps or epochs
    (optimizers), sized from the table when None; hidden (layer widths), lr, batch;
    val_fraction (rows kept out of training for the run's tracked summaries and early
    stopping; 0 trains on every row); random_state (the split and chain seed, an int).

    fit trains into a temporary run file the estimator owns (removed with it; `run_path_`
    names it, `run_` opens it). Pickling carries the run file's bytes.
    """

    def __init__(self, method="sgld", prior_scale="auto", chains=None, samples=None,
                 burn_in=None, thin=None, steps=None, epochs=None, hidden=None, lr=None,
                 batch=None, val_fraction=0.1, random_state=None, linear_path=False):
        self.method = method
        self.prior_scale = prior_scale
        self.chains = chains
        self.samples = samples
        self.burn_in = burn_in
        self.thin = thin
        self.steps = steps
        self.epochs = epochs
        self.hidden = hidden
        self.lr = lr
        self.batch = batch
        self.val_fraction = val_fraction
        self.random_state = random_state
        self.linear_path = linear_path

    def _seed(self):
        if self.random_state is None:
            return 1
        if isinstance(self.random_state, (int, np.integer)):
            return int(self.random_state) % (2**63)
        raise ValueError("random_state must be None or an int (credence's seeds are "
                         "integers; a RandomState object is not supported)")

    def fit(self, X, y):
        if y is None:
            raise ValueError(f"{type(self).__name__} requires y to be passed, but the target y "
                             f"is None")
        X, y = self._validate_data(X, y, dtype=np.float64, y_numeric=False)
        check_classification_targets(y)
        self.classes_, encoded = np.unique(y, return_inverse=True)
        if len(self.classes_) < 2:
            raise ValueError(f"credence needs at least two classes to train a classifier; y "
                             f"has 1 class ({self.classes_[0]!r})")
        self._drop_run()
        directory = tempfile.mkdtemp(prefix="credence-estimator-")
        path = os.path.join(directory, "run.h5")
        # Labels as class indices, which credence orders numerically: class k is classes_[k].
        frame = pd.DataFrame(X, columns=feature_names(X.shape[1]))
        hidden = None if self.hidden is None else list(self.hidden)
        train(frame, path, y=encoded, target="class", progress=False, method=self.method,
              prior_scale=self.prior_scale, chains=self.chains, samples=self.samples,
              burn_in=self.burn_in, thin=self.thin, steps=self.steps, epochs=self.epochs,
              hidden=hidden, linear_path=self.linear_path, lr=self.lr, batch=self.batch,
              seed=self._seed(),
              test_fraction=0.0, val_fraction=self.val_fraction)
        self._own_run(directory, path)
        return self

    def _own_run(self, directory, path):
        self.run_path_ = path
        self._finalizer = weakref.finalize(self, shutil.rmtree, directory, True)

    def _drop_run(self):
        finalizer = getattr(self, "_finalizer", None)
        if finalizer is not None:
            finalizer()

    @property
    def run_(self):
        """The fitted run file, opened (credence.Run)."""
        from .run import Run
        check_is_fitted(self)
        return Run(self.run_path_)

    def _predictions(self, X):
        check_is_fitted(self)
        X = self._validate_data(X, dtype=np.float64, reset=False)
        return predict_run(self.run_path_, pd.DataFrame(X, columns=feature_names(X.shape[1])))

    def predict_proba(self, X):
        """The ensemble average of the class probabilities, (n, K) in classes_ order."""
        table = self._predictions(X)
        columns = [f"p_{k}" for k in range(len(self.classes_))]
        return table[columns].to_numpy(dtype=np.float64)

    def predict(self, X):
        """The class of highest averaged probability (ties to the first in classes_)."""
        proba = self.predict_proba(X)
        return self.classes_[np.argmax(proba, axis=1)]

    def predict_uncertainty(self, X):
        """Per row: predictive entropy, its expected part (noise) and the mutual
        information (lack of data), in nats, as a DataFrame."""
        return self._predictions(X)[["entropy", "expected_entropy", "mutual_information"]]

    def __getstate__(self):
        state = self.__dict__.copy()
        state.pop("_finalizer", None)
        if "run_path_" in state:
            with open(state.pop("run_path_"), "rb") as f:
                state["_run_bytes"] = f.read()
        return state

    def __setstate__(self, state):
        run_bytes = state.pop("_run_bytes", None)
        self.__dict__.update(state)
        if run_bytes is not None:
            directory = tempfile.mkdtemp(prefix="credence-estimator-")
            path = os.path.join(directory, "run.h5")
            with open(path, "wb") as f:
                f.write(run_bytes)
            self._own_run(directory, path)

    def _more_tags(self):
        return {"binary_only": False, "requires_y": True}
