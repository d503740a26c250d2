#!/usr/bin/env python3
"""Checks `credence assess --json` against scikit-learn and numpy on `predict`'s own output.

usage:
  sklearn_assess.py iris OUT.csv
      Writes scikit-learn's bundled iris table (sklearn.datasets.load_iris) as CSV: four
      measurements with underscored names and the class name in 'species'.
  sklearn_assess.py check RUN.h5 PRED.csv ASSESS.json TARGET TOL [DATA.csv]
      Takes the rows of the JSON's split (data/test_rows or data/val_rows of the run file,
      read with h5py as docs/run-file.md describes) from the predictions CSV and computes,
      on those probabilities, what assess reports: sklearn.metrics.log_loss, accuracy_score,
      brier_score_loss (two classes, positive class = index 1), the multi-class Brier score
      by numpy from its definition, roc_auc_score (binary, or multi_class='ovr' macro),
      sklearn.calibration.calibration_curve (uniform and quantile) and top-label ECE/MCE with
      equal-width bins (numpy, docs/methods.md 9.3). Also checks per row of the whole predictions
      file that MI >= 0 and entropy = expected_entropy + mutual_information, and the JSON's
      mean uncertainties against the file's means over the scored rows. With DATA.csv, also
      rebuilds every kept sample's probabilities with numpy (rebuild_probabilities.py) and
      checks the JSON's single_sample means and standard deviations (ddof 1) of accuracy,
      log_loss, Brier and ECE to 1e-5 (credence's forward passes run in float32).
  sklearn_assess.py tempered RUN.h5 TABLE.csv PRED.csv TAU TOL
      Checks that the run file stores TAU (docs/run-file.md, /calibration), rebuilds every
      kept sample's probabilities with numpy (rebuild_probabilities.py),
      tempers each member, softmax(log p_s / TAU), averages over the members and compares
      the average and its entropy with the predictions CSV.
Prints the largest differences; exits 1 when one exceeds TOL (absolute).
"""
import csv
import json
import os
import sys

import h5py
import numpy as np
from sklearn.calibration import calibration_curve
from sklearn.datasets import load_iris
from sklearn.metrics import (accuracy_score, average_precision_score, brier_score_loss,
                             confusion_matrix, f1_score, log_loss, precision_score,
                             recall_score, roc_auc_score)

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import rebuild_probabilities as rebuild  # noqa: E402

FAILURES = []


def compare(name, got, want, tol):
    got = np.atleast_1d(np.asarray(got, dtype=np.float64))
    want = np.atleast_1d(np.asarray(want, dtype=np.float64))
    if got.shape != want.shape:
        print("%s: shape credence %s, reference %s" % (name, got.shape, want.shape))
        FAILURES.append(name)
        return
    diff = np.abs(got - want).max() if got.size else 0.0
    print("%-34s max_abs_diff %.3g (credence %.10g, reference %.10g)"
          % (name, diff, got.flat[0] if got.size else np.nan, want.flat[0] if want.size else np.nan))
    if not diff <= tol:
        FAILURES.append(name)


def write_iris(out_path):
    bunch = load_iris()
    names = [str(n).replace(" (cm)", "_cm").replace(" ", "_") for n in bunch.feature_names]
    with open(out_path, "w", newline="") as f:
        writer = csv.writer(f, lineterminator="\n")
        writer.writerow(names + ["species"])
        for row, t in zip(bunch.data, bunch.target):
            writer.writerow([repr(float(v)) for v in row] + [str(bunch.target_names[int(t)])])
    return 0


def top_label_ece_mce(p, y, bins):
    """docs/methods.md 9.3: np.linspace edges, right-closed bins, searchsorted(..., 'left')."""
    conf = p.max(axis=1)
    correct = (p.argmax(axis=1) == y).astype(np.float64)
    edges = np.linspace(0.0, 1.0, bins + 1)
    ids = np.searchsorted(edges[1:-1], conf, side="left")
    ece, mce = 0.0, 0.0
    for m in range(bins):
        members = ids == m
        if not members.any():
            continue
        gap = abs(correct[members].mean() - conf[members].mean())
        ece += members.sum() / len(conf) * gap
        mce = max(mce, gap)
    return ece, mce


