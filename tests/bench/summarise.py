"""Turns scripts/bench's raw records into the printed table (medians, ratios) and the JSON file.

usage: summarise.py RECORDS.jsonl OUT.json [--quick=0|1]
"""
import argparse
import datetime
import json
import os
import platform
import statistics
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import shapes  # noqa: E402

# The GEMM of DESIGN.md 6's shapes that sets each step's ceiling (forward product m x n x k).
GEMM_OF_SHAPE = {"small": "64/128/64", "medium": "256/256/256", "large": "1024/512/1024"}


def median(values):
    values = [v for v in values if v is not None]
    return statistics.median(values) if values else None


def load_gbench(path):
    """Google Benchmark JSON -> {name: median of repetitions of each counter/bytes rate}."""
    with open(path) as handle:
        data = json.load(handle)
    runs = {}
    for b in data.get("benchmarks", []):
        if b.get("run_type") == "aggregate":
            continue
        name = b.get("run_name", b["name"])
        runs.setdefault(name, []).append(b)
    out = {}
    for name, reps in runs.items():
        entry = {"real_time": median([r["real_time"] for r in reps]), "time_unit": reps[0]["time_unit"],
                 "label": reps[0].get("label", "")}
        for key in ("GFLOP/s", "ns/coord", "ns/draw", "bytes_per_second"):
            if key in reps[0]:
                entry[key] = median([r[key] for r in reps])
        out[name] = entry
    return out


def fmt(v, digits=3):
    if v is None:
        return "-"
    if isinstance(v, str):
        return v
    if abs(v) >= 100:
        return "%.0f" % v
    return "%.*g" % (digits, v)


