"""Station records as the geometry needs them: every value validated, one-line errors naming the field."""

from pathlib import Path

import pytest

from contactplan.errors import InputError
from contactplan.scenario.load import parse_text

MASK = "horizon_mask = [[0.0, 6.0], [60.0, 14.0], [140.0, 9.0]]"
OUTAGE = 'outages = [{ start = "2027-01-14T08:00:00Z", end = "2027-01-14T12:00:00Z"'


@pytest.mark.parametrize("old, new, field, text", [
    (MASK, "horizon_mask = [[0.0, 6.0], [140.0, 14.0], [60.0, 9.0]]", "horizon_mask[3]", "sort the mask"),
    (MASK, "horizon_mask = [[0.0, 6.0], [360.0, 14.0]]", "horizon_mask[2]", "out of range"),
    (MASK, "horizon_mask = [[10.0, 95.0]]", "horizon_mask[1]", "out of range"),
    (MASK, "horizon_mask = [[10.0]]", "horizon_mask[1]", "expected [azimuth_deg, elevation_deg]"),
    ("latitude_deg = 47.35", "latitude_deg = 97.35", "latitude_deg", "out of range"),
    ("min_elevation_deg = 10.0", "min_elevation_deg = 95.0", "min_elevation_deg", "out of range"),
    (OUTAGE, OUTAGE.replace("01-14T12", "01-13T12"), "outages", "ends before it starts"),
])
def test_bad_station_values_are_refused_in_one_line(minimal_path, old, new, field, text):
    src = minimal_path.read_text()
    assert old in src
    with pytest.raises(InputError) as err:
        parse_text(src.replace(old, new), Path("week.toml"))
    msg = str(err.value)
    assert msg.startswith("week.toml:stations[NRV].") and field in msg and text in msg
    assert "\n" not in msg


def test_station_values_reach_the_geometry(minimal_path):
    from contactplan.geometry.mask import effective_limit_deg
    from contactplan.scenario.load import load_scenario

    sc = load_scenario(minimal_path)
    nrv = sc.station("NRV")
    # min 10 deg, mask 6 -> 14 -> 9: the limit is the higher of the two, linear in azimuth, wrapping
    assert effective_limit_deg(nrv, [0.0, 30.0, 60.0, 100.0, 250.0]).tolist() == pytest.approx(
        [10.0, 10.0, 14.0, 11.5, 10.0])
    assert len(nrv.outages) == 1 and nrv.outages[0].reason == "maintenance"
