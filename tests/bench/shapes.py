"""The benchmark shapes of DESIGN.md section 6, shared by scripts/bench and the reference loops.

Each shape: input width D, hidden widths, classes K, minibatch rows B. The learning rate and
the relativistic settings below mirror credence train's defaults (--lr 1e-2, --friction 0.1,
--max-move 1e-2, target speed ratio 0.5 with u* = 1.8285: docs/methods.md 5.6), so the reference
loops do the same arithmetic per step as the samplers they are compared with.
"""
import math

SHAPES = {
    "small": {"inputs": 32, "hidden": [64, 64], "classes": 2, "batch": 128},
    "medium": {"inputs": 100, "hidden": [256, 256], "classes": 5, "batch": 256},
    "large": {"inputs": 256, "hidden": [1024, 1024], "classes": 10, "batch": 512},
}

LEARNING_RATE = 1e-2  # credence train --lr default
ALPHA = 0.1           # --friction default (rsghmc derives D = alpha m / eps)
MAX_MOVE = 1e-2       # --max-move default (c = max_move / eps)
U_STAR = 1.8285       # docs/methods.md 5.2: u* for a target mean speed ratio of 0.5


def widths(shape):
    s = SHAPES[shape]
    return [s["inputs"]] + list(s["hidden"]) + [s["classes"]]


def parameter_count(shape):
    w = widths(shape)
    return sum(w[i + 1] * w[i] + w[i + 1] for i in range(len(w) - 1))


def step_flops(shape):
    """GEMM FLOPs of one forward + backward step: 6 x batch x weights (DESIGN.md 6)."""
    w = widths(shape)
    weights = sum(w[i + 1] * w[i] for i in range(len(w) - 1))
    return 6.0 * SHAPES[shape]["batch"] * weights


def prior_variances(shape):
    """Per layer (weight variance, bias variance) of the default prior: s = 1, fan-in on."""
    w = widths(shape)
    return [(1.0 / w[i], 1.0) for i in range(len(w) - 1)]


def sgld_step(rows):
    return 2.0 * LEARNING_RATE / rows  # eps = 2 lr / N (docs/methods.md 2)


def rsghmc_constants(rows, temperature=1.0):
    """(eps, c, m, D) as credence derives them (docs/methods.md 5.4, 5.6)."""
    eps = math.sqrt(LEARNING_RATE / rows)
    c = MAX_MOVE / eps
    m = U_STAR * temperature / (c * c)
    d = ALPHA * m / eps
    return eps, c, m, d
