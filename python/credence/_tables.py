"""Turning a DataFrame or a numpy array into a CSV file the library reads exactly as it
reads the user's files (numbers written with repr, so every double round-trips)."""

import os

import numpy as np
import pandas as pd


def feature_names(width):
    """Column names given to the columns of a bare numpy array: x0, x1, ..."""
    return [f"x{i}" for i in range(width)]


def as_frame(data, columns=None):
    """`data` as a DataFrame: a DataFrame unchanged, a 2-D array with `columns` (or x0..)."""
    if isinstance(data, pd.DataFrame):
        return data
    array = np.asarray(data)
    if array.ndim != 2:
        raise ValueError(f"expected a 2-D table (rows, columns), got an array of shape "
                         f"{array.shape}")
    if columns is None:
        columns = feature_names(array.shape[1])
    if len(columns) != array.shape[1]:
        raise ValueError(f"the array has {array.shape[1]} columns but {len(columns)} names "
                         f"were given")
    return pd.DataFrame(array, columns=list(columns))


def write_csv(frame, path, settings=None):
    """Writes `frame` as the run with `settings` reads tables (its delimiter, a missing
    cell as one of its missing-value tokens; comma and empty cell without settings),
    header first, no index."""
    names = [str(c) for c in frame.columns]
    if len(set(names)) != len(names):
        raise ValueError("the table's column names are not unique; rename the duplicates")
    delimiter, missing = ",", ""
    if settings is not None:
        delimiter = settings.get("csv_delimiter", ",")
        tokens = settings.get("csv_na_tokens", "").split("\x1f")
        missing = "" if "" in tokens else tokens[0]
    frame.to_csv(path, index=False, sep=delimiter, na_rep=missing, header=names)
    return path


def is_path(data):
    return isinstance(data, (str, os.PathLike))
