#!/usr/bin/env python3
"""Checks `credence diagnose --json`'s kernel Stein discrepancy against numpy.

Rebuilds, with h5py and numpy alone and following docs/run-file.md, nets/README.md and
docs/methods.md sections 1, 11 and 15 (not credence's C++):
- the training rows of the run's table, encoded as the stored preprocessing says and
  rounded to float32 as the network sees them (rebuild_probabilities.encode);
- each kept draw's full-data score grad log pi(theta): the softmax log-likelihood
  gradient by hand-written backpropagation over every training row, plus the prior's
  score: -lambda_b theta_b for a fixed Gaussian prior (weights lambda = fan_in / scale^2,
  biases 1 / bias_scale^2), or for a learned scale the marginal prior's
  -A_b theta_b / (r_b + ||theta_b||^2 / 2), A_b = a + d_b/2 at T = 1
  ((a - 1 + d_b/2)/T + 1 under whole-posterior tempering); the likelihood carries 1/T and,
  under whole-posterior tempering, the fixed prior's score too;
- the draws used: per chain in kept order, evenly spaced positions floor(i k / n) when a
  chain kept k > n = max_draws_per_chain;
- the IMQ KSD (c = 1, beta = -1/2) with numpy_ksd.imq_ksd, per chain and pooled.
Prints each value beside the JSON's and exits 1 when any differs by more than TOL
(relative), or when the JSON has no computed discrepancy.

usage: numpy_run_ksd.py RUN.h5 TABLE.csv DIAGNOSE.json [TOL]
"""
import csv
import json
import os
import sys

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import numpy_ksd  # noqa: E402
import rebuild_probabilities as rebuild  # noqa: E402


def prior_settings(net_text):
    """The `prior` line's settings (nets/README.md defaults when absent)."""
    prior = {"scale": "auto", "fan_in": "on", "bias_scale": "1", "shape": "1", "rate": "1"}
    for line in rebuild.text(net_text).splitlines():
        words = line.split("#")[0].split()
        if words and words[0] == "layer_prior":
            raise SystemExit("layer_prior overrides are not rebuilt by this script")
        if words and words[0] == "prior":
            prior = {"scale": "1", "fan_in": "on", "bias_scale": "1", "shape": "1", "rate": "1"}
            for word in words[2:]:
                key, value = word.split("=")
                prior[key] = value
    return prior


DERIVATIVES = {  # d activation / d pre-activation, from the pre-activation z
    "relu": lambda z: (z > 0).astype(float), "tanh": lambda z: 1 - np.tanh(z) ** 2,
    "sigmoid": lambda z: (1 / (1 + np.exp(-z))) * (1 - 1 / (1 + np.exp(-z))),
    "softplus": lambda z: 1 / (1 + np.exp(-z)), "identity": lambda z: np.ones_like(z)}


def blocks(layers, d_in, k):
    """(offset, rows, cols) of W and (offset, rows) of b per layer, nets/README.md layout;
    the linear path (inputs to logits), when there is one, last with activation "linear"."""
    out, offset, n_in = [], 0, d_in
    for n_out, act in list(layers) + [(k, "identity")]:
        w = (offset, n_out, n_in)
        offset += n_out * n_in
        b = (offset, n_out)
        offset += n_out
        out.append((w, b, act))
        n_in = n_out
    if getattr(layers, "linear_path", False):
        out.append(((offset, k, d_in), (offset + k * d_in, k), "linear"))
    return out


def log_lik_gradient(theta, x, y, layout):
    """grad_theta sum_n log softmax(f(x_n))_{y_n}; x (N, D), y (N)."""
    chain = [block for block in layout if block[2] != "linear"]
    linear = [block for block in layout if block[2] == "linear"]
    a, saved = x.T, []
    for (wo, wr, wc), (bo, br), act in chain:
        w = theta[wo:wo + wr * wc].reshape((wr, wc), order="F")
        z = w @ a + theta[bo:bo + br][:, None]
        saved.append((a, z, w))
        a = rebuild.ACTIVATIONS[act](z)
    for (wo, wr, wc), (bo, br), _ in linear:  # logits += W_lin x + b_lin
        w = theta[wo:wo + wr * wc].reshape((wr, wc), order="F")
        a = a + w @ x.T + theta[bo:bo + br][:, None]
    p = np.exp(a - a.max(axis=0))
    p /= p.sum(axis=0)
    onehot = np.zeros_like(p)
    onehot[y, np.arange(len(y))] = 1
    delta = onehot - p  # d log p(y) / d logits
    grad = np.zeros_like(theta)
    for (wo, wr, wc), (bo, br), _ in linear:
        grad[wo:wo + wr * wc] = (delta @ x).reshape(-1, order="F")
        grad[bo:bo + br] = delta.sum(axis=1)
    for i in reversed(range(len(chain))):
        (wo, wr, wc), (bo, br), act = chain[i]
        a_in, z, w = saved[i]
        delta = delta * DERIVATIVES[act](z)
        grad[wo:wo + wr * wc] = (delta @ a_in.T).reshape(-1, order="F")
        grad[bo:bo + br] = delta.sum(axis=1)
        delta = w.T @ delta
    return grad


