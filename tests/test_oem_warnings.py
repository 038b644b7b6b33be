"""Compromises the OEM reader makes reach the user as one plain warning line."""

import subprocess
import sys

import numpy as np
import pytest

from contactplan.ephemeris import open_oem
from contactplan.ephemeris.oem import OemWarning
from contactplan.io.oem import write_oem
from contactplan.timescale import parse_utc


def _short_oem(path):
    # Four states with the default Lagrange degree 7 need the degree lowered (CCSDS 502.0-B-3 sec. 5.2.2:
    # the interpolation degree is a recommendation for the user of the data).
    t = parse_utc("2027-01-12T00:00:00Z") + np.arange(4) * 600.0
    pos = np.column_stack([1.5e6 + 0.0 * t, 1000.0 + 0.1 * (t - t[0]), 0.0 * t])
    vel = np.column_stack([0.0 * t, 0.1 + 0.0 * t, 0.0 * t])
    write_oem(path, t, pos, vel, "INVENTED PROBE", "2026-999A")
    text = path.read_text()
    assert "INTERPOLATION_DEGREE = 3" in text  # the writer fits the degree to the states it has
    path.write_text(text.replace("INTERPOLATION_DEGREE = 3", "INTERPOLATION_DEGREE = 7"))
    return path


def test_lowered_degree_is_a_warning(tmp_path):
    path = _short_oem(tmp_path / "short.oem")
    with pytest.warns(OemWarning, match="degree lowered"):
        eph = open_oem(path)
    assert eph.state(np.array([eph.start_tt]))[0].shape == (1, 3)


def test_cli_prints_one_plain_warning_line(tmp_path):
    _short_oem(tmp_path / "short.oem")
    scen = tmp_path / "s.toml"
    scen.write_text(
        '[scenario]\nname = "w"\nstart = "2027-01-12T00:00:00Z"\nend = "2027-01-12T00:30:00Z"\n'
        '[spacecraft]\nname = "p"\nephemeris = { oem = "short.oem" }\n'
        '[[stations]]\nid = "A"\nlatitude_deg = 10.0\nlongitude_deg = 20.0\n'
    )
    proc = subprocess.run([sys.executable, "-m", "contactplan", "passes", str(scen)],
                          capture_output=True, text=True)
    assert proc.returncode == 0, proc.stderr
    lines = [ln for ln in proc.stderr.splitlines() if "degree lowered" in ln]
    assert len(lines) == 1 and lines[0].startswith("contactplan: warning: ")
    assert "Traceback" not in proc.stderr


def test_a_hole_inside_a_segment_is_warned_naming_the_lines():
    """Hours of states missing inside one segment: a warning naming both lines (GAP_FACTOR x median)."""
    import numpy as np

    from contactplan.io.oem import GAP_FACTOR, parse_oem_bytes

    hours = [0, 1, 2, 3, 4, 9, 10, 11]  # 5 h missing between 04:00 and 09:00 (invented probe)
    lines = ["CCSDS_OEM_VERS = 2.0", "CREATION_DATE = 2027-01-11T00:00:00", "ORIGINATOR = INVENTED OPS",
             "META_START", "OBJECT_NAME = INVENTED PROBE", "OBJECT_ID = 2026-901A", "CENTER_NAME = EARTH",
             "REF_FRAME = ICRF", "TIME_SYSTEM = UTC", "START_TIME = 2027-01-12T00:00:00",
             "STOP_TIME = 2027-01-12T11:00:00", "META_STOP"]
    lines += [f"2027-01-12T{h:02d}:00:00 {1.5e6 + h * 3.6} 0 0 0.001 0 0" for h in hours]
    f = parse_oem_bytes(("\n".join(lines) + "\n").encode(), "hole.oem")
    assert GAP_FACTOR == 10.0
    # median spacing 3600 s, the hole 18000 s: 5 times, under the factor: no warning
    assert not any("apart" in w for w in f.warnings)
    hours = list(range(0, 12)) + [23]  # 12 h hole after 12 hourly states
    lines = lines[:12] + [f"2027-01-12T{h:02d}:00:00 {1.5e6 + h * 3.6} 0 0 0.001 0 0" for h in hours]
    lines[10] = "STOP_TIME = 2027-01-12T23:00:00"
    f = parse_oem_bytes(("\n".join(lines) + "\n").encode(), "hole.oem")
    msgs = [w for w in f.warnings if "apart" in w]
    assert msgs == ["segment at line 4: states at lines 24 and 25 are 43200 s apart, more than 10 times the "
                    "median spacing of 3600 s: the orbit is interpolated across the hole; split the segment if "
                    "data are missing"]
    assert np.all(np.diff(f.segments[0].t_tt) > 0)
