"""Independent numpy/scipy implementation of split, rank-normalised (bulk) and folded
R-hat, bulk-ESS and tail-ESS, following "Rank-normalization, folding, and localization:
an improved R-hat for assessing convergence of MCMC" (Bayesian Analysis, 2021) as
written out in docs/methods.md 10.1-10.2. Autocovariances are computed directly with
numpy.correlate (no FFT), so they check the C++ FFT path as well.

usage:
  numpy_rhat.py chains FILE      FILE: one chain per line, whitespace-separated draws.
                                 Prints "key value" lines: rhat_split, rhat_bulk,
                                 rhat_folded, ess_bulk, ess_tail, then "acf_<m> r0 r1 ..."
                                 (numpy.correlate autocorrelations of each chain).
  numpy_rhat.py run RUN.h5       Reads the run file's tracked summaries with h5py
                                 (docs/run-file.md), groups them by chain in kept order,
                                 cuts to the shortest chain, and prints one line per
                                 summary: "name rhat_bulk rhat_folded ess_bulk ess_tail"
                                 ("nan" where undefined; R-hat nan for one chain), the
                                 last one "potential" from the traces after burn-in.
  numpy_rhat.py json FILE        Reads `credence diagnose --json` output and prints the
                                 same lines from it (null -> nan), so a test can compare.
"""
import math
import sys

import numpy as np
from scipy.special import ndtri
from scipy.stats import rankdata


def split(chains):
    n = chains.shape[1]
    half = n // 2
    return np.concatenate([chains[:, :half], chains[:, n - half:]], axis=0)


def rhat(chains):
    m, n = chains.shape
    means = chains.mean(axis=1)
    w = chains.var(axis=1, ddof=1).mean()
    b = n * means.var(ddof=1)
    var_plus = (n - 1) / n * w + b / n
    if var_plus == 0:
        return math.nan
    if w == 0:
        return math.inf
    return math.sqrt(var_plus / w)


def acov_direct(x):
    n = len(x)
    c = x - x.mean()
    return np.correlate(c, c, mode="full")[n - 1:] / n


def ess(chains):
    m, n = chains.shape
    if n < 4 or not np.all(np.isfinite(chains)):
        return math.nan
    s2 = chains.var(axis=1, ddof=1)
    w = s2.mean()
    if w == 0:
        return math.nan
    var_plus = (n - 1) / n * w + (chains.mean(axis=1).var(ddof=1) if m > 1 else 0.0)
    acov = np.array([acov_direct(c) for c in chains])            # (M, n)
    with np.errstate(invalid="ignore", divide="ignore"):
        rho_m = acov / acov[:, :1]
    rho_m = np.where(acov[:, :1] > 0, rho_m, 0.0)              # constant chain adds 0
    rho = 1 - (w - (s2[:, None] * rho_m).mean(axis=0)) / var_plus
    rho[0] = 1
    total = 0.0
    prev = math.inf
    k = 0
    while 2 * k + 1 < n:
        p = rho[2 * k] + rho[2 * k + 1]
        if p < 0:
            break
        p = min(p, prev)
        total += p
        prev = p
        k += 1
    s = m * n
    tau = max(-1 + 2 * total, 1 / math.log10(s))
    return s / tau


def z_scale(chains):
    r = rankdata(chains.ravel(), method="average").reshape(chains.shape)
    return ndtri((r - 0.375) / (r.size + 0.25))


def diagnose(chains):
    s = split(np.asarray(chains, dtype=np.float64))
    out = {}
    finite = bool(np.all(np.isfinite(s)))
    multi = chains.shape[0] > 1
    out["rhat_split"] = rhat(s) if multi and finite else math.nan
    out["rhat_bulk"] = rhat(z_scale(s)) if multi and finite else math.nan
    folded = np.abs(s - np.median(s))
    out["rhat_folded"] = rhat(z_scale(folded)) if multi and finite else math.nan
    out["ess_bulk"] = ess(z_scale(s)) if finite else math.nan
    tails = [ess((s <= np.quantile(s, p)).astype(np.float64)) for p in (0.05, 0.95)]
    out["ess_tail"] = math.nan if any(math.isnan(t) for t in tails) else min(tails)
    return out


def fmt(v):
    return "%.17g" % v


def main_chains(path):
    rows = [np.array(line.split(), dtype=np.float64) for line in open(path) if line.strip()]
    n = min(len(r) for r in rows)
    chains = np.array([r[:n] for r in rows])
    for key, value in diagnose(chains).items():
        print(key, fmt(value))
    for m, c in enumerate(chains):
        a = acov_direct(c)
        print("acf_%d" % m, *[fmt(v) for v in a / a[0]])


def kept_order(f):
    """(active checkpoint slot, committed samples, chains, per-chain row order by kept
    number, the shortest chain's length) of an open run file."""
    slot = f["checkpoint/slot_%d" % int(f["run/active_slot"][0])]
    s_count = int(slot["committed_samples"][0])
    chains_n = int(f["sampling"].attrs["chains"])
    chain = f["samples/chain"][:s_count]
    index = f["samples/index"][:s_count]
    order = [np.where(chain == c)[0][np.argsort(index[chain == c], kind="stable")]
             for c in range(chains_n)]
    return slot, s_count, chains_n, order, min(len(o) for o in order)


def main_run(path):
    import h5py
    try:
        f = h5py.File(path, "r")
    except OSError:
        f = h5py.File(path, "r", swmr=True)
    slot, s_count, chains_n, order, n = kept_order(f)

    def by_chain(values):                                  # values: (S,)
        return np.array([values[o[:n]] for o in order], dtype=np.float64)

    def emit(name, values):
        d = diagnose(by_chain(values))
        print(name, *[fmt(d[k]) for k in ("rhat_bulk", "rhat_folded", "ess_bulk", "ess_tail")])

    emit("probe_log_lik", f["samples/probe_log_lik"][:s_count])
    for group, dataset in (("probe_prob", "probe_prob"), ("layer_sq_norm", "layer_sq_norms"),
                           ("projection", "projections")):
        table = f["samples/" + dataset][:s_count, :]
        for j in range(table.shape[1]):
            emit("%s[%d]" % (group, j), table[:, j].astype(np.float64))

    # Potential trace rows after burn-in (step > burn_in), cut to the shortest chain.
    burn_in = int(f["settings"].attrs.get("burn_in", 0))
    traces = slot["committed_traces"][:]
    rows = []
    for c in range(chains_n):
        g = f["traces/chain_%d" % c]
        step = g["step"][:traces[c]]
        rows.append(g["potential"][:traces[c]][step > burn_in])
    t = min(len(r) for r in rows)
    d = diagnose(np.array([r[:t] for r in rows], dtype=np.float64))
    print("potential", *[fmt(d[k]) for k in ("rhat_bulk", "rhat_folded", "ess_bulk", "ess_tail")])


def main_json(path):
    import json
    report = json.load(open(path))
    for s in report["summaries"]:
        print(s["name"], *[fmt(math.nan if s[k] is None else s[k])
                           for k in ("rhat_bulk", "rhat_folded", "ess_bulk", "ess_tail")])


if __name__ == "__main__":
    {"chains": main_chains, "run": main_run, "json": main_json}[sys.argv[1]](sys.argv[2])
