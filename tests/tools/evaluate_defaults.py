#!/usr/bin/env python3
"""Measures credence's default settings on many tables against scikit-learn's baselines.

usage: evaluate_defaults.py --credence BIN [--out DIR] [--tables LIST] [--methods LIST]
                            [--quick] [--check TOL]

For every table it writes a CSV, runs `credence train` with default settings for each
method (only the data flags a table needs: --target, and --impute median where cells are
missing), then `credence assess --split test --json` and `credence predict`. It reads the
split's rows from the run file with h5py (docs/run-file.md, /data/train_rows and
/data/test_rows) and fits scikit-learn's LogisticRegression(C=1) and MLPClassifier (default
settings), each after median imputation and standardisation in a Pipeline, on the same
training rows, scoring them on the same test rows: log_loss, the multi-class Brier score
(mean over rows of sum_k (p_k - y_k)^2, as assess reports it), top-label ECE with 15
equal-width bins (docs/methods.md 9.3, the function sklearn_assess.py checks assess against)
and accuracy. Writes DIR/evaluate.md (a Markdown table) and DIR/evaluate.json.

Tables (see TABLES): scikit-learn's breast cancer, iris, wine and digits; statsmodels'
spector (32 rows), fair (affairs > 0) and anes96 (vote); each table of more than 100 rows
also as a stratified 100-row subsample (name_100); `rare_missing`, invented with numpy
(3% positives, 5% of cells missing); `linear_1m`, 1,000,000 rows with a linear logistic
truth over 20 standard-normal inputs, whose true NLL on the test rows is reported, and
`linear_2k`, the same law on 2,000 rows.

--check TOL: exit 1 unless every credence run's test NLL is at most each baseline's
(LogisticRegression, MLPClassifier) + TOL and no run's predictions are near-constant
(spread below NEAR_CONSTANT_SPREAD). Spread: the largest over classes k of
sd(p_k) / sd(1[y = k]), both over the test rows; 1 for perfectly sharp predictions, 0 for
a network that gives every row the same probabilities. Dividing by the labels' own sd keeps
a table with rare positives, whose probabilities are all small, from counting as constant.
A run also fails --check when its end-of-run verdict raises an alarm about its predictions
or weights (constant, pinned, collapsed) while its test predictions are not near-constant:
that alarm would send a user to fix a network that works.
--paired (with --check): "at most" then allows for the test rows' sampling noise: a run fails
against a baseline when the mean of its per-row NLL differences on the same test rows, less
twice their standard error, exceeds TOL. On 20 test rows a difference of 0.01 is noise; a
difference that every row shares is not.
"""
import argparse
import json
import os
import subprocess
import sys
import time
import warnings

import h5py
import numpy as np
import pandas as pd
from sklearn.datasets import load_breast_cancer, load_digits, load_iris, load_wine
from sklearn.exceptions import ConvergenceWarning
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import accuracy_score, log_loss
from sklearn.model_selection import train_test_split
from sklearn.neural_network import MLPClassifier
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from sklearn_assess import top_label_ece_mce  # noqa: E402

SEED = 17                  # every table this script invents or subsamples
SUBSAMPLE_ROWS = 100
ROW_NLL = "_row_nll"        # per-row test NLLs, kept in memory for the paired check only
NEAR_CONSTANT_SPREAD = 0.1  # our choice, no source: below it predictions barely vary by row
# The verdict checks that judge whether a network has learned from its inputs (run_verdict.h).
WEIGHT_ALARMS = {"constant", "pinned", "collapsed"}
MLP_MAX_ROWS = 100_000     # MLPClassifier's 200 default epochs take too long beyond this
ECE_BINS = 15              # credence assess's default
DEFAULT_METHODS = "adam,sgd,sgld,sghmc,rsghmc"


# ---- tables: each returns (features DataFrame, label Series of strings)

def sklearn_table(loader):
    def load():
        bunch = loader()
        names = [str(n).replace(" (cm)", "").replace(" ", "_").replace("/", "_")
                 for n in bunch.feature_names]
        x = pd.DataFrame(np.asarray(bunch.data, dtype=np.float64), columns=names)
        return x, pd.Series([str(bunch.target_names[int(t)]) for t in bunch.target])
    return load


