"""Scores credence's metrics inputs with scikit-learn and numpy, for the metrics tests.

Usage: sklearn_metrics.py DIR
Reads DIR/shape.txt ("K n"), DIR/probs.f64 (float64, n rows of K class probabilities,
row by row) and DIR/labels.i32 (int32, n labels in 0..K-1). Writes DIR/reference.txt,
one line per quantity: a name, then its values printed with repr (exact round trip).
For K == 2 it adds the binary quantities of the positive class (index 1).
"""
import sys
from pathlib import Path

import numpy as np
import sklearn
from sklearn.calibration import calibration_curve
from sklearn.metrics import brier_score_loss, log_loss, roc_auc_score


def main(directory):
    d = Path(directory)
    k, n = (int(v) for v in (d / "shape.txt").read_text().split())
    probs = np.fromfile(d / "probs.f64", dtype=np.float64).reshape(n, k)
    labels = np.fromfile(d / "labels.i32", dtype=np.int32)
    assert labels.shape == (n,)
    out = {"sklearn_version": [sklearn.__version__]}
    out["log_loss"] = [log_loss(labels, probs, labels=list(range(k)))]
    # Multi-class Brier from its definition (docs/methods.md 9.2), in numpy.
    onehot = np.eye(k)[labels]
    out["brier_multiclass"] = [np.mean(np.sum((probs - onehot) ** 2, axis=1))]
    if k == 2:
        q = probs[:, 1]
        out["brier_binary"] = [brier_score_loss(labels, q)]
        out["roc_auc"] = [roc_auc_score(labels, q)]
        for strategy in ("uniform", "quantile"):
            prob_true, prob_pred = calibration_curve(labels, q, n_bins=10, strategy=strategy)
            out[f"curve_{strategy}_true"] = list(prob_true)
            out[f"curve_{strategy}_pred"] = list(prob_pred)
    else:
        out["roc_auc_ovr_macro"] = [
            roc_auc_score(labels, probs, multi_class="ovr", average="macro")]
    with open(d / "reference.txt", "w") as f:
        for name, values in out.items():
            f.write(name + " " + " ".join(repr(v) if not isinstance(v, str) else v
                                          for v in values) + "\n")


if __name__ == "__main__":
    main(sys.argv[1])
