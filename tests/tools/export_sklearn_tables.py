#!/usr/bin/env python3
"""Writes scikit-learn's bundled tables as CSV, with numpy's reference numbers, for the tests.

Usage: export_sklearn_tables.py OUT_DIR

Writes, from sklearn.datasets.load_breast_cancer (the Wisconsin diagnostic breast
cancer table that Debian's python3-sklearn ships):
  breast_cancer.csv        header = the 30 feature names + 'diagnosis'; one row per case,
                           numbers in Python's shortest round-trip form, the target as
                           the class names 'malignant' / 'benign'
  breast_cancer_x.f64      the (569, 30) feature matrix numpy holds, row-major float64
                           little-endian, to compare the parsed table with
  breast_cancer.json       shape, feature names, class counts and the SHA-256 of the CSV
                           (hashlib), for the tests of the reader and the file digest
"""
import csv
import hashlib
import json
import os
import sys

import numpy as np
from sklearn.datasets import load_breast_cancer


def export_breast_cancer(out_dir):
    bunch = load_breast_cancer()
    x = np.asarray(bunch.data, dtype=np.float64)
    names = [str(n) for n in bunch.feature_names]
    target_names = [str(n) for n in bunch.target_names]
    labels = [target_names[int(t)] for t in bunch.target]

    csv_path = os.path.join(out_dir, "breast_cancer.csv")
    tmp_path = csv_path + ".tmp"
    with open(tmp_path, "w", newline="") as f:
        writer = csv.writer(f, lineterminator="\n")
        writer.writerow(names + ["diagnosis"])
        for row, label in zip(x, labels):
            writer.writerow([repr(float(v)) for v in row] + [label])
    os.replace(tmp_path, csv_path)

    x.astype("<f8").tofile(os.path.join(out_dir, "breast_cancer_x.f64"))

    with open(csv_path, "rb") as f:
        digest = hashlib.sha256(f.read()).hexdigest()
    counts = {name: labels.count(name) for name in target_names}
    facts = {
        "rows": int(x.shape[0]),
        "features": int(x.shape[1]),
        "feature_names": names,
        "class_counts": counts,
        "sha256": digest,
    }
    with open(os.path.join(out_dir, "breast_cancer.json"), "w") as f:
        json.dump(facts, f, indent=1)


def main():
    if len(sys.argv) != 2:
        sys.exit(__doc__)
    out_dir = sys.argv[1]
    os.makedirs(out_dir, exist_ok=True)
    export_breast_cancer(out_dir)


if __name__ == "__main__":
    main()