def statsmodels_table(name, target, to_label):
    def load():
        import statsmodels.api as sm
        data = getattr(sm.datasets, name).load_pandas().data
        return data.drop(columns=[target]).astype(np.float64), data[target].map(to_label)
    return load


def rare_missing():
    """Invented with numpy: 20,000 rows, 12 inputs (two of them interacting), an intercept
    set so that about 3% of rows are positive, then 5% of input cells blanked at random."""
    rng = np.random.default_rng(SEED)
    n, d = 20_000, 12
    x = rng.standard_normal((n, d))
    logit = -4.8 + x[:, :6] @ np.array([1.0, -0.8, 0.6, 0.5, -0.4, 0.3]) + 0.8 * x[:, 6] * x[:, 7]
    y = rng.random(n) < 1 / (1 + np.exp(-logit))
    x[rng.random((n, d)) < 0.05] = np.nan
    frame = pd.DataFrame(x, columns=["x%02d" % j for j in range(d)])
    return frame, pd.Series(np.where(y, "fault", "ok"))


def linear_truth(n=1_000_000, d=20):
    """Invented with numpy: x ~ N(0, I_20), logit = b0 + x.b with b0 = -0.5, b_j ~ N(0, 0.25)."""
    rng = np.random.default_rng(SEED + 1)
    beta = rng.normal(0.0, 0.5, d)
    x = rng.standard_normal((n, d))
    p = 1 / (1 + np.exp(-(-0.5 + x @ beta)))
    y = rng.random(n) < p
    frame = pd.DataFrame(x, columns=["x%02d" % j for j in range(d)])
    return frame, pd.Series(np.where(y, "yes", "no")), p


TABLES = {
    "breast_cancer": sklearn_table(load_breast_cancer),
    "iris": sklearn_table(load_iris),
    "wine": sklearn_table(load_wine),
    "digits": sklearn_table(load_digits),
    "spector": statsmodels_table("spector", "GRADE", lambda g: "up" if g > 0 else "same"),
    "fair": statsmodels_table("fair", "affairs", lambda a: "yes" if a > 0 else "no"),
    "anes96": statsmodels_table("anes96", "vote", lambda v: "dole" if v > 0 else "clinton"),
    "rare_missing": rare_missing,
}
SMALL = ["breast_cancer", "iris", "wine", "spector", "anes96"]
LARGE = ["linear_1m"]
# Known truth at a size every method trains in seconds: the linear_1m law on 2,000 rows.
KNOWN_TRUTH_SMALL = {"linear_2k": 2_000}
NO_SUBSAMPLE = {"spector"}  # 32 rows already


def table_names():
    names = []
    for name in TABLES:
        names.append(name)
        if name not in NO_SUBSAMPLE:
            names.append(name + "_%d" % SUBSAMPLE_ROWS)
    return names + list(KNOWN_TRUTH_SMALL) + LARGE


def load_table(name):
    """(features, labels, true probabilities of 'yes' or None)."""
    if name == "linear_1m":
        return linear_truth()
    if name in KNOWN_TRUTH_SMALL:
        return linear_truth(n=KNOWN_TRUTH_SMALL[name])
    base = name[: -len("_%d" % SUBSAMPLE_ROWS)] if name.endswith("_%d" % SUBSAMPLE_ROWS) else name
    x, y = TABLES[base]()
    if base != name:
        keep, _ = train_test_split(np.arange(len(y)), train_size=SUBSAMPLE_ROWS, stratify=y,
                                   random_state=SEED)
        keep = np.sort(keep)
        x, y = x.iloc[keep].reset_index(drop=True), y.iloc[keep].reset_index(drop=True)
    return x, y, None


def write_csv(x, y, path, reuse):
    if reuse and os.path.exists(path):  # a large table takes a minute; it is deterministic
        return
    frame = x.copy()
    frame["label"] = y.values
    frame.to_csv(path + ".tmp", index=False, float_format="%.9g", na_rep="")
    os.replace(path + ".tmp", path)


# ---- running credence

