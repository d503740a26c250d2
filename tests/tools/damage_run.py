"""Damaged copies of a valid run file, one damage each, made with h5py (issue 22).

    damage_run.py RUN.h5 OUTDIR

Writes OUTDIR/<case>.h5 for every case below and prints one line per case:
"<case>\t<text the refusal must contain>", the dataset (and index) credence must name.
The layout names are those of docs/run-file.md. Each damage changes one field of the
valid file in place; no other field is touched, so the refusal must come from the check
of that field or of a field it must agree with.
"""
import shutil
import sys

import h5py
import numpy as np

FEATURES = "preprocessing/features"


def feature_index(f, kind):
    types = [t.decode() for t in f[FEATURES + "/type"][:]]
    return types.index(kind)


def set_item(dataset, index, value):
    data = dataset[...]
    data[index] = value
    dataset[...] = data


def set_attr(group, name, value):
    """Replaces an attribute by one of the writer's kind (int64, float64 or fixed string)."""
    del group.attrs[name]
    if isinstance(value, str):
        group.attrs.create(name, np.bytes_(value.encode()))
    else:
        group.attrs.create(name, value, dtype=np.int64)


def active_slot(f):
    return "checkpoint/slot_%d" % int(f["run/active_slot"][0])


def replace_strings(group, name, values):
    del group[name]
    width = max(1, max(len(v.encode()) for v in values))
    group.create_dataset(name, data=np.array([v.encode() for v in values], dtype="S%d" % width))


def offset_past_width(f):
    set_item(f[FEATURES + "/offset"], 0, 1_000_000)
    return FEATURES + "/offset[0]"


def offset_negative(f):
    set_item(f[FEATURES + "/offset"], 1, -5)
    return FEATURES + "/offset[1]"


def width_absurd(f):
    i = feature_index(f, "categorical")
    set_item(f[FEATURES + "/width"], i, 1 << 40)
    return FEATURES + "/width[%d]" % i


def numeric_width_two(f):
    i = feature_index(f, "numeric")
    set_item(f[FEATURES + "/width"], i, 2)
    return FEATURES + "/width[%d]" % i


def level_count_short(f):
    i = feature_index(f, "categorical")
    set_item(f[FEATURES + "/category_count"], i, int(f[FEATURES + "/category_count"][i]) - 1)
    return FEATURES + "/width[%d]" % i


def category_range_outside(f):
    i = feature_index(f, "categorical")
    set_item(f[FEATURES + "/category_start"], i, len(f[FEATURES + "/categories"]))
    return FEATURES + "/category_start[%d]" % i


def category_overflow(f):
    # The values the fuzzer found (shared/repro/run-fuzz-category-overflow.h5): their sum
    # overflows int64 and, wrapped around, passed the old bounds check.
    i = feature_index(f, "categorical")
    set_item(f[FEATURES + "/category_start"], i, 8234608929133834830)
    set_item(f[FEATURES + "/category_count"], i, 2810246167479189504)
    return FEATURES + "/category_start[%d]" % i


def levels_unsorted(f):
    i = feature_index(f, "categorical")
    start = int(f[FEATURES + "/category_start"][i])
    names = [c.decode() for c in f[FEATURES + "/categories"][:]]
    names[start], names[start + 1] = names[start + 1], names[start]
    replace_strings(f[FEATURES], "categories", names)
    return "category_start[%d]" % i


def type_swapped(f):
    i = feature_index(f, "numeric")
    types = [t.decode() for t in f[FEATURES + "/type"][:]]
    types[i] = "categorical"
    replace_strings(f[FEATURES], "type", types)
    return FEATURES + "/category_count[%d]" % i


def mean_nan(f):
    i = feature_index(f, "numeric")
    set_item(f[FEATURES + "/mean"], i, np.nan)
    return FEATURES + "/mean[%d]" % i


def scale_zero(f):
    i = feature_index(f, "numeric")
    set_item(f[FEATURES + "/scale"], i, 0.0)
    return FEATURES + "/scale[%d]" % i


def scale_infinite(f):
    i = feature_index(f, "numeric")
    set_item(f[FEATURES + "/scale"], i, np.inf)
    return FEATURES + "/scale[%d]" % i


def impute_nan(f):
    # The run is trained with --impute median, so impute values are medians.
    i = feature_index(f, "numeric")
    set_item(f[FEATURES + "/impute_value"], i, np.nan)
    return FEATURES + "/impute_value[%d]" % i


