"""The ``[link_planning]`` table and the weather keys of links, station services and ``[requirements]``.

Kept apart from :mod:`contactplan.scenario.load` (which calls the readers here) so the loader stays
small; the models themselves live in :mod:`contactplan.link.weather` and
:mod:`contactplan.link.forecast`. Every problem is an InputError naming the field (docs/scenario.md).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from contactplan.scenario.model import Record

#: availability (% of an average year) a link is planned at by default
DEFAULT_AVAILABILITY_PCT = 95.0
#: the range the ITU-R P.618 exceedance method covers: time percentages 0.001 % to 50 %
AVAILABILITY_RANGE_PCT = (50.0, 99.999)
#: the links planned in weather by default: this frequency (MHz) and above (K and Ka bands)
WEATHER_MIN_FREQUENCY_MHZ = 17000.0
#: default band of the recorder forecast: availabilities p1 and p2 (%)
DEFAULT_BAND_PCT = (50.0, 95.0)
#: default availability at which the recorder-overflow rule is evaluated
DEFAULT_OVERFLOW_AVAILABILITY_PCT = 95.0


@dataclass(eq=False)
class LinkPlanning(Record):
    """How links are planned in weather (docs/scenario.md, ``[link_planning]``)."""

    availability_pct: float = DEFAULT_AVAILABILITY_PCT
    weather: bool | None = None  # None: on for links with availability_pct or at WEATHER_MIN_FREQUENCY_MHZ up
    band_availability_pct: list = field(default_factory=lambda: list(DEFAULT_BAND_PCT))
    forecast_draws: int = 1000  # Monte Carlo draws of the recorder forecast (0: none)
    forecast_seed: int = 0


def planning_of(scenario) -> LinkPlanning:
    """The scenario's ``[link_planning]`` (defaults when absent)."""
    lp = getattr(scenario, "link_planning", None)
    return lp if lp is not None else LinkPlanning()


def link_in_weather(scenario, link) -> bool:
    """True when ``link`` (a down link with a budget) is planned in weather (docs/scenario.md)."""
    if link.direction != "down" or not link.has_budget:
        return False
    lp = planning_of(scenario)
    if lp.weather is False:
        return False
    if lp.weather or link.availability_pct is not None:
        return True
    return float(link.frequency_mhz) >= WEATHER_MIN_FREQUENCY_MHZ


def link_availability_pct(scenario, link) -> float:
    """The availability (%) ``link`` is planned at: its own ``availability_pct``, else ``[link_planning]``'s."""
    if link.availability_pct is not None:
        return float(link.availability_pct)
    return float(planning_of(scenario).availability_pct)


def scenario_in_weather(scenario) -> bool:
    """True when any link is planned in weather (only then is the ``itur`` package imported)."""
    return any(link_in_weather(scenario, lk) for lk in scenario.spacecraft.links)


def read_link_availability(t, down: bool):
    """``availability_pct`` of a ``[[spacecraft.links]]`` table ``t`` (down links only; None when absent)."""
    if not down:
        if "availability_pct" in t.data:
            t.fail("availability_pct", "only down links are planned at an availability")
        return None
    lo, hi = AVAILABILITY_RANGE_PCT
    return t.num("availability_pct", None, lo=lo, hi=hi)


def read_service_noise(t, down: bool):
    """``system_noise_k`` of a station service table ``t`` (down links only; None when absent)."""
    if not down:
        if "system_noise_k" in t.data:
            t.fail("system_noise_k", "belongs to a down link (the station's receive system noise)")
        return None
    return t.num("system_noise_k", None, lo=1.0, lo_open=False, hi=10000.0)


def read_weather_requirements(rq, req) -> None:
    """The weather keys of the ``[requirements]`` table ``rq`` (a loader Table) into ``req``."""
    lo, hi = AVAILABILITY_RANGE_PCT
    req.recorder_overflow_availability_pct = rq.num("recorder_overflow_availability_pct", None, lo=lo, hi=hi)
    req.overflow_risk_max_pct = rq.num("overflow_risk_max_pct", None, lo=0, hi=100)
    for k in ("recorder_overflow_availability_pct", "overflow_risk_max_pct"):
        req.loaded[k] = rq.loaded[k]


def read_link_planning(root) -> LinkPlanning | None:
    """The ``[link_planning]`` table of the document ``root`` (a loader Table); None when absent."""
    t = root.sub("link_planning", required=False)
    if t is None:
        return None
    lo, hi = AVAILABILITY_RANGE_PCT
    weather = t.bool("weather", None) if "weather" in t.data else (t.read.add("weather") or None)
    band = t.list("band_availability_pct", list(DEFAULT_BAND_PCT))
    if len(band) != 2:
        t.fail("band_availability_pct", f"give two availabilities [p1, p2], got {band!r}")
    for i, v in enumerate(band):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not lo <= v <= hi:
            t.fail(f"band_availability_pct[{i + 1}]", f"{v!r} is out of range (must be {lo:g} to {hi:g})")
    lp = LinkPlanning(
        availability_pct=t.num("availability_pct", DEFAULT_AVAILABILITY_PCT, lo=lo, hi=hi),
        weather=weather,
        band_availability_pct=sorted(float(v) for v in band),
        forecast_draws=t.num("forecast_draws", 1000, lo=0, hi=100000, integer=True),
        forecast_seed=t.num("forecast_seed", 0, lo=0, hi=2**32 - 1, integer=True),
    )
    return t.keep(lp)
