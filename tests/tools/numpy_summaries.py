"""Recomputes credence's tracked per-sample summaries (docs/methods.md 10.3) with numpy.

Usage: numpy_summaries.py DIR [DIR ...]
Reads DIR/layout.txt (one line per layer: in out activation weight_offset bias_offset),
DIR/theta.f32 (float32, the flat parameters), DIR/x.f32 (float32, the R probe rows stored
row by row: R rows of D values), DIR/labels.i32 (int32, R labels) and DIR/projections.txt
("J SEED"). Writes DIR/summaries.f64 (float64): the probe log-likelihood, the R predictive
probabilities of each row's own label, the J projections u_j^T theta and the L per-layer
squared norms, in that order. It follows only nets/README.md's flat layout and the
generator documented in include/credence/summaries.h, so a match checks both documents.
"""
import math
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
MASK = (1 << 64) - 1


def splitmix64(state):
    """One SplitMix64 step: returns (new state, output word)."""
    state = (state + 0x9E3779B97F4A7C15) & MASK
    z = state
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & MASK
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & MASK
    return state, z ^ (z >> 31)


def directions(count, parameters, seed):
    """u_j ~ N(0, I/P) as summaries.h documents: (J, P) float32."""
    out = np.empty((count, parameters), dtype=np.float32)
    state = seed & MASK
    scale = 1.0 / math.sqrt(parameters)
    for j in range(count):
        for i in range(parameters):
            state, a = splitmix64(state)
            state, b = splitmix64(state)
            u1 = ((a >> 11) + 1) * 2.0**-53
            u2 = (b >> 11) * 2.0**-53
            out[j, i] = np.float32(math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2) * scale)
    return out


def main(directory: Path) -> None:
    lines = [line.split() for line in (directory / "layout.txt").read_text().splitlines()]
    layers = [words for words in lines if len(words) == 5]  # the chain, output last
    linear = [words for words in lines if len(words) == 6 and words[5] == "linear"]
    theta32 = np.fromfile(directory / "theta.f32", dtype="<f4")
    theta = theta32.astype(np.float64)
    d_in = int(layers[0][0])
    rows = np.fromfile(directory / "x.f32", dtype="<f4").astype(np.float64).reshape(-1, d_in)
    labels = np.fromfile(directory / "labels.i32", dtype="<i4")
    count, seed = (int(v) for v in (directory / "projections.txt").read_text().split())

    x = rows.T  # (D, R): one probe row per column
    a = x
    norms = []

    def affine(words, inputs):
        n_in, n_out, w_off, b_off = int(words[0]), int(words[1]), int(words[3]), int(words[4])
        w = theta[w_off : w_off + n_out * n_in].reshape((n_out, n_in), order="F")
        b = theta[b_off : b_off + n_out]
        norms.append(np.sum(w * w) + np.sum(b * b))
        return w @ inputs + b[:, None]

    for index, words in enumerate(layers):
        z = affine(words, a)
        a = ACTIVATIONS[words[2]](z) if index + 1 < len(layers) else z
    for words in linear:  # the linear path: logits += W_lin x + b_lin; its norm comes last
        a = a + affine(words, x)
    log_probs = log_softmax(a, axis=0)  # (K, R)
    own = log_probs[labels, np.arange(labels.size)]
    u = directions(count, theta.size, seed).astype(np.float64)
    out = np.concatenate([[own.sum()], np.exp(own), u @ theta, norms])
    out.astype("<f8").tofile(directory / "summaries.f64")


if __name__ == "__main__":
    for argument in sys.argv[1:]:
        main(Path(argument))