def input_width_wrong(f):
    g = f["preprocessing"]
    set_attr(g, "input_width", int(g.attrs["input_width"]) + 1)
    return "preprocessing/input_width"


def class_added(f):
    g = f["preprocessing"]
    names = [c.decode() for c in g["class_names"][:]]
    replace_strings(g, "class_names", names + ["zz-extra"])
    return "preprocessing/class_names"


def class_repeated(f):
    g = f["preprocessing"]
    names = [c.decode() for c in g["class_names"][:]]
    replace_strings(g, "class_names", [names[0]] * len(names))
    return "preprocessing/class_names[1]"


def parameters_wrong(f):
    g = f["model"]
    set_attr(g, "parameters", int(g.attrs["parameters"]) + 1)
    return "model/parameters"


def net_text_other(f):
    set_attr(f["model"], "net_text", "credence-net 1\nhidden 7 relu\n")
    return "model/parameters"


def layers_wrong(f):
    g = f["sampling"]
    set_attr(g, "layers", int(g.attrs["layers"]) + 1)
    return "sampling/layers"


def train_row_outside(f):
    set_item(f["data/train_rows"], 0, 10**9)
    return "data/train_rows[0]"


def probe_row_negative(f):
    set_item(f["sampling/probe_rows"], 0, -1)
    return "sampling/probe_rows[0]"


def probe_label_outside(f):
    set_item(f["sampling/probe_labels"], 0, 7)
    return "sampling/probe_labels[0]"


def theta_nan(f):
    set_item(f["samples/theta"], (1, 3), np.nan)
    return "samples/theta[sample 1, column 3]"


def theta_infinite(f):
    set_item(f["samples/theta"], (0, 0), -np.inf)
    return "samples/theta[sample 0, column 0]"


def projection_nan(f):
    set_item(f["samples/projections"], (0, 1), np.nan)
    return "samples/projections[sample 0, column 1]"


def probe_log_lik_nan(f):
    set_item(f["samples/probe_log_lik"], 1, np.nan)
    return "samples/probe_log_lik[1]"


def trace_potential_nan(f):
    set_item(f["traces/chain_0/potential"], 0, np.nan)
    return "traces/chain_0/potential[0]"


def sample_chain_outside(f):
    set_item(f["samples/chain"], 0, 7)
    return "samples/chain[0]"


def checkpoint_theta_nan(f):
    slot = active_slot(f)
    set_item(f[slot + "/theta"], (0, 2), np.nan)
    return slot + "/theta[chain 0, parameter 2]"


def next_step_negative(f):
    slot = active_slot(f)
    set_item(f[slot + "/next_step"], 0, -3)
    return slot + "/next_step[0]"


def seconds_nan(f):
    slot = active_slot(f)
    set_item(f[slot + "/seconds"], 0, np.nan)
    return slot + "/seconds[0]"


def setting_out_of_range(f):
    # Resume reads the settings back: an interrupted run with a friction outside (0, 1].
    f["run/status"][0] = b"interrupted"
    f["settings"].attrs["sghmc_alpha"] = 5.0
    return "/settings"


# Refused by train --resume only (predict does not read the sampler settings).
RESUME_ONLY = [setting_out_of_range]

CASES = [
    offset_past_width, offset_negative, width_absurd, numeric_width_two, level_count_short,
    category_range_outside, category_overflow, levels_unsorted, type_swapped, mean_nan,
    scale_zero, scale_infinite, impute_nan, input_width_wrong, class_added, class_repeated,
    parameters_wrong, net_text_other, layers_wrong, train_row_outside, probe_row_negative,
    probe_label_outside,
    theta_nan, theta_infinite, projection_nan, probe_log_lik_nan, trace_potential_nan,
    sample_chain_outside,
    checkpoint_theta_nan, next_step_negative, seconds_nan,
]


def main():
    source, out_dir = sys.argv[1], sys.argv[2]
    for case in CASES + RESUME_ONLY:
        path = "%s/%s.h5" % (out_dir, case.__name__)
        shutil.copyfile(source, path)
        with h5py.File(path, "r+") as f:
            expected = case(f)
        print("%s\t%s" % (case.__name__, expected))


if __name__ == "__main__":
    main()
