#!/usr/bin/python3
"""Checks `credence sweep --masses ...`'s tuning_map.json against its run files, read
independently with h5py (docs/run-file.md):

  * ess_bulk: bulk-ESS of the probe log-likelihood by numpy_rhat.py's own implementation
    ("Rank-normalization, folding, and localization: an improved R-hat for assessing
    convergence of MCMC", Bayesian Analysis, 2021), to 1e-6 relative;
  * gradient_evals: the sum over chains of the active checkpoint slot's gradient_evals;
  * ess_per_1000_grads = 1000 * ess_bulk / gradient_evals;
  * speed_ratio: the mean over chains of each chain's mean speed_ratio trace row after
    burn-in (step > burn_in), as the sampler recorded it;
  * the stored rest mass and max move are the cell's, and the mass was not adapted;
  * the chosen cell is the highest ESS rate among cells with no diverged chain whose test
    NLL is within 0.01 nats of the lowest such NLL (the documented rule, README).

usage: check_tuning_map.py OUT_DIR     exit 0 when every check passes, 1 otherwise.
"""
import json
import math
import os
import sys

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import numpy_rhat  # noqa: E402


def close(a, b, rel=1e-6):
    if a is None or b is None:
        return a is None and b is None
    return math.isclose(a, b, rel_tol=rel, abs_tol=1e-12)


def measure(path):
    f = h5py.File(path, "r")
    slot, s_count, chains_n, order, n = numpy_rhat.kept_order(f)
    log_lik = f["samples/probe_log_lik"][:s_count]
    ess = numpy_rhat.diagnose(np.array([log_lik[o[:n]] for o in order], dtype=np.float64))["ess_bulk"]
    grads = float(np.sum(slot["gradient_evals"][:]))
    burn_in = int(f["settings"].attrs["burn_in"])
    traces = slot["committed_traces"][:]
    means = []
    for c in range(chains_n):
        g = f["traces/chain_%d" % c]
        step = g["step"][:traces[c]]
        ratio = g["speed_ratio"][:traces[c]][step > burn_in]
        ratio = ratio[~np.isnan(ratio)]
        if len(ratio):
            means.append(float(ratio.mean()))
    settings = {k: f["settings"].attrs[k] for k in f["settings"].attrs}
    return ess, grads, (float(np.mean(means)) if means else None), settings


def main(out_dir):
    doc = json.load(open(os.path.join(out_dir, "tuning_map.json")))
    axis = doc["axis"]
    failures = []
    eligible = []
    best = None
    for cell in doc["cells"]:
        name = cell["run_file"]
        if not cell["trained"]:
            continue
        ess, grads, speed, settings = measure(os.path.join(out_dir, name))
        print(name, "ess", ess, cell["ess_bulk"], "grads", grads, cell["gradient_evals"],
              "speed", speed, cell["speed_ratio"])
        if not close(cell["ess_bulk"], ess):
            failures.append("%s: ess_bulk %r, numpy %r" % (name, cell["ess_bulk"], ess))
        if cell["gradient_evals"] != grads:
            failures.append("%s: gradient_evals %r, h5py %r" % (name, cell["gradient_evals"], grads))
        if not close(cell["ess_per_1000_grads"], 1000 * ess / grads):
            failures.append("%s: ess_per_1000_grads %r" % (name, cell["ess_per_1000_grads"]))
        if not close(cell["speed_ratio"], speed):
            failures.append("%s: speed_ratio %r, traces %r" % (name, cell["speed_ratio"], speed))
        if not close(float(settings["relativistic_mass"]), cell["mass"], 1e-12):
            failures.append("%s: stored mass %r" % (name, settings["relativistic_mass"]))
        if int(settings["relativistic_adapt_mass"]) != 0:
            failures.append("%s: the mass was adapted" % name)
        if axis == "max_move" and not close(float(settings["relativistic_max_move"]), cell["max_move"], 1e-12):
            failures.append("%s: stored max move %r" % (name, settings["relativistic_max_move"]))
        if cell["diverged_chains"] == 0:
            eligible.append((name, ess / grads, cell["test_nll"]))
    bar = min((e[2] for e in eligible), default=None)
    for name, rate, nll in eligible:
        if nll <= bar + 0.01 and (best is None or rate > best[1]):
            best = (name, rate)
    chosen = [c["run_file"] for c in doc["cells"] if c["chosen"]]
    if best is not None and chosen != [best[0]]:
        failures.append("chosen %r, expected %r" % (chosen, best[0]))
    for line in failures:
        print("FAIL", line)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
