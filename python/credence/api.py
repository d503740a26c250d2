"""predict, assess and diagnose: the commands' work, on paths, DataFrames or arrays."""

import json
import os
import tempfile

import pandas as pd

from . import _credence
from ._tables import as_frame, is_path, write_csv
from .run import Run


def _run_path(run):
    return run.path if isinstance(run, Run) else os.fspath(run)


def _write_rows(data, run_path, directory, bare_columns):
    """`data` as a CSV file the run reads like its own; a bare array's columns are named
    by `bare_columns(run)`."""
    if is_path(data):
        return os.fspath(data)
    run = Run(run_path)
    columns = None if isinstance(data, pd.DataFrame) else bare_columns(run)
    return write_csv(as_frame(data, columns), os.path.join(directory, "rows.csv"),
                     run.settings)


def predict(run, data, *, samples=0, temperature=None, flag_above=None,
            flag_by="entropy", unseen=None, id_columns=()):
    """Predicts every row of `data` with the run's ensemble.

    `data` is a CSV path, a pandas DataFrame with the training table's column names, or
    a 2-D numpy array whose columns are the run's feature columns in order. Returns a
    DataFrame with the columns of `credence predict`'s CSV: id columns, the target when
    present, p_<class> per class, predicted, confidence, entropy, expected_entropy,
    mutual_information (nats) and, with flag_above, refer. Raises InvalidInputError
    with the command's message for bad input.
    """
    run_path = _run_path(run)
    with tempfile.TemporaryDirectory(prefix="credence-") as tmp:
        input_path = _write_rows(data, run_path, tmp, lambda r: r.feature_names)
        output_path = os.path.join(tmp, "predictions.csv")
        _credence.predict_file(run_path, input_path, output_path, samples=samples,
                               temperature=temperature, flag_above=flag_above,
                               flag_by=flag_by, unseen=unseen,
                               id_columns=list(id_columns))
        text_columns = list(id_columns) + ["predicted"]
        return pd.read_csv(output_path, keep_default_na=False, na_values=[""],
                           dtype={c: str for c in text_columns})


def assess(run, data, *, split="auto", bins=15, binning="width", samples=0,
           bootstrap=1000, seed=0, fit_temperature=False, temperature=None, unseen=None,
           truth=None):
    """Scores the run's ensemble on labelled rows; returns the dict `credence assess
    --json` writes (names: docs/assess-json.md).

    `data` is a CSV path (the run's own data file selects its stored test rows under
    split="auto"), or a DataFrame holding the target column (every row is scored).
    """
    run_path = _run_path(run)
    with tempfile.TemporaryDirectory(prefix="credence-") as tmp:
        data_path = _write_rows(data, run_path, tmp, lambda r: r.feature_names + [r.target])
        document = _credence.assess_json(
            run_path, data_path, split=split, bins=bins, binning=binning, samples=samples,
            bootstrap=bootstrap, seed=seed, fit_temperature=fit_temperature,
            temperature=temperature, unseen=unseen,
            truth_path="" if truth is None else os.fspath(truth))
    result = json.loads(document)
    if not is_path(data):
        result["data"] = "(DataFrame)"  # not the temporary file it was written to
    return result


def diagnose(run):
    """Mixing diagnostics of the run's chains and the kernel Stein discrepancy of its draws:
    the dict `credence diagnose --json` writes (names: docs/diagnostics.md)."""
    return json.loads(_credence.diagnose_json(_run_path(run)))
