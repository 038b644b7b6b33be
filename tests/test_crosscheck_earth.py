"""Earth orientation and time-table edges against astropy: station places in GCRS, EOP past its end,
leap-second table expiry, and no network access while any of it runs."""

from __future__ import annotations

import socket
import warnings

import numpy as np
import pytest

from contactplan import data
from contactplan.geometry.earth import EarthRotation, station_itrs_km
from contactplan.timescale import DAY_S, parse_utc, tai_minus_utc

# Invented stations: mid latitude, southern, and one at each pole.
STATIONS = [(61.85, 14.62, 410.0), (-34.05, -69.40, 1450.0), (90.0, 0.0, 0.0), (-90.0, 37.0, 2800.0)]


@pytest.fixture
def no_network(monkeypatch):
    """Any attempt to open a connection fails the test (nothing may download)."""
    def refuse(*args, **kwargs):
        raise AssertionError(f"network access attempted: {args!r}")

    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)
    monkeypatch.setattr(socket, "getaddrinfo", refuse)


def _astropy_gcrs_km(lat, lon, h, t_tt):
    import astropy.units as u
    from astropy.coordinates import EarthLocation
    from astropy.time import Time

    loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, h * u.m, ellipsoid="WGS84")
    ot = Time(2451545.0, np.atleast_1d(t_tt) / DAY_S, format="jd", scale="tt")
    return loc.get_gcrs(ot).cartesian.xyz.to_value(u.km).T


@pytest.mark.parametrize("epoch", ["2026-03-01T06:00:00Z", "2026-09-30T18:30:00Z", "2027-01-15T12:00:00Z",
                                   "2027-06-01T00:00:00Z"])
def test_station_gcrs_positions_match_astropy_inside_the_eop_table(epoch, no_network):
    # Reference: astropy 8 EarthLocation.get_gcrs (ERFA, IAU 2006/2000A, same packaged IERS-A values).
    t = parse_utc(epoch) + np.array([0.0, 1234.5, 40000.0])
    m = EarthRotation(t).matrix()
    for lat, lon, h in STATIONS:
        ours = np.einsum("nji,j->ni", m, station_itrs_km(lat, lon, h))
        ref = _astropy_gcrs_km(lat, lon, h, t)
        # 5 cm: the 12-h interpolation of nutation and polar motion (under 0.01", see geometry.earth)
        assert np.max(np.linalg.norm(ours - ref, axis=1)) < 5e-5, (epoch, lat)


def test_past_the_eop_table_one_warning_in_words_and_no_download(monkeypatch, no_network):
    # Past the end of the packaged predictions both sides hold UT1-UTC; for polar motion astropy falls back
    # to a long-term mean while the engine holds the last predicted values: a few metres at the station
    # (0.2" of pole offset is about 6 m, from memory), harmless for antennas looking 1.5 million km away.
    monkeypatch.setattr(data, "_warned_eop", False)
    last = data.eop_table()["mjd_utc"][-1]
    # fresh epochs (not cached by other tests): 2029 and 2031, at odd hours
    epochs = [parse_utc("2029-06-01T03:17:00Z"), parse_utc("2031-02-11T21:43:00Z")]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        mats = [EarthRotation(np.array([t])).matrix()[0] for t in epochs]
        data.earth_orientation(np.array([last + 500.0, last + 900.0]))
    eop = [w for w in caught if issubclass(w.category, data.EOPWarning)]
    assert len(eop) == 1
    text = str(eop[0].message)
    assert "Earth-orientation predictions end" in text and "last values" in text
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for t, m in zip(epochs, mats):
            lat, lon, h = STATIONS[0]
            ours = m.T @ station_itrs_km(lat, lon, h)
            ref = _astropy_gcrs_km(lat, lon, h, t)[0]
            assert np.linalg.norm(ours - ref) < 0.015  # km


def test_leap_second_table_expiry_warns_once_and_holds_the_last_offset(monkeypatch, no_network):
    # The packaged table carries its expiry date; past it TAI-UTC is held at its last value, as astropy/ERFA
    # do (ERFA dat, "dubious year" beyond its table), and the geometry says so once, in words.
    import erfa

    expiry = data.leap_second_expiry_mjd()
    mjd, dat, text = data.leap_second_table()
    assert expiry is not None and expiry > mjd[-1]
    later = parse_utc("2030-01-01T00:00:00Z")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = erfa.dat(2030, 1, 1, 0.0)  # Reference: ERFA dat (its own built-in table)
    assert float(tai_minus_utc(later)) == dat[-1] == ref
    monkeypatch.setattr(data, "_warned_leap", False)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        data.earth_orientation(np.array([expiry - 10.0]))  # before: silent
        data.earth_orientation(np.array([expiry + 10.0]))
        data.earth_orientation(np.array([expiry + 400.0]))
    leap = [w for w in caught if issubclass(w.category, data.LeapSecondWarning)]
    assert len(leap) == 1
    assert text in str(leap[0].message) and "no new leap second" in str(leap[0].message)


def test_astropy_is_configured_offline():
    from astropy.utils import iers
    from astropy.utils.data import conf

    data.configure_astropy()
    assert iers.conf.auto_download is False and conf.allow_internet is False


def test_cli_past_the_leap_second_table_says_so_once_and_stays_offline(monkeypatch, capsys, no_network):
    # A window past the leap-second table's expiry (fresh dates, so no cached Earth-orientation nodes):
    # the pass table is still produced, with one plain warning line and no network access.
    from contactplan.cli import main
    from contactplan.paths import demo_scenario

    monkeypatch.setattr(data, "_warned_leap", False)
    code = main(["passes", str(demo_scenario()), "--start", "2027-08-20T00:00:00Z",
                 "--end", "2027-08-21T00:00:00Z", "--station", "SLM"])
    out, err = capsys.readouterr()
    assert code == 0 and "SLM" in out
    lines = [ln for ln in err.splitlines() if "leap-second table" in ln]
    assert len(lines) == 1 and lines[0].startswith("contactplan: warning:")
