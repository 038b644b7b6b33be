"""What makes a ``contactplan passes`` process short: a light import chain, node tables kept per user,
and the pass table written column by column, each giving exactly what the slower way gave."""

import csv
import io
import json
import os
import subprocess
import sys
import textwrap

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from contactplan.geometry.passes import Pass

# ---------------------------------------------------------------- the import chain

#: packages the passes command must not load (the slow imports other commands need)
HEAVY = ("astropy", "scipy", "itur", "matplotlib", "reportlab", "icalendar", "openpyxl", "PySide6", "PyQt5",
         "PyQt6", "skyfield", "pandas", "numpy.ma", "difflib", "zipfile", "importlib.readers",
         "concurrent.futures", "multiprocessing",
         "contactplan.app", "contactplan.link", "contactplan.plan.rules", "contactplan.commands.check",
         "contactplan.commands.draft", "contactplan.commands.reconcile", "contactplan.commands.diff",
         "contactplan.commands.import_busy")
#: loaded only to fill the user cache (the first run): never with the cache warm
FIRST_RUN_ONLY = ("jplephem", "erfa")

SCENARIO = """\
format_version = 2

[scenario]
name = "startup"
start = "2027-01-01T00:00:00Z"
end = "2027-01-03T00:00:00Z"

[spacecraft]
name = "invented probe"

[spacecraft.ephemeris.libration]
epoch = "2027-01-01T00:00:00Z"

[[stations]]
id = "ALD"
name = "Alder Point"
latitude_deg = 40.4
longitude_deg = -4.2
height_m = 800.0
min_elevation_deg = 5.0
horizon_mask = [[0.0, 4.0], [45.0, 9.0], [120.0, 3.0], [200.0, 12.0], [290.0, 6.0]]

[[stations]]
id = "BRK"
name = "Bracken Hill"
latitude_deg = -35.4
longitude_deg = 148.9
height_m = 650.0
min_elevation_deg = 6.0
"""

_RUN = textwrap.dedent("""
    import json, sys
    from contactplan.cli import main
    status = main(["passes", sys.argv[1], "--out", sys.argv[2]])
    print(json.dumps({"status": status, "modules": sorted(sys.modules)}))
""")


def _passes_process(scenario, out, cache):
    env = dict(os.environ, CONTACTPLAN_CACHE_DIR=str(cache))
    proc = subprocess.run([sys.executable, "-c", _RUN, str(scenario), str(out)], capture_output=True, text=True,
                          env=env, timeout=120)
    assert proc.returncode == 0, proc.stderr[-2000:]
    doc = json.loads(proc.stdout.strip().splitlines()[-1])
    assert doc["status"] == 0
    return set(doc["modules"])


def _loaded(modules, names):
    return sorted(n for n in names if any(m == n or m.startswith(n + ".") for m in modules))


def test_passes_command_import_chain_stays_light(tmp_path):
    scen = tmp_path / "startup.toml"
    scen.write_text(SCENARIO, encoding="utf-8")
    cache = tmp_path / "cache"
    first = _passes_process(scen, tmp_path / "a.csv", cache)
    assert _loaded(first, HEAVY) == []
    warm = _passes_process(scen, tmp_path / "b.csv", cache)
    assert _loaded(warm, HEAVY + FIRST_RUN_ONLY) == []
    assert "contactplan.commands.passes" in warm and "contactplan.geometry.passes" in warm
    # the warm run reads back what the first one computed: the same table, byte for byte
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    assert (tmp_path / "a.csv").read_text(encoding="utf-8").count("\n") > 2  # header and passes of both


