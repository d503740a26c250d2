"""credence.train: the same run as `credence train` with the same settings, a table
trained, predicted and assessed from Python with probabilities identical to the CLI's
on the same run file (issue 18's "Done when"), and Ctrl-C leaving a resumable run."""

import json
import os
import signal
import subprocess
import sys
import time

import h5py
import numpy as np
import pandas as pd
import pytest

import credence
from conftest import cli_flags, run_cli

SHORT = dict(method="sghmc", hidden=[8], chains=2, burn_in=200, thin=10, samples=10, seed=3)


def test_python_run_equals_cli_run(tmp_path, breast_cancer_csv):
    ours = credence.train(breast_cancer_csv, tmp_path / "py.h5", target="diagnosis",
                          progress=False, **SHORT)
    run_cli("--quiet", "train", breast_cancer_csv, "--target", "diagnosis",
            *cli_flags(SHORT), "--out", tmp_path / "cli.h5")
    # Read back with h5py (an independent reader): the kept samples are bit-identical.
    # Chains run in parallel and the writer keeps samples in the order they arrive, so
    # compare them ordered by (chain, step).
    with h5py.File(tmp_path / "py.h5", "r") as a, h5py.File(tmp_path / "cli.h5", "r") as b:
        def ordered(f):
            order = np.lexsort((f["samples/step"][:], f["samples/chain"][:]))
            return f["samples/theta"][:][order]
        np.testing.assert_array_equal(ordered(a), ordered(b))
    assert ours.status == "complete"
    assert ours.samples.shape[0] == 20


def test_done_when_train_predict_assess_match_cli(tmp_path, breast_cancer_csv):
    """Trains on scikit-learn's breast cancer table from a DataFrame, predicts and assesses
    it from Python, and checks against the CLI on the same run file."""
    table = pd.read_csv(breast_cancer_csv, float_precision="round_trip")
    run = credence.train(table, tmp_path / "run.h5", target="diagnosis", progress=False,
                         **SHORT)
    ours = credence.predict(run, table)
    cli_out = tmp_path / "cli.csv"
    run_cli("--quiet", "predict", run.path, breast_cancer_csv, "--out", cli_out)
    cli = pd.read_csv(cli_out, dtype={"predicted": str})
    probabilities = [c for c in cli.columns
                     if c.startswith("p_") and not c.endswith(("_lo90", "_hi90"))]
    assert probabilities == ["p_benign", "p_malignant"]
    # The interval columns of the positive class come through Python as well.
    assert list(ours.columns) == list(cli.columns)
    np.testing.assert_array_equal(ours[probabilities].to_numpy(), cli[probabilities].to_numpy())
    assert (ours["predicted"] == cli["predicted"]).all()

    # The DataFrame was written with the bytes of the CSV the CLI reads? Not necessarily,
    # so assess scores every row of the file (split="all") on both sides.
    scores = credence.assess(run, breast_cancer_csv, split="all", bootstrap=100)
    run_cli("--quiet", "assess", run.path, breast_cancer_csv, "--split", "all",
            "--bootstrap", "100", "--json", tmp_path / "a.json")
    assert scores == json.loads((tmp_path / "a.json").read_text())
    # scikit-learn's log_loss on the same probabilities (an outside reference).
    from sklearn.metrics import log_loss
    labels = (table["diagnosis"] == "malignant").astype(int)
    assert scores["metrics"]["nll"] == pytest.approx(
        log_loss(labels, ours[probabilities].to_numpy()), rel=1e-6)


def test_arrays_with_y(tmp_path):
    rng = np.random.default_rng(7)
    x = rng.normal(size=(120, 3))
    y = np.where(x[:, 0] + 0.5 * x[:, 1] > 0, "high", "low")
    run = credence.train(x, tmp_path / "xy.h5", y=y, progress=False, method="adam",
                         steps=300, hidden=[4])
    assert run.class_names == ["high", "low"]
    assert run.feature_names == ["x0", "x1", "x2"]
    assert run.target == "target"


