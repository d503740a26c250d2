"""Hand-written numpy reference for one chain's SGLD and rsghmc steps (float32).

Same work per step as credence's step loop: draw a minibatch of B rows (a shuffled
order, gathered), forward through the dense net (activation after each hidden layer),
softmax cross-entropy scaled by N/B plus the Gaussian prior (docs/methods.md 1), backward,
then the update on the flat parameter vector:
  sgld:   theta += -(eps/2) g + sqrt(eps T) xi                         (docs/methods.md 2)
  rsghmc: p += -eps g - eps D v(p) + sqrt(2 eps D T) xi;  theta += eps v(p),
          v = c p / sqrt(p^2 + m^2 c^2)                               (docs/methods.md 5.4)
Parameters and gradients live in one flat float32 vector each (weights as views), so the
update is a handful of whole-vector numpy operations. Normal draws: numpy's Generator
(ziggurat) in float32.

Prints one JSON object: {"steps_per_s": [...one per repeat...], ...}. Threads come from
OPENBLAS_NUM_THREADS / OMP_NUM_THREADS set by the caller before numpy is imported.

usage: numpy_loops.py SHAPE METHOD STEPS [--repeats R] [--rows N] [--activation relu|tanh]
"""
import argparse
import json
import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import shapes  # noqa: E402

F = np.float32


class Model:
    def __init__(self, shape, rows, activation, seed):
        s = shapes.SHAPES[shape]
        self.batch = s["batch"]
        self.rows = rows
        self.widths = shapes.widths(shape)
        self.activation = activation
        rng = np.random.default_rng(seed)
        self.rng = rng
        self.x = rng.standard_normal((rows, self.widths[0]), dtype=F)  # (N, D)
        self.y = rng.integers(0, s["classes"], rows)
        n_params = shapes.parameter_count(shape)
        self.theta = np.zeros(n_params, F)
        self.grad = np.zeros(n_params, F)
        self.inv_var = np.zeros(n_params, F)
        self.w, self.b, self.gw, self.gb = [], [], [], []
        off = 0
        for (n_in, n_out), (wv, bv) in zip(zip(self.widths[:-1], self.widths[1:]),
                                           shapes.prior_variances(shape)):
            # Stored (in, out) so a batch (B, in) times it is (B, out): numpy's natural layout.
            self.w.append(self.theta[off:off + n_in * n_out].reshape(n_in, n_out))
            self.gw.append(self.grad[off:off + n_in * n_out].reshape(n_in, n_out))
            self.inv_var[off:off + n_in * n_out] = 1.0 / wv
            off += n_in * n_out
            self.b.append(self.theta[off:off + n_out])
            self.gb.append(self.grad[off:off + n_out])
            self.inv_var[off:off + n_out] = 1.0 / bv
            off += n_out
        for w in self.w:
            w[...] = rng.standard_normal(w.shape, dtype=F) * F(np.sqrt(2.0 / w.shape[0]))
        self.order = rng.permutation(rows)
        self.cursor = 0
        self.scale = F(rows / self.batch)

    def next_batch(self):
        if self.cursor + self.batch > self.rows:
            self.order = self.rng.permutation(self.rows)
            self.cursor = 0
        idx = self.order[self.cursor:self.cursor + self.batch]
        self.cursor += self.batch
        return self.x[idx], self.y[idx]

    def potential_and_gradient(self):
        """U~(theta) and its gradient into self.grad."""
        xb, yb = self.next_batch()
        acts = [xb]
        a = xb
        last = len(self.w) - 1
        for l in range(last):
            z = a @ self.w[l]
            z += self.b[l]
            if self.activation == "relu":
                np.maximum(z, 0, out=z)
            else:
                np.tanh(z, out=z)
            acts.append(z)
            a = z
        logits = a @ self.w[last]
        logits += self.b[last]
        logits -= logits.max(axis=1, keepdims=True)
        p = np.exp(logits)
        sums = p.sum(axis=1, keepdims=True)
        rows = np.arange(len(yb))
        nll = float(np.log(sums).sum() - logits[rows, yb].sum())
        p /= sums
        p[rows, yb] -= 1
        dz = p
        dz *= self.scale  # (N/B) times the batch sum
        # Prior gradient theta / sigma^2 first, then the likelihood's accumulates into it.
        np.multiply(self.theta, self.inv_var, out=self.grad)
        for l in range(last, -1, -1):
            a = acts[l]
            self.gw[l] += a.T @ dz
            self.gb[l] += dz.sum(axis=0)
            if l > 0:
                da = dz @ self.w[l].T
                if self.activation == "relu":
                    da *= a > 0
                else:
                    da *= 1 - a * a
                dz = da
        prior = 0.5 * float(np.dot(self.theta * self.theta, self.inv_var))
        return prior + float(self.scale) * nll


def run_sgld(model, steps, eps):
    sd = F(np.sqrt(eps))
    half = F(eps / 2)
    theta, grad, rng = model.theta, model.grad, model.rng
    for _ in range(steps):
        model.potential_and_gradient()
        noise = rng.standard_normal(theta.size, dtype=F)
        noise *= sd
        grad *= half
        theta -= grad
        theta += noise


def run_rsghmc(model, steps, eps, c, m, d):
    theta, grad, rng = model.theta, model.grad, model.rng
    p = np.zeros_like(theta)
    mc2 = F((m * c) ** 2)
    c, eps32 = F(c), F(eps)
    friction = F(eps * d)
    sd = F(np.sqrt(2.0 * eps * d))  # T = 1
    v = np.empty_like(theta)
    tmp = np.empty_like(theta)

    def velocity(out):
        np.multiply(p, p, out=tmp)
        np.add(tmp, mc2, out=tmp)
        np.sqrt(tmp, out=tmp)
        np.divide(p, tmp, out=out)
        out *= c

    for _ in range(steps):
        model.potential_and_gradient()
        velocity(v)
        noise = rng.standard_normal(theta.size, dtype=F)
        noise *= sd
        grad *= eps32
        p -= grad
        v *= friction
        p -= v
        p += noise
        velocity(v)
        v *= eps32
        theta += v


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("shape", choices=sorted(shapes.SHAPES))
    parser.add_argument("method", choices=["sgld", "rsghmc"])
    parser.add_argument("steps", type=int)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--rows", type=int, default=8192)
    parser.add_argument("--activation", choices=["relu", "tanh"], default="relu")
    parser.add_argument("--seed", type=int, default=1)
    a = parser.parse_args()
    model = Model(a.shape, a.rows, a.activation, a.seed)
    if a.method == "sgld":
        run = lambda n: run_sgld(model, n, shapes.sgld_step(a.rows))  # noqa: E731
    else:
        constants = shapes.rsghmc_constants(a.rows)
        run = lambda n: run_rsghmc(model, n, *constants)  # noqa: E731
    run(max(2, a.steps // 10))  # warm up caches, the allocator and BLAS's buffers
    rates = []
    for _ in range(a.repeats):
        t0 = time.perf_counter()
        run(a.steps)
        rates.append(a.steps / (time.perf_counter() - t0))
    print(json.dumps({"impl": "numpy", "shape": a.shape, "method": a.method,
                      "steps": a.steps, "steps_per_s": rates,
                      "finite": bool(np.isfinite(model.theta).all())}))


if __name__ == "__main__":
    main()
