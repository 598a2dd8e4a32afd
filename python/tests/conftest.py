"""Shared fixtures of the Python module's tests: the reference data (read
from ../shared/data or $KNOTPATH_DATA_DIR, never copied into the repository)
and the knotpath program the module is compared with."""

import csv
import os
import pathlib
import subprocess

import numpy as np
import pytest

ROOT = pathlib.Path(__file__).resolve().parents[2]


def data_dir():
    for variable in ("KNOTPATH_DATA_DIR", "KNOTPATH_DEFAULT_DATA_DIR"):
        if os.environ.get(variable):
            return pathlib.Path(os.environ[variable])
    return ROOT.parent / "shared" / "data"


@pytest.fixture(scope="session")
def diabetes_file():
    """The diabetes table (Efron, Hastie, Johnstone & Tibshirani 2004, Ann.
    Statist. 32(2); 442 patients, 10 baseline variables, disease progression)."""
    path = data_dir() / "open" / "diabetes.csv"
    if not path.is_file():
        pytest.skip(f"reference data absent: {path} (set KNOTPATH_DATA_DIR to the folder holding open/diabetes.csv)")
    return path


def read_table(path):
    """A CSV table as (names, float64 columns), each cell parsed by Python's
    float() (correctly rounded, as the program's reader)."""
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    names = rows[0]
    values = np.array([[float(c) for c in r] for r in rows[1:]], dtype=np.float64)
    return names, values


@pytest.fixture(scope="session")
def diabetes(diabetes_file):
    """(predictor names, Fortran-ordered design, response) of the diabetes table."""
    names, values = read_table(diabetes_file)
    return names[:-1], np.asfortranarray(values[:, :-1]), values[:, -1].copy()


@pytest.fixture(scope="session")
def program():
    """Runs the knotpath program built beside the module."""
    exe = os.environ.get("KNOTPATH_CLI") or str(ROOT / "build" / "ci" / "lib" / "knotpath")
    if not os.path.isfile(exe):
        pytest.skip(f"the knotpath program is not built ({exe}); build the target knotpath_cli or set KNOTPATH_CLI")

    def run(*args):
        done = subprocess.run([exe, "-q", *map(str, args)], capture_output=True, text=True)
        assert done.returncode == 0, done.stderr
        return done.stdout

    return run
