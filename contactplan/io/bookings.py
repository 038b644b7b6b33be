"""Booking list: rows for tables, CSV (RFC 4180) and JSON.

A booking runs from ``start`` to ``end`` (UTC), pre-pass and post-pass included:
the station configures for ``pre_pass_min`` after the start and releases for
``post_pass_min`` before the end; the track runs in between (BOT ``bot_utc`` to
EOT ``eot_utc``). ``services`` are the booked services (telemetry, playback,
commanding, ranging, doppler). With a plan, the rate plan of the booking's down
link (the station's playback link when playback is booked, else its telemetry
link) over the track is listed as time-tagged steps (``rate_plan_kbps``: start,
end, rate) with the volume of that plan (``plan_volume_gbit``), the volume the
recorder actually gives up (``downlinked_gbit``) and the rule codes of the findings
that name the booking. On a link planned in weather ``plan_volume_gbit`` is at the link's availability
(``availability_pct``) and ``clear_volume_gbit`` gives the clear-sky plan's volume beside it (both empty
without weather). ``status`` is where the booking stands with the station network (``draft``,
``requested``, ``confirmed``, ``declined``, ``cancelled``; declined and cancelled bookings are listed but
count nowhere: no downlink, no findings of their own) and ``network_ref`` the network's own id of it
(empty when it has none).
"""

from __future__ import annotations

import csv
import io
import json

from contactplan import CAUTION, __version__

#: columns of the booking list, in order (units in the names)
BOOKING_COLUMNS = (
    "id",
    "station",
    "station_name",
    "start_utc",
    "end_utc",
    "start_doy",
    "end_doy",
    "duration_min",
    "pre_pass_min",
    "post_pass_min",
    "bot_utc",
    "eot_utc",
    "services",
    "handover_from",
    "locked",
    "rate_plan_link",
    "rate_plan_kbps",
    "plan_volume_gbit",
    "downlinked_gbit",
    "findings",
    "clear_volume_gbit",
    "availability_pct",
    "status",
    "network_ref",
)


def sorted_bookings(scenario) -> list:
    """The scenario's bookings by start, then station, then id."""
    return sorted(scenario.bookings, key=lambda b: (b.start_tt, b.station, b.id))


class _PlanIndex:
    """What the booking rows need from a plan, indexed once: passes per station sorted by AOS (bisection
    by LOS: one station's passes never overlap) and findings per subject."""

    def __init__(self, plan):
        import numpy as np

        self.plan = plan
        self.passes: dict = {}
        for p in sorted(getattr(plan, "passes", None) or [], key=lambda p: p.aos_tt):
            self.passes.setdefault(p.station, []).append(p)
        self.los = {k: np.array([p.los_tt for p in v]) for k, v in self.passes.items()}
        self.findings: dict = {}
        for f in getattr(plan, "findings", []) or []:
            for s in f.subjects:
                rules = self.findings.setdefault(s, [])
                if f.rule not in rules:
                    rules.append(f.rule)

    def passes_over(self, station: str, t0: float, t1: float) -> list:
        import numpy as np

        ps = self.passes.get(station, [])
        i = int(np.searchsorted(self.los.get(station, np.zeros(0)), t0, side="right"))
        out = []
        while i < len(ps) and ps[i].aos_tt < t1:
            out.append(ps[i])
            i += 1
        return out


def rate_plan_link(scenario, station, services):
    """The down link whose rate plan a booking of ``services`` follows (None: no down service there)."""
    from contactplan.link.services import links_for, playback_link

    if "playback" in services:
        lk = playback_link(scenario, station)
        if lk is not None:
            return lk
    if "telemetry" in services:
        down = links_for(scenario, station, "telemetry", "down")
        return down[0] if down else None
    return None


def booking_rate_plan(scenario, booking, index, bot_tt, eot_tt):
    """(link id, [(start_tt, end_tt, rate_kbps)] nonzero steps over the track, plan volume Gbit) of a booking."""
    from contactplan.link.services import playback_link

    try:
        st = scenario.station(booking.station)
    except KeyError:
        return None, [], None
    lk = rate_plan_link(scenario, st, booking.services)
    profiles = (getattr(index.plan, "link_profiles", None) or {}).get(lk.id) if lk is not None else None
    if not profiles and lk is not None and lk is playback_link(scenario, st):
        profiles = getattr(index.plan, "profiles", None)  # a result holding only the playback profiles
    if not profiles:
        return (None if lk is None else lk.id), [], None
    steps, volume = [], 0.0
    for p in index.passes_over(booking.station, bot_tt, eot_tt):
        prof = profiles.get(id(p))
        if prof is None:
            continue
        edges, rates = prof.rate_steps(bot_tt, eot_tt)
        steps += [(float(a), float(b), float(r)) for a, b, r in zip(edges[:-1], edges[1:], rates) if r > 0]
        volume += prof.volume_gbit(bot_tt, eot_tt)
    return lk.id, steps, round(float(volume), 6)


