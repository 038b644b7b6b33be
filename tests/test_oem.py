"""CCSDS OEM reader/writer and the OEM ephemeris, checked against outside sources.

Test files under tests/data are laid out after the examples in the annex of
CCSDS 502.0-B-3 (Orbit Data Messages); the object and every number are invented.
The independent reader is the ``oem`` package from PyPI; epochs are compared
through astropy/ERFA time scales.
"""

from __future__ import annotations

import os

import numpy as np
import pytest

from contactplan.errors import InputError, OutOfSpanError
from contactplan.ephemeris.oem import OemEphemeris, frame_bias_matrix
from contactplan.io.oem import format_epochs, parse_epochs, read_oem, sample_ephemeris, write_oem
from contactplan.timescale import parse_utc

ANNEX_FILES = ["annex_two_segments.oem", "annex_accel_v3.oem", "annex_single.xml"]


def _astropy_tt_seconds(times):
    """astropy Time -> TT seconds since J2000 (two-part JD kept apart for precision)."""
    tt = times.tt
    return ((tt.jd1 - 2451545.0) + tt.jd2) * 86400.0


@pytest.mark.parametrize("name", ANNEX_FILES)
def test_annex_layout_read_equal_to_independent_reader(data_dir, name):
    import oem
    from astropy.time import Time

    ours = read_oem(data_dir / name)
    theirs = oem.OrbitEphemerisMessage.open(str(data_dir / name))  # independent CCSDS reader (PyPI "oem")
    segs = list(theirs.segments)
    assert len(ours.segments) == len(segs)
    for a, b in zip(ours.segments, segs):
        states = list(b.states)
        assert len(a) == len(states)
        np.testing.assert_array_equal(a.pos_km, np.array([s.position for s in states]))
        np.testing.assert_array_equal(a.vel_km_s, np.array([s.velocity for s in states]))
        if states[0].has_accel:
            np.testing.assert_array_equal(a.acc_km_s2, np.array([s.acceleration for s in states]))
        else:
            assert a.acc_km_s2 is None
        epochs = Time([s.epoch for s in states])
        ref = _astropy_tt_seconds(epochs)
        # TDB-TT: ours uses USNO Circular 179 eq. 2.6 (good to ~10 us), astropy the full ERFA dtdb series.
        tol = 2e-5 if a.time_system == "TDB" else 2e-6
        np.testing.assert_allclose(a.t_tt, ref, rtol=0, atol=tol)
        assert a.object_name == b.metadata["OBJECT_NAME"]
        assert a.center_name == b.metadata["CENTER_NAME"]
        assert a.ref_frame == b.metadata["REF_FRAME"]


def test_two_segments_metadata_gap_useable_covariance(data_dir):
    f = read_oem(data_dir / "annex_two_segments.oem")
    s1, s2 = f.segments
    assert f.version == "2.0" and f.encoding == "KVN"
    assert f.header["ORIGINATOR"] == "INVENTED OPS"
    assert f.comments[0].startswith("Invented test message")
    assert s1.comments == ["Coast arc before the invented trim manoeuvre."]
    assert (s1.interpolation, s1.interpolation_degree) == ("LAGRANGE", 5)
    assert (s2.interpolation, s2.interpolation_degree) == ("HERMITE", 3)
    # USEABLE_START/STOP honoured: 01:00 to 10:00 although data run 00:00 to 11:00
    assert s1.useable_start_tt == parse_utc("2027-01-12T01:00:00Z")
    assert s1.useable_stop_tt == parse_utc("2027-01-12T10:00:00Z")
    assert s2.covariance_count == 1
    assert s2.line == 35  # META_START of the second segment
    assert int(s1.data_lines[0]) == 22
    # gap between the segments, reported on the file and on the ephemeris
    gap = (parse_utc("2027-01-12T10:00:00Z"), parse_utc("2027-01-13T00:00:00Z"))
    assert f.gaps == [gap]
    eph = OemEphemeris(f)
    assert eph.gaps == [gap]
    assert eph.start_tt == gap[0] - 9 * 3600
    assert eph.end_tt == parse_utc("2027-01-13T11:00:00Z")
    with pytest.raises(OutOfSpanError, match="gap"):
        eph.state(parse_utc("2027-01-12T12:00:00Z"))
    with pytest.raises(OutOfSpanError, match="outside the covered span"):
        eph.state(parse_utc("2027-01-12T00:30:00Z"))  # before USEABLE_START_TIME
    eph.state([gap[0], gap[1]])  # both edges are covered


