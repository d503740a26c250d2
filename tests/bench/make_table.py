"""Writes a labelled numeric CSV for the benchmark (invented numbers, seeded).

Columns x0..x{D-1} are standard normal with 6 significant digits; the last column `label`
holds classes c0..c{K-1} drawn from a random linear teacher, so the classes are learnable
but overlap. With --numeric-label the label is written as an integer 0..K-1 (every column
then parses as a number, as numpy.loadtxt needs).

usage: make_table.py OUT.csv ROWS COLUMNS CLASSES [--numeric-label] [--seed N]
"""
import argparse
import os

import numpy as np


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("out")
    parser.add_argument("rows", type=int)
    parser.add_argument("columns", type=int)
    parser.add_argument("classes", type=int)
    parser.add_argument("--numeric-label", action="store_true")
    parser.add_argument("--seed", type=int, default=20261202)
    a = parser.parse_args()
    rng = np.random.default_rng(a.seed)
    teacher = rng.standard_normal((a.columns, a.classes))
    header = ",".join(["x%d" % j for j in range(a.columns)] + ["label"]) + "\n"
    tmp = a.out + ".tmp"
    with open(tmp, "w") as out:
        out.write(header)
        chunk = 20000
        for start in range(0, a.rows, chunk):
            n = min(chunk, a.rows - start)
            x = rng.standard_normal((n, a.columns)).astype(np.float32)
            logits = x @ teacher + rng.gumbel(size=(n, a.classes))
            label = logits.argmax(axis=1)
            cells = np.char.mod("%.6g", x)
            if a.numeric_label:
                names = label.astype(str)
            else:
                names = np.char.add("c", label.astype(str))
            lines = [",".join(row) + "," + name for row, name in zip(cells.tolist(), names.tolist())]
            out.write("\n".join(lines) + "\n")
    os.replace(tmp, a.out)


if __name__ == "__main__":
    main()
