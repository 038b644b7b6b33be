"""The demo orbit handed over as a CCSDS OEM (CCSDS 502.0-B-3), the way flight dynamics would deliver it:
our reader and interpolator against the independent `oem` package (PyPI), and the passes it gives."""

from __future__ import annotations

import numpy as np
import pytest

from contactplan.ephemeris import ephemeris_for
from contactplan.ephemeris.oem import OemEphemeris
from contactplan.geometry.passes import find_passes
from contactplan.io.oem import read_oem, write_ephemeris_oem
from contactplan.paths import demo_scenario
from contactplan.scenario.load import load_scenario
from contactplan.timescale import format_utc


@pytest.fixture(scope="module")
def handed_over(tmp_path_factory):
    sc = load_scenario(demo_scenario())
    halo = ephemeris_for(sc)
    path = write_ephemeris_oem(tmp_path_factory.mktemp("oem") / "probe.oem", halo, sc.start_tt - 86400.0,
                               sc.end_tt + 86400.0, 3600.0, object_id="2026-901A")
    return sc, halo, path, OemEphemeris(read_oem(path))


def test_interpolated_states_match_the_independent_oem_reader(handed_over):
    # Reference: the `oem` package (independent CCSDS OEM reader; Lagrange interpolation as the header
    # says, degree 7), at instants between the hourly nodes, in UTC through astropy Time.
    import oem
    from astropy.time import Time

    sc, halo, path, ours = handed_over
    seg = list(oem.OrbitEphemerisMessage.open(str(path)).segments)[0]
    t = sc.start_tt + np.linspace(1000.3, 6.5 * 86400.0, 61)
    epochs = Time(format_utc(t, decimals=6), scale="utc")
    ref_p = np.array([seg(e).position for e in epochs])
    ref_v = np.array([seg(e).velocity for e in epochs])
    p, v = ours.state(t)
    assert np.max(np.linalg.norm(p - ref_p, axis=1)) < 1e-5  # km: a centimetre
    assert np.max(np.linalg.norm(v - ref_v, axis=1)) < 1e-10  # km/s
    # and the hourly OEM reproduces the built-in orbit it was sampled from (measured: well under a metre)
    p0, v0 = halo.state(t)
    assert np.max(np.linalg.norm(p - p0, axis=1)) < 1e-3
    assert np.max(np.linalg.norm(v - v0, axis=1)) < 1e-8


def test_passes_from_the_oem_equal_passes_from_the_built_in_orbit(handed_over):
    sc, halo, _, ours = handed_over
    a = find_passes(sc, halo)
    b = find_passes(sc, ours)
    assert len(a) == len(b) == 36
    for p, q in zip(a, b):
        assert p.station == q.station and p.clipped_start == q.clipped_start and p.clipped_end == q.clipped_end
        assert abs(p.aos_tt - q.aos_tt) < 0.02 and abs(p.los_tt - q.los_tt) < 0.02
        assert abs(p.max_elevation_deg - q.max_elevation_deg) < 1e-6