def booking_record(scenario, booking, plan=None, index=None) -> dict:
    """One booking as a dict of typed values (times as UTC text, lists kept as lists; each rate-plan step a
    dict ``{start_utc, end_utc, rate_kbps}``). ``index``: a shared ``_PlanIndex`` of ``plan``."""
    from contactplan.timescale import format_doy, format_utc

    try:
        st = scenario.station(booking.station)
        name, pre_min, post_min = st.name, float(st.pre_pass_min), float(st.post_pass_min)
    except KeyError:
        name, pre_min, post_min = "", 0.0, 0.0
    bot = min(booking.start_tt + pre_min * 60.0, booking.end_tt)
    eot = max(booking.end_tt - post_min * 60.0, bot)
    down = None
    rules = []
    link_id, steps, plan_gbit = None, [], None
    clear_gbit, avail = None, None
    if plan is not None:
        index = index or _PlanIndex(plan)
        rec = getattr(plan, "recorder", None)
        if rec is not None and booking.id in (rec.downlinked_by_booking_gbit or {}):
            down = round(float(rec.downlinked_by_booking_gbit[booking.id]), 6)
        rules = list(index.findings.get(booking.id, []))
        link_id, steps, plan_gbit = booking_rate_plan(scenario, booking, index, bot, eot)
        clear_gbit, avail = booking_clear_volume(scenario, booking, index, bot, eot)
    return {
        "id": booking.id,
        "station": booking.station,
        "station_name": name,
        "start_utc": format_utc(booking.start_tt),
        "end_utc": format_utc(booking.end_tt),
        "start_doy": format_doy(booking.start_tt),
        "end_doy": format_doy(booking.end_tt),
        "duration_min": round(booking.duration_s / 60.0, 3),
        "pre_pass_min": pre_min,
        "post_pass_min": post_min,
        "bot_utc": format_utc(bot),
        "eot_utc": format_utc(eot),
        "services": list(booking.services),
        "handover_from": booking.handover_from,
        "locked": bool(booking.locked),
        "rate_plan_link": link_id,
        "rate_plan_kbps": [{"start_utc": format_utc(a, 0), "end_utc": format_utc(b, 0), "rate_kbps": r}
                           for a, b, r in steps],
        "plan_volume_gbit": plan_gbit,
        "downlinked_gbit": down,
        "findings": rules,
        "clear_volume_gbit": clear_gbit,
        "availability_pct": avail,
        "status": getattr(booking, "status", None) or "draft",
        "network_ref": getattr(booking, "network_ref", None) or None,
    }


def booking_clear_volume(scenario, booking, index, bot_tt, eot_tt):
    """(clear-sky plan volume Gbit over the track, availability %) of a booking whose playback passes are
    planned in weather (see :mod:`contactplan.link.forecast`); (None, None) otherwise."""
    profiles = getattr(index.plan, "profiles", None) or {}
    passes = [p for p in index.passes_over(booking.station, bot_tt, eot_tt)
              if getattr(profiles.get(id(p)), "clear_level_db", None) is not None]
    if not passes or "playback" not in booking.services:
        return None, None
    from contactplan.link.forecast import cached_profiles_at

    clear = cached_profiles_at(index.plan, None)
    volume = sum(clear[id(p)].volume_gbit(bot_tt, eot_tt) for p in passes)
    return round(float(volume), 6), profiles[id(passes[0])].availability_pct


def rate_plan_text(steps) -> str:
    """Rate-plan steps as one cell: ``START/END RATE`` (UTC, kbit/s) joined by ``; ``."""
    return "; ".join(f"{s['start_utc']}/{s['end_utc']} {s['rate_kbps']:g}" for s in steps)


def booking_records(scenario, plan=None) -> list[dict]:
    index = None if plan is None else _PlanIndex(plan)
    return [booking_record(scenario, b, plan, index) for b in sorted_bookings(scenario)]


def _cell(value) -> str:
    """Text of one CSV cell: lists joined by ';', booleans lower case, None empty."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    from contactplan.io.cells import csv_text

    if isinstance(value, (list, tuple)):
        if value and all(isinstance(v, dict) and "rate_kbps" in v for v in value):
            return csv_text(rate_plan_text(value))
        return csv_text(";".join(str(v) for v in value))
    if isinstance(value, (int, float)) or hasattr(value, "dtype"):
        return str(value)  # numbers stay numbers
    return csv_text(str(value))  # text that a spreadsheet would run as a formula gets a leading quote


def table_csv(columns, rows) -> str:
    """RFC 4180 text: CRLF line ends, fields quoted where needed, header first."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)
    w.writerow(list(columns))
    for r in rows:
        if isinstance(r, dict):
            r = [r.get(c) for c in columns]
        w.writerow([_cell(v) for v in r])
    return buf.getvalue()


def bookings_csv(scenario, plan=None) -> str:
    return table_csv(BOOKING_COLUMNS, booking_records(scenario, plan))


def header(scenario, now_tt: float | None = None) -> dict:
    """What every JSON export starts with: scenario, revision, generation time, caution."""
    from contactplan.timescale import format_utc, now_tt as _now

    return {
        "generator": f"contactplan {__version__}",
        "scenario": scenario.name,
        "revision": int(scenario.revision),
        "spacecraft": scenario.spacecraft.name,
        "window": {"start": format_utc(scenario.start_tt), "end": format_utc(scenario.end_tt)},
        "generated": format_utc(_now() if now_tt is None else now_tt, 0),
        "caution": CAUTION,
    }


def bookings_json(scenario, plan=None, now_tt: float | None = None) -> str:
    doc = header(scenario, now_tt)
    doc["columns"] = list(BOOKING_COLUMNS)
    doc["bookings"] = booking_records(scenario, plan)
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def write_bookings(scenario, path, fmt: str, plan=None, now_tt: float | None = None) -> int:
    """Write the booking list as ``fmt`` ("csv" or "json") atomically; returns the number of bookings."""
    from contactplan.fileio import atomic_write

    if fmt == "csv":
        atomic_write(path, bookings_csv(scenario, plan))
    elif fmt == "json":
        atomic_write(path, bookings_json(scenario, plan, now_tt))
    else:  # pragma: no cover - the dispatcher only sends csv/json here
        raise ValueError(fmt)
    return len(scenario.bookings)
