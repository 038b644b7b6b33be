"""CONTRACT: the one-way pipeline scenario -> ephemeris -> passes -> link/volume -> plan checks.

The CLI, the app and the exports all call :func:`compute_plan` (geometry, heavy) and
:func:`check` (cheap; rerun after each booking edit).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from contactplan.errors import Cancelled


@dataclass(eq=False)
class PlanResult:
    scenario: object
    ephemeris: object
    passes: list = field(default_factory=list)  # [Pass], sorted by AOS, link columns filled
    profiles: dict = field(default_factory=dict)  # id(Pass) -> PassProfile on the station's playback link
    link_profiles: dict = field(default_factory=dict)  # link id -> {id(Pass): PassProfile}, budgeted links
    recorder: object | None = None  # RecorderResult for the scenario's bookings
    findings: list = field(default_factory=list)  # [Finding]
    shadows: list = field(default_factory=list)  # [(start_tt, end_tt, body, kind)]
    # parts of the planning window the ephemeris answers [(start_tt, end_tt)]; None: the whole window
    coverage: list | None = None
    navigation: object | None = None  # NavigationResult (plan/tracking.py navigation_for), None without [orbit_determination]
    forecast: object | None = None  # RecorderForecast (link/forecast.py), None without weather or recorder

    @property
    def errors(self) -> int:
        return sum(1 for f in self.findings if f.severity == "error")

    @property
    def warnings(self) -> int:
        return sum(1 for f in self.findings if f.severity == "warning")

    def findings_for(self, subject: str) -> list:
        """Findings that name ``subject`` (a booking, activity or station id)."""
        return [f for f in self.findings if subject in f.subjects]


def _stage(progress, lo: float, hi: float):
    """A progress callback mapping a stage's 0..1 onto lo..hi of the whole."""
    if progress is None:
        return None

    def cb(fraction: float) -> None:
        progress(lo + (hi - lo) * min(max(float(fraction), 0.0), 1.0))

    return cb


def _check_cancel(cancel) -> None:
    if cancel is not None and cancel():
        raise Cancelled()


def link_profiles(scenario, passes, ephemeris) -> dict:
    """Fill the link columns of ``passes`` and return their playback-link profiles (``id(pass) -> PassProfile``).

    Gaps between OEM segments need no care here: the look angles keep each emission instant inside
    the covered piece of its receive instant (:func:`contactplan.ephemeris.base.clamp_to_cover`)."""
    return all_link_profiles(scenario, passes, ephemeris)[0]


def all_link_profiles(scenario, passes, ephemeris) -> tuple[dict, dict]:
    """(``{id(pass): PassProfile}`` on each station's playback link, ``{link id: {id(pass): PassProfile}}``)
    for every link with a budget; fills the pass link columns from the playback link."""
    from contactplan.link.volume import annotate_links, playback_profiles

    if not passes or not any(lk.has_budget for lk in scenario.spacecraft.links):
        return {}, {}
    per_link = annotate_links(scenario, passes, ephemeris)
    return playback_profiles(scenario, passes, per_link), per_link


def _annotate(scenario, ephemeris, passes, progress, cancel) -> tuple[dict, dict]:
    """Link columns on the passes, playback profiles and every link's profiles (empty without a link model)."""
    try:
        import contactplan.link.volume  # noqa: F401
    except ImportError:  # link stage not installed in this build
        return {}, {}
    from contactplan.plan import parallel

    out = parallel.all_link_profiles(scenario, passes, ephemeris)  # on every core when the passes are many
    if progress is not None:
        progress(1.0)
    return out


def _recorder(scenario, passes, profiles, pieces=None):
    """Recorder fill for the scenario's current bookings (None without a recorder model)."""
    if scenario.spacecraft.recorder is None:
        return None
    try:
        from contactplan.link.recorder import simulate_recorder
    except ImportError:
        return None
    return simulate_recorder(scenario, passes, profiles, pieces=pieces)


