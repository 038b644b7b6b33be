"""Shared test set-up: headless Qt, offline astropy, paths to test data."""

import os
from pathlib import Path

import pytest

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
os.environ.setdefault("MPLBACKEND", "Agg")
# Built-in orbits are cached on disk; tests never touch the user's own cache folder.
if "CONTACTPLAN_CACHE_DIR" not in os.environ:
    import tempfile

    os.environ["CONTACTPLAN_CACHE_DIR"] = tempfile.mkdtemp(prefix="contactplan-test-cache-")

DATA = Path(__file__).parent / "data"
ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="session", autouse=True)
def _offline_astropy():
    from contactplan.data import configure_astropy

    configure_astropy()


@pytest.fixture
def data_dir() -> Path:
    return DATA


@pytest.fixture
def minimal_path() -> Path:
    return DATA / "minimal.toml"
