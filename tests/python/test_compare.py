"""credence.compare: the score table of `credence compare` as a DataFrame, equal to the
CLI's summary.csv on the same data and seeds; its refusals carry the CLI's messages; and
train's method defaults (santa's learning rate) match the CLI's."""

import subprocess

import h5py
import pandas as pd
import pytest

import credence
from conftest import CREDENCE_BIN, cli_flags, run_cli

# Two methods, one small network, a short budget: the test compares outputs, not quality.
SHORT = dict(methods="adam,sghmc", hidden=[8], epochs=4, chains=2, samples=10,
             bootstrap=50, seed=3)
# Wall-clock columns differ between any two runs; every other column is a function of the
# data, the seeds and the settings.
WALL_CLOCK = ["seconds", "bulk_ess_s"]


def test_compare_table_equals_the_cli_summary_csv(tmp_path, breast_cancer_csv):
    ours = credence.compare(breast_cancer_csv, tmp_path / "py", target="diagnosis",
                            progress=False, **SHORT)
    run_cli("--quiet", "compare", breast_cancer_csv, "--target", "diagnosis",
            *cli_flags(SHORT), "--out", tmp_path / "cli")
    # The CLI's file read by pandas (an outside reader), as a user would read it.
    theirs = pd.read_csv(tmp_path / "cli" / "summary.csv", dtype={"method": str})
    assert list(ours.columns) == list(theirs.columns)
    assert list(ours["method"]) == ["adam", "sghmc"]
    pd.testing.assert_frame_equal(ours.drop(columns=WALL_CLOCK),
                                  theirs.drop(columns=WALL_CLOCK))
    # The Python call leaves the same files as the command, its summary.csv included.
    written = pd.read_csv(tmp_path / "py" / "summary.csv", dtype={"method": str})
    pd.testing.assert_frame_equal(ours, written)
    for name in ("summary.txt", "summary.json", "report.html", "adam.h5", "sghmc.h5"):
        assert (tmp_path / "py" / name).exists(), name


def test_compare_from_a_dataframe_scores_the_same_rows(tmp_path, breast_cancer_csv):
    frame = pd.read_csv(breast_cancer_csv)
    from_frame = credence.compare(frame, tmp_path / "frame", target="diagnosis",
                                  progress=False, **SHORT)
    from_path = credence.compare(breast_cancer_csv, tmp_path / "path", target="diagnosis",
                                 progress=False, **SHORT)
    pd.testing.assert_frame_equal(from_frame.drop(columns=WALL_CLOCK),
                                  from_path.drop(columns=WALL_CLOCK))


def test_compare_refuses_as_the_cli_does(tmp_path, breast_cancer_csv):
    with pytest.raises(credence.InvalidInputError) as python_error:
        credence.compare(breast_cancer_csv, tmp_path / "py", target="diagnosis",
                         methods="adam,hmc", progress=False)
    cli = run_cli_failing("compare", breast_cancer_csv, "--target", "diagnosis",
                          "--methods", "adam,hmc", "--out", tmp_path / "cli")
    assert str(python_error.value) in cli
    assert "hmc uses the full data per step" in str(python_error.value)
    with pytest.raises(credence.InvalidInputError, match="--samples is not read"):
        credence.compare(breast_cancer_csv, tmp_path / "py", target="diagnosis",
                         methods=["adam"], samples=10, progress=False)
    with pytest.raises(TypeError, match="unknown keyword"):
        credence.compare(breast_cancer_csv, tmp_path / "py", target="diagnosis", lr=0.1)


def test_compare_linear_path_as_the_cli(tmp_path, breast_cancer_csv):
    quick = dict(methods="adam", hidden=[8], epochs=2, chains=1, bootstrap=0, seed=3)
    ours = credence.compare(breast_cancer_csv, tmp_path / "py", target="diagnosis",
                            progress=False, linear_path=True, **quick)
    run_cli("--quiet", "compare", breast_cancer_csv, "--target", "diagnosis",
            *cli_flags(quick), "--linear-path", "on", "--out", tmp_path / "cli")
    theirs = pd.read_csv(tmp_path / "cli" / "summary.csv", dtype={"method": str})
    pd.testing.assert_frame_equal(ours.drop(columns=WALL_CLOCK),
                                  theirs.drop(columns=WALL_CLOCK))
    with h5py.File(tmp_path / "py" / "adam.h5", "r") as f:
        assert f["samples/theta"].shape[1] == 266 + 62  # as in test_train.py
    with pytest.raises(credence.InvalidInputError) as python_error:
        credence.compare(breast_cancer_csv, tmp_path / "none", target="diagnosis",
                         methods="adam", hidden=[], linear_path=True, progress=False)
    cli = run_cli_failing("compare", breast_cancer_csv, "--target", "diagnosis",
                          "--methods", "adam", "--hidden", "none", "--linear-path", "on",
                          "--out", tmp_path / "cli_none")
    assert str(python_error.value) in cli


def run_cli_failing(*args):
    """The CLI's standard error for a refused command line (exit code 2)."""
    done = subprocess.run([CREDENCE_BIN, *map(str, args)], capture_output=True, text=True)
    assert done.returncode == 2, done.stderr
    return done.stderr


def stored_learning_rate(path):
    # Read with h5py, not with credence's own reader.
    with h5py.File(path, "r") as f:
        return float(f["settings"].attrs["learning_rate"])


def test_python_santa_takes_the_cli_default_learning_rate(tmp_path, breast_cancer_csv):
    # santa's default learning rate is 1e-3 on the command line (samplers_settings.h);
    # before this test, Python's train kept the generic default.
    short = dict(method="santa", hidden=[4], chains=1, burn_in=20, thin=1, samples=5, seed=3)
    credence.train(breast_cancer_csv, tmp_path / "py.h5", target="diagnosis", progress=False,
                   **short)
    run_cli("--quiet", "train", breast_cancer_csv, "--target", "diagnosis",
            *cli_flags(short), "--out", tmp_path / "cli.h5")
    assert stored_learning_rate(tmp_path / "cli.h5") == 1e-3
    assert stored_learning_rate(tmp_path / "py.h5") == stored_learning_rate(tmp_path / "cli.h5")
