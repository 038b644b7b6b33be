"""Windowed OEM reads (contactplan.ephemeris.oem_window): the same states, coverage and gaps as
a whole read, to the bit, with the reader's checks applied to what is read."""

import math
import os

import numpy as np
import pytest

from contactplan.ephemeris import open_oem
from contactplan.ephemeris.oem import OemEphemeris
from contactplan.ephemeris.oem_window import read_oem_window
from contactplan.errors import InputError
from contactplan.io.oem import read_oem, write_oem
from contactplan.timescale import parse_utc

EPOCH = parse_utc("2027-03-01T00:00:00Z")
DAY = 86400.0
W = 2 * math.pi / (180 * DAY)


def _orbit(t):
    x = W * (t - EPOCH)
    pos = np.stack([1.5e6 + 2.5e5 * np.cos(x), 7.5e5 * np.sin(x), 3.0e5 * np.cos(x + 0.3)], 1)
    vel = np.stack([-2.5e5 * W * np.sin(x), 7.5e5 * W * np.cos(x), -3.0e5 * W * np.sin(x + 0.3)], 1)
    return pos, vel


@pytest.fixture(scope="module")
def three_segments(tmp_path_factory):
    """40 days at 600 s in two Lagrange segments with a 600 s gap between them, and a third
    segment (Hermite, unequal spacing, centred on the Earth-Moon barycentre) over days 25 to 45
    that takes over where it overlaps."""
    folder = tmp_path_factory.mktemp("window")
    t1 = EPOCH + np.arange(0.0, 40 * DAY, 600.0)
    p1, v1 = _orbit(t1)
    a = write_oem(folder / "a.oem", t1, p1, v1, "INVENTED PROBE", "2026-901A", creation_tt=EPOCH,
                  segment_starts=[2000]).read_text()
    rng = np.random.default_rng(7)
    t3 = EPOCH + 25 * DAY + np.cumsum(600.0 + rng.uniform(-60.0, 60.0, 2880))
    p3, v3 = _orbit(t3)
    c = write_oem(folder / "c.oem", t3, p3, v3, "INVENTED PROBE", "2026-901A", center="EARTH BARYCENTER",
                  creation_tt=EPOCH, interpolation="HERMITE", interpolation_degree=5).read_text()
    path = folder / "year.oem"
    path.write_text(a + c[c.index("META_START"):])
    return path


def _window_eph(path, lo, hi):
    return OemEphemeris(read_oem_window(path, lo, hi))


def test_random_windows_equal_the_whole_read_to_the_bit(three_segments):
    whole = OemEphemeris(read_oem(three_segments))
    read_oem_window(three_segments, EPOCH, EPOCH + DAY)  # the first read indexes the file
    rng = np.random.default_rng(11)
    parts = 0
    for _ in range(25):
        lo = EPOCH + rng.uniform(-2.0, 46.0) * DAY
        hi = lo + rng.uniform(0.02, 7.0) * DAY
        eph = _window_eph(three_segments, lo, hi)
        parts += sum(s.part is not None for s in eph.oem.segments)
        # coverage identical to the whole read's (its start, end and gaps)
        assert (eph.start_tt, eph.end_tt, eph.gaps) == (whole.start_tt, whole.end_tt, whole.gaps)
        assert eph._pieces == whole._pieces
        t = np.sort(np.concatenate([rng.uniform(lo, hi, 3000), [lo, hi]]))
        t = t[whole.covers(t)]
        nodes = np.concatenate([s.t_tt for s in eph.oem.segments])
        t = np.concatenate([t, nodes[(nodes >= lo) & (nodes <= hi) & whole.covers(nodes)]])
        p, v = eph.state(t)
        p0, v0 = whole.state(t)
        assert np.array_equal(p, p0) and np.array_equal(v, v0)
        assert len(eph.oem.segments) == 3
    assert parts > 25  # the windowed path was taken, not a whole read each time


