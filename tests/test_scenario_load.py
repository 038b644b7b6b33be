"""Scenario loading: the contract in docs/scenario.md, validated field by field."""

import pytest

from contactplan.errors import InputError
from contactplan.paths import demo_scenario
from contactplan.scenario import load_scenario, parse_text
from contactplan.timescale import format_utc, parse_utc


def test_minimal_scenario_values(minimal_path):
    sc = load_scenario(minimal_path)
    assert sc.name == "Week 03"
    assert format_utc(sc.start_tt, 0) == "2027-01-12T00:00:00Z"
    assert format_utc(sc.end_tt, 0) == "2027-01-19T00:00:00Z"  # written as day of year 2027-019
    nrv = sc.station("NRV")
    assert nrv.latitude_deg == 47.35 and nrv.horizon_mask[1] == [60.0, 14.0]
    assert nrv.g_over_t_dbk == 50.0 and nrv.setup_min == 45 and nrv.teardown_min == 15
    assert nrv.outages[0].reason == "maintenance"
    assert sc.station("KAL").g_over_t_dbk is None and not sc.station("KAL").takes_downlink
    assert sc.spacecraft.link.rates_kbps == [250, 1000, 4000, 16000, 28000]
    assert sc.spacecraft.recorder.capacity_gbit == 500.0
    assert sc.requirements.ranging_per_day_min == 1


def test_series_expands_every_21_days(minimal_path):
    sc = load_scenario(minimal_path)
    burns = [a for a in sc.activities if a.kind == "burn"]
    assert [b.id for b in burns] == ["SK-01", "SK-02", "SK-03"]
    assert burns[1].start_tt - burns[0].start_tt == pytest.approx(21 * 86400.0)
    assert format_utc(burns[0].monitor_span_tt[0], 0) == "2027-01-15T13:30:00Z"
    assert format_utc(burns[0].keepout_span_tt[1], 0) == "2027-01-15T14:30:00Z"


def test_demo_scenario_loads():
    sc = load_scenario(demo_scenario())
    assert len(sc.stations) == 5
    assert any(a.kind == "burn" for a in sc.activities)
    assert sc.spacecraft.ephemeris.kind == "libration"


BASE = """
[scenario]
name = "x"
start = "2027-01-12T00:00:00Z"
end = "2027-01-13T00:00:00Z"
[spacecraft]
name = "p"
ephemeris = { libration = { epoch = "2027-01-01T00:00:00Z" } }
"""


@pytest.mark.parametrize("extra, where, words", [
    ('[[stations]]\nid="A"\nlatitude_deg=95\nlongitude_deg=0\n', "stations[A].latitude_deg", "out of range"),
    ('[[stations]]\nid="A"\nlatitude_deg=10\nlongitude_deg=0\nhorizon_mask=[[400.0, 5.0]]\n',
     "stations[A].horizon_mask[1]", "azimuth"),
    ('[[stations]]\nid="A"\nlatitude_deg=10\nlongitude_deg=0\nhorizon_mask=[[90.0, 5.0],[10.0,3.0]]\n',
     "stations[A].horizon_mask[2]", "sort"),
    ('[[stations]]\nid="A"\nlatitude_deg=nan\nlongitude_deg=0\n', "stations[A].latitude_deg", "finite"),
    ('[[stations]]\nid="A"\nlatitude_deg="north"\nlongitude_deg=0\n', "stations[A].latitude_deg", "number"),
    ('[[bookings]]\nid="B1"\nstation="ZZ"\nstart="2027-01-12T01:00:00Z"\nend="2027-01-12T02:00:00Z"\n',
     "bookings[B1].station", "no station"),
    ('[[activities]]\nid="S"\nkind="dance"\nstart="2027-01-12T01:00:00Z"\nduration_min=3\n',
     "activities[S].kind", "not one of"),
])
def test_bad_values_name_the_field(extra, where, words):
    with pytest.raises(InputError) as exc:
        parse_text(BASE + extra, path=None)
    assert exc.value.where == where
    assert words in exc.value.message


def test_toml_syntax_error_gives_line(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text('[scenario]\nname = "x"\nstart = \n')
    with pytest.raises(InputError) as exc:
        load_scenario(p)
    assert str(exc.value).startswith(f"{p}:3: not valid TOML")


def test_missing_section_and_window_order():
    with pytest.raises(InputError, match="spacecraft: missing section"):
        parse_text('[scenario]\nname="x"\nstart="2027-01-12T00:00:00Z"\nend="2027-01-13T00:00:00Z"\n')
    with pytest.raises(InputError, match="ends before it starts"):
        parse_text(BASE.replace('end = "2027-01-13', 'end = "2027-01-11'))


def test_toml_native_datetimes_accepted():
    sc = parse_text(BASE.replace('"2027-01-12T00:00:00Z"', "2027-01-12T00:00:00Z"))
    assert sc.start_tt == parse_utc("2027-01-12T00:00:00Z")


def test_older_format_goes_through_the_upgrade_chain(monkeypatch):
    """A plan from an older format_version loads: each upgrade step runs in order."""
    from contactplan.scenario import load as load_mod
    from contactplan.scenario import model

    seen = []

    def v1_to_v2(doc):
        seen.append(1)
        doc = dict(doc)
        doc["scenario"] = dict(doc["scenario"], name=doc["scenario"]["name"] + " (upgraded)")
        return doc

    monkeypatch.setattr(model, "FORMAT_VERSION", 2)
    monkeypatch.setitem(load_mod.UPGRADES, 1, v1_to_v2)
    sc = parse_text(BASE)  # no format_version key: version 1
    assert seen == [1]
    assert sc.name == "x (upgraded)"
    assert sc.format_version == 1  # the version the file had; saving writes the current one


def test_newer_format_is_refused():
    with pytest.raises(InputError, match="newer than this program reads"):
        parse_text("format_version = 99\n" + BASE)
