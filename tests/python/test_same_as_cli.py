"""The module and the command line agree on the same run file: predictions (path,
DataFrame and numpy input), assess's and diagnose's JSON documents."""

import json

import numpy as np
import pandas as pd
import pytest

import credence
from conftest import run_cli


@pytest.fixture(scope="module")
def cli_predictions(cli_run, breast_cancer_csv, tmp_path_factory):
    out = tmp_path_factory.mktemp("predict") / "predictions.csv"
    run_cli("--quiet", "predict", cli_run, breast_cancer_csv, "--out", out)
    return pd.read_csv(out, keep_default_na=False, na_values=[""], dtype={"predicted": str})


def probability_columns(frame):
    """The ensemble's class probabilities, without the per-row interval columns."""
    return [c for c in frame.columns
            if c.startswith("p_") and not c.endswith(("_lo90", "_hi90"))]


def test_predict_path_equals_cli_csv(cli_run, breast_cancer_csv, cli_predictions):
    ours = credence.predict(cli_run, breast_cancer_csv)
    assert list(ours.columns) == list(cli_predictions.columns)
    pd.testing.assert_frame_equal(ours, cli_predictions, check_exact=True)


def test_predict_dataframe_and_array_equal_cli(cli_run, breast_cancer_csv, cli_predictions):
    # float_precision="round_trip": pandas' default parser may miss the last bit of a
    # decimal, and the comparison is exact.
    table = pd.read_csv(breast_cancer_csv, float_precision="round_trip")
    from_frame = credence.predict(cli_run, table)
    pd.testing.assert_frame_equal(from_frame, cli_predictions, check_exact=True)

    run = credence.open_run(cli_run)
    features = table[run.feature_names].to_numpy()
    from_array = credence.predict(run, features)
    columns = probability_columns(cli_predictions) + ["predicted", "entropy",
                                                      "mutual_information"]
    pd.testing.assert_frame_equal(from_array[columns], cli_predictions[columns],
                                  check_exact=True)
    assert "diagnosis" not in from_array.columns


def test_predict_probabilities_rebuilt_with_numpy(cli_run, breast_cancer_csv):
    """An outside check of the numbers: the ensemble average rebuilt with numpy from the
    kept samples, the stored preprocessing and the net's layout (dense layers, ReLU,
    softmax; docs/run-file.md)."""
    run = credence.open_run(cli_run)
    table = pd.read_csv(breast_cancer_csv, float_precision="round_trip")
    x = np.stack([(table[f["name"]].to_numpy() - f["mean"]) / f["scale"]
                  for f in run.preprocessing["features"]], axis=1)
    widths = [x.shape[1], 8, 2]
    average = np.zeros((len(table), 2))
    for theta in run.samples.astype(np.float64):
        h, offset = x, 0
        for layer, (n_in, n_out) in enumerate(zip(widths[:-1], widths[1:])):
            # W (out, in) in column-major order, then b (docs/run-file.md).
            w = theta[offset:offset + n_in * n_out].reshape(n_out, n_in, order="F")
            offset += n_in * n_out
            b = theta[offset:offset + n_out]
            offset += n_out
            h = h @ w.T + b
            if layer < len(widths) - 2:
                h = np.maximum(h, 0)
        h = h - h.max(axis=1, keepdims=True)
        average += np.exp(h) / np.exp(h).sum(axis=1, keepdims=True)
    average /= run.samples.shape[0]
    ours = credence.predict(run, table)
    # float32 forward passes against float64 numpy: agreement to ~1e-5 (float32 rounding).
    np.testing.assert_allclose(ours[probability_columns(ours)].to_numpy(), average,
                               atol=2e-5)


def test_assess_dict_equals_cli_json(cli_run, breast_cancer_csv, tmp_path):
    out = tmp_path / "assess.json"
    run_cli("--quiet", "assess", cli_run, breast_cancer_csv, "--json", out, "--bootstrap", "200")
    cli = json.loads(out.read_text())
    ours = credence.assess(cli_run, breast_cancer_csv, bootstrap=200)
    assert ours == cli


def test_assess_dataframe(cli_run, breast_cancer_csv):
    table = pd.read_csv(breast_cancer_csv, float_precision="round_trip")
    # Written back, the frame has the training file's bytes (scikit-learn's table is in
    # shortest round-trip form): its SHA-256 matches, so the run's test rows are scored.
    ours = credence.assess(cli_run, table, bootstrap=0)
    by_path = credence.assess(cli_run, breast_cancer_csv, bootstrap=0)
    assert ours["data"] == "(DataFrame)"
    assert ours["data_matches_run"] and ours["split"] == "test"
    assert ours["metrics"] == by_path["metrics"]
    # Any other labelled frame: every row is scored.
    other = credence.assess(cli_run, table.iloc[1:], bootstrap=0)
    assert not other["data_matches_run"]
    assert other["rows"] == 568 and other["split"] == "all rows"


def test_diagnose_dict_equals_cli_json(cli_run, tmp_path):
    out = tmp_path / "diagnose.json"
    run_cli("--quiet", "diagnose", cli_run, "--json", out)
    assert credence.diagnose(cli_run) == json.loads(out.read_text())
