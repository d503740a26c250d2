"""Reading a run file: what it was trained on, how, and the kept samples."""

import os

from . import _credence


class Run:
    """A run file opened for reading.

    Attributes: path, header (dict: provenance, data file and its SHA-256, split rows as
    numpy arrays, net text, chains), settings (dict: every training setting and seed),
    preprocessing (dict: columns, encodings, class names), summary (dict: status, kept
    samples per chain, chain status), samples ((S, P) float32: one kept sample per row,
    in the run's flat parameter layout), sample_chains, sample_steps, sample_indices
    ((S) each), stored_temperature (dict or None).
    """

    def __init__(self, path):
        self.path = os.fspath(path)
        fields = _credence.open_run(self.path)
        self.header = fields["header"]
        self.settings = fields["settings"]
        self.preprocessing = fields["preprocessing"]
        self.summary = fields["summary"]
        self.samples = fields["samples"]
        self.sample_chains = fields["sample_chains"]
        self.sample_steps = fields["sample_steps"]
        self.sample_indices = fields["sample_indices"]
        self.stored_temperature = fields["stored_temperature"]

    @property
    def class_names(self):
        return list(self.preprocessing["class_names"])

    @property
    def target(self):
        return self.preprocessing["target"]

    @property
    def feature_names(self):
        """The input columns the model reads, in design-matrix order."""
        return [f["name"] for f in self.preprocessing["features"]]

    @property
    def method(self):
        return self.settings.get("method")

    @property
    def status(self):
        return self.summary["status"]

    def __repr__(self):
        return (f"Run({self.path!r}: {self.method}, {self.status}, "
                f"{self.samples.shape[0]} kept samples, classes {self.class_names})")


def open_run(path):
    """Opens a run file; raises CorruptRunError for a damaged file, InvalidInputError for a
    missing one."""
    return Run(path)