def prior_score(theta, layout, prior, temperature, whole):
    score = np.zeros_like(theta)
    learned = prior["scale"] == "auto"
    a = float(prior["shape"])
    for (wo, wr, wc), (bo, br), _ in layout:
        weight_sd = (1.0 if learned else float(prior["scale"])) / (
            np.sqrt(wc) if prior["fan_in"] == "on" else 1.0)
        for start, size, sd in ((wo, wr * wc, weight_sd), (bo, br, float(prior["bias_scale"]))):
            t = theta[start:start + size]
            lam = 1.0 / sd ** 2
            if not learned:
                score[start:start + size] = -lam * t / (temperature if whole else 1.0)
                continue
            rate = a / lam if prior["rate"] == "matched" else float(prior["rate"])
            exponent = (a - 1 + size / 2) / temperature + 1 if whole else a + size / 2
            score[start:start + size] = -exponent * t / (rate + t @ t / 2)
    return score


def reference(run_path, table_path, cap):
    f = rebuild.open_run(run_path)
    active = int(f["run/active_slot"][0])
    count = int(f["checkpoint/slot_%d/committed_samples" % active][0])
    theta = f["samples/theta"][:count].astype(np.float64)
    chain = f["samples/chain"][:count]
    index = f["samples/index"][:count]
    settings = f["settings"].attrs
    temperature = float(settings["temperature"])
    whole = rebuild.text(settings["tempering"]) == "posterior"
    with open(table_path, newline="") as handle:
        rows = list(csv.DictReader(handle))
    train = f["data/train_rows"][:]
    x = rebuild.encode(f, [rows[r] for r in train]).astype(np.float32).astype(np.float64)
    classes = [c.decode() for c in f["preprocessing"]["class_names"][:]]
    target = rebuild.text(f["preprocessing"].attrs["target"])
    y = np.array([classes.index(rows[r][target].strip()) for r in train])
    net_text = f["model"].attrs["net_text"]
    layout = blocks(rebuild.hidden_layers(net_text), x.shape[1], len(classes))
    prior = prior_settings(net_text)

    def score(t):
        lik = log_lik_gradient(t, x, y, layout) / temperature
        return lik + prior_score(t, layout, prior, temperature, whole)

    per_chain, all_x, all_s = {}, [], []
    for c in sorted(set(chain.tolist())):
        mine = np.where(chain == c)[0]
        mine = mine[np.argsort(index[mine])]
        k = len(mine)
        n = min(k, cap)
        used = mine[[i * k // n for i in range(n)]]
        draws = theta[used]
        scores = np.array([score(t) for t in draws])
        per_chain[c] = numpy_ksd.imq_ksd(draws, scores, 1.0, -0.5)
        all_x.append(draws)
        all_s.append(scores)
    pooled = numpy_ksd.imq_ksd(np.vstack(all_x), np.vstack(all_s), 1.0, -0.5)
    return per_chain, pooled


def main(run_path, table_path, json_path, tol=1e-6):
    stein = json.load(open(json_path))["stein"]
    if not stein or not stein["computed"]:
        print("the JSON has no computed discrepancy: %s" % (stein and stein["note"]))
        return 1
    per_chain, pooled = reference(run_path, table_path, int(stein["max_draws_per_chain"]))
    pairs = [("pooled", pooled, stein)]
    if len(stein["per_chain"]) != len(per_chain):
        print("chains: credence %d, numpy %d" % (len(stein["per_chain"]), len(per_chain)))
        return 1
    for entry in stein["per_chain"]:
        pairs.append(("chain%d" % entry["chain"], per_chain[entry["chain"]], entry))
    worst = 0.0
    for name, (v, u, ksd), got in pairs:
        for key, want in (("v_statistic", v), ("u_statistic", u), ("ksd", ksd)):
            # U can be near 0 (it is unbiased for KSD^2); scale its error by V.
            rel = abs(got[key] - want) / max(abs(want), abs(v) if key == "u_statistic" else 0)
            worst = max(worst, rel)
            print("%s %s credence %.12g numpy %.12g rel %.3g" % (name, key, got[key], want, rel))
    print("max_rel %.3g" % worst)
    return 1 if worst > tol else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1], sys.argv[2], sys.argv[3],
                  float(sys.argv[4]) if len(sys.argv) > 4 else 1e-6))