def test_xml_version_and_lines(data_dir):
    f = read_oem(data_dir / "annex_single.xml")
    assert f.encoding == "XML" and f.version == "2.0"
    assert f.segments[0].interpolation_degree == 7
    assert f.segments[0].comments == ["States of the invented probe."]
    assert int(f.segments[0].data_lines[0]) == 23  # line of the first <stateVector>


def test_states_on_nodes_reproduce_the_file(data_dir):
    f = read_oem(data_dir / "annex_two_segments.oem")
    eph = OemEphemeris(f)
    s = f.segments[1]
    p, v = eph.state(s.t_tt)
    np.testing.assert_allclose(p, s.pos_km, rtol=0, atol=1e-9)
    np.testing.assert_allclose(v, s.vel_km_s, rtol=0, atol=1e-12)


def test_frame_bias_matrix_against_erfa():
    import erfa

    rb, _, _ = erfa.bp06(2451545.0, 0.0)  # ERFA/SOFA bp06: IAU 2006 frame bias at J2000
    np.testing.assert_allclose(frame_bias_matrix(), rb, rtol=0, atol=1e-15)


def test_eme2000_file_is_rotated_to_icrf(data_dir, tmp_path):
    import erfa

    f = read_oem(data_dir / "annex_accel_v3.oem")
    seg = f.segments[0]
    assert seg.ref_frame == "EME2000" and seg.time_system == "TDB"
    eph = OemEphemeris(f)
    p, v = eph.state(seg.t_tt[2:4])
    rb, _, _ = erfa.bp06(2451545.0, 0.0)
    # v_ICRS = rb^T v_J2000 (ERFA bp06 documentation: rb rotates GCRS to mean J2000)
    expect = np.einsum("ji,nj->ni", rb, seg.pos_km[2:4])
    np.testing.assert_allclose(p, expect, rtol=0, atol=1e-8)
    # the bias is a few tens of milliarcseconds: a few hundred metres at 1.8e6 km
    shift = np.linalg.norm(p - seg.pos_km[2:4], axis=1)
    assert np.all((shift > 0.05) & (shift < 1.0))


@pytest.mark.parametrize("center,func", [("SUN", "sun_km"), ("EARTH BARYCENTER", "emb_km"), ("MOON", "moon_km")])
def test_center_moved_to_earth_with_de421(tmp_path, center, func):
    from contactplan.ephemeris import bodies

    t = parse_utc("2027-03-01T00:00:00Z") + np.arange(20) * 600.0
    p = np.tile([1000.0, 2000.0, 3000.0], (20, 1)) + np.arange(20)[:, None]
    v = np.tile([0.001, 0.0, 0.0], (20, 1))
    path = write_oem(tmp_path / "c.oem", t, p, v, "INVENTED PROBE", "2026-901A", center=center)
    eph = OemEphemeris(read_oem(path))
    cp, cv = getattr(bodies, func)(t[5:7], velocity=True)
    pp, vv = eph.state(t[5:7])
    np.testing.assert_allclose(pp, p[5:7] + cp, rtol=1e-13, atol=1e-6)
    np.testing.assert_allclose(vv, v[5:7] + cv, rtol=1e-12, atol=1e-9)


def test_solar_system_barycenter_center(tmp_path):
    from contactplan.ephemeris import bodies

    t = parse_utc("2027-03-01T00:00:00Z") + np.arange(10) * 600.0
    e, ev = bodies.earth_barycentric_km(t, velocity=True)
    path = write_oem(tmp_path / "ssb.oem", t, e + 1.5e6, ev, "INVENTED PROBE", "2026-901A",
                     center="SOLAR SYSTEM BARYCENTER")
    p, v = OemEphemeris(read_oem(path)).state(t[3])
    np.testing.assert_allclose(p, [[1.5e6, 1.5e6, 1.5e6]], rtol=0, atol=1e-6)
    np.testing.assert_allclose(v, [[0.0, 0.0, 0.0]], atol=1e-9)


