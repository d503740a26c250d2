#!/usr/bin/env python3
"""Kolmogorov-Smirnov test of samples against a normal law with scipy.stats.

Usage: ks_test.py SAMPLES.txt [MEAN SD]
Reads one number per line and prints the KS statistic and p-value of
scipy.stats.kstest against scipy.stats.norm(MEAN, SD) (default N(0, 1)),
as "statistic p_value" on one line.
"""
import sys

import numpy as np
from scipy import stats


def main() -> int:
    if len(sys.argv) not in (2, 4):
        print(__doc__, file=sys.stderr)
        return 2
    samples = np.loadtxt(sys.argv[1], ndmin=1)
    mean, sd = (float(sys.argv[2]), float(sys.argv[3])) if len(sys.argv) == 4 else (0.0, 1.0)
    result = stats.kstest(samples, stats.norm(loc=mean, scale=sd).cdf)
    print(f"{result.statistic:.10g} {result.pvalue:.10g}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