def test_a_week_reads_a_few_percent_of_the_states(three_segments):
    read_oem_window(three_segments, EPOCH, EPOCH + DAY)
    oem = read_oem_window(three_segments, EPOCH + 10 * DAY, EPOCH + 17 * DAY)
    read = sum(len(s.t_tt) for s in oem.segments)
    total = sum(len(s.t_tt) for s in read_oem(three_segments).segments)
    assert read < 0.25 * total  # 7 days + two strides of 64 states, and 65 states of the others
    assert all(s.part is not None for s in oem.segments)
    # the states read carry the file's own line numbers
    whole = read_oem(three_segments).segments[0]
    seg = oem.segments[0]
    k = seg.part[0]
    assert np.array_equal(seg.data_lines, whole.data_lines[k:k + len(seg.t_tt)])
    assert np.array_equal(seg.pos_km, whole.pos_km[k:k + len(seg.t_tt)])


def test_a_query_outside_the_loaded_runs_reads_the_whole_file(three_segments):
    whole = OemEphemeris(read_oem(three_segments))
    read_oem_window(three_segments, EPOCH, EPOCH + DAY)
    eph = _window_eph(three_segments, EPOCH + 5 * DAY, EPOCH + 6 * DAY)
    assert eph.oem.segments[0].part is not None
    t = EPOCH + np.array([1.0, 12.3, 30.7]) * DAY
    assert np.array_equal(eph.state(t)[0], whole.state(t)[0])
    assert all(s.part is None for s in eph.oem.segments)


def test_scenario_window_uses_the_windowed_read(three_segments):
    eph = open_oem(three_segments, EPOCH + 3 * DAY, EPOCH + 4 * DAY)
    eph = open_oem(three_segments, EPOCH + 3 * DAY, EPOCH + 4 * DAY + 1.0)
    assert any(s.part is not None for s in eph.oem.segments)


def test_checks_apply_to_the_states_read(tmp_path):
    """A file changed in place after it was indexed (same size, same modification time, head
    and tail untouched): the windowed parse still refuses the outlier it reads, naming its line."""
    t = EPOCH + np.arange(0.0, 20 * DAY, 600.0)
    p, v = _orbit(t)
    path = write_oem(tmp_path / "w.oem", t, p, v, "INVENTED PROBE", "2026-901A", creation_tt=EPOCH)
    read_oem_window(path, EPOCH, EPOCH + DAY)  # indexed
    lines = path.read_text().split("\n")
    first = next(i for i, s in enumerate(lines) if s[:1].isdigit())
    k = first + 1440 + 5  # day 10, inside the window below
    fields = lines[k].split(" ")
    fields[1] = "9" + fields[1][1:]  # X from 1.5e6 km to 9.5e6 km: an outlier, same length
    lines[k] = " ".join(fields)
    st = os.stat(path)
    path.write_text("\n".join(lines))
    os.utime(path, ns=(st.st_atime_ns, st.st_mtime_ns))
    with pytest.raises(InputError) as err:
        read_oem_window(path, EPOCH + 9.5 * DAY, EPOCH + 11 * DAY)
    assert f":{k + 1}:" in str(err.value) and "does not follow" in str(err.value)
    assert np.all(read_oem_window(path, EPOCH + 15 * DAY, EPOCH + 16 * DAY).segments[0].pos_km[:, 0] < 2e6)


def test_an_edited_file_is_indexed_again(tmp_path):
    t = EPOCH + np.arange(0.0, 20 * DAY, 600.0)
    p, v = _orbit(t)
    path = write_oem(tmp_path / "e.oem", t, p, v, "INVENTED PROBE", "2026-901A", creation_tt=EPOCH)
    assert read_oem_window(path, EPOCH, EPOCH + DAY).segments[0].part is None  # first read: whole
    assert read_oem_window(path, EPOCH, EPOCH + DAY).segments[0].part is not None
    write_oem(path, t[:2000], p[:2000], v[:2000], "INVENTED PROBE", "2026-901A", creation_tt=EPOCH)
    oem = read_oem_window(path, EPOCH, EPOCH + 30 * DAY)
    assert oem.segments[0].part is None and len(oem.segments[0].t_tt) == 2000