def table(header, rows):
    widths = [max(len(str(h)), *(len(str(r[i])) for r in rows)) if rows else len(str(h))
              for i, h in enumerate(header)]
    line = lambda cells: "| " + " | ".join(str(c).rjust(w) for c, w in zip(cells, widths)) + " |"  # noqa: E731
    print(line(header))
    print("|" + "|".join("-" * (w + 2) for w in widths) + "|")
    for r in rows:
        print(line(r))


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("records")
    parser.add_argument("out")
    parser.add_argument("--quick", type=int, default=0)
    a = parser.parse_args()
    with open(a.records) as handle:
        records = [json.loads(line) for line in handle if line.strip()]

    result = {"machine": {"cores": os.cpu_count(), "platform": platform.platform(),
                          "date": datetime.datetime.now(datetime.timezone.utc).isoformat()},
              "quick": bool(a.quick), "steps": [], "predict": [], "csv": [], "gemm": {},
              "micro": {}}

    # GEMM rates first: the step table states the large shape against them.
    for r in records:
        if r["kind"] == "gemm":
            result["gemm"][str(r["threads"])] = load_gbench(r["file"])
        elif r["kind"] == "micro":
            result["micro"][r["name"]] = load_gbench(r["file"])

    def gemm_rate(impl, threads, shape):
        runs = result["gemm"].get(str(threads), {})
        entry = runs.get("BM_%s/%s" % (impl, GEMM_OF_SHAPE[shape]))
        return entry.get("GFLOP/s") if entry else None

    # Steps/s.
    ours, refs = {}, {}
    for r in records:
        if r["kind"] != "steps":
            continue
        if r.get("impl") == "credence":
            pairs = zip(r["short_s"], r["long_s"])
            steps = r["chains"] * (r["long_steps"] - r["short_steps"])
            rates = [steps / (lo - sh) if lo > sh else None for sh, lo in pairs]
            rate = median(rates)
            per_chain = rate / r["chains"] if rate else None
            startup = (median(r["short_s"]) - r["short_steps"] / per_chain) if per_chain else None
            ours[(r["shape"], r["method"], r["threads"])] = {"steps_per_s": rate, "rates": rates,
                                                             "startup_s": startup}
        else:
            ref = r["ref"]
            if "skipped" in ref:
                refs.setdefault(("skipped", ref["impl"]), ref["skipped"])
                continue
            refs[(ref["impl"], ref["shape"], ref["method"], r["threads"])] = median(ref["steps_per_s"])
    rows = []
    for (shape, method, threads), o in sorted(ours.items(), key=lambda kv: (
            list(shapes.SHAPES).index(kv[0][0]), kv[0][1], kv[0][2])):
        numpy_rate = refs.get(("numpy", shape, method, threads))
        torch_rate = refs.get(("torch", shape, method, threads))
        rate = o["steps_per_s"]
        flops = shapes.step_flops(shape)
        sgemm = gemm_rate("OpenblasSgemm", 1, shape)
        # Ceiling: one-thread sgemm rate per chain, times the chains (= threads) that run.
        ceiling = sgemm * 1e9 / flops * threads if sgemm else None
        entry = {"shape": shape, "method": method, "threads": threads,
                 "credence_steps_per_s": rate, "credence_rates": o["rates"],
                 "credence_startup_s": o["startup_s"], "numpy_steps_per_s": numpy_rate,
                 "torch_steps_per_s": torch_rate,
                 "ratio_numpy": rate / numpy_rate if rate and numpy_rate else None,
                 "ratio_torch": rate / torch_rate if rate and torch_rate else None,
                 "gemm_ceiling_steps_per_s": ceiling,
                 "fraction_of_ceiling": rate / ceiling if rate and ceiling else None}
        result["steps"].append(entry)
        rows.append([shape, method, threads, fmt(rate), fmt(numpy_rate), fmt(torch_rate),
                     fmt(entry["ratio_numpy"]), fmt(entry["ratio_torch"]),
                     fmt(100 * entry["fraction_of_ceiling"]) + "%" if entry["fraction_of_ceiling"] else "-",
                     fmt(o["startup_s"])])
    if rows:
        print("\nSteps per second (medians; threads=2 runs 2 chains for credence and 2 BLAS threads "
              "for the references; ceiling = 6 x batch x weights FLOPs at this machine's sgemm rate)")
        table(["shape", "method", "thr", "credence", "numpy", "torch", "x numpy", "x torch",
               "of ceiling", "start-up s"], rows)
        for (kind, impl), note in [(k, v) for k, v in refs.items() if k[0] == "skipped"]:
            print("note: %s loop skipped: %s" % (impl, note))

    # Prediction.
    rows = []
    by_threads = {}
    for r in records:
        if r["kind"] != "predict":
            continue
        d = by_threads.setdefault(r["threads"], {"numpy": [], "numpy_compute": []})
        if r.get("impl") == "credence":
            d["credence"] = r["total_s"]
            d["size"] = (r["samples"], r["rows"])
        else:
            d["numpy"].append(r["ref"]["total_s"])
            d["numpy_compute"].append(r["ref"]["compute_s"])
    for threads, d in sorted(by_threads.items()):
        ours_s, np_s, np_c = median(d.get("credence", [])), median(d["numpy"]), median(d["numpy_compute"])
        entry = {"threads": threads, "samples": d["size"][0], "rows": d["size"][1],
                 "credence_s": ours_s, "numpy_s": np_s, "numpy_compute_s": np_c,
                 "ratio_numpy": np_s / ours_s if ours_s and np_s else None}
        result["predict"].append(entry)
        rows.append(["%d x %d" % d["size"], threads, fmt(ours_s), fmt(np_s), fmt(np_c),
                     fmt(entry["ratio_numpy"])])
    if rows:
        print("\nEnsemble prediction, medium shape (seconds, whole process; numpy also without "
              "loading and writing)")
        table(["samples x rows", "thr", "credence s", "numpy s", "numpy compute s",
               "speed-up x numpy"], rows)

    # CSV.
    rows = []
    for r in records:
        if r["kind"] == "csv" and r.get("impl"):
            s = median(r["total_s"])
            mbs = r["bytes"] / 1e6 / s
            result["csv"].append({"impl": r["impl"] + " (whole process)", "mb_per_s": mbs,
                                  "seconds": s, "bytes": r["bytes"]})
        elif r["kind"] == "csv_micro":
            for name, e in load_gbench(r["file"]).items():
                name = name.split("/min_time")[0].replace("BM_", "")
                name = name.replace("ParseTable/1", "ParseTable, 1 thread")
                name = name.replace("ParseTable/2", "ParseTable, 2 threads")
                result["csv"].append({"impl": "credence %s (in memory)" % name,
                                      "mb_per_s": e.get("bytes_per_second", 0) / 1e6})
        elif r["kind"] == "csv":
            ref = r["ref"]
            for impl in ("numpy.loadtxt", "pandas.read_csv"):
                if isinstance(ref.get(impl), list):
                    s = median(ref[impl])
                    result["csv"].append({"impl": impl, "mb_per_s": ref["bytes"] / 1e6 / s,
                                          "seconds": s, "bytes": ref["bytes"]})
                elif impl in ref:
                    result["csv"].append({"impl": impl, "note": ref[impl]})
    loadtxt = next((c["mb_per_s"] for c in result["csv"] if c["impl"] == "numpy.loadtxt"), None)
    for c in result["csv"]:
        if "mb_per_s" in c:
            c["ratio_loadtxt"] = c["mb_per_s"] / loadtxt if loadtxt else None
            rows.append([c["impl"], fmt(c["mb_per_s"]), fmt(c["ratio_loadtxt"])])
        else:
            rows.append([c["impl"], c["note"], "-"])
    if rows:
        print("\nCSV parsing, numeric columns (MB/s; target >= 250 on one core, more with two)")
        table(["reader", "MB/s", "x loadtxt"], rows)

    # GEMM.
    rows = []
    for threads, runs in sorted(result["gemm"].items()):
        for name, e in runs.items():
            rows.append([name.replace("BM_", ""), threads, fmt(e.get("GFLOP/s"))])
    if rows:
        print("\nSingle-precision GEMM, m/n/k (GFLOP/s; Eigen's own kernels run on one thread)")
        table(["kernel", "OPENBLAS threads", "GFLOP/s"], rows)

    for name, runs in result["micro"].items():
        print("\nMicrobenchmarks: %s" % name)
        table(["benchmark", "time", "unit", "counter"],
              [[n, fmt(e["real_time"]), e["time_unit"],
                ", ".join("%s %s" % (k, fmt(e[k])) for k in ("GFLOP/s", "ns/coord", "ns/draw")
                          if k in e)] for n, e in runs.items()])

    os.makedirs(os.path.dirname(os.path.abspath(a.out)), exist_ok=True)
    with open(a.out, "w") as handle:
        json.dump(result, handle, indent=1)
    print("\nbench: wrote %s" % a.out)


if __name__ == "__main__":
    main()
