"""train: a CSV path, a DataFrame or numpy arrays into a run file, with a progress line
and Ctrl-C that leaves the run file resumable."""

import os
import sys
import tempfile
import time

import numpy as np
import pandas as pd

from . import _credence
from ._tables import as_frame, is_path, write_csv
from .run import Run

# The keywords train() passes on; each is the CLI flag of the same name (--burn-in for
# burn_in), with the same default when left as None.
TRAIN_KEYWORDS = (
    "method", "hidden", "activation", "linear_path", "prior_scale", "lr", "step_size", "temperature",
    "chains", "samples", "burn_in", "thin", "steps", "epochs", "batch", "threads",
    "seed", "test_fraction", "val_fraction", "categorical", "drop", "id", "impute",
    "unseen", "delimiter", "na_tokens",
)


class ProgressLine:
    """The default progress display: one line rewritten in place (a terminal or a
    notebook cell), ending with the elapsed time."""

    def __init__(self, stream=None):
        self.stream = stream or sys.stderr
        self.start = time.monotonic()

    def __call__(self, p):
        total = max(p["total_steps"], 1)
        share = min(p["steps_done"] / total, 1.0)
        bar = "#" * int(share * 24)
        loss = "" if p["loss"] != p["loss"] else f"  loss {p['loss']:.4g}"
        line = (f"\r{p['label']} [{bar:<24}] {share:4.0%}  {p['kept']}/{p['total_samples']} "
                f"kept{loss}  {time.monotonic() - self.start:.0f}s")
        self.stream.write(line)
        if p["finished"]:
            self.stream.write("\n")
        self.stream.flush()


def _on_off(value):
    """linear_path as a bool: True/False, or the CLI's "on"/"off"."""
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if value in ("on", "off"):
        return value == "on"
    raise ValueError(f"linear_path={value!r}: give True or False (or 'on' or 'off')")


def _frame_of(data, y, target):
    """The table to train on: `data` with `y` joined as column `target` when given."""
    frame = as_frame(data)
    if y is not None:
        frame = frame.copy()
        frame[target] = np.asarray(y)
    return frame


def train(data, out, *, target=None, y=None, force=False, resume=False, progress=True,
          **settings):
    """Trains a classifier into the run file `out`, as `credence train` does.

    `data`: a CSV path (None with resume=True: the path stored in the run), a DataFrame holding the `target` column, or a 2-D array (or
    DataFrame) of features with the labels in `y` (the table then gets columns x0, x1,
    ... and `target`, by default "target"). Keywords are the CLI's flags with
    underscores, and None (or leaving one out) keeps the CLI's default:
    method ("sgld"), hidden (e.g. [32, 32]), activation, linear_path (True: a linear
    map from the inputs to the outputs beside the hidden layers; default False), prior_scale (a number; default
    "auto" learns it), lr, step_size, temperature, chains, samples, burn_in, thin,
    steps, epochs, batch, threads, seed, test_fraction, val_fraction, categorical,
    drop, id, impute ("none"/"median"), unseen ("error"/"ignore"), delimiter, na_tokens.
    A flag the chosen method does not read is refused, as on the command line.

    progress: True (a line on stderr), False, or a callable given a dict (label,
    total_steps, total_samples, steps_done, kept, loss, finished) about four times a
    second. Ctrl-C stops every chain at its next step and raises TrainingInterrupted (a
    KeyboardInterrupt) after the run file is committed; train(..., resume=True) with the
    same data continues it, and the samples equal those of an uninterrupted run.
    Returns the Run.
    """
    unknown = sorted(set(settings) - set(TRAIN_KEYWORDS))
    if unknown:
        raise TypeError(f"train() got unknown keyword(s) {', '.join(unknown)}; known: "
                        f"{', '.join(TRAIN_KEYWORDS)}")
    options = {k: v for k, v in settings.items() if v is not None}
    if "prior_scale" in options and options["prior_scale"] == "auto":
        del options["prior_scale"]
    if "hidden" in options:
        options["hidden"] = [int(w) for w in options["hidden"]]
    if "linear_path" in options:
        options["linear_path"] = _on_off(options["linear_path"])
    if force:
        options["force"] = True
    if resume:
        options["resume"] = True
    callback = ProgressLine() if progress is True else (progress or None)
    out = os.fspath(out)
    with tempfile.TemporaryDirectory(prefix="credence-") as tmp:
        if data is None:
            if not resume:
                raise TypeError("give the data: a CSV path, a DataFrame or an array")
            data_path = ""  # the path stored in the run
        elif is_path(data):
            if y is not None:
                raise TypeError("give y only with a DataFrame or an array, not a CSV path")
            data_path = os.fspath(data)
        else:
            target = target or "target"
            frame = _frame_of(data, y, target)
            if "delimiter" in options or "na_tokens" in options:
                raise TypeError("delimiter and na_tokens apply to CSV files, not DataFrames")
            data_path = write_csv(frame, os.path.join(tmp, "table.csv"))
        if not resume:
            if target is None:
                raise TypeError("give target= (the class column)")
            options["target"] = target
        _credence.train(data_path, out, options, callback)
    return Run(out)