def test_passes_on_an_oem_stays_light_too(tmp_path):
    import math

    from contactplan.io.oem import write_oem
    from contactplan.timescale import parse_utc

    t0 = parse_utc("2026-12-31T00:00:00Z")
    nodes = t0 + np.arange(0.0, 4 * 86400.0 + 1.0, 600.0)
    w = 2 * math.pi / (180 * 86400.0)  # an invented L2-like loop, 1.5 million km out
    x = w * (nodes - t0)
    pos = np.stack([1.5e6 + 2.5e5 * np.cos(x), 7.5e5 * np.sin(x), 3.0e5 * np.cos(x + 0.3)], 1)
    vel = np.stack([-2.5e5 * w * np.sin(x), 7.5e5 * w * np.cos(x), -3.0e5 * w * np.sin(x + 0.3)], 1)
    write_oem(tmp_path / "probe.oem", nodes, pos, vel, "INVENTED PROBE", "2026-901A", creation_tt=t0)
    scen = tmp_path / "oem.toml"
    scen.write_text(SCENARIO.replace('[spacecraft.ephemeris.libration]\nepoch = "2027-01-01T00:00:00Z"\n',
                                     'ephemeris = { oem = "probe.oem" }\n'), encoding="utf-8")
    cache = tmp_path / "cache"
    _passes_process(scen, tmp_path / "a.csv", cache)  # indexes the file, fills the cache
    warm = _passes_process(scen, tmp_path / "b.csv", cache)
    assert _loaded(warm, HEAVY + FIRST_RUN_ONLY) == []
    assert "contactplan.ephemeris.oem" in warm
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()


@pytest.mark.parametrize("given, expected", [(None, "1"), ("3", "3")])
def test_passes_command_runs_blas_on_one_thread_unless_told(given, expected):
    env = {k: v for k, v in os.environ.items() if k not in ("OPENBLAS_NUM_THREADS", "GOTO_NUM_THREADS",
                                                              "OMP_NUM_THREADS")}
    if given is not None:
        env["OPENBLAS_NUM_THREADS"] = given
    code = ("import os, sys; import contactplan.commands.passes; "
            "print(os.environ.get('OPENBLAS_NUM_THREADS'), 'numpy' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env)
    assert out.returncode == 0, out.stderr[-2000:]
    assert out.stdout.split() == [expected, "False"]  # set before numpy (and its BLAS) is loaded


# ---------------------------------------------------------------- rounded numbers as text
_TIES = [0.5, 1.5, 2.5, -2.5, 2.675, 0.125, 0.375, 1.0005, 1e-5, -1e-5, 5e-5, 0.0001, 0.00015, -0.0004, 0.0, -0.0,
         1e15, 1e16, 1e17, 123456789.123456789, 359.9995, 359.99949999999995, 1671359.2074999999]


@pytest.mark.parametrize("digits", [0, 1, 2, 3, 6, 9, 11])
def test_rounded_text_is_repr_of_round_at_ties_and_edges(digits):
    from contactplan.io.decimals import rounded_text

    k = np.arange(-2000, 2000)
    near = np.concatenate([(k + 0.5) / 10.0 ** digits, np.nextafter((k + 0.5) / 10.0 ** digits, np.inf),
                           np.nextafter((k + 0.5) / 10.0 ** digits, -np.inf)])
    vals = np.concatenate([np.array(_TIES), near, [np.nan, np.inf, -np.inf, 5e-324, 1e-300]])
    # reference: Python's own round (correctly rounded, half to even) and repr
    assert rounded_text(vals, digits) == [repr(round(float(v), digits)) for v in vals]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True, width=64), min_size=0, max_size=60),
       st.integers(min_value=0, max_value=11))
def test_rounded_text_matches_python_for_any_float(values, digits):
    from contactplan.io.decimals import rounded_text

    assert rounded_text(np.array(values, dtype=float), digits) == [repr(round(v, digits)) for v in values]


# ---------------------------------------------------------------- the CSV writer
def _csv_reference(passes):
    """The pass-table CSV as the csv module writes the rows of pass_rows (the writer before the column path)."""
    from contactplan.io.passtable import _csv_cell, columns_for, pass_rows

    rows = pass_rows(passes)
    cols = columns_for(rows)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n")
    w.writerow(cols)
    for r in rows:
        w.writerow([_csv_cell(r.get(c)) for c in cols])
    return buf.getvalue()


_text = st.text(alphabet=st.sampled_from(list("AZaz09 ,;\"'=+-@\t\r\n/é")), min_size=1, max_size=8)
_num = st.floats(min_value=-1e7, max_value=1e7, allow_nan=False, width=64)


