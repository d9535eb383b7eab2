"""Shared fixtures of the copse_forest tests: the repository's data files, the copse
command, and a temporary folder to run it in."""

import os
import shutil
import subprocess
from pathlib import Path

import pandas as pd
import pytest

REPO = Path(__file__).resolve().parents[3]
DEMO = REPO / "demo-data"
DATA = REPO / "tests" / "data"


def copse_binary() -> Path:
    """The copse command: $COPSE_BIN, else the release build in the target folder."""
    given = os.environ.get("COPSE_BIN")
    if given:
        return Path(given)
    target = Path(os.environ.get("CARGO_TARGET_DIR", REPO / "target"))
    return target / "release" / "copse"


@pytest.fixture(scope="session")
def copse_cmd():
    """Runs the copse command in a folder; returns the completed process."""
    binary = copse_binary()
    if not binary.exists():
        pytest.fail(
            f"the copse command is not at {binary}; build it with 'cargo build --release' "
            "or set COPSE_BIN"
        )

    def run(args, cwd, check=True):
        p = subprocess.run([str(binary), *args], cwd=cwd, capture_output=True, text=True)
        if check and p.returncode != 0:
            raise AssertionError(f"copse {' '.join(args)} failed ({p.returncode}): {p.stderr}")
        return p

    return run


@pytest.fixture
def folder(tmp_path):
    """A temporary folder holding copies of the data files the tests read."""
    for f in ["water_mains.csv", "water_mains_to_score.csv"]:
        shutil.copy(DEMO / f, tmp_path / f)
    for f in ["iris.csv", "penguins.csv"]:
        shutil.copy(DATA / f, tmp_path / f)
    return tmp_path


@pytest.fixture(scope="session")
def mains():
    """The invented demo data of pipe failures (demo-data/README.md)."""
    return pd.read_csv(DEMO / "water_mains.csv")


@pytest.fixture(scope="session")
def mains_new():
    """The demo rows to score (no target)."""
    return pd.read_csv(DEMO / "water_mains_to_score.csv")


@pytest.fixture(scope="session")
def iris():
    """Fisher's (1936) iris measurements (tests/data/README.md)."""
    return pd.read_csv(DATA / "iris.csv")


@pytest.fixture(scope="session")
def penguins():
    """Palmer penguins (Gorman, Williams & Fraser 2014): NA cells and text columns."""
    return pd.read_csv(DATA / "penguins.csv")
