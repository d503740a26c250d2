"""Reads a credence run file with h5py and numpy alone, following docs/run-file.md.

Prints one line per fact, "key value value ...", for tests/ensemble/run_file_test.cc
to compare with what the C++ reader returns. Only committed rows are read: the counts
come from the checkpoint slot that /run/active_slot names.

With a CSV file as second argument it also encodes that table's rows with the stored
preprocessing (the recipe of docs/run-file.md) and prints each encoded row.

usage: read_run.py RUN.h5 [TABLE.csv]
"""
import csv
import sys

import h5py
import numpy as np


def open_run(path):
    try:
        return h5py.File(path, "r")
    except OSError:
        # A writer was killed (or is still writing): read-only SWMR open, as documented.
        return h5py.File(path, "r", swmr=True)


def text(value):
    return value.decode() if isinstance(value, bytes) else str(value)


def encode(pre, table):
    """docs/run-file.md's recipe: table maps column name -> list of cell strings."""
    feats = pre["features"]
    cats = [c.decode() for c in feats["categories"][:]]
    n = len(next(iter(table.values())))
    x = np.zeros((n, int(pre.attrs["input_width"])), np.float32)
    for i, name in enumerate(feats["name"][:]):
        name, off = name.decode(), int(feats["offset"][i])
        if feats["type"][i] == b"numeric":
            v = np.array(table[name], dtype=np.float64)
            x[:, off] = (v - feats["mean"][i]) / feats["scale"][i]
        else:
            s, c = int(feats["category_start"][i]), int(feats["category_count"][i])
            levels = cats[s:s + c]
            for r, cell in enumerate(table[name]):
                if cell in levels:
                    x[r, off + levels.index(cell)] = 1
    return x


def main(path, table_path=None):
    f = open_run(path)
    print("format", text(f.attrs["format"]), int(f.attrs["format_version"]))
    print("status", text(f["run/status"][0].rstrip(b"\0")))
    active = int(f["run/active_slot"][0])
    slot = f["checkpoint/slot_%d" % max(active, 0)]
    chains = int(f["sampling"].attrs["chains"])
    committed = int(slot["committed_samples"][0]) if active >= 0 else 0
    per_chain = slot["committed_per_chain"][:] if active >= 0 else np.zeros(chains, np.int64)
    traces = slot["committed_traces"][:] if active >= 0 else np.zeros(chains, np.int64)
    print("samples", committed)
    print("per_chain", *per_chain.tolist())
    theta = f["samples/theta"][:committed, :]          # (S, P) float32
    print("parameters", theta.shape[1])
    print("theta_sums", *["%.17g" % v for v in theta.astype(np.float64).sum(axis=1)])
    print("chains_of_samples", *f["samples/chain"][:committed].tolist())
    print("steps_of_samples", *f["samples/step"][:committed].tolist())
    print("probe_log_lik_sum", "%.17g" % f["samples/probe_log_lik"][:committed].sum())
    for c in range(chains):
        potential = f["traces/chain_%d/potential" % c][:traces[c]]
        print("trace_%d" % c, traces[c], "%.17g" % potential.sum())
    pre = f["preprocessing"]
    feats = pre["features"]
    print("target", text(pre.attrs["target"]))
    print("class_names", *[text(v) for v in pre["class_names"][:]])
    print("feature_names", *[text(v) for v in feats["name"][:]])
    print("feature_means", *["%.17g" % v for v in feats["mean"][:]])
    print("feature_scales", *["%.17g" % v for v in feats["scale"][:]])
    cats = [text(v) for v in feats["categories"][:]]
    for name, start, count in zip(feats["name"][:], feats["category_start"][:],
                                  feats["category_count"][:]):
        if count > 0:
            print("categories_" + text(name), *cats[start:start + count])
    print("input_width", int(pre.attrs["input_width"]), int(feats["width"][:].sum()))
    for name, value in f["settings"].attrs.items():
        print("setting", name, text(value) if not isinstance(value, (np.floating, float))
              else "%.17g" % value)
    print("train_rows", len(f["data/train_rows"]))
    print("net_text_lines", len(text(f["model"].attrs["net_text"]).splitlines()))
    if table_path:
        with open(table_path, newline="") as handle:
            rows = list(csv.DictReader(handle))
        table = {name: [row[name] for row in rows] for name in rows[0]}
        for r, encoded in enumerate(encode(pre, table)):
            print("encoded_%d" % r, *["%.9g" % v for v in encoded])


if __name__ == "__main__":
    main(*sys.argv[1:3])