@st.composite
def _passes(draw):
    from contactplan.scenario.model import Outage

    out = []
    for _ in range(draw(st.integers(min_value=0, max_value=6))):
        aos = draw(st.floats(min_value=8.5e8, max_value=8.6e8))
        p = Pass(station=draw(_text), aos_tt=aos, los_tt=aos + draw(st.floats(min_value=0.0, max_value=9e4)),
                 max_elevation_deg=draw(_num), max_elevation_tt=aos + 10.0, aos_azimuth_deg=draw(_num),
                 los_azimuth_deg=draw(_num), min_range_km=draw(_num), max_range_km=draw(_num),
                 clipped_start=draw(st.booleans()), clipped_end=draw(st.booleans()), light_time_s=draw(_num),
                 sun_separation_min_deg=draw(_num), moon_separation_min_deg=draw(_num),
                 sun_earth_probe_deg=draw(_num), sun_flag=draw(st.booleans()), moon_flag=draw(st.booleans()))
        if draw(st.booleans()):
            p.outages = [Outage(start_tt=aos, end_tt=aos + 60.0, reason=draw(_text))]
        if draw(st.booleans()):
            p.max_rate_kbps, p.volume_gbit = draw(_num), draw(_num)
        out.append(p)
    return out


@settings(max_examples=120, deadline=None)
@given(_passes())
def test_column_csv_is_the_csv_module_text(passes):
    from contactplan.io.passtable import passes_csv_text

    assert passes_csv_text(passes) == _csv_reference(passes)


def test_column_csv_of_a_real_year_piece(demo_passes):
    from contactplan.io.passtable import pass_columns, pass_rows, passes_csv_text

    assert passes_csv_text(demo_passes) == _csv_reference(demo_passes)
    rows = pass_rows(demo_passes)
    cols = pass_columns(demo_passes)
    assert [list(r) for r in rows][0] == list(cols)
    assert rows[3]["min_range_km"] == round(sorted(demo_passes, key=lambda p: (p.aos_tt, p.station))[3].min_range_km, 3)


@pytest.fixture(scope="module")
def demo_passes():
    from pathlib import Path

    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import find_passes
    from contactplan.scenario.load import load_scenario

    sc = load_scenario(Path(__file__).resolve().parents[1] / "resources" / "demo" / "week.toml")
    return find_passes(sc, ephemeris_for(sc))


# ---------------------------------------------------------------- search pieces rewritten for speed
def _candidates_reference(t, g):
    """extremum_candidates as first written: every quantity at every sample."""
    n = len(t)
    pos = g > 0
    gl = np.concatenate([[np.nan], g[:-1]])
    gr = np.concatenate([g[1:], [np.nan]])
    pl = np.concatenate([[pos[0]], pos[:-1]])
    pr = np.concatenate([pos[1:], [pos[-1]]])
    dl = np.where(np.isnan(gl), 0.0, np.abs(g - gl))
    dr = np.where(np.isnan(gr), 0.0, np.abs(gr - g))
    hl = np.concatenate([[0.0], np.diff(t)])
    hr = np.concatenate([np.diff(t), [0.0]])
    with np.errstate(divide="ignore", invalid="ignore"):
        carry_l = np.where(hl > 0, dl * hr / hl, 0.0)
        carry_r = np.where(hr > 0, dr * hl / hr, 0.0)
    slack = np.maximum(np.maximum(dl, dr), np.maximum(carry_l, carry_r))
    with np.errstate(invalid="ignore"):
        up_l, up_r = np.isnan(gl) | (g > gl), np.isnan(gr) | (g >= gr)
        dn_l, dn_r = np.isnan(gl) | (g < gl), np.isnan(gr) | (g <= gr)
    cand_max = ~pos & ~pl & ~pr & up_l & up_r & (g + slack > 0)
    cand_min = pos & pl & pr & dn_l & dn_r & (g - slack <= 0)
    idx = np.nonzero(cand_max | cand_min)[0]
    i0, i1 = np.maximum(idx - 1, 0), np.minimum(idx + 1, n - 1)
    return t[i0], t[i1], np.where(cand_max[idx], 1.0, -1.0), g[i0], g[i1]


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(st.floats(min_value=0.01, max_value=700.0),
                          st.one_of(st.floats(min_value=-5.0, max_value=5.0), st.sampled_from([0.0, np.nan]))),
                min_size=2, max_size=40))
