"""The corrected halo orbit is cached on disk: later processes skip scipy, bad files are recomputed."""

import json
import os
import subprocess
import sys

import numpy as np
import pytest

from contactplan.ephemeris import cr3bp, halo_cache
from contactplan.paths import user_cache_dir

AZ = 300000.0 / cr3bp.AU_KM


@pytest.fixture
def cache_dir(tmp_path, monkeypatch):
    folder = tmp_path / "cache"
    monkeypatch.setenv("CONTACTPLAN_CACHE_DIR", str(folder))
    cr3bp.halo_orbit.cache_clear()
    yield folder
    cr3bp.halo_orbit.cache_clear()


@pytest.fixture(scope="module")
def mu():
    return cr3bp.mass_ratio_sun_emb()


def _files(folder):
    return sorted((folder / "orbits").glob("halo-*.json"))


def _same(a, b):
    assert a.period == b.period
    assert np.array_equal(a.state0, b.state0)
    assert np.array_equal(a.coef_cos, b.coef_cos)
    assert np.array_equal(a.coef_sin, b.coef_sin)


_RUN = """
import sys, json
import numpy as np
from contactplan.ephemeris.libration import HaloEphemeris
from contactplan.scenario.model import LibrationSpec
from contactplan.timescale import parse_utc
t0 = parse_utc("2027-03-01T00:00:00Z")
spec = LibrationSpec(point="L2", vertical_amplitude_km=300000.0, branch="south", epoch_tt=t0)
eph = HaloEphemeris.from_spec(spec, t0, t0 + 86400.0 * 3)
pos, _ = eph.state(t0 + np.array([0.0, 3600.0, 2 * 86400.0]))
print(json.dumps({"scipy": any(m.split(".")[0] == "scipy" for m in sys.modules),
                  "integrated": "contactplan.ephemeris.integrate" in sys.modules, "pos": pos.tolist()}))
"""


def _run(folder):
    env = dict(os.environ, CONTACTPLAN_CACHE_DIR=str(folder))
    proc = subprocess.run([sys.executable, "-c", _RUN], capture_output=True, text=True, env=env)
    assert proc.returncode == 0, proc.stderr[-2000:]
    return json.loads(proc.stdout.strip().splitlines()[-1])


def test_second_process_uses_the_cache_and_does_not_import_scipy(tmp_path):
    folder = tmp_path / "cache"
    first = _run(folder)
    assert first["integrated"] is True  # the first run corrects the orbit by integration...
    assert first["scipy"] is False  # ...with the numpy integrator, not scipy's
    assert len(_files(folder)) == 1  # only the north orbit is stored; south is its mirror image
    second = _run(folder)
    assert second["integrated"] is False  # the second one reads the cache
    assert second["scipy"] is False
    assert second["pos"] == first["pos"]  # bit for bit: JSON keeps float64 exactly


def test_cached_orbit_equals_the_fresh_one(cache_dir, mu):
    fresh = cr3bp.halo_orbit(mu, 2, AZ)
    assert len(_files(cache_dir)) == 1
    cr3bp.halo_orbit.cache_clear()
    again = cr3bp.halo_orbit(mu, 2, AZ)
    assert again is not fresh
    _same(again, fresh)
    # the loaded orbit still closes after one period (same 1e-9 bound as test_cr3bp)
    sol = cr3bp.propagate(again.state0, again.period, mu)
    assert np.max(np.abs(sol.y[:, -1] - again.state0)) < 1e-9


def test_the_key_separates_orbits(cache_dir, mu):
    cr3bp.halo_orbit(mu, 2, AZ)
    cr3bp.halo_orbit(mu, 1, AZ)
    assert len(_files(cache_dir)) == 2
    assert halo_cache.load(mu, 2, AZ * (1 + 1e-15), "north", 256) is None
    assert halo_cache.load(mu * (1 + 1e-15), 2, AZ, "north", 256) is None
    assert halo_cache.load(mu, 2, AZ, "north", 128) is None
    assert halo_cache.load(mu, 2, AZ, "north", 256) is not None