def _booked_pieces(result, view):
    """The booked downlink pieces of the bookings that count, shared by every recorder of one check
    (the plan's, the weather band's, the Monte Carlo's); None without a recorder. The pieces of
    unchanged bookings are kept on the result between checks (``result.pieces_memo``, shared by the
    planner's background snapshots)."""
    if view.spacecraft.recorder is None:
        return None
    from contactplan.link.recorder import booked_pieces

    memo = getattr(result, "pieces_memo", None)
    if memo is None:
        memo = result.pieces_memo = {}
    return booked_pieces(view, result.passes, view.bookings, float(view.start_tt), float(view.end_tt), memo=memo)


def _shadows(scenario, ephemeris) -> list:
    """Earth and Moon shadow spans over the window: [(start_tt, end_tt, body, kind)]."""
    from contactplan.geometry import passes as geometry_passes

    fn = getattr(geometry_passes, "shadows", None)
    return [] if fn is None else list(fn(scenario, ephemeris))


def compute_plan(scenario, ephemeris=None, progress=None, cancel=None) -> PlanResult:
    """Everything the views need: passes with link columns, recorder, findings.

    ``ephemeris`` defaults to the scenario's own (:func:`contactplan.ephemeris.ephemeris_for`).
    ``progress(fraction)`` is called with 0..1; ``cancel()`` returning True raises
    :class:`~contactplan.errors.Cancelled`.
    """
    from contactplan.ephemeris import ephemeris_for
    from contactplan.geometry.passes import coverage_spans
    from contactplan.plan.parallel import find_passes  # on every core when the work is large

    _check_cancel(cancel)
    eph = ephemeris if ephemeris is not None else ephemeris_for(scenario)
    coverage = coverage_spans(eph, scenario.start_tt, scenario.end_tt)
    passes = find_passes(scenario, eph, progress=_stage(progress, 0.0, 0.7), cancel=cancel)
    passes = sorted(passes, key=lambda p: (p.aos_tt, p.station))
    _check_cancel(cancel)
    profiles, per_link = _annotate(scenario, eph, passes, _stage(progress, 0.7, 0.9), cancel)
    _check_cancel(cancel)
    shadows = _shadows(scenario, eph)
    _check_cancel(cancel)
    result = PlanResult(scenario=scenario, ephemeris=eph, passes=passes, profiles=profiles, shadows=shadows,
                        coverage=coverage, link_profiles=per_link)
    check(result)
    if progress is not None:
        progress(1.0)
    return result


def check(result: PlanResult) -> PlanResult:
    """Re-run the recorder and the rules for the scenario's current bookings (passes kept).

    Updates ``result.recorder`` and ``result.findings`` in place and returns ``result``.
    """
    from contactplan.plan.rules import RuleContext, run_rules
    from contactplan.plan.tracking import navigation_for

    sc = result.scenario
    sc.bind()
    from contactplan.plan.rules_weather import weather_stage
    from contactplan.plan.status import active_view

    view = active_view(sc)  # declined and cancelled bookings count nowhere: not in the recorder either
    pieces = _booked_pieces(result, view)
    result.recorder = _recorder(view, result.passes, result.profiles, pieces)
    # result.forecast: the recorder in weather
    rule_recorder, forecast = weather_stage(result, result.recorder, scenario=view, pieces=pieces)
    ctx = RuleContext.build(sc, result.passes, result.profiles, rule_recorder, coverage=result.coverage,
                            link_profiles=result.link_profiles)
    ctx.forecast = forecast
    ctx.navigation = navigation_for(result, ctx)  # also keeps result.navigation
    # unknown keys first: they are dated at the window start, so the list stays in time order
    result.findings = unknown_key_findings(sc) + run_rules(ctx)
    return result


def unknown_key_findings(scenario) -> list:
    """One warning finding (rule ``unknown-key``) per key of the scenario file the loader did not know."""
    from contactplan.plan.findings import WARNING, Finding
    from contactplan.scenario.load import unknown_key_message

    return [Finding(rule="unknown-key", severity=WARNING, subjects=[], start_tt=scenario.start_tt,
                    end_tt=scenario.start_tt, message=f"{field}: {unknown_key_message(field, key, close)}")
            for field, key, close in (getattr(scenario, "unknown_keys", None) or [])]
