"""Rebuilds a credence network's log-probabilities with numpy from the flat parameters.

Usage: numpy_forward.py DIR [DIR ...]
Reads DIR/layout.txt (one line per layer: in out activation weight_offset bias_offset),
DIR/theta.f32 (float32, the flat parameter vector) and DIR/x.f32 (float32, the input batch
stored row by row: B rows of D values). Writes DIR/log_probs.f64: float64, B rows of K
log-probabilities. It follows only the layout documented in nets/README.md, so a match
also checks that documentation.
"""
import sys
from pathlib import Path

import numpy as np
from scipy.special import log_softmax

ACTIVATIONS = {
    "relu": lambda z: np.maximum(z, 0.0),
    "tanh": np.tanh,
    "sigmoid": lambda z: 1.0 / (1.0 + np.exp(-z)),
    "softplus": lambda z: np.logaddexp(0.0, z),
    "identity": lambda z: z,
}


def main(directory: Path) -> None:
    layers = [line.split() for line in (directory / "layout.txt").read_text().splitlines()]
    theta = np.fromfile(directory / "theta.f32", dtype="<f4").astype(np.float64)
    d_in = int(layers[0][0])
    rows = np.fromfile(directory / "x.f32", dtype="<f4").astype(np.float64).reshape(-1, d_in)
    a = rows.T  # (D, B): one data row per column, as in credence
    for index, (n_in, n_out, activation, w_off, b_off) in enumerate(layers):
        n_in, n_out, w_off, b_off = int(n_in), int(n_out), int(w_off), int(b_off)
        w = theta[w_off : w_off + n_out * n_in].reshape((n_out, n_in), order="F")
        b = theta[b_off : b_off + n_out]
        z = w @ a + b[:, None]
        a = ACTIVATIONS[activation](z) if index + 1 < len(layers) else z
    log_probs = log_softmax(a, axis=0)  # (K, B)
    np.ascontiguousarray(log_probs.T).astype("<f8").tofile(directory / "log_probs.f64")


if __name__ == "__main__":
    for argument in sys.argv[1:]:
        main(Path(argument))
