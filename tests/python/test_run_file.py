"""credence.open_run against an independent reader of the same HDF5 file (h5py), and
errors raised as Python exceptions with the command line's messages."""

import os

import h5py
import numpy as np
import pytest

import credence
from conftest import run_cli


def test_kept_samples_equal_h5py(cli_run):
    run = credence.open_run(cli_run)
    with h5py.File(cli_run, "r") as f:
        committed = int(f["samples/committed_samples"][0]) if "committed_samples" in f["samples"] else None
        theta = f["samples/theta"][: run.samples.shape[0]]
    # Reference: h5py reads the file's /samples/theta (S, P) float32 (docs/run-file.md).
    assert run.samples.dtype == np.float32
    assert run.samples.shape == (20, run.header["parameters"])
    if committed is not None:
        assert committed == run.samples.shape[0]
    np.testing.assert_array_equal(run.samples, theta)
    assert sorted(set(run.sample_chains.tolist())) == [0, 1]


def test_metadata_settings_preprocessing(cli_run, breast_cancer_csv):
    run = credence.open_run(cli_run)
    assert run.method == "sghmc"
    assert run.status == "complete"
    assert run.target == "diagnosis"
    assert run.class_names == ["benign", "malignant"]
    assert len(run.feature_names) == 30
    assert run.settings["chains"] == 2
    assert run.header["data_file"] == breast_cancer_csv
    rows = len(run.header["train_rows"]) + len(run.header["val_rows"]) + len(run.header["test_rows"])
    assert rows == run.header["data_rows"] == 569  # scikit-learn's breast cancer table
    # Standardisation is fitted on the training rows: numpy's mean and population std.
    import pandas as pd
    table = pd.read_csv(breast_cancer_csv)
    train = table.iloc[run.header["train_rows"]]
    first = run.preprocessing["features"][0]
    column = train[first["name"]].to_numpy()
    assert first["mean"] == pytest.approx(column.mean(), rel=1e-12)
    assert first["scale"] == pytest.approx(column.std(ddof=0), rel=1e-12)


def test_missing_run_raises_value_error_with_cli_message(tmp_path):
    missing = tmp_path / "absent.h5"
    with pytest.raises(credence.InvalidInputError) as caught:
        credence.open_run(missing)
    assert isinstance(caught.value, ValueError)
    cli = run_cli_failing("inspect", missing)
    assert str(caught.value) in cli


def test_damaged_run_raises_corrupt(tmp_path):
    damaged = tmp_path / "damaged.h5"
    damaged.write_bytes(b"not an HDF5 file at all\n" * 10)
    with pytest.raises(credence.CorruptRunError) as caught:
        credence.open_run(damaged)
    assert isinstance(caught.value, ValueError)
    assert str(caught.value) in run_cli_failing("inspect", damaged)


def test_bad_table_raises_with_line_and_column(cli_run, tmp_path, breast_cancer_csv):
    lines = open(breast_cancer_csv).read().splitlines()
    cells = lines[3].split(",")
    cells[2] = "abc"
    lines[3] = ",".join(cells)
    bad = tmp_path / "bad.csv"
    bad.write_text("\n".join(lines) + "\n")
    with pytest.raises(credence.InvalidInputError) as caught:
        credence.predict(cli_run, bad)
    message = str(caught.value)
    assert f"{bad}:4:3" in message
    assert message in run_cli_failing("predict", cli_run, bad, "--out", tmp_path / "p.csv")
    assert not os.path.exists(tmp_path / "p.csv")


def test_bad_keyword_is_refused(cli_run, breast_cancer_csv):
    with pytest.raises(credence.InvalidInputError, match="split='sideways'"):
        credence.assess(cli_run, breast_cancer_csv, split="sideways")


def run_cli_failing(*args):
    """The CLI's stderr for a command that must fail with exit code 2."""
    import subprocess
    from conftest import CREDENCE_BIN
    done = subprocess.run([CREDENCE_BIN, *map(str, args)], capture_output=True, text=True)
    assert done.returncode == 2, done.stderr
    return done.stderr