# ------------------------------------------------------------------ epochs
def test_epochs_against_astropy_utc_and_leap_second():
    from astropy.time import Time

    texts = ["2016-12-31T23:59:59.000", "2016-12-31T23:59:60.500", "2017-01-01T00:00:00",
             "2027-01-12T06:30:15.123456789", "2027-012T06:30:15.25Z", "1999-12-31T23:59:59.999"]
    ours = parse_epochs(texts, "UTC")
    iso = [t.replace("Z", "") for t in texts]
    iso[4] = "2027-01-12T06:30:15.25"
    ref = _astropy_tt_seconds(Time(iso, scale="utc", format="isot", precision=9))  # astropy/ERFA leap seconds
    np.testing.assert_allclose(ours, ref, rtol=0, atol=1e-6)
    # the leap second lasts one second: 23:59:60.5 is 1.5 s after 23:59:59.0 (IERS Bulletin C 52)
    assert ours[1] - ours[0] == pytest.approx(1.5, abs=1e-6)


@pytest.mark.parametrize("scale", ["TAI", "TT", "GPS", "TDB"])
def test_epochs_other_scales_against_astropy(scale):
    from astropy.time import Time

    texts = ["2027-01-12T00:00:00.000", "2026-06-30T12:34:56.789"]
    ours = parse_epochs(texts, scale)
    if scale == "GPS":  # GPS = TAI - 19 s (IS-GPS-200; common practice)
        ref = _astropy_tt_seconds(Time(texts, scale="tai")) + 19.0
    else:
        ref = _astropy_tt_seconds(Time(texts, scale=scale.lower()))
    np.testing.assert_allclose(ours, ref, rtol=0, atol=2e-5 if scale == "TDB" else 1e-6)


def test_epoch_errors_name_the_index():
    from contactplan.io.oem import _EpochError

    for bad in ["2027-13-01T00:00:00", "2027-02-29T00:00:00", "2027-01-01T24:00:00", "2027-01-01 00:00:00",
                "2027-01-01T00:00:60", "2027-366T00:00:00", "x", "2027-01-01T00:00:00.", "1969-01-01T00:00:00"]:
        with pytest.raises(_EpochError) as exc:
            parse_epochs(["2027-01-01T00:00:00", bad], "UTC")
        assert exc.value.index == 1, bad


# ------------------------------------------------------------------ writer
def _orbit(n=200, step=600.0):
    t0 = parse_utc("2027-01-12T00:00:00Z")
    t = t0 + np.arange(n) * step + 0.123456
    w = 2 * np.pi / (180 * 86400.0)
    x = w * (t - t0)
    p = np.stack([1.5e6 * np.cos(x), 1.5e6 * np.sin(x) / 3.0, 2.9e5 * np.sin(x + 1.0)], 1)
    v = np.stack([-1.5e6 * w * np.sin(x), 1.5e6 * w * np.cos(x) / 3.0, 2.9e5 * w * np.cos(x + 1.0)], 1)
    return t, p, v


@pytest.mark.parametrize("scale", ["UTC", "TT", "TAI", "GPS"])
def test_write_read_round_trip_to_the_last_digit(tmp_path, scale):
    t, p, v = _orbit()
    t = t + np.random.default_rng(3).uniform(0, 1e-3, t.size)  # epochs off any decimal grid
    path = write_oem(tmp_path / "rt.oem", t, p, v, "INVENTED PROBE", "2026-901A", time_system=scale,
                     comments=["invented"], creation_tt=t[0])
    f = read_oem(path)
    s = f.segments[0]
    np.testing.assert_array_equal(s.t_tt, t)  # bit for bit
    np.testing.assert_array_equal(s.pos_km, p)
    np.testing.assert_array_equal(s.vel_km_s, v)
    assert s.time_system == scale and f.comments == ["invented"]
    # text -> read -> write gives the same text
    again = write_oem(tmp_path / "rt2.oem", s.t_tt, s.pos_km, s.vel_km_s, "INVENTED PROBE", "2026-901A",
                      time_system=scale, comments=["invented"], creation_tt=t[0])
    assert again.read_text() == path.read_text()


def test_write_round_trip_across_a_leap_second(tmp_path):
    t0 = parse_utc("2016-12-31T23:59:58Z")
    t = t0 + np.arange(8) * 0.5
    p = np.ones((8, 3)) * np.arange(8)[:, None] + [0.0, 1.5e6, 0.0]  # far from the geocentre, as a probe is
    path = write_oem(tmp_path / "leap.oem", t, p, p * 0.0 + 1.0, "INVENTED PROBE", "2026-901A", creation_tt=t0)
    assert "2016-12-31T23:59:60.500" in path.read_text()
    np.testing.assert_array_equal(read_oem(path).segments[0].t_tt, t)


