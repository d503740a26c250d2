"""Decision metrics of the positive class with scikit-learn and numpy, for
tests/metrics/decisions_sklearn_test.cc.

Usage: sklearn_decisions.py DIR
Reads DIR/q.f64 (float64, n probabilities of the positive class), DIR/positive.u8 (uint8,
n truths 0/1), DIR/thresholds.f64 (float64, thresholds to decide at) and DIR/levels.f64
(float64, quantile levels for numpy.quantile of q). Writes DIR/reference.txt, one line per
quantity: a name, then its values printed with repr (exact round trip).
"""
import sys
from pathlib import Path

import numpy as np
import sklearn
from sklearn.metrics import (average_precision_score, confusion_matrix,
                             precision_recall_curve, roc_auc_score, roc_curve)


def main(directory):
    d = Path(directory)
    q = np.fromfile(d / "q.f64", dtype=np.float64)
    y = np.fromfile(d / "positive.u8", dtype=np.uint8).astype(np.int64)
    thresholds = np.fromfile(d / "thresholds.f64", dtype=np.float64)
    levels = np.fromfile(d / "levels.f64", dtype=np.float64)
    out = {"sklearn_version": [sklearn.__version__]}
    for i, t in enumerate(thresholds):
        # Rows are truth (0, 1), columns the decision q >= t: [[TN, FP], [FN, TP]].
        cm = confusion_matrix(y, (q >= t).astype(np.int64), labels=[0, 1])
        out["confusion_%d" % i] = [int(cm[1, 1]), int(cm[0, 1]), int(cm[0, 0]), int(cm[1, 0])]
    precision, recall, pr_thresholds = precision_recall_curve(y, q)
    out["pr_precision"] = list(precision)
    out["pr_recall"] = list(recall)
    out["pr_thresholds"] = list(pr_thresholds)
    out["average_precision"] = [average_precision_score(y, q)]
    for name, drop in (("roc", True), ("roc_all", False)):
        fpr, tpr, roc_thresholds = roc_curve(y, q, drop_intermediate=drop)
        out[name + "_fpr"] = list(fpr)
        out[name + "_tpr"] = list(tpr)
        out[name + "_thresholds"] = list(roc_thresholds[1:])  # [0] is a convention
    out["roc_auc"] = [roc_auc_score(y, q)]
    # Equal-tailed interval ends as predict computes them: numpy's default 'linear' method.
    out["quantiles"] = list(np.quantile(q, levels, method="linear"))
    with open(d / "reference.txt", "w") as f:
        for name, values in out.items():
            f.write(name + " " + " ".join(repr(v) if not isinstance(v, str) else v
                                          for v in values) + "\n")


if __name__ == "__main__":
    main(sys.argv[1])
