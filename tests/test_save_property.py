"""Hypothesis on save: random edits of bookings and activities survive save -> load exactly (invented data)."""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from contactplan.scenario import parse_text
from contactplan.scenario import model as m
from contactplan.scenario.save import dumps
from test_save import MINI, as_data

BASE = parse_text(MINI)
T0 = BASE.start_tt
ids = st.from_regex(r"[A-Za-z0-9][A-Za-z0-9_.:-]{0,12}", fullmatch=True)
# millisecond times within a year of the window (the text keeps milliseconds)
ms_times = st.integers(min_value=-365 * 86400 * 1000, max_value=365 * 86400 * 1000).map(lambda ms: T0 + ms / 1000.0)


@st.composite
def bookings(draw):
    n = draw(st.integers(0, 8))
    used = draw(st.lists(ids, min_size=n, max_size=n, unique=True))
    out = []
    for bid in used:
        s = draw(ms_times)
        out.append(m.Booking(id=bid, station=draw(st.sampled_from(["NRV", "AAA"])), start_tt=s,
                             end_tt=s + draw(st.integers(1, 86400 * 1000)) / 1000.0,
                             purposes=draw(st.lists(st.sampled_from(m.PURPOSES), min_size=1, max_size=3, unique=True)),
                             locked=draw(st.booleans())))
    return out


@st.composite
def activities(draw):
    n = draw(st.integers(0, 5))
    used = draw(st.lists(ids, min_size=n, max_size=n, unique=True))
    minutes = st.floats(0, 1440, allow_nan=False).map(lambda x: round(x, 3))
    return [m.Activity(id=a, kind=draw(st.sampled_from(m.ACTIVITY_KINDS)), start_tt=draw(ms_times),
                       duration_min=draw(minutes), monitor_before_min=draw(minutes), monitor_after_min=draw(minutes),
                       downlink_keepout_min=draw(minutes)) for a in used]


def rounded(x):
    """Times to 0.1 ms: the text keeps milliseconds, TT seconds near 8.5e8 carry ~1e-7 s of float noise."""
    if isinstance(x, dict):
        return {k: rounded(v) for k, v in x.items()}
    if isinstance(x, list):
        return [rounded(v) for v in x]
    if isinstance(x, float):
        return round(x, 4)
    return x


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(bookings(), activities(), st.text(min_size=1, max_size=40).filter(lambda s: "\x00" not in s))
def test_random_plans_round_trip(bl, acts, name):
    sc = parse_text(MINI)
    sc.bookings = bl
    sc.activities = sorted(acts, key=lambda a: a.start_tt)
    sc.name = name
    again = parse_text(dumps(sc))
    assert rounded(as_data(again.bookings)) == rounded(as_data(sc.bookings))
    assert sorted(map(str, rounded(as_data(again.activities)))) == sorted(map(str, rounded(as_data(sc.activities))))
    assert again.name == name
    assert dumps(again) == dumps(sc)  # a second save changes nothing