def test_independent_reader_reads_what_we_write(tmp_path):
    import oem

    t, p, v = _orbit(50)
    path = write_oem(tmp_path / "w.oem", t, p, v, "INVENTED PROBE", "2026-901A", creation_tt=t[0])
    theirs = oem.OrbitEphemerisMessage.open(str(path))  # independent CCSDS reader (PyPI "oem")
    states = [s for seg in theirs.segments for s in seg.states]
    np.testing.assert_array_equal(np.array([s.position for s in states]), p)
    np.testing.assert_array_equal(np.array([s.velocity for s in states]), v)
    from astropy.time import Time

    ref = _astropy_tt_seconds(Time([s.epoch for s in states]))
    np.testing.assert_allclose(ref, t, rtol=0, atol=2e-6)  # that reader keeps microseconds


def test_sample_and_write_any_ephemeris(tmp_path, data_dir):
    from contactplan.io.oem import write_ephemeris_oem

    eph = OemEphemeris(read_oem(data_dir / "annex_single.xml"))
    t, p, v = sample_ephemeris(eph, eph.start_tt, eph.end_tt, 1000.0)
    assert t[0] == eph.start_tt and t[-1] == eph.end_tt and np.all(np.diff(t) <= 1000.0)
    path = write_ephemeris_oem(tmp_path / "s.oem", eph, eph.start_tt, eph.end_tt, 1000.0, object_id="2026-901A")
    back = OemEphemeris(read_oem(path))
    q = np.linspace(eph.start_tt, eph.end_tt, 7)
    np.testing.assert_allclose(back.state(q)[0], eph.state(q)[0], rtol=0, atol=1e-6)
    assert back.name.startswith("INVENTED PROBE")


def test_writer_refuses_bad_arrays(tmp_path):
    t, p, v = _orbit(10)
    with pytest.raises(InputError, match="increase"):
        write_oem(tmp_path / "x.oem", t[::-1], p, v, "A", "B")
    p[3, 1] = np.nan
    with pytest.raises(InputError, match="finite"):
        write_oem(tmp_path / "x.oem", t, p, v, "A", "B")
    assert not (tmp_path / "x.oem").exists()


def test_format_epochs_choose_fewest_decimals():
    t = parse_utc("2027-01-12T00:00:00Z") + np.array([0.0, 60.0])
    assert format_epochs(t) == ["2027-01-12T00:00:00.000", "2027-01-12T00:01:00.000"]
    assert format_epochs(t + 1e-7)[0] == "2027-01-12T00:00:00.000000119"


def test_tdb_round_trip_within_a_nanosecond(tmp_path):
    t, p, v = _orbit(20)
    path = write_oem(tmp_path / "tdb.oem", t, p, v, "INVENTED PROBE", "2026-901A", time_system="TDB", creation_tt=t[0])
    back = read_oem(path).segments[0].t_tt
    np.testing.assert_allclose(back, t, rtol=0, atol=1e-9)


def test_crlf_and_byte_order_mark_read_alike(tmp_path, data_dir):
    raw = (data_dir / "annex_two_segments.oem").read_bytes()
    crlf = tmp_path / "crlf.oem"
    crlf.write_bytes(b"\xef\xbb\xbf" + raw.replace(b"\n", b"\r\n"))
    a, b = read_oem(data_dir / "annex_two_segments.oem"), read_oem(crlf)
    for sa, sb in zip(a.segments, b.segments):
        np.testing.assert_array_equal(sa.t_tt, sb.t_tt)
        np.testing.assert_array_equal(sa.pos_km, sb.pos_km)
        np.testing.assert_array_equal(sa.data_lines, sb.data_lines)


def _two_segment_text(first, second):
    """KVN with two segments given as (start, stop, epochs) in whole hours of 2027-01-12 (invented)."""
    out = ["CCSDS_OEM_VERS = 2.0", "CREATION_DATE = 2027-01-11T00:00:00", "ORIGINATOR = INVENTED OPS"]
    for n, (hours, offset_km) in enumerate((first, second)):
        out += ["META_START", "OBJECT_NAME = INVENTED PROBE", "OBJECT_ID = 2026-901A", "CENTER_NAME = EARTH",
                "REF_FRAME = ICRF", "TIME_SYSTEM = UTC", f"START_TIME = 2027-01-12T{hours[0]:02d}:00:00",
                f"STOP_TIME = 2027-01-12T{hours[-1]:02d}:00:00", "INTERPOLATION_DEGREE = 3", "META_STOP"]
        out += [f"2027-01-12T{h:02d}:00:00 {offset_km + h} 1500000 0 {1 / 3600} 0 0" for h in hours]
    return ("\n".join(out) + "\n").encode()


