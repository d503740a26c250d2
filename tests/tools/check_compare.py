#!/usr/bin/python3
"""Checks the files `credence compare` writes, as a script user would read them.

Usage: check_compare.py OUT_DIR METHOD[,METHOD...]

summary.json (read with Python's json module, RFC 8259) must be one object whose
"methods" hold one object per method, in order, each with every metric named in docs/assess-json.md's compare subset; every
method must have had the same gradient budget; summary.csv (csv module, RFC 4180) must
have the same rows, snake_case headers, and numbers or empty cells where numbers go; the report must reference nothing outside itself. Prints what fails
and exits 1; exits 0 when all holds.
"""
import csv
import json
import math
import sys

out_dir, methods = sys.argv[1], sys.argv[2].split(",")
failures = []
summary = json.load(open(f"{out_dir}/summary.json"))
for key in ("budget", "data", "split", "methods"):
    if key not in summary:
        failures.append(f"summary.json lacks {key!r}")
rows = summary["methods"]
if [r["method"] for r in rows] != methods:
    failures.append(f"methods {[r['method'] for r in rows]} != {methods}")
for r in rows:
    for key in ("accuracy", "nll", "brier", "ece", "mce", "auroc", "wall_seconds",
                "gradient_evals", "nll_interval", "ece_interval", "mixing"):
        if key not in r or r[key] is None:
            failures.append(f"{r['method']}: missing {key}")
    if not (0 <= r["accuracy"] <= 1 and r["nll"] > 0 and 0 <= r["ece"] <= 1):
        failures.append(f"{r['method']}: implausible scores {r}")
    lo, hi = r["nll_interval"]
    if not lo <= hi:
        failures.append(f"{r['method']}: interval {lo} > {hi}")
    sampler = r["method"] in ("sgld", "psgld", "sghmc", "rsghmc")
    if sampler and (r["bulk_ess_per_second"] is None or not math.isfinite(r["bulk_ess_per_second"])):
        failures.append(f"{r['method']}: a sampler needs bulk_ess_per_second")
    # Kernel Stein discrepancy: on every sampler's kept draws, never on an optimizer's point.
    ksd = r.get("ksd")
    if sampler and not (isinstance(ksd, (int, float)) and math.isfinite(ksd) and ksd > 0):
        failures.append(f"{r['method']}: a sampler needs a positive ksd, got {ksd!r}")
    if not sampler and ksd is not None:
        failures.append(f"{r['method']}: an optimizer has no ksd, got {ksd!r}")
    if not sampler and r["mixing"] != "not_applicable":
        failures.append(f"{r['method']}: an optimizer has no mixing verdict, got {r['mixing']}")
budgets = {r["gradient_evals"] for r in rows}
if len(budgets) != 1:
    failures.append(f"gradient budgets differ: {budgets}")

with open(f"{out_dir}/summary.csv", newline="") as f:
    table = list(csv.DictReader(f))
if [t["method"] for t in table] != methods:
    failures.append("summary.csv rows differ from summary.json")
for t, r in zip(table, rows):
    if (t.get("ksd", "") == "") != (r.get("ksd") is None):
        failures.append(f"{t['method']}: summary.csv ksd {t.get('ksd')!r} vs json {r.get('ksd')!r}")
    elif t.get("ksd"):
        if abs(float(t["ksd"]) - r["ksd"]) > 1e-4 * max(1.0, abs(r["ksd"])):
            failures.append(f"{t['method']}: summary.csv ksd {t['ksd']} vs json {r['ksd']}")
for t in table:
    for name, cell in t.items():
        if name != name.lower() or " " in name or "-" in name:
            failures.append(f"summary.csv header {name!r} is not snake_case")
        if name not in ("method", "mixing") and cell != "":
            try:
                float(cell)
            except ValueError:
                failures.append(f"summary.csv {name}={cell!r} is neither a number nor empty")
html = open(f"{out_dir}/report.html", encoding="utf-8").read()
for bad in ("http://", "https://", "<script", "<link", " src=", "@import"):
    if bad in html:
        failures.append(f"report.html contains {bad!r}")
for heading in ("Data and split", "Scores on held-out rows", "Reliability",
                "Accuracy when abstaining", "Doubt on right and wrong predictions",
                "Mixing diagnostics", "Training traces", "Settings and provenance", "Cautions"):
    if heading not in html:
        failures.append(f"report.html lacks the section {heading!r}")
for f in failures:
    print(f)
sys.exit(1 if failures else 0)
