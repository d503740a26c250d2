#!/usr/bin/env python3
"""Kernel Stein discrepancy with the IMQ kernel, written independently of credence's C++.

Formula: "Measuring Sample Quality with Kernels" (ICML 2017), Langevin Stein operator of
"A Kernelized Stein Discrepancy for Goodness-of-fit Tests" (ICML 2016). Vectorised over all
pairs with full (n, n) matrices, where the C++ loops over pairs with a dot-product identity.

usage: numpy_ksd.py DRAWS.txt SCORES.txt C BETA
Each file holds one draw (or its score) per line, d numbers. Prints "v V", "u U", "ksd K".
"""
import sys

import numpy as np


def imq_ksd(x, s, c, beta):
    n, d = x.shape
    r = x[:, None, :] - x[None, :, :]  # (n, n, d): x_i - x_j
    r2 = np.sum(r * r, axis=2)
    q = c * c + r2
    # sum_k d^2 k / dx_k dy_k
    trace = -2.0 * beta * d * q ** (beta - 1) - 4.0 * beta * (beta - 1) * q ** (beta - 2) * r2
    grad_x = 2.0 * beta * q[:, :, None] ** (beta - 1) * r  # d k / d x_i
    cross = np.einsum("ijk,jk->ij", grad_x, s) - np.einsum("ijk,ik->ij", grad_x, s)
    k0 = trace + cross + q ** beta * (s @ s.T)
    v = k0.sum() / n**2
    u = (k0.sum() - np.trace(k0)) / (n * (n - 1)) if n > 1 else float("nan")
    return v, u, np.sqrt(max(v, 0.0))


def main():
    x = np.atleast_2d(np.loadtxt(sys.argv[1], ndmin=2))
    s = np.atleast_2d(np.loadtxt(sys.argv[2], ndmin=2))
    v, u, k = imq_ksd(x, s, float(sys.argv[3]), float(sys.argv[4]))
    print(f"v {v!r}\nu {u!r}\nksd {k!r}")


if __name__ == "__main__":
    main()