def test_extremum_candidates_as_the_every_sample_formula(steps):
    from contactplan.geometry.search import extremum_candidates

    t = np.cumsum([s for s, _ in steps])
    g = np.array([v for _, v in steps])
    for got, want in zip(extremum_candidates(t, g), _candidates_reference(t, g)):
        assert np.array_equal(got, want, equal_nan=True)


def _in_pass_reference(grid, n_sites, starts, ends, p_st):
    out = []
    for k in range(n_sites):
        pk = np.nonzero(p_st == k)[0]
        if pk.size == 0:
            continue
        s, e = starts[pk], ends[pk]
        seg = np.searchsorted(s, grid, side="right") - 1
        ok = seg >= 0
        ok[ok] = grid[ok] <= e[seg[ok]]
        seg = np.where(ok, seg, -1)
        inside = np.nonzero(seg >= 0)[0]
        out.append((k, pk, inside, seg[inside]))
    return out


def test_in_pass_rows_as_the_row_by_row_lookup():
    from contactplan.geometry.passes import _in_pass_rows

    rng = np.random.default_rng(7)
    for _ in range(400):
        grid = np.sort(rng.choice(np.arange(0.0, 200.0, 0.5), rng.integers(2, 60), replace=False))
        n_sites = int(rng.integers(1, 4))
        starts, ends, p_st = [], [], []
        for k in range(n_sites):
            ev = np.sort(rng.choice(np.arange(-5.0, 205.0, 0.5), 2 * rng.integers(0, 6), replace=False))
            if ev.size >= 4 and rng.random() < 0.3:
                ev[2] = ev[1]  # two passes touching at a grid point
            starts += list(ev[0::2])
            ends += list(ev[1::2])
            p_st += [k] * (ev.size // 2)
        args = (np.array(starts), np.array(ends), np.array(p_st, dtype=int))
        got = _in_pass_rows(grid, [None] * n_sites, *args)
        want = _in_pass_reference(grid, n_sites, *args)
        assert len(got) == len(want)
        for a, b in zip(got, want):
            assert a[0] == b[0] and all(np.array_equal(x, y) for x, y in zip(a[1:], b[1:]))


# ---------------------------------------------------------------- node tables kept per user
@pytest.fixture
def cache_dir(tmp_path, monkeypatch):
    """An empty user cache, and no node block remembered by this process."""
    from contactplan.ephemeris import bodies

    monkeypatch.setenv("CONTACTPLAN_CACHE_DIR", str(tmp_path / "cache"))
    monkeypatch.setattr(bodies, "_blocks_mem", {})
    return tmp_path / "cache"


def test_sun_moon_nodes_are_the_kernel_values_and_read_back(cache_dir, monkeypatch):
    from contactplan.ephemeris import bodies

    k0, k1 = 720 * 328 - 100, 720 * 328 + 200  # late 2026, across a block boundary
    t = np.arange(k0, k1 + 1) * 3600.0
    tab = bodies.sun_moon_nodes(k0, k1, 3600.0)
    # exactly what the kernel gives for these instants, however they are grouped
    assert np.array_equal(tab[:, 0:3], bodies.sun_km(t, velocity=True)[0])
    assert np.array_equal(tab[:, 9:12], bodies.moon_km(t, velocity=True)[1])
    assert len(list((cache_dir / "bodies").glob("*.bin"))) == 2
    bodies._blocks_mem.clear()  # a new process: only the files are left
    monkeypatch.setattr(bodies, "_node_table", lambda t: pytest.fail("recomputed a kept block"))
    assert np.array_equal(bodies.sun_moon_nodes(k0 + 5, k1, 3600.0), tab[5:])


def test_sun_moon_nodes_damaged_block_is_recomputed(cache_dir):
    from contactplan.ephemeris import bodies

    first = bodies.sun_moon_nodes(240_000, 240_010, 3600.0)
    (block,) = (cache_dir / "bodies").glob("*.bin")
    raw = bytearray(block.read_bytes())
    raw[-5] ^= 0xFF
    block.write_bytes(bytes(raw))
    bodies._blocks_mem.clear()
    assert np.array_equal(bodies.sun_moon_nodes(240_000, 240_010, 3600.0), first)


def test_sun_moon_nodes_near_the_kernel_end_are_not_kept(cache_dir):
    from contactplan.ephemeris import bodies
    from contactplan.errors import OutOfSpanError
    from contactplan.timescale import parse_utc

    k = int(parse_utc("2053-10-01T00:00:00Z") // 3600.0)  # DE421 ends 2053-10-09: the block reaches past it
    tab = bodies.sun_moon_nodes(k, k + 3, 3600.0)
    assert np.array_equal(tab[:, 0:3], bodies.sun_km(np.arange(k, k + 4) * 3600.0)[0])
    assert not list((cache_dir / "bodies").glob("*.bin"))
    with pytest.raises(OutOfSpanError):
        bodies.sun_moon_nodes(k, k + 24 * 30, 3600.0)


def test_halo_nodes_are_kept_per_span_and_read_back_bit_for_bit(cache_dir, monkeypatch):
    from contactplan.ephemeris import libration
    from contactplan.ephemeris.libration import HaloEphemeris
    from contactplan.scenario.model import LibrationSpec
    from contactplan.timescale import parse_utc

    t0 = parse_utc("2027-05-01T00:00:00Z")
    spec = LibrationSpec(point="L2", vertical_amplitude_km=300000.0, branch="north", epoch_tt=t0)
    a = HaloEphemeris.from_spec(spec, t0, t0 + 3 * 86400.0)
    files = sorted((cache_dir / "orbits").glob("halo-nodes-*.bin"))
    assert len(files) == 1
    nodes = a._t0 + a._h * np.arange(a._n)
    nodes[-1] = a.end_tt
    pos, vel = a.exact_state(nodes)
    assert np.array_equal(a._pos, pos) and np.array_equal(a._vel, vel)
    monkeypatch.setattr(HaloEphemeris, "exact_state", lambda self, t: pytest.fail("recomputed kept nodes"))
    b = HaloEphemeris.from_spec(spec, t0, t0 + 3 * 86400.0)
    assert np.array_equal(b._coef, a._coef)
    monkeypatch.undo()
    monkeypatch.setenv("CONTACTPLAN_CACHE_DIR", str(cache_dir))
    # another span, another phase: other files; the oldest go beyond NODE_CACHE_FILES
    monkeypatch.setattr(libration, "NODE_CACHE_FILES", 2)
    HaloEphemeris.from_spec(spec, t0, t0 + 2 * 86400.0)
    HaloEphemeris.from_spec(LibrationSpec(point="L2", vertical_amplitude_km=300000.0, branch="north",
                                          epoch_tt=t0, phase_deg=30.0), t0, t0 + 2 * 86400.0)
    assert len(list((cache_dir / "orbits").glob("halo-nodes-*.bin"))) == 2
    assert not files[0].exists()


def test_halo_nodes_damaged_file_is_recomputed(cache_dir):
    from contactplan.ephemeris.libration import HaloEphemeris
    from contactplan.scenario.model import LibrationSpec
    from contactplan.timescale import parse_utc

    t0 = parse_utc("2027-06-01T00:00:00Z")
    spec = LibrationSpec(point="L1", vertical_amplitude_km=250000.0, branch="south", epoch_tt=t0)
    a = HaloEphemeris.from_spec(spec, t0, t0 + 86400.0)
    (f,) = (cache_dir / "orbits").glob("halo-nodes-*.bin")
    f.write_bytes(f.read_bytes()[:-8])
    b = HaloEphemeris.from_spec(spec, t0, t0 + 86400.0)
    assert np.array_equal(a._pos, b._pos) and np.array_equal(a._vel, b._vel)


def test_package_folders_as_importlib_resources_gives_them():
    from importlib import resources

    from contactplan import data

    for name in ("astropy_iers_data", "skyfield_data"):
        assert data._package_dir(name) == type(data._package_dir(name))(str(resources.files(name)))


def test_erfa_version_without_importing_erfa():
    import erfa

    from contactplan.geometry import earth

    out = subprocess.run([sys.executable, "-c", "import sys; from contactplan.geometry.earth import _erfa_version;"
                          "print(_erfa_version(), 'erfa' in sys.modules)"], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr[-2000:]
    assert out.stdout.split() == [erfa.__version__, "False"]
    assert earth._erfa_version() == erfa.__version__
