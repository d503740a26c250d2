"""numpy reference for `credence predict`: the same ensemble prediction rebuilt from the run file.

Follows docs/run-file.md ("Rebuilding predictions") and nets/README.md, as
tests/tools/rebuild_probabilities.py does, but in float32 and for numeric columns only (the
benchmark's tables have no categorical column): loads TABLE.csv with numpy.loadtxt,
standardises with the stored means and scales, runs every kept sample's network over all rows,
and accumulates the model average pbar, the expected entropy and the mutual information
(docs/methods.md 9.1); writes them as CSV like credence predict does. Prints JSON with the seconds
spent loading, computing and writing.

usage: numpy_predict.py RUN.h5 TABLE.csv OUT.csv
"""
import json
import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tools"))
import rebuild_probabilities as rebuild  # noqa: E402

F = np.float32


def main(run_path, table_path, out_path):
    t0 = time.perf_counter()
    f = rebuild.open_run(run_path)
    active = int(f["run/active_slot"][0])
    committed = int(f["checkpoint/slot_%d/committed_samples" % active][0])
    theta = f["samples/theta"][:committed].astype(F)  # (S, P)
    feats = f["preprocessing/features"]
    names = [n.decode() for n in feats["name"][:]]
    with open(table_path) as handle:
        header = handle.readline().strip().split(",")
    cols = [header.index(n) for n in names]
    raw = np.loadtxt(table_path, delimiter=",", skiprows=1, usecols=cols, dtype=F)
    offsets = feats["offset"][:]
    x = np.empty_like(raw)
    x[:, offsets] = (raw - feats["mean"][:].astype(F)) / feats["scale"][:].astype(F)
    k = len(f["preprocessing"]["class_names"])
    layers = rebuild.hidden_layers(f["model"].attrs["net_text"])
    t1 = time.perf_counter()

    n = x.shape[0]
    pbar = np.zeros((n, k), F)
    expected_entropy = np.zeros(n, F)
    for t in theta:
        a, offset, n_in = x, 0, x.shape[1]
        for n_out, act in layers + [(k, "identity")]:
            w = t[offset:offset + n_out * n_in].reshape((n_out, n_in), order="F")
            offset += n_out * n_in
            b = t[offset:offset + n_out]
            offset += n_out
            z = a @ w.T
            z += b
            if act == "relu":
                np.maximum(z, 0, out=z)
            elif act == "tanh":
                np.tanh(z, out=z)
            elif act != "identity":
                z = rebuild.ACTIVATIONS[act](z)
            a, n_in = z, n_out
        a -= a.max(axis=1, keepdims=True)
        log_norm = np.log(np.exp(a).sum(axis=1, keepdims=True))
        a -= log_norm  # log p
        p = np.exp(a)
        pbar += p
        expected_entropy -= (p * a).sum(axis=1)
    pbar /= len(theta)
    expected_entropy /= len(theta)
    entropy = -(pbar * np.log(np.maximum(pbar, 1e-30))).sum(axis=1)
    mutual = np.maximum(entropy - expected_entropy, 0)
    t2 = time.perf_counter()

    table = np.column_stack([pbar, entropy, expected_entropy, mutual])
    np.savetxt(out_path, table, delimiter=",", fmt="%.6g")
    t3 = time.perf_counter()
    print(json.dumps({"impl": "numpy", "samples": int(len(theta)), "rows": int(n),
                      "load_s": t1 - t0, "compute_s": t2 - t1, "write_s": t3 - t2,
                      "total_s": t3 - t0}))


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2], sys.argv[3])