def test_overlapping_segments_later_takes_over():
    from contactplan.io.oem import parse_oem_bytes

    # segment 2 (positions offset by 1000 km) lies inside segment 1: used from its start to its stop
    f = parse_oem_bytes(_two_segment_text((range(0, 12), 0.0), (range(4, 8), 1000.0)), "overlap.oem")
    eph = OemEphemeris(f)
    assert eph.gaps == [] and f.gaps == []
    t = parse_utc("2027-01-12T00:00:00Z") + np.array([3.5, 4.0, 6.5, 7.0, 7.5]) * 3600.0
    x = eph.state(t)[0][:, 0]
    # at a boundary instant the piece that starts there is used (04:00 segment 2, 07:00 segment 1 again)
    np.testing.assert_allclose(x, [3.5, 1004.0, 1006.5, 7.0, 7.5], atol=1e-9)


def test_segment_gap_is_refused_inside_and_accepted_at_edges():
    from contactplan.io.oem import parse_oem_bytes

    f = parse_oem_bytes(_two_segment_text((range(0, 6), 0.0), (range(8, 14), 0.0)), "gap.oem")
    eph = OemEphemeris(f)
    t5, t8 = parse_utc("2027-01-12T05:00:00Z"), parse_utc("2027-01-12T08:00:00Z")
    assert eph.gaps == [(t5, t8)]
    np.testing.assert_allclose(eph.state([t5, t8])[0][:, 0], [5.0, 8.0], atol=1e-9)
    assert not eph.covers(t5 + 1.0)
    with pytest.raises(OutOfSpanError, match="2027-01-12T06:00:00Z"):
        eph.state([t5 - 1.0, t5 + 3600.0])


def test_hermite_segment_interpolates_between_nodes(data_dir):
    f = read_oem(data_dir / "annex_two_segments.oem")
    s = f.segments[1]
    assert s.interpolation == "HERMITE"
    eph = OemEphemeris(f)
    # the file holds an invented smooth orbit; midpoints agree with a degree-7 Lagrange fit of the same nodes
    from contactplan.ephemeris.interp import lagrange

    mid = (s.t_tt[3:6] + s.t_tt[4:7]) / 2
    ref, _ = lagrange(s.t_tt, s.pos_km, s.vel_km_s, mid, 7)
    np.testing.assert_allclose(eph.state(mid)[0], ref, rtol=0, atol=1e-4)  # numbers in the file carry 1 mm


# ------------------------------------------------------------------ epoch parser properties
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@settings(max_examples=200, deadline=None)
@given(st.datetimes(min_value=__import__("datetime").datetime(1972, 1, 1),
                    max_value=__import__("datetime").datetime(2049, 12, 31)),
       st.sampled_from(["UTC", "TAI", "TT", "GPS", "TDB"]), st.booleans())
def test_bulk_epoch_parser_agrees_with_parse_utc(when, scale, doy):
    # two independent code paths in this project: the per-text parser and the vectorised one
    text = when.strftime("%Y-%jT%H:%M:%S.%f" if doy else "%Y-%m-%dT%H:%M:%S.%f")
    assert parse_epochs([text], scale)[0] == pytest.approx(parse_utc(text, scale=scale), abs=2e-7)


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=40))
def test_bulk_epoch_parser_refuses_cleanly(text):
    from contactplan.io.oem import _EpochError

    try:
        parse_epochs([text], "UTC")
    except _EpochError as exc:
        assert exc.index == 0


def test_writer_refuses_epochs_it_cannot_write(tmp_path):
    p = np.zeros((2, 3))
    with pytest.raises(InputError, match="1972"):
        write_oem(tmp_path / "old.oem", np.array([-1.0e9, -0.9e9]), p, p, "A", "B")  # 1968, UTC undefined
    with pytest.raises(InputError, match="two centuries"):
        write_oem(tmp_path / "far.oem", np.array([0.0, 1e12]), p, p, "A", "B")