def _damage(path, how):
    text = path.read_text()
    if how == "truncated":
        path.write_text(text[: len(text) // 2])
    elif how == "garbage":
        path.write_bytes(b"\x00\xff not json at all")
    elif how == "empty":
        path.write_text("")
    elif how == "digit":  # one digit changed: the checksum no longer matches
        doc = json.loads(text)
        doc["orbit"]["period"] = doc["orbit"]["period"] * (1 + 1e-12)
        path.write_text(json.dumps(doc))
    elif how == "old-version":  # a consistent file from another algorithm version
        doc = json.loads(text)
        doc["orbit"]["algorithm_version"] = halo_cache.ALGORITHM_VERSION - 1
        doc["sha256"] = halo_cache._checksum(doc["orbit"])
        path.write_text(json.dumps(doc))
    elif how == "wrong-shape":
        doc = json.loads(text)
        doc["orbit"]["coef_sin"] = doc["orbit"]["coef_sin"][:5]
        doc["sha256"] = halo_cache._checksum(doc["orbit"])
        path.write_text(json.dumps(doc))
    elif how == "inconsistent":  # self-consistent checksum but the series misses the start state
        doc = json.loads(text)
        doc["orbit"]["state0"][0] += 1e-6
        doc["sha256"] = halo_cache._checksum(doc["orbit"])
        path.write_text(json.dumps(doc))
    elif how == "list":
        path.write_text("[1, 2, 3]")


@pytest.fixture(scope="module")
def good_cache(tmp_path_factory, mu):
    """(orbit, file name, file bytes) of one freshly corrected orbit and its cache file."""
    folder = tmp_path_factory.mktemp("good-cache")
    with pytest.MonkeyPatch.context() as mp:
        fresh = _orbit_cached_in(folder, mp, mu)
        (path,) = _files(folder)
        return fresh, path.relative_to(folder), path.read_bytes()


@pytest.mark.parametrize("how", ["truncated", "garbage", "empty", "digit", "old-version", "wrong-shape",
                                 "inconsistent", "list"])
def test_bad_cache_file_is_recomputed_quietly(cache_dir, mu, good_cache, how):
    fresh, name, good = good_cache  # the orbit corrected once for the module, and its file
    path = cache_dir / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(good)
    assert halo_cache.load(mu, 2, AZ, "north", 256) is not None  # the copy is a good cache file
    _damage(path, how)
    assert halo_cache.load(mu, 2, AZ, "north", 256) is None
    cr3bp.halo_orbit.cache_clear()
    again = cr3bp.halo_orbit(mu, 2, AZ)
    _same(again, fresh)
    # and the file was rewritten in good order
    assert halo_cache.load(mu, 2, AZ, "north", 256) is not None


def _orbit_cached_in(folder, monkeypatch, mu):
    """A freshly corrected orbit with the cache folder set to ``folder`` (no copy kept in memory)."""
    monkeypatch.setenv("CONTACTPLAN_CACHE_DIR", str(folder))
    cr3bp.halo_orbit.cache_clear()
    try:
        return cr3bp.halo_orbit(mu, 2, AZ)
    finally:
        cr3bp.halo_orbit.cache_clear()


def test_unwritable_cache_is_skipped(tmp_path, monkeypatch, mu):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    orbit = _orbit_cached_in(blocker, monkeypatch, mu)
    assert orbit.period > 0
    assert blocker.read_text() == "not a folder"


def test_user_cache_dir(monkeypatch, tmp_path):
    monkeypatch.setenv("CONTACTPLAN_CACHE_DIR", str(tmp_path / "x"))
    assert user_cache_dir() == tmp_path / "x"
    monkeypatch.delenv("CONTACTPLAN_CACHE_DIR")
    if sys.platform.startswith("linux"):
        monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
        assert user_cache_dir() == tmp_path / "xdg" / "contactplan"
        monkeypatch.delenv("XDG_CACHE_HOME")
        from pathlib import Path

        assert user_cache_dir() == Path.home() / ".cache" / "contactplan"


def test_demo_passes_never_import_scipy(tmp_path):
    """The common command on the demo (built-in orbit) stays free of scipy once the cache is filled (scipy
    alone costs about 0.5 s to import). The empty cache's run may import them: the demo's Ka link is planned
    in weather, and its first run fills the weather tables through itur (which uses scipy and astropy)."""
    from contactplan.paths import demo_scenario

    code = ("import sys, json, contextlib, io\nfrom contactplan.cli import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            f"    code = main(['passes', {str(demo_scenario())!r}])\n"
            "print(json.dumps([code, sorted({m.split('.')[0] for m in sys.modules} & {'scipy', 'astropy'})]))")
    env = dict(os.environ, CONTACTPLAN_CACHE_DIR=str(tmp_path / "cache"))
    for run in range(2):  # empty cache, then filled
        proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env)
        assert proc.returncode == 0, proc.stderr[-2000:]
        got = json.loads(proc.stdout.strip().splitlines()[-1])
        assert got[0] == 0 and (run == 0 or got[1] == [])
    assert (tmp_path / "cache" / "weather").is_dir()
    assert len(_files(tmp_path / "cache")) == 1
