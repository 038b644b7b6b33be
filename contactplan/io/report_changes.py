"""The weekly report's "Changes since revision N" page (``export --what report --since OLD.toml``).

Draws the change list of :mod:`contactplan.plan.diff` (read by its attributes: ``io/`` does not
import ``plan/``): one table row per added, removed, moved or changed booking, activity, series
or station, moved records with their shift in minutes.
"""

from __future__ import annotations

from contactplan.io.changes import change_details, shift_text

#: characters of one details cell (long station lists are cut)
DETAILS_SHOWN = 400


def change_texts(changes) -> list:
    """Every text the page shows (for the report's font choice)."""
    if changes is None:
        return []
    return [change_details(c) for c in changes.changes] + [c.id for c in changes.changes]


def changes_story(changes, P, table, small, h2, frame_w, since_name: str | None = None) -> list:
    """Flowables of the page, starting on a new page (empty when ``changes`` is None)."""
    if changes is None:
        return []
    from reportlab.lib.units import mm
    from reportlab.platypus import PageBreak, Spacer

    n = changes.counts()
    title = f"Changes since revision {changes.old_revision}"
    where = f" ({since_name})" if since_name else ""
    if changes.equal:
        intro = (f"Compared with revision {changes.old_revision}{where}: no booking, activity, series or station "
                 f"changed.")
    else:
        intro = (f"Compared with revision {changes.old_revision}{where}, revision {changes.new_revision} has "
                 f"{n['added']} added, {n['removed']} removed, {n['moved']} moved and {n['changed']} changed "
                 "records (bookings, activities with the members of series, series, stations), matched by id. "
                 "Moved: the start shifted (new minus old); times in UTC.")
    out = [PageBreak(), P(title, h2), P(intro, small), Spacer(1, 3 * mm)]
    if not changes.equal:
        rows = [["Kind", "Id", "Change", "Details"]]
        for c in changes.changes:
            text = change_details(c)
            if len(text) > DETAILS_SHOWN:
                text = text[: DETAILS_SHOWN - 1] + "\u2026"
            rows.append([c.kind, P(c.id, small), P(shift_text(c), small), P(text, small)])
        w = frame_w
        out.append(table(rows, [0.1 * w, 0.14 * w, 0.16 * w, 0.6 * w]))
    return out
