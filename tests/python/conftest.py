"""Shared fixtures of the Python tests: the CLI, scikit-learn's tables written by
tests/tools/export_sklearn_tables.py, and runs trained by the CLI once per session."""

import os
import subprocess

import pytest

CREDENCE_BIN = os.environ.get("CREDENCE_BIN", "credence")
REFDATA_DIR = os.environ.get("CREDENCE_REFDATA_DIR", "")


def run_cli(*args):
    """Runs the credence executable; returns its completed process (check=True)."""
    return subprocess.run([CREDENCE_BIN, *map(str, args)], check=True, capture_output=True,
                          text=True)


def cli_flags(settings):
    """Keywords as the CLI's flags: burn_in=200 as --burn-in 200, hidden=[8, 8] as
    --hidden 8,8."""
    flags = []
    for key, value in settings.items():
        flags += ["--" + key.replace("_", "-"),
                  ",".join(map(str, value)) if isinstance(value, list) else str(value)]
    return flags


@pytest.fixture(scope="session")
def breast_cancer_csv():
    path = os.path.join(REFDATA_DIR, "breast_cancer.csv")
    if not os.path.exists(path):
        pytest.fail(f"{path} is missing: run the ctest fixture fixtures/sklearn_tables")
    return path


@pytest.fixture(scope="session")
def cli_run(tmp_path_factory, breast_cancer_csv):
    """A short sghmc run on scikit-learn's breast cancer table, trained by the CLI (two
    chains, a small budget: the tests compare outputs, not quality)."""
    out = tmp_path_factory.mktemp("cli_run") / "cancer.h5"
    run_cli("--quiet", "train", breast_cancer_csv, "--target", "diagnosis", "--method", "sghmc",
            "--hidden", "8", "--chains", "2", "--burn-in", "200", "--thin", "10",
            "--samples", "10", "--seed", "3", "--out", out)
    return str(out)
