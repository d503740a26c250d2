"""Fits scikit-learn's LogisticRegression as the reference MAP for credence's tests.

usage: sklearn_logistic.py X.csv y.csv C OUT.csv
X.csv: one row per data row (already preprocessed), y.csv: integer labels.
Writes predict_proba (one column per class) for the rows of X.csv.

The objective scikit-learn minimises with the multinomial loss and lbfgs is
  0.5 / C * ||W||_F^2 + sum_n -log softmax(W x_n + b)_{y_n},
with W holding one row per class (also for two classes) and the intercept b not
penalised. That is credence's potential U with a Gaussian prior of variance C on every
weight (fan-in scaling off) and an unbounded prior on the biases.
"""
import sys

import numpy as np
from sklearn.linear_model import LogisticRegression

x = np.loadtxt(sys.argv[1], delimiter=",", ndmin=2)
y = np.loadtxt(sys.argv[2], delimiter=",", dtype=np.int64)
c = float(sys.argv[3])
model = LogisticRegression(C=c, multi_class="multinomial", solver="lbfgs", tol=1e-12,
                           max_iter=100000)
model.fit(x, y)
np.savetxt(sys.argv[4], model.predict_proba(x), delimiter=",", fmt="%.17g")
