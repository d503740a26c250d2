"""Rebuilds a credence ensemble's class probabilities with h5py and numpy alone.

Follows docs/run-file.md and nets/README.md only: reads the committed samples, the
stored preprocessing and the net text, encodes the first ROWS rows of TABLE.csv, runs
every sample's network and averages the softmax outputs (the Bayesian model average).
Writes one line per row: the K averaged probabilities, comma-separated.

usage: rebuild_probabilities.py RUN.h5 TABLE.csv ROWS OUT.csv
"""
import csv
import sys

import h5py
import numpy as np


def open_run(path):
    try:
        return h5py.File(path, "r")
    except OSError:
        return h5py.File(path, "r", swmr=True)  # a writer was killed: read-only SWMR open


def text(value):
    """A run file's string attribute: fixed-width, so h5py returns bytes."""
    return value.decode() if isinstance(value, bytes) else str(value)


def encode(f, rows):
    """Standardise numeric columns, one-hot categorical ones, fill missing cells."""
    pre, feats = f["preprocessing"], f["preprocessing/features"]
    na = set(text(f["settings"].attrs["csv_na_tokens"]).split("\x1f"))
    cats = [c.decode() for c in feats["categories"][:]]
    x = np.zeros((len(rows), int(pre.attrs["input_width"])), np.float64)
    for i, raw in enumerate(feats["name"][:]):
        name, off = raw.decode(), int(feats["offset"][i])
        cells = [row[name].strip() for row in rows]
        if feats["type"][i] == b"numeric":
            v = np.array([feats["impute_value"][i] if c in na else float(c) for c in cells])
            x[:, off] = (v - feats["mean"][i]) / feats["scale"][i]
        else:
            s, n = int(feats["category_start"][i]), int(feats["category_count"][i])
            levels = cats[s:s + n]
            for r, cell in enumerate(cells):
                cell = "(missing)" if cell in na else cell
                if cell in levels:
                    x[r, off + levels.index(cell)] = 1
    return x


class HiddenLayers(list):
    """[(width, activation), ...], input side first; .linear_path: the net text's
    `linear_path on` (a map from the inputs straight to the logits, after the output layer
    in the flat vector), which only counts beside hidden layers."""
    linear_path = False


def hidden_layers(net_text):
    layers = HiddenLayers()
    for line in text(net_text).splitlines():
        words = line.split("#")[0].split()
        if words and words[0] == "hidden":
            layers.append((int(words[1]), words[2]))
        if words[:2] == ["linear_path", "on"]:
            layers.linear_path = True
    layers.linear_path = layers.linear_path and len(layers) > 0
    return layers


ACTIVATIONS = {"relu": lambda z: np.maximum(z, 0), "tanh": np.tanh,
               "sigmoid": lambda z: 1 / (1 + np.exp(-z)),
               "softplus": lambda z: np.logaddexp(0, z), "identity": lambda z: z}


def probabilities(theta, x, layers, k):
    """nets/README.md's flat layout: per layer W (out, in) column-major, then b; the linear
    path's W (K, D) and b (K) last, added to the logits."""
    a, offset, n_in = x.T, 0, x.shape[1]
    for n_out, act in list(layers) + [(k, "identity")]:
        w = theta[offset:offset + n_out * n_in].reshape((n_out, n_in), order="F")
        offset += n_out * n_in
        b = theta[offset:offset + n_out]
        offset += n_out
        a = ACTIVATIONS[act](w @ a + b[:, None])
        n_in = n_out
    if getattr(layers, "linear_path", False):
        d = x.shape[1]
        w = theta[offset:offset + k * d].reshape((k, d), order="F")
        b = theta[offset + k * d:offset + k * d + k]
        a = a + w @ x.T + b[:, None]
    z = a - a.max(axis=0)
    p = np.exp(z)
    return (p / p.sum(axis=0)).T


def main(run_path, table_path, count, out_path):
    f = open_run(run_path)
    active = int(f["run/active_slot"][0])
    committed = int(f["checkpoint/slot_%d/committed_samples" % active][0]) if active >= 0 else 0
    theta = f["samples/theta"][:committed].astype(np.float64)
    with open(table_path, newline="") as handle:
        rows = list(csv.DictReader(handle))[:count]
    x = encode(f, rows)
    k = len(f["preprocessing"]["class_names"])
    layers = hidden_layers(f["model"].attrs["net_text"])
    mean = np.mean([probabilities(t, x, layers, k) for t in theta], axis=0)
    np.savetxt(out_path, mean, delimiter=",", fmt="%.10g")


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2], int(sys.argv[3]), sys.argv[4])
