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