def test_linear_path_equals_the_cli_run(tmp_path, breast_cancer_csv):
    ours = credence.train(breast_cancer_csv, tmp_path / "py.h5", target="diagnosis",
                          progress=False, linear_path=True, **SHORT)
    run_cli("--quiet", "train", breast_cancer_csv, "--target", "diagnosis",
            *cli_flags(SHORT), "--linear-path", "on", "--out", tmp_path / "cli.h5")
    # Read with h5py: 30 inputs, one hidden layer of 8 units and 2 classes make
    # 31*8 + 9*2 = 266 parameters, and the linear path adds 31*2 = 62 (docs/prior.md).
    with h5py.File(tmp_path / "py.h5", "r") as a, h5py.File(tmp_path / "cli.h5", "r") as b:
        assert a["samples/theta"].shape[1] == 266 + 62
        def ordered(f):
            order = np.lexsort((f["samples/step"][:], f["samples/chain"][:]))
            return f["samples/theta"][:][order]
        np.testing.assert_array_equal(ordered(a), ordered(b))
    assert ours.samples.shape[1] == 328
    with pytest.raises(credence.InvalidInputError, match="needs hidden layers"):
        credence.train(breast_cancer_csv, tmp_path / "none.h5", target="diagnosis",
                       progress=False, method="adam", steps=50, hidden=[], linear_path=True)
    with pytest.raises(ValueError, match="linear_path='yes'"):
        credence.train(breast_cancer_csv, tmp_path / "yes.h5", target="diagnosis",
                       progress=False, linear_path="yes")
    assert not os.path.exists(tmp_path / "none.h5")


def test_method_flag_refused_as_on_the_cli(tmp_path, breast_cancer_csv):
    with pytest.raises(credence.InvalidInputError, match="--burn-in"):
        credence.train(breast_cancer_csv, tmp_path / "r.h5", target="diagnosis",
                       method="adam", burn_in=10, progress=False)
    assert not os.path.exists(tmp_path / "r.h5")


CHILD = """
import os, signal, sys, credence
samples, self_interrupt = int(sys.argv[3]), sys.argv[4] == "self"
def report(p):
    if p["kept"] > 0:
        print("kept", flush=True)
        if self_interrupt:  # Ctrl-C landing while the progress display runs
            os.kill(os.getpid(), signal.SIGINT)
try:
    credence.train(sys.argv[1], sys.argv[2], target="diagnosis", progress=report,
                   method="sghmc", hidden=[8], chains=2, burn_in=200, thin=10,
                   samples=samples, seed=3)
except credence.TrainingInterrupted as e:
    print("interrupted:", e, flush=True)
    sys.exit(130)
"""


def interrupted_child(csv, path, samples, how):
    child = subprocess.Popen([sys.executable, "-c", CHILD, csv, str(path), str(samples), how],
                             stdout=subprocess.PIPE, text=True, env=os.environ.copy())
    assert child.stdout.readline().strip() == "kept"
    if how == "signal":
        child.send_signal(signal.SIGINT)
    out, _ = child.communicate(timeout=120)
    assert child.returncode == 130, out
    assert "interrupted" in out and "--resume" in out
    run = credence.open_run(path)
    assert run.status == "interrupted"
    assert 0 < run.samples.shape[0] < 2 * samples
    return run


def test_ctrl_c_from_outside_stops_a_long_run(tmp_path, breast_cancer_csv):
    # A budget no machine finishes before the signal lands (20 million steps per chain).
    interrupted_child(breast_cancer_csv, tmp_path / "long.h5", 2_000_000, "signal")


def test_ctrl_c_leaves_a_resumable_run(tmp_path, breast_cancer_csv):
    path = tmp_path / "cut.h5"
    # 200,000 steps per chain: the stop lands long before the end on any machine.
    run = interrupted_child(breast_cancer_csv, path, 20_000, "self")
    # Resuming continues the same chains: the samples kept before the stop are unchanged.
    resumed = credence.train(breast_cancer_csv, path, resume=True, progress=False)
    assert resumed.status == "complete"
    assert resumed.samples.shape[0] == 40_000
    before = {(c, i): s for c, i, s in zip(run.sample_chains, run.sample_indices, run.samples)}
    after = {(c, i): s for c, i, s in zip(resumed.sample_chains, resumed.sample_indices,
                                          resumed.samples)}
    for key, theta in before.items():
        np.testing.assert_array_equal(after[key], theta)