def run_measured(argv, log_path):
    """Runs argv, its output to log_path; returns (exit code, seconds, peak RSS in MiB).

    The peak comes from /usr/bin/time (GNU time's %M, KiB): a child forked from this
    process starts with its resident set as its high-water mark, so its own rusage
    would report this interpreter's size, not credence's."""
    start = time.monotonic()
    with open(log_path, "w") as log:
        code = subprocess.call(["/usr/bin/time", "-f", "%M", "-o", log_path + ".kib"] + argv,
                               stdout=log, stderr=subprocess.STDOUT)
    seconds = time.monotonic() - start
    with open(log_path + ".kib") as f:
        peak_kib = float(f.read().split()[-1])  # the last line; a killed child adds one before
    return code, seconds, peak_kib / 1024.0


def run_credence(credence, csv_path, method, missing, work):
    stem = os.path.join(work, method)
    data_flags = ["--target", "label"] + (["--impute", "median"] if missing else [])
    code, seconds, peak = run_measured(
        [credence, "train", csv_path, "--out", stem + ".h5", "--force", "--method", method]
        + data_flags, stem + ".train.log")
    result = {"method": method, "seconds": seconds, "peak_mib": peak, "exit": code,
              "verdict": train_verdict(stem + ".train.log")}
    if code != 0:
        return result
    code, _, _ = run_measured([credence, "assess", stem + ".h5", csv_path, "--split", "test",
                               "--bootstrap", "0", "--json", stem + ".assess.json"],
                              stem + ".assess.log")
    code2, _, _ = run_measured([credence, "predict", stem + ".h5", csv_path,
                                "--out", stem + ".pred.csv"], stem + ".predict.log")
    if code != 0 or code2 != 0:
        result["exit"] = code or code2
        return result
    with open(stem + ".assess.json") as f:
        m = json.load(f)["metrics"]
    with h5py.File(stem + ".h5", "r") as run:
        test_rows = run["data/test_rows"][:]
        classes = [c.decode() for c in run["preprocessing/class_names"][:]]
    p = pd.read_csv(stem + ".pred.csv", usecols=["p_" + c for c in classes]).values[test_rows]
    y = pd.read_csv(csv_path, usecols=["label"], dtype=str)["label"].values[test_rows]
    result.update(nll=m["nll"], brier=m["brier"], ece=m["ece_width"], accuracy=m["accuracy"],
                  spread=spread(p, y, classes))
    result[ROW_NLL] = row_nll(p, y, classes)
    return result


def train_verdict(log_path):
    """The train log's verdict line without "verdict: ", and its failed checks' names."""
    headline, failed = "", []
    with open(log_path, errors="replace") as f:
        for line in f:
            if line.startswith("verdict: "):
                headline = line[len("verdict: "):].strip()
            elif "[FAILED]" in line:
                failed.append(line.strip().split(" ", 1)[0])
    return {"headline": headline, "failed": failed}


def spread(p, y, classes):
    """max_k sd(p_k) / sd(1[y = k]) over the rows; classes absent from y are skipped."""
    onehot = np.asarray(y)[:, None] == np.asarray(classes)[None, :]
    label_sd = onehot.std(axis=0)
    present = label_sd > 0
    return float((p.std(axis=0)[present] / label_sd[present]).max())


def row_nll(p, y, classes):
    """Each row's -log p(its label), clipped at 1e-15 as sklearn's log_loss clips."""
    position = {c: i for i, c in enumerate(classes)}
    index = np.array([position[label] for label in y])
    return -np.log(np.clip(p[np.arange(len(index)), index], 1e-15, 1.0))


def paired_gap(own, base):
    """Mean of the per-row NLL differences (credence - baseline) on the same test rows,
    and twice its standard error: a gap whose mean exceeds two standard errors is more
    than the test rows' sampling noise (a paired comparison; common practice, no
    single source)."""
    d = own - base
    se = d.std(ddof=1) / np.sqrt(len(d)) if len(d) > 1 else float("inf")
    return float(d.mean()), float(2 * se)


def split_rows(run_path):
    with h5py.File(run_path, "r") as run:
        return run["data/train_rows"][:], run["data/test_rows"][:]


# ---- baselines

def scores(p, y, classes):
    y_index = np.searchsorted(classes, y)
    onehot = np.eye(len(classes))[y_index]
    return {"nll": float(log_loss(y, p, labels=classes)),
            "brier": float(np.mean(np.sum((p - onehot) ** 2, axis=1))),
            "ece": float(top_label_ece_mce(p, y_index, ECE_BINS)[0]),
            "accuracy": float(accuracy_score(y, classes[p.argmax(axis=1)]))}