def test_built_in_orbit_through_an_oem_file_agrees(tmp_path, minimal_path):
    """Sample the built-in halo orbit every 10 min, write, read, interpolate: within a metre."""
    from contactplan.ephemeris import ephemeris_for
    from contactplan.io.oem import write_ephemeris_oem
    from contactplan.scenario import load_scenario

    sc = load_scenario(minimal_path)
    eph = ephemeris_for(sc)
    path = write_ephemeris_oem(tmp_path / "wk.oem", eph, sc.start_tt, sc.end_tt, 600.0,
                               object_name="INVENTED PROBE", object_id="2026-901A")
    back = OemEphemeris(read_oem(path))
    t = np.random.default_rng(7).uniform(sc.start_tt, sc.end_tt, 2000)
    p0, v0 = eph.state(t)
    p1, v1 = back.state(t)
    assert np.abs(p1 - p0).max() < 1e-3  # km
    assert np.abs(v1 - v0).max() < 1e-8  # km/s


def test_xml_variants_read_alike(data_dir):
    """Version 3.0, a default namespace, unit attributes and a covariance block change nothing."""
    from contactplan.io.oem import parse_oem_bytes

    text = (data_dir / "annex_single.xml").read_text()
    base = read_oem(data_dir / "annex_single.xml").segments[0]
    v3 = (text.replace('version="2.0">', 'version="3.0" xmlns="urn:invented:ndm">')
          .replace("<X>", '<X units="km">').replace("<Z_DOT>", '<Z_DOT units="km/s">')
          .replace("      </data>", "        <covarianceMatrix><EPOCH>2027-01-12T00:00:00</EPOCH>"
                   "<CX_X>1.0e-4</CX_X></covarianceMatrix>\n      </data>"))
    f = parse_oem_bytes(v3.encode(), "v3.xml")
    s = f.segments[0]
    assert f.version == "3.0" and s.covariance_count == 1
    np.testing.assert_array_equal(s.t_tt, base.t_tt)
    np.testing.assert_array_equal(s.pos_km, base.pos_km)
    np.testing.assert_array_equal(s.vel_km_s, base.vel_km_s)
    np.testing.assert_array_equal(s.data_lines, base.data_lines)
    assert s.acc_km_s2 is None
    acc = v3.replace("</Z_DOT>", "</Z_DOT><X_DDOT>1e-9</X_DDOT><Y_DDOT>2e-9</Y_DDOT><Z_DDOT>3e-9</Z_DDOT>")
    s = parse_oem_bytes(acc.encode(), "acc.xml").segments[0]
    np.testing.assert_array_equal(s.acc_km_s2, np.tile([1e-9, 2e-9, 3e-9], (len(s), 1)))


def test_out_of_span_error_names_the_file(data_dir, tmp_path, oem_scenario):
    """The error leads with the OEM file (``FILE: asked for ...``), like every other input error."""
    import shutil
    import subprocess
    import sys

    path = tmp_path / "part.oem"
    shutil.copy(data_dir / "annex_two_segments.oem", path)
    eph = OemEphemeris(read_oem(path))
    assert eph.path == str(path)
    with pytest.raises(OutOfSpanError) as exc:
        eph.state(parse_utc("2027-01-12T12:00:00Z"))  # in the gap
    assert exc.value.path == str(path)
    assert str(exc.value).startswith(f"{path}: asked for 2027-01-12T12:00:00Z, outside the covered span ")
    assert "part.oem (" not in str(exc.value)  # the object name no longer takes the file's place
    # and the command line prints it as one line: contactplan: error: FILE: asked for ...
    oem_scenario("part.oem")
    proc = subprocess.run([sys.executable, "-m", "contactplan", "export", str(tmp_path / "week.toml"),
                           "--out", str(tmp_path / "x.oem"), "--start", "2027-01-12T00:00:00Z",
                           "--end", "2027-01-12T02:00:00Z"], capture_output=True, text=True,
                          env=dict(os.environ, PYTHONWARNINGS="ignore::UserWarning"))  # the scenario's unknown keys
    assert proc.returncode == 2
    assert proc.stderr.startswith(f"contactplan: error: {path}: asked for 2027-01-12T00:00:00Z, outside the "
                                  "covered span "), proc.stderr
    assert len(proc.stderr.strip().splitlines()) == 1
