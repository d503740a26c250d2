"""numpy.loadtxt and (when installed) pandas.read_csv on the benchmark's numeric CSV.

Prints JSON: seconds per repeat for each reader, and the file size. pandas is optional:
when it is not importable the entry says so (the benchmark never installs it).

usage: csv_reference.py TABLE.csv [--repeats R]
"""
import argparse
import json
import os
import time

import numpy as np


def timed(fn, repeats):
    out = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t0)
    return out


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("table")
    parser.add_argument("--repeats", type=int, default=3)
    a = parser.parse_args()
    result = {"bytes": os.path.getsize(a.table)}
    result["numpy.loadtxt"] = timed(
        lambda: np.loadtxt(a.table, delimiter=",", skiprows=1, dtype=np.float64), a.repeats)
    try:
        import pandas
        result["pandas.read_csv"] = timed(lambda: pandas.read_csv(a.table), a.repeats)
    except ImportError:
        result["pandas.read_csv"] = "skipped: pandas is not installed"
    print(json.dumps(result))


if __name__ == "__main__":
    main()