def baselines(x, y, train, test):
    out = {}
    models = {"lr": LogisticRegression(C=1.0, max_iter=1000)}
    if len(train) <= MLP_MAX_ROWS:
        models["mlp"] = MLPClassifier(random_state=SEED)
    for name, model in models.items():
        warnings.simplefilter("ignore", ConvergenceWarning)  # the default budget, as given
        pipe = make_pipeline(SimpleImputer(strategy="median"), StandardScaler(), model)
        start = time.monotonic()
        pipe.fit(x.iloc[train].values, y.iloc[train].values)
        p = pipe.predict_proba(x.iloc[test].values)
        out[name] = scores(p, y.iloc[test].values, pipe.classes_)
        out[name][ROW_NLL] = row_nll(p, y.iloc[test].values, pipe.classes_)
        out[name]["seconds"] = time.monotonic() - start
    return out


# ---- one table, all methods

def evaluate_table(name, methods, credence, out_dir):
    x, y, truth = load_table(name)
    work = os.path.join(out_dir, "runs", name)
    os.makedirs(work, exist_ok=True)
    csv_path = os.path.join(out_dir, "tables", name + ".csv")
    write_csv(x, y, csv_path, reuse=name in LARGE)
    missing = bool(x.isna().values.any())
    entry = {"table": name, "rows": len(y), "classes": int(y.nunique()), "runs": []}
    for method in methods:
        print("%s: %s ..." % (name, method), flush=True)
        entry["runs"].append(run_credence(credence, csv_path, method, missing, work))
    finished = [r for r in entry["runs"] if r["exit"] == 0]
    if not finished:
        return entry
    splits = [split_rows(os.path.join(work, r["method"] + ".h5")) for r in finished]
    train, test = splits[0]
    if any(not np.array_equal(t, test) for _, t in splits):
        raise SystemExit("%s: the methods' runs hold different test rows; the baselines "
                         "need one split" % name)
    entry["test_rows"] = len(test)
    entry["baselines"] = baselines(x, y, train, test)
    if truth is not None:
        positive = (y.iloc[test].values == "yes")
        pt = truth[test]
        entry["true_nll"] = float(-np.mean(np.where(positive, np.log(pt), np.log1p(-pt))))
    best = min(b["nll"] for b in entry["baselines"].values())
    for r in finished:
        r["nll_minus_best_baseline"] = r["nll"] - best
        r["paired_gap"] = {k: paired_gap(r[ROW_NLL], b[ROW_NLL])
                           for k, b in entry["baselines"].items()}
    return entry


def without_rows(value):
    """`value` without the per-row arrays, for the JSON file."""
    if isinstance(value, dict):
        return {k: without_rows(v) for k, v in value.items() if k != ROW_NLL}
    if isinstance(value, list):
        return [without_rows(v) for v in value]
    return value


def fmt(value, digits=3):
    return "—" if value is None else "%.*f" % (digits, value)


def markdown(entries):
    lines = ["| table | rows | classes | method | test NLL | Brier | ECE | accuracy | seconds "
             "| peak MiB | LR NLL | MLP NLL | NLL − best baseline | spread |",
             "|---|---:|---:|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|"]
    for e in entries:
        b = e.get("baselines", {})
        lr, mlp = b.get("lr", {}).get("nll"), b.get("mlp", {}).get("nll")
        for r in e["runs"]:
            if r["exit"] != 0:
                cells = ["exit %d" % r["exit"]] + ["—"] * 4
            else:
                cells = [fmt(r["nll"]), fmt(r["brier"]), fmt(r["ece"]), fmt(r["accuracy"])]
            lines.append("| %s | %d | %d | %s | %s | %.1f | %.0f | %s | %s | %s | %s |" % (
                e["table"], e["rows"], e["classes"], r["method"], " | ".join(cells),
                r["seconds"], r["peak_mib"], fmt(lr), fmt(mlp),
                fmt(r.get("nll_minus_best_baseline")), fmt(r.get("spread"))))
    notes = ["", "Baselines: scikit-learn LogisticRegression(C=1) and MLPClassifier (defaults), "
             "median imputation and standardisation, fitted on credence's training rows and "
             "scored on its test rows. ECE: top-label, %d equal-width bins. Spread: max over "
             "classes of sd(p_k) / sd(1[y = k]) on the test rows (near-constant below %.2f). "
             "Seconds and peak MiB: `credence train` alone." % (ECE_BINS, NEAR_CONSTANT_SPREAD)]
    for e in entries:
        if "true_nll" in e:
            notes.append("%s: NLL of the true probabilities on the test rows %.4f; no MLP "
                         "baseline above %d training rows." % (e["table"], e["true_nll"],
                                                                 MLP_MAX_ROWS))
    return "\n".join(lines + notes) + "\n"


