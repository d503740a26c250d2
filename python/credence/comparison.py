"""compare: several methods on one split, one network and one gradient budget, scored
side by side, as `credence compare` does."""

import io
import os

import pandas as pd

from . import _credence
from ._tables import as_frame, is_path, write_csv
from .training import ProgressLine, _on_off

# The keywords compare() passes on; each is the CLI flag of the same name
# (--extend-seconds for extend_seconds), with the same default when left as None.
COMPARE_KEYWORDS = (
    "methods", "hidden", "activation", "linear_path", "epochs", "chains", "batch", "samples", "bootstrap",
    "extend_seconds", "chain_seed", "truth", "seed", "test_fraction", "val_fraction",
    "categorical", "drop", "id", "impute", "unseen", "delimiter", "na_tokens",
)


def compare(data, out, *, target, progress=True, **settings):
    """Trains every method of `methods` (default "adam,rsgd,sgld,sghmc,rsghmc") on one
    split, one network and one gradient budget into the folder `out`, scores each on the
    same held-out rows, and writes summary.txt, summary.csv, summary.json and
    report.html there, as `credence compare` does.

    `data`: a CSV path, or a DataFrame holding the `target` column (written to
    out/table.csv, which the run files then name). Keywords are compare's flags with
    underscores, and None (or leaving one out) keeps the command's default: methods (a
    comma-separated string or a list), hidden (e.g. [32, 32]; [] for none), activation,
    linear_path (True: a linear map from the inputs to the outputs beside the hidden
    layers), epochs, chains, batch, samples, bootstrap, extend_seconds, chain_seed, truth (a
    synth truth file), seed, test_fraction, val_fraction, categorical, drop, id,
    impute, unseen, delimiter, na_tokens.

    progress: as for train(). Ctrl-C stops the comparison (TrainingInterrupted). Returns
    the score table as a DataFrame with summary.csv's columns, one row per method that
    trained. Raises InvalidInputError with the command's message for bad input, and
    DivergedError when no method produced a usable run.
    """
    unknown = sorted(set(settings) - set(COMPARE_KEYWORDS))
    if unknown:
        raise TypeError(f"compare() got unknown keyword(s) {', '.join(unknown)}; known: "
                        f"{', '.join(COMPARE_KEYWORDS)}")
    options = {k: v for k, v in settings.items() if v is not None}
    if "methods" in options and not isinstance(options["methods"], str):
        options["methods"] = ",".join(options["methods"])
    if "hidden" in options:
        options["hidden"] = [int(w) for w in options["hidden"]]
    if "linear_path" in options:
        options["linear_path"] = _on_off(options["linear_path"])
    if "truth" in options:
        options["truth"] = os.fspath(options["truth"])
    options["target"] = target
    out = os.fspath(out)
    if is_path(data):
        data_path = os.fspath(data)
    else:
        if "delimiter" in options or "na_tokens" in options:
            raise TypeError("delimiter and na_tokens apply to CSV files, not DataFrames")
        os.makedirs(out, exist_ok=True)
        data_path = write_csv(as_frame(data), os.path.join(out, "table.csv"))
    callback = ProgressLine() if progress is True else (progress or None)
    files = _credence.compare(data_path, out, options, callback)
    return pd.read_csv(io.StringIO(files["csv"]), dtype={"method": str})
