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


@pytest.fixture
def oem_scenario(minimal_path, tmp_path):
    """Factory: a copy of the minimal scenario in ``tmp_path`` whose ephemeris is ``oem_name`` (beside it)."""

    def make(oem_name: str, name: str = "week.toml") -> Path:
        lines = [(f'ephemeris = {{ oem = "{oem_name}" }}' if ln.startswith("ephemeris = { libration") else ln)
                 for ln in minimal_path.read_text("utf-8").splitlines()]
        path = tmp_path / name
        path.write_text("\n".join(lines) + "\n", "utf-8")
        return path

    return make


@pytest.fixture
def gap_oem_scenario(minimal_path, tmp_path, oem_scenario):
    """The minimal scenario on an OEM of two segments with a gap from 2027-01-14T12:00Z to 2027-01-15T00:00Z.

    Both segments are the built-in orbit exported at 300 s (``gap.oem`` beside the scenario).
    """
    from contactplan.cli import main

    a, b = tmp_path / "a.oem", tmp_path / "b.oem"
    for out, t0, t1 in ((a, "2027-01-12T00:00:00Z", "2027-01-14T12:00:00Z"),
                        (b, "2027-01-15T00:00:00Z", "2027-01-19T00:00:00Z")):
        assert main(["export", str(minimal_path), "--out", str(out), "--start", t0, "--end", t1, "--step", "300"]) == 0
    second = b.read_text("utf-8")
    (tmp_path / "gap.oem").write_text(a.read_text("utf-8") + "\n" + second[second.index("META_START"):], "utf-8")
    return oem_scenario("gap.oem")
