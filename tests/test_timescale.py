import numpy as np
import pytest
from hypothesis import given, strategies as st

from contactplan.errors import InputError
from contactplan.timescale import (
    day_of_year, format_doy, format_utc, parse_utc, tai_minus_utc, tdb_minus_tt, utc_days, utc_day_start,
)


def _astropy_tt_s(text):
    from astropy.time import Time

    t = Time(text, scale="utc", format="isot")
    return (t.tt.jd1 - 2451545.0) * 86400.0 + t.tt.jd2 * 86400.0


@pytest.mark.parametrize("text", [
    "2016-12-31T23:59:59.000",
    "2016-12-31T23:59:60.500",  # inside the leap second
    "2017-01-01T00:00:00.000",
    "1999-12-31T23:59:59.000",
    "2027-01-12T00:00:00.000",
    "2035-06-30T12:34:56.789",
])
def test_utc_to_tt_matches_astropy(text):
    # Source: astropy.time (ERFA dat/utctai) for leap seconds and TT = TAI + 32.184 s.
    assert parse_utc(text + "Z") == pytest.approx(_astropy_tt_s(text), abs=2e-6)


def test_leap_second_round_trip_and_length():
    # Source: IERS Bulletin C 52: a positive leap second at the end of 2016-12-31.
    a = parse_utc("2016-12-31T23:59:59Z")
    b = parse_utc("2017-01-01T00:00:00Z")
    assert b - a == pytest.approx(2.0, abs=1e-9)  # 23:59:59 -> 23:59:60 -> 00:00:00
    assert format_utc(a + 1.25) == "2016-12-31T23:59:60.250Z"
    assert tai_minus_utc(b) == 37.0 and tai_minus_utc(a) == 36.0


def test_second_60_only_in_leap_second():
    with pytest.raises(InputError, match="leap second"):
        parse_utc("2027-01-12T23:59:60Z")


def test_tdb_minus_tt_matches_astropy():
    # Source: astropy.time TDB (ERFA dtdb, full series) vs the USNO Circular 179 eq. 2.6 series.
    from astropy.time import Time

    for text in ["2027-01-12T00:00:00", "2027-04-01T00:00:00", "2027-09-15T06:00:00"]:
        t = Time(text, scale="tt")
        ref = (t.tdb.jd1 - t.jd1) * 86400.0 + (t.tdb.jd2 - t.jd2) * 86400.0
        tt = (t.jd1 - 2451545.0) * 86400.0 + t.jd2 * 86400.0
        assert float(tdb_minus_tt(tt)) == pytest.approx(ref, abs=3e-5)


def test_doy_forms():
    # Source: CCSDS 301.0-B-4 section 3.5.1 ASCII time code B (YYYY-DDDThh:mm:ss).
    t = parse_utc("2027-012T06:30:00Z")
    assert format_utc(t) == "2027-01-12T06:30:00.000Z"
    assert format_doy(t) == "2027-012T06:30:00Z"
    assert day_of_year(parse_utc("2028-12-31T00:00:00Z")) == 366
    with pytest.raises(InputError):
        parse_utc("2027-366T00:00:00Z")


@pytest.mark.parametrize("bad", ["", "yesterday", "2027-13-01T00:00:00Z", "2027-02-30T00:00:00Z",
                                 "2027-01-12T25:00:00Z", "2027-01-12T10:00:00+02:00", "1965-01-01T00:00:00Z"])
def test_bad_times_say_what_is_wrong(bad):
    with pytest.raises(InputError):
        parse_utc(bad)


def test_rounding_carries_into_next_day():
    t = parse_utc("2027-01-12T23:59:59.9996Z")
    assert format_utc(t) == "2027-01-13T00:00:00.000Z"


def test_utc_days_and_day_start():
    s = parse_utc("2027-01-12T05:00:00Z")
    e = parse_utc("2027-01-14T00:00:00Z")
    days = utc_days(s, e)
    assert [format_utc(d, 0) for d in days] == ["2027-01-12T00:00:00Z", "2027-01-13T00:00:00Z"]
    assert format_utc(utc_day_start(s), 0) == "2027-01-12T00:00:00Z"


@given(st.floats(min_value=0.0, max_value=40 * 365.25 * 86400.0))
def test_format_parse_round_trip(offset):
    # Millisecond text must read back to the same millisecond.
    t0 = parse_utc("2000-01-01T00:00:00Z")
    t = t0 + offset
    text = format_utc(t)
    assert abs(parse_utc(text) - t) <= 0.0005 + 1e-6
    assert format_utc(np.array([t]))[0] == text


@pytest.mark.parametrize("text", ["2027-01-12t06:30:00z", "2027-01-12t06:30:00Z", "2027-01-12T06:30:00z",
                                  "2027-012t06:30:00z", "2027-01-12 06:30:00Z"])
def test_lowercase_t_and_z_accepted(text):
    # RFC 3339 section 5.6 (NOTE): "T" and "Z" may alternatively be lower case
    want = parse_utc("2027-01-12T06:30:00Z")
    assert parse_utc(text) == want
    assert want == pytest.approx(_astropy_tt_s("2027-01-12T06:30:00.000"), abs=2e-6)  # astropy/ERFA


@pytest.mark.parametrize("bad", ["2027-01-12x06:30:00Z", "2027-01-12tt06:30:00Z", "2027-01-12t06:30:00zz"])
def test_other_separators_still_refused(bad):
    with pytest.raises(InputError, match="not a UTC time"):
        parse_utc(bad)


@given(st.floats(min_value=-20 * 365.25 * 86400.0, max_value=40 * 365.25 * 86400.0),
       st.sampled_from([0, 1, 3, 6]), st.booleans())
def test_scalar_formatting_matches_array_path(offset, decimals, doy):
    # The scalar fast path and the vectorised path are two implementations of one rule.
    t = parse_utc("2000-01-01T00:00:00Z") + offset
    assert format_utc(t, decimals, doy) == format_utc(np.array([t]), decimals, doy)[0]


@pytest.mark.parametrize("text", ["2016-12-31T23:59:59.999Z", "2016-12-31T23:59:60.000Z",
                                  "2016-12-31T23:59:60.9996Z", "2017-01-01T00:00:00.000Z",
                                  "2027-12-31T23:59:59.9996Z"])
def test_scalar_formatting_at_leap_second_and_day_edges(text):
    t = parse_utc(text)
    assert format_utc(t) == format_utc(np.array([t]))[0]
    assert format_doy(t, 3) == format_utc(np.array([t]), 3, True)[0]
