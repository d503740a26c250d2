"""PyTorch reference for one chain's SGLD and rsghmc steps (float32, CPU, autograd).

An ordinary autograd loop: the parameters are leaf tensors views of one flat buffer; each
step draws a minibatch from a shuffled order, computes U~ = (N/B) * summed cross-entropy +
the Gaussian prior (docs/methods.md 1), calls backward(), and applies the update to the flat
buffer under no_grad (sgld: docs/methods.md 2; rsghmc: docs/methods.md 5.4), as numpy_loops.py does.
Threads: torch.set_num_threads(--threads). When torch is not installed it prints
{"skipped": "..."} and exits 0.

usage: torch_loops.py SHAPE METHOD STEPS [--repeats R] [--rows N] [--threads T]
"""
import argparse
import json
import math
import os
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import shapes  # noqa: E402

try:
    import torch
except ImportError:  # the benchmark notes the gap instead of failing
    torch = None


def build(shape, rows, activation, seed):
    s = shapes.SHAPES[shape]
    g = torch.Generator().manual_seed(seed)
    widths = shapes.widths(shape)
    x = torch.randn(rows, widths[0], generator=g)
    y = torch.randint(0, s["classes"], (rows,), generator=g)
    flat = torch.zeros(shapes.parameter_count(shape))
    inv_var = torch.zeros_like(flat)
    params, off = [], 0
    for (n_in, n_out), (wv, bv) in zip(zip(widths[:-1], widths[1:]), shapes.prior_variances(shape)):
        w = flat[off:off + n_in * n_out].view(n_out, n_in)
        w.copy_(torch.randn(n_out, n_in, generator=g) * math.sqrt(2.0 / n_in))
        inv_var[off:off + n_in * n_out] = 1.0 / wv
        off += n_in * n_out
        b = flat[off:off + n_out]
        inv_var[off:off + n_out] = 1.0 / bv
        off += n_out
        params += [w, b]
    flat.requires_grad_(True)
    act = torch.relu if activation == "relu" else torch.tanh
    return x, y, flat, inv_var, widths, act


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("shape", choices=sorted(shapes.SHAPES))
    parser.add_argument("method", choices=["sgld", "rsghmc"])
    parser.add_argument("steps", type=int)
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--rows", type=int, default=8192)
    parser.add_argument("--threads", type=int, default=1)
    parser.add_argument("--activation", choices=["relu", "tanh"], default="relu")
    parser.add_argument("--seed", type=int, default=1)
    a = parser.parse_args()
    if torch is None:
        print(json.dumps({"impl": "torch", "skipped": "python3-torch is not installed "
                          "(scripts/bootstrap --bench installs it)"}))
        return
    torch.set_num_threads(a.threads)
    x, y, flat, inv_var, widths, act = build(a.shape, a.rows, a.activation, a.seed)
    batch = shapes.SHAPES[a.shape]["batch"]
    scale = a.rows / batch
    state = {"order": torch.randperm(a.rows), "cursor": 0}

    def views():
        out, off = [], 0
        for n_in, n_out in zip(widths[:-1], widths[1:]):
            out.append(flat[off:off + n_in * n_out].view(n_out, n_in))
            off += n_in * n_out
            out.append(flat[off:off + n_out])
            off += n_out
        return out

    def gradient():
        if state["cursor"] + batch > a.rows:
            state["order"] = torch.randperm(a.rows)
            state["cursor"] = 0
        idx = state["order"][state["cursor"]:state["cursor"] + batch]
        state["cursor"] += batch
        h = x[idx]
        ps = views()
        for l in range(0, len(ps) - 2, 2):
            h = act(torch.nn.functional.linear(h, ps[l], ps[l + 1]))
        logits = torch.nn.functional.linear(h, ps[-2], ps[-1])
        u = scale * torch.nn.functional.cross_entropy(logits, y[idx], reduction="sum")
        u = u + 0.5 * torch.dot(flat * flat, inv_var)
        flat.grad = None
        u.backward()
        return flat.grad

    if a.method == "sgld":
        eps = shapes.sgld_step(a.rows)
        sd = math.sqrt(eps)

        def run(n):
            for _ in range(n):
                g = gradient()
                with torch.no_grad():
                    flat.add_(g, alpha=-eps / 2)
                    flat.add_(torch.randn_like(flat), alpha=sd)
    else:
        eps, c, m, d = shapes.rsghmc_constants(a.rows)
        p = torch.zeros_like(flat, requires_grad=False)
        mc2 = (m * c) ** 2
        sd = math.sqrt(2.0 * eps * d)

        def run(n):
            for _ in range(n):
                g = gradient()
                with torch.no_grad():
                    v = c * p / torch.sqrt(p * p + mc2)
                    p.add_(g, alpha=-eps).add_(v, alpha=-eps * d)
                    p.add_(torch.randn_like(p), alpha=sd)
                    flat.add_(c * p / torch.sqrt(p * p + mc2), alpha=eps)

    run(max(2, a.steps // 10))
    rates = []
    for _ in range(a.repeats):
        t0 = time.perf_counter()
        run(a.steps)
        rates.append(a.steps / (time.perf_counter() - t0))
    print(json.dumps({"impl": "torch", "shape": a.shape, "method": a.method, "steps": a.steps,
                      "threads": a.threads, "steps_per_s": rates,
                      "finite": bool(torch.isfinite(flat).all())}))


if __name__ == "__main__":
    main()
