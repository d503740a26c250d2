"""Checks `credence predict` output against numpy, from the run file read with h5py.

Rebuilds each kept sample's class probabilities with rebuild_probabilities.py (which
follows docs/run-file.md and nets/README.md), then computes in double precision, per
row (docs/methods.md 9.1): pbar = mean_s p_s, H[pbar] = -sum_k pbar log pbar, E H =
mean_s -sum_k p_s log p_s, MI = H - E H, with 0 log 0 = 0. Compares them with the
predictions CSV column by column (each interval column with numpy.quantile over the
members; farthest_z and rms_z from the standardised numeric inputs) and prints the
largest differences; exits 1 when a distance differs by more than 1e-5 relative, or a
probability or an entropy differs by more than TOL (absolute), or a prediction differs
where the top two probabilities are not within TOL of each other.

usage: numpy_predict.py RUN.h5 TABLE.csv PRED.csv [TOL]
"""
import csv
import os
import sys

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import rebuild_probabilities as rebuild  # noqa: E402


def plogp(p):
    return np.where(p > 0, p * np.log(np.where(p > 0, p, 1.0)), 0.0)


def reference(run_path, table_path):
    f = rebuild.open_run(run_path)
    active = int(f["run/active_slot"][0])
    committed = int(f["checkpoint/slot_%d/committed_samples" % active][0]) if active >= 0 else 0
    theta = f["samples/theta"][:committed].astype(np.float64)  # (S, P)
    with open(table_path, newline="") as handle:
        rows = list(csv.DictReader(handle))
    x = rebuild.encode(f, rows)
    classes = [c.decode() for c in f["preprocessing"]["class_names"][:]]
    layers = rebuild.hidden_layers(f["model"].attrs["net_text"])
    p = np.stack([rebuild.probabilities(t, x, layers, len(classes)) for t in theta])  # (S, N, K)
    pbar = p.mean(axis=0)
    h = -plogp(pbar).sum(axis=1)
    eh = -plogp(p).sum(axis=2).mean(axis=0)
    # farthest_z and rms_z (docs/predictions-csv.md) over the standardised numeric inputs.
    feats = f["preprocessing/features"]
    numeric = [int(feats["offset"][i]) for i in range(len(feats["type"]))
               if feats["type"][i] == b"numeric"]
    z = x[:, numeric]
    distance = (np.abs(z).max(axis=1), np.sqrt((z ** 2).mean(axis=1))) if numeric else None
    return classes, pbar, h, eh, h - eh, p, distance


def main(run_path, table_path, pred_path, tol=1e-5):
    classes, pbar, h, eh, mi, members, distance = reference(run_path, table_path)
    with open(pred_path, newline="") as handle:
        pred = list(csv.DictReader(handle))
    if len(pred) != len(pbar):
        print("rows: credence %d, numpy %d" % (len(pred), len(pbar)))
        return 1
    got_p = np.array([[float(r["p_" + c]) for c in classes] for r in pred])
    failed = False
    checks = [("probabilities", got_p, pbar),
              ("entropy", np.array([float(r["entropy"]) for r in pred]), h),
              ("expected_entropy", np.array([float(r["expected_entropy"]) for r in pred]), eh),
              ("mutual_information", np.array([float(r["mutual_information"]) for r in pred]),
               np.maximum(mi, 0.0))]
    for name, got, want in checks:
        diff = np.abs(got - want)
        worst = np.unravel_index(np.argmax(diff), diff.shape)
        print("%s max_abs_diff %.3g at %s (credence %.9g, numpy %.9g)"
              % (name, diff.max(), worst, got[worst], want[worst]))
        failed |= bool(diff.max() > tol)
    # Per-row intervals p_<class>_lo<L> / _hi<L> (docs/predictions-csv.md): numpy.quantile
    # of the members' probabilities at (1 -+ L/100) / 2 with its default 'linear' method.
    for k, c in enumerate(classes):
        lows = [name for name in pred[0] if name.startswith("p_" + c + "_lo")]
        for low in lows:
            level = float(low[len("p_" + c + "_lo"):]) / 100
            high = "p_%s_hi%s" % (c, low[len("p_" + c + "_lo"):])
            want = np.quantile(members[:, :, k], [(1 - level) / 2, (1 + level) / 2], axis=0,
                               method="linear")
            for name, row in ((low, 0), (high, 1)):
                got = np.array([float(r[name]) for r in pred])
                diff = np.abs(got - want[row])
                print("%s max_abs_diff %.3g (numpy.quantile, linear)" % (name, diff.max()))
                failed |= bool(diff.max() > tol)
    if distance is not None and "rms_z" in pred[0]:
        for name, want in zip(("farthest_z", "rms_z"), distance):
            got = np.array([float(r[name]) for r in pred])
            rel = np.abs(got - want) / np.maximum(1.0, np.abs(want))
            print("%s max_rel_diff %.3g" % (name, rel.max()))
            failed |= bool(rel.max() > 1e-5)  # credence encodes in float32
    top2 = np.sort(pbar, axis=1)[:, -2:]
    clear = (top2[:, 1] - top2[:, 0]) > tol
    want_class = np.array([classes[k] for k in pbar.argmax(axis=1)])
    got_class = np.array([r["predicted"] for r in pred])
    wrong = int(np.sum((want_class != got_class) & clear))
    print("predicted mismatches (clear rows) %d of %d" % (wrong, len(pred)))
    failed |= wrong > 0
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1], sys.argv[2], sys.argv[3],
                  float(sys.argv[4]) if len(sys.argv) > 4 else 1e-5))