def check(entries, tol, paired):
    failures = []
    for e in entries:
        for r in e["runs"]:
            where = "%s %s" % (e["table"], r["method"])
            if r["exit"] != 0:
                failures.append("%s: exit %d" % (where, r["exit"]))
                continue
            b = e["baselines"]
            if paired:
                for k, (gap, two_se) in r["paired_gap"].items():
                    if gap - two_se > tol:
                        failures.append("%s: NLL %.4f is %.4f +- %.4f (2 SE, paired over %d "
                                        "test rows) above %s's %.4f" % (
                                            where, r["nll"], gap, two_se, e["test_rows"], k,
                                            b[k]["nll"]))
                    else:
                        print("ok   %s: NLL %.4f, %s %.4f, paired gap %+.4f +- %.4f" % (
                            where, r["nll"], k, b[k]["nll"], gap, two_se))
            else:
                worst = {k: r["nll"] - v["nll"] for k, v in b.items()
                         if r["nll"] > v["nll"] + tol}
                for k, gap in worst.items():
                    failures.append("%s: NLL %.4f is %.4f above %s's %.4f" % (
                        where, r["nll"], gap, k, b[k]["nll"]))
            if r["spread"] < NEAR_CONSTANT_SPREAD:
                failures.append("%s: near-constant predictions (spread %.4f)"
                                % (where, r["spread"]))
            alarms = sorted(set(r.get("verdict", {}).get("failed", [])) & WEIGHT_ALARMS)
            if alarms and r["spread"] >= NEAR_CONSTANT_SPREAD:
                failures.append("%s: the verdict says %s, but the test predictions are not "
                                "near-constant (spread %.2f): a false alarm"
                                % (where, " and ".join(alarms), r["spread"]))
    for f in failures:
        print("FAIL " + f)
    return 1 if failures else 0


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--credence", required=True, help="credence binary to run")
    parser.add_argument("--out", default="out/evaluate")
    parser.add_argument("--tables", help="comma-separated, from: " + ",".join(table_names()))
    parser.add_argument("--methods", default=DEFAULT_METHODS)
    parser.add_argument("--quick", action="store_true", help="small tables only")
    parser.add_argument("--check", type=float, metavar="TOL",
                        help="exit 1 unless every run is within TOL of both baselines' NLL")
    parser.add_argument("--paired", action="store_true",
                        help="with --check: fail a run only when its mean per-row NLL gap to "
                             "a baseline, less twice its paired standard error, exceeds TOL")
    args = parser.parse_args()
    if args.tables:
        names = args.tables.split(",")
    elif args.quick:
        names = [n for t in SMALL for n in (t, t + "_%d" % SUBSAMPLE_ROWS) if n in table_names()]
    else:
        names = [n for n in table_names() if n not in LARGE]
    unknown = [n for n in names if n not in table_names()]
    if unknown:
        parser.error("unknown table(s) %s; known: %s" % (",".join(unknown), ",".join(table_names())))
    os.makedirs(os.path.join(args.out, "tables"), exist_ok=True)
    credence = os.path.abspath(args.credence)
    entries = [evaluate_table(n, args.methods.split(","), credence, args.out) for n in names]
    with open(os.path.join(args.out, "evaluate.json"), "w") as f:
        json.dump({"seed": SEED, "tables": without_rows(entries)}, f, indent=1)
    table = markdown(entries)
    with open(os.path.join(args.out, "evaluate.md"), "w") as f:
        f.write(table)
    print(table)
    return check(entries, args.check, args.paired) if args.check is not None else 0


if __name__ == "__main__":
    sys.exit(main())
