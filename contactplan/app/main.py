"""Start the planner: ``run_app(path)`` (called by ``contactplan [FILE]``)."""

from __future__ import annotations

import logging
import logging.handlers
import sys
from pathlib import Path

log = logging.getLogger("contactplan.app")


def setup_logging() -> Path | None:
    """Log to the platform's user log folder (rotating, a few files of 1 MB)."""
    from contactplan.paths import user_log_dir

    try:
        folder = user_log_dir()
        folder.mkdir(parents=True, exist_ok=True)
        path = folder / "contactplan.log"
        handler = logging.handlers.RotatingFileHandler(path, maxBytes=1_000_000, backupCount=3, encoding="utf-8")
    except OSError:
        return None
    handler.setFormatter(logging.Formatter("%(asctime)s %(levelname)s %(name)s: %(message)s"))
    root = logging.getLogger("contactplan")
    root.addHandler(handler)
    root.setLevel(logging.INFO)
    # Engine warnings (EOP table ends, OEM degree lowered...) go to the same log.
    logging.captureWarnings(True)
    logging.getLogger("py.warnings").addHandler(handler)
    return path


#: how long a thread may hold the GIL while another waits for it (seconds)
SWITCH_INTERVAL_S = 0.0005


def application():
    """The QApplication (created once) with our names, so settings and data folders are ours."""
    from PySide6.QtWidgets import QApplication

    app = QApplication.instance()
    if app is None:
        app = QApplication(sys.argv[:1])
    app.setOrganizationName("contactplan")
    app.setApplicationName("contactplan")
    from contactplan import __version__

    app.setApplicationVersion(__version__)
    # the plan check and the pass computation run in a worker thread that holds the GIL for seconds; the
    # GUI thread waits for it at every return from Qt into Python, up to the switch interval each time
    # (5 ms by default: a paint with a few hundred such returns then stalls the event loop for long)
    sys.setswitchinterval(min(sys.getswitchinterval(), SWITCH_INTERVAL_S))
    return app


def offer_recovery(window, requested=None) -> bool:
    """After a crash: offer every snapshot left behind (a list); True when one was recovered.

    ``requested`` is the file asked for on the command line: the user may open it
    instead. A snapshot is deleted only when the user says so (or it is recovered, or
    it equals the file on disk, so holds nothing that was lost)."""
    from contactplan.app.autosave import orphans
    from contactplan.errors import InputError
    from contactplan.scenario import parse_text

    if not window.autosaver.enabled:
        return False
    snaps = []
    for snap in orphans(window.autosaver.folder):
        try:  # a snapshot equal to the file on disk holds nothing that was lost
            same = snap.original and Path(snap.original).read_text(encoding="utf-8") == snap.text()
        except OSError:
            same = False
        if same:
            snap.discard()
        else:
            snaps.append(snap)
    while snaps:
        action, chosen = window.choose_recovery(snaps, requested)
        if action == "discard":
            for s in chosen:
                s.discard()
            snaps = [s for s in snaps if s not in chosen]
            continue
        if action != "recover" or not chosen:
            return False  # kept for the next start
        snap = chosen[0]
        try:
            original = Path(snap.original) if snap.original else None
            sc = parse_text(snap.text(), original)
            sc.path = original
        except (InputError, OSError) as exc:
            window.show_error(f"the snapshot cannot be read: {exc}", "Recovery failed")
            return False
        window.set_scenario(sc)
        window.doc.undo_stack.resetClean()  # recovered edits are not saved yet
        window._update_title()
        window.autosave(force=True)  # now this run's own snapshot
        snap.discard()
        return True
    return False


def recovery_label(snap) -> str:
    """One line naming a snapshot: scenario name, file, when it was written."""
    import datetime as dt

    from contactplan.errors import show_id
    from contactplan.timescale import format_utc, from_datetime

    when = format_utc(from_datetime(dt.datetime.fromtimestamp(snap.saved_at, dt.timezone.utc)), 0)
    return f"{show_id(snap.name)!s} ({snap.original or 'never saved'}), autosaved at {when}"


def start(window, path=None) -> None:
    """Offer what a crash left (the user may open ``path`` instead), else open ``path`` or the demo."""
    from contactplan.paths import demo_scenario

    if not offer_recovery(window, Path(path) if path else None):
        window.open_path(Path(path) if path else demo_scenario())


def install_excepthook(window) -> None:
    """An unexpected error in the window: log it in full, snapshot the plan, say it in one line."""
    previous = sys.excepthook

    def hook(kind, value, tb):
        if issubclass(kind, KeyboardInterrupt):
            return previous(kind, value, tb)
        log.error("unexpected error", exc_info=(kind, value, tb))
        try:
            window.autosave(force=True, wait=True)
            window.show_error(f"unexpected error: {kind.__name__}: {value}. Your edits are kept in the "
                              "autosave; details are in the log.", "contactplan")
        except Exception:  # never raise from the hook itself
            previous(kind, value, tb)

    sys.excepthook = hook


def run_app(path: str | None = None) -> int:
    """Open the planner on ``path`` (a scenario, or an OEM to build one around; none: the demo)."""
    from contactplan.data import configure_astropy

    configure_astropy()
    setup_logging()
    app = application()
    from contactplan.app import icons, theme
    from contactplan.app.window import MainWindow

    theme.current(refresh=True)
    from PySide6.QtGui import QIcon

    from contactplan.paths import icon_path

    packaged = icon_path()
    app.setWindowIcon(QIcon(str(packaged)) if packaged.exists() else icons.icon("app"))
    win = MainWindow()
    install_excepthook(win)
    win.show()
    start(win, path)
    log.info("started on %s", path or "the demo")
    return app.exec()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(run_app(sys.argv[1] if len(sys.argv) > 1 else None))