def check_members(run_path, data_path, rows, y, metrics):
    f = rebuild.open_run(run_path)
    active = int(f["run/active_slot"][0])
    committed = int(f["checkpoint/slot_%d/committed_samples" % active][0])
    theta = f["samples/theta"][:committed].astype(np.float64)  # (S, P)
    with open(data_path, newline="") as handle:
        table = list(csv.DictReader(handle))
    x = rebuild.encode(f, [table[i] for i in rows])
    k = len(f["preprocessing"]["class_names"])
    layers = rebuild.hidden_layers(f["model"].attrs["net_text"])
    bins = metrics["reliability"]["width"]["bins"]
    scores = {"accuracy": [], "nll": [], "brier": [], "ece_width": []}
    for t in theta:
        p = rebuild.probabilities(t, x, layers, k)  # (n, K)
        scores["accuracy"].append(accuracy_score(y, p.argmax(axis=1)))
        scores["nll"].append(log_loss(y, p, labels=list(range(k))))
        scores["brier"].append(np.mean(np.sum((p - np.eye(k)[y]) ** 2, axis=1)))
        scores["ece_width"].append(top_label_ece_mce(p, y, bins)[0])
    single = metrics["single_sample"]
    if single["samples"] != len(theta):
        print("single_sample.samples %d, run file %d" % (single["samples"], len(theta)))
        FAILURES.append("single_sample.samples")
    for name, values in scores.items():
        compare("single_sample %s mean" % name, single[name]["mean"], np.mean(values), 1e-5)
        compare("single_sample %s sd" % name, single[name]["sd"], np.std(values, ddof=1), 1e-5)


def check_decisions(report, q, y_pos, tol):
    """The decisions block against scikit-learn on predict's probabilities of the positive class."""
    decisions = report["decisions"]
    at = decisions["at_threshold"]
    t = at["threshold"]
    tn, fp, fn, tp = confusion_matrix(y_pos, (q >= t).astype(np.int64), labels=[0, 1]).ravel()
    print("decisions (%s rule) at %.6g on %s rows: TP %d FP %d TN %d FN %d" % (
        decisions["rule"], t, decisions["reported_on"], tp, fp, tn, fn))
    for name, want in (("true_positive", tp), ("false_positive", fp), ("true_negative", tn),
                       ("false_negative", fn)):
        if at[name] != want:
            print("%s: assess %d, confusion_matrix %d" % (name, at[name], want))
            FAILURES.append(name)
    compare("sensitivity (recall_score)", at["sensitivity"], recall_score(y_pos, q >= t), tol)
    compare("ppv (precision_score)", at["ppv"], precision_score(y_pos, q >= t), tol)
    compare("f1 (f1_score)", at["f1"], f1_score(y_pos, q >= t), tol)
    compare("average precision (average_precision_score)",
            report["precision_recall"]["average_precision"], average_precision_score(y_pos, q), tol)
    compare("roc area (roc_auc_score)", report["roc"]["area"], roc_auc_score(y_pos, q), tol)


def check(run_path, pred_path, json_path, target, tol, data_path=None):
    with open(json_path) as f:
        report = json.load(f)
    with open(pred_path, newline="") as f:
        pred = list(csv.DictReader(f))
    classes = report["classes"]
    metrics = report["metrics"]
    split = {"test": "data/test_rows", "validation": "data/val_rows"}[report["split"]]
    with h5py.File(run_path, "r") as run:
        rows = run[split][:].astype(np.int64)
    print("split %s: %d rows of %d" % (report["split"], len(rows), len(pred)))
    if report["rows"] != len(rows):
        print("JSON rows %d, run file %s has %d" % (report["rows"], split, len(rows)))
        FAILURES.append("rows")

    # Per row of the whole file (docs/methods.md 9.1): MI >= 0 and H = E H + MI.
    h_all = np.array([float(r["entropy"]) for r in pred])
    eh_all = np.array([float(r["expected_entropy"]) for r in pred])
    mi_all = np.array([float(r["mutual_information"]) for r in pred])
    if (mi_all < 0).any():
        print("negative mutual information in %d rows" % int((mi_all < 0).sum()))
        FAILURES.append("mi >= 0")
    compare("entropy = expected + mi (per row)", h_all, eh_all + mi_all, 1e-7)

    chosen = [pred[i] for i in rows]
    p = np.array([[float(r["p_" + c]) for c in classes] for r in chosen])  # (n, K)
    y = np.array([classes.index(r[target]) for r in chosen])
    k = len(classes)
    compare("accuracy (accuracy_score)", metrics["accuracy"], accuracy_score(y, p.argmax(axis=1)), tol)
    compare("nll (log_loss)", metrics["nll"], log_loss(y, p, labels=list(range(k))), tol)
    onehot = np.eye(k)[y]
    compare("brier (numpy, definition)", metrics["brier"], np.mean(np.sum((p - onehot) ** 2, axis=1)), tol)
    ece, mce = top_label_ece_mce(p, y, metrics["reliability"]["width"]["bins"])
    compare("ece_width (numpy, 9.3)", metrics["ece_width"], ece, tol)
    compare("mce_width (numpy, 9.3)", metrics["mce_width"], mce, tol)
    if k == 2:
        compare("brier_binary (brier_score_loss)", metrics["brier_binary"],
                brier_score_loss(y, p[:, 1], pos_label=1), tol)
        compare("auroc (roc_auc_score)", metrics["auroc"], roc_auc_score(y, p[:, 1]), tol)
        # credence names the binning "width" and "mass"; scikit-learn "uniform" and "quantile".
        pos = report["positive_class"]["index"]
        q = p[:, pos]
        y_pos = (y == pos).astype(np.int64)
        curves = metrics["positive_class_curve"]
        if curves["class"] != classes[pos]:
            print("positive_class_curve.class %s, positive class %s" % (curves["class"], classes[pos]))
            FAILURES.append("curve class")
        for ours, strategy in (("width", "uniform"), ("mass", "quantile")):
            curve = curves[ours]
            n_bins = len(curve["edges"]) - 1
            observed, mean_probability = calibration_curve(y_pos, q, n_bins=n_bins, strategy=strategy)
            print("calibration_curve %s: n_bins %d, %d non-empty" % (strategy, n_bins, len(observed)))
            compare("curve %s observed" % ours, curve["observed"], observed, tol)
            compare("curve %s mean_probability" % ours, curve["mean_probability"], mean_probability, tol)
            if sum(curve["counts"]) != len(y):
                print("curve %s counts sum to %d, not %d" % (ours, sum(curve["counts"]), len(y)))
                FAILURES.append("curve counts")
        check_decisions(report, q, y_pos, tol)
    else:
        if metrics["brier_binary"] is not None:
            print("brier_binary should be null for %d classes" % k)
            FAILURES.append("brier_binary")
        compare("auroc (roc_auc_score ovr macro)", metrics["auroc"],
                roc_auc_score(y, p, multi_class="ovr", average="macro"), tol)

    if data_path is not None:
        check_members(run_path, data_path, rows, y, metrics)

    u = metrics["uncertainty"]
    compare("mean_entropy", u["mean_entropy"], h_all[rows].mean(), tol)
    compare("mean_expected_entropy", u["mean_expected_entropy"], eh_all[rows].mean(), tol)
    compare("mean_mutual_information", u["mean_mutual_information"], mi_all[rows].mean(), tol)
    return 1 if FAILURES else 0


