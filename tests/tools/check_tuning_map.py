#!/usr/bin/python3
"""Checks `credence sweep --masses ...`'s tuning_map.json against its run files, read
independently with h5py (docs/run-file.md):

  * ess_bulk: bulk-ESS of the probe log-likelihood by numpy_rhat.py's own implementation
    ("Rank-normalization, folding, and localization: an improved R-hat for assessing
    convergence of MCMC", Bayesian Analysis, 2021), to 1e-6 relative;
  * gradient_evals: the sum over chains of the active checkpoint slot's gradient_evals;
    for rhmc also against its trajectories x leapfrog steps: every chain ran T = burn_in +
    thin x samples trajectories of L leapfrog steps (L full-data gradients), plus one
    gradient at the start of each trajectory whose target changed (the learned prior
    scale is redrawn before every trajectory but the first; a fixed scale: the first only);
  * ess_per_1000_grads = 1000 * ess_bulk / gradient_evals;
  * passes: gradient_evals / ceil(N / batch) for rsghmc (N training rows, h5py's
    data/train_rows), gradient_evals for rhmc (one full-data gradient is one pass);
    ess_per_1000_passes = 1000 * ess_bulk / passes;
  * speed_ratio: the mean over chains of each chain's mean speed_ratio trace row after
    burn-in (step > burn_in), as the sampler recorded it (rhmc: one row per trajectory,
    which must be there);
  * acceptance: the same mean of the trace's acceptance column for rhmc, null for rsghmc;
  * divergent_trajectories: for rhmc the sum over chains of the active slot's sampler state
    word "divergent" (docs/run-file.md), null for rsghmc;
  * the stored rest mass and max move (or learning rate) are the cell's, and the mass was
    not adapted;
  * with --epochs E: an rhmc cell ran floor(E / L) trajectories per chain, half at least
    burn-in (the documented translation of --epochs into trajectories, README);
  * the chosen cell of each method is the highest ESS rate among its cells with no
    diverged chain whose test NLL is within 0.01 nats of the lowest such NLL (the
    documented rule, README).

usage: check_tuning_map.py OUT_DIR [--epochs E]   exit 0 when every check passes, else 1.
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

    def trace_mean(column):
        means = []
        for c in range(chains_n):
            g = f["traces/chain_%d" % c]
            step = g["step"][:traces[c]]
            values = g[column][:traces[c]][step > burn_in]
            values = values[~np.isnan(values)]
            if len(values):
                means.append(float(values.mean()))
        return float(np.mean(means)) if means else None

    settings = {k: f["settings"].attrs[k] for k in f["settings"].attrs}
    settings["learned_scale"] = "state/doubles/model.prior_precision" in slot
    settings["train_rows"] = len(f["data/train_rows"])
    settings["per_chain_grads"] = [int(g) for g in slot["gradient_evals"][:]]
    settings["next_step"] = [int(n) for n in slot["next_step"][:]]
    words = "state/words/divergent"
    settings["divergent"] = float(np.sum(slot[words][:])) if words in slot else None
    return ess, grads, trace_mean("speed_ratio"), trace_mean("acceptance"), settings


def check_rhmc_budget(name, settings, epochs, failures):
    """The gradients an rhmc cell spent, rebuilt from its trajectories and leapfrog steps."""
    leapfrog = int(settings["hmc_leapfrog_steps"])
    burn_in, thin, samples = (int(settings[k]) for k in ("burn_in", "thin", "samples"))
    trajectories = burn_in + thin * samples
    # One gradient before the first trajectory; with a learned prior scale, one more before
    # every later trajectory (its Gibbs draw changes the target).
    starts = trajectories if settings["learned_scale"] else 1
    for c, (got, steps) in enumerate(zip(settings["per_chain_grads"], settings["next_step"])):
        if steps != trajectories:
            failures.append("%s chain %d: %d trajectories, settings say %d" % (name, c, steps, trajectories))
        if got != trajectories * leapfrog + starts:
            failures.append("%s chain %d: %d gradients, %d trajectories x %d leapfrog steps + %d "
                            "starts = %d" % (name, c, got, trajectories, leapfrog, starts,
                                             trajectories * leapfrog + starts))
    if epochs is not None:
        if trajectories != int(epochs // leapfrog):
            failures.append("%s: %d trajectories, --epochs %g / %d leapfrog steps gives %d"
                            % (name, trajectories, epochs, leapfrog, int(epochs // leapfrog)))
        if burn_in < trajectories // 2:
            failures.append("%s: burn-in %d is under half of %d" % (name, burn_in, trajectories))


def main(out_dir, epochs=None):
    doc = json.load(open(os.path.join(out_dir, "tuning_map.json")))
    axis = doc["axis"]
    failures = []
    eligible = {}
    for cell in doc["cells"]:
        name = cell["run_file"]
        if not cell["trained"]:
            continue
        ess, grads, speed, acceptance, settings = measure(os.path.join(out_dir, name))
        rhmc = cell["method"] == "rhmc"
        print(name, "ess", ess, cell["ess_bulk"], "grads", grads, cell["gradient_evals"],
              "speed", speed, cell["speed_ratio"], "acceptance", acceptance, cell["acceptance"])
        if rhmc:
            check_rhmc_budget(name, settings, epochs, failures)
            if speed is None:
                failures.append("%s: rhmc recorded no speed ratio in its trace" % name)
            passes = grads
        else:
            batch = min(int(settings["batch_rows"]), settings["train_rows"])
            passes = grads / math.ceil(settings["train_rows"] / batch)
            if acceptance is not None or cell["acceptance"] is not None:
                failures.append("%s: rsghmc has no acceptance, map says %r" % (name, cell["acceptance"]))
        if not close(cell["passes"], passes):
            failures.append("%s: passes %r, h5py %r" % (name, cell["passes"], passes))
        if not close(cell["ess_per_1000_passes"], 1000 * ess / passes):
            failures.append("%s: ess_per_1000_passes %r" % (name, cell["ess_per_1000_passes"]))
        if not close(cell["divergent_trajectories"], settings["divergent"] if rhmc else None):
            failures.append("%s: divergent_trajectories %r, h5py %r"
                            % (name, cell["divergent_trajectories"], settings["divergent"]))
        if not close(cell["acceptance"], acceptance):
            failures.append("%s: acceptance %r, traces %r" % (name, cell["acceptance"], acceptance))
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
        if axis == "learning_rate" and not close(float(settings["learning_rate"]), cell["learning_rate"], 1e-12):
            failures.append("%s: stored learning rate %r" % (name, settings["learning_rate"]))
        if cell["diverged_chains"] == 0:
            eligible.setdefault(cell["method"], []).append((name, ess / grads, cell["test_nll"]))
    for method, cells in eligible.items():
        best = None
        bar = min(e[2] for e in cells)
        for name, rate, nll in cells:
            if nll <= bar + 0.01 and (best is None or rate > best[1]):
                best = (name, rate)
        chosen = [c["run_file"] for c in doc["cells"] if c["chosen"] and c["method"] == method]
        if chosen != [best[0]]:
            failures.append("%s: chosen %r, expected %r" % (method, chosen, best[0]))
    for line in failures:
        print("FAIL", line)
    return 1 if failures else 0


if __name__ == "__main__":
    args = sys.argv[1:]
    given = float(args[args.index("--epochs") + 1]) if "--epochs" in args else None
    sys.exit(main(args[0], given))
