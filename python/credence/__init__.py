"""credence from Python: train uncertainty-aware classifiers on tables into run files,
read them, predict new rows with their doubt split into noise and lack of data, and
score calibration, with the same results and messages as the `credence` command.

    import credence
    run = credence.open_run("run.h5")
    table = credence.predict(run, frame)         # DataFrame: p_<class>, entropy, ...
    scores = credence.assess(run, "data.csv")    # dict, as `credence assess --json`
    table = credence.compare("data.csv", "out", target="fault")  # DataFrame, summary.csv

Calibration holds only for data like the held-out rows; decisions about health, credit
or safety need local validation and licensed practice.
"""

from ._credence import __version__, set_log_level
from .api import assess, diagnose, predict
from .comparison import compare
from .training import train
from .errors import (CorruptRunError, CredenceError, DivergedError, InvalidInputError,
                     RunIOError, TrainingInterrupted)
from .run import Run, open_run

__all__ = [
    "__version__", "set_log_level", "Run", "open_run", "train", "predict", "assess", "diagnose",
    "compare",
    "CredenceError", "InvalidInputError", "CorruptRunError", "RunIOError", "DivergedError",
    "TrainingInterrupted", "CredenceClassifier",
]


def __getattr__(name):
    # The estimator imports scikit-learn, which the rest of the module does not need.
    if name == "CredenceClassifier":
        from .estimator import CredenceClassifier
        return CredenceClassifier
    raise AttributeError(f"module 'credence' has no attribute {name!r}")
