"""Rebuilds a credence network's log-probabilities with numpy from the flat parameters.

Usage: numpy_forward.py DIR [DIR ...]
Reads DIR/layout.txt (one line per layer: in out activation weight_offset bias_offset, and
a sixth word "linear" on the linear path's line, which maps the inputs straight to the
logits beside the chain of layers),
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
    lines = [line.split() for line in (directory / "layout.txt").read_text().splitlines()]
    layers = [words for words in lines if len(words) == 5]
    linear = [words for words in lines if len(words) == 6 and words[5] == "linear"]
    theta = np.fromfile(directory / "theta.f32", dtype="<f4").astype(np.float64)
    d_in = int(layers[0][0])
    rows = np.fromfile(directory / "x.f32", dtype="<f4").astype(np.float64).reshape(-1, d_in)
    x = rows.T  # (D, B): one data row per column, as in credence
    a = x

    def affine(words, inputs):
        n_in, n_out, w_off, b_off = int(words[0]), int(words[1]), int(words[3]), int(words[4])
        w = theta[w_off : w_off + n_out * n_in].reshape((n_out, n_in), order="F")
        b = theta[b_off : b_off + n_out]
        return w @ inputs + b[:, None]

    for index, words in enumerate(layers):
        z = affine(words, a)
        a = ACTIVATIONS[words[2]](z) if index + 1 < len(layers) else z
    for words in linear:  # logits += W_lin x + b_lin
        a = a + affine(words, x)
    log_probs = log_softmax(a, axis=0)  # (K, B)
    np.ascontiguousarray(log_probs.T).astype("<f8").tofile(directory / "log_probs.f64")


if __name__ == "__main__":
    for argument in sys.argv[1:]:
        main(Path(argument))