def tempered(run_path, table_path, pred_path, tau, tol):
    f = rebuild.open_run(run_path)
    active = int(f["run/active_slot"][0])
    committed = int(f["checkpoint/slot_%d/committed_samples" % active][0])
    theta = f["samples/theta"][:committed].astype(np.float64)  # (S, P)
    # docs/run-file.md, /calibration: the temperature predict applies.
    stored = float(f["calibration"].attrs["temperature"]) if "calibration" in f else 1.0
    print("stored temperature %.17g, expected %.17g" % (stored, tau))
    if stored != tau:
        FAILURES.append("stored temperature")
    with open(table_path, newline="") as handle:
        rows = list(csv.DictReader(handle))
    x = rebuild.encode(f, rows)
    classes = [c.decode() for c in f["preprocessing"]["class_names"][:]]
    layers = rebuild.hidden_layers(f["model"].attrs["net_text"])
    members = []
    for t in theta:
        log_p = np.log(rebuild.probabilities(t, x, layers, len(classes)))  # (N, K)
        z = log_p / tau
        z -= z.max(axis=1, keepdims=True)
        e = np.exp(z)
        members.append(e / e.sum(axis=1, keepdims=True))
    members = np.stack(members)  # (S, N, K)
    pbar = members.mean(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        h = -np.where(pbar > 0, pbar * np.log(pbar), 0.0).sum(axis=1)
        eh = -np.where(members > 0, members * np.log(members), 0.0).sum(axis=2).mean(axis=0)
    with open(pred_path, newline="") as handle:
        pred = list(csv.DictReader(handle))
    got = np.array([[float(r["p_" + c]) for c in classes] for r in pred])
    print("%d members, %d rows, tau %.10g" % (len(theta), len(pred), tau))
    compare("tempered probabilities", got, pbar, tol)
    compare("tempered entropy", [float(r["entropy"]) for r in pred], h, tol)
    compare("tempered expected entropy", [float(r["expected_entropy"]) for r in pred], eh, tol)
    return 1 if FAILURES else 0


def main(argv):
    if len(argv) == 3 and argv[1] == "iris":
        return write_iris(argv[2])
    if len(argv) in (7, 8) and argv[1] == "check":
        return check(argv[2], argv[3], argv[4], argv[5], float(argv[6]),
                     argv[7] if len(argv) == 8 else None)
    if len(argv) == 7 and argv[1] == "tempered":
        return tempered(argv[2], argv[3], argv[4], float(argv[5]), float(argv[6]))
    sys.exit(__doc__)


if __name__ == "__main__":
    sys.exit(main(sys.argv))
