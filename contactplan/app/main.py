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
    return app


def offer_recovery(window) -> bool:
    """After a crash: offer the newest snapshot left behind; True when one was recovered."""
    from PySide6.QtWidgets import QMessageBox

    from contactplan.app.autosave import orphans
    from contactplan.errors import InputError
    from contactplan.scenario import parse_text
    from contactplan.timescale import format_utc, from_datetime

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
    if not snaps:
        return False
    snap = snaps[0]
    import datetime as dt

    when = format_utc(from_datetime(dt.datetime.fromtimestamp(snap.saved_at, dt.timezone.utc)), 0)
    B = QMessageBox.StandardButton
    ans = window.ask("Recover unsaved edits?",
                     f"contactplan did not close cleanly last time.\nRecover the unsaved edits of "
                     f"{snap.name!r} ({snap.original or 'never saved'}), autosaved at {when}?",
                     B.Yes | B.No, B.Yes)
    recovered = False
    if ans == B.Yes:
        try:
            original = Path(snap.original) if snap.original else None
            sc = parse_text(snap.text(), original)
            sc.path = original
            window.set_scenario(sc)
            window.doc.undo_stack.resetClean()  # recovered edits are not saved yet
            window._update_title()
            recovered = True
        except (InputError, OSError) as exc:
            window.show_error(f"the snapshot cannot be read: {exc}", "Recovery failed")
    for s in snaps:
        s.discard()
    return recovered


def install_excepthook(window) -> None:
    """An unexpected error in the window: log it in full, snapshot the plan, say it in one line."""
    previous = sys.excepthook

    def hook(kind, value, tb):
        if issubclass(kind, KeyboardInterrupt):
            return previous(kind, value, tb)
        log.error("unexpected error", exc_info=(kind, value, tb))
        try:
            window.autosave(force=True)
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
    from contactplan.paths import demo_scenario

    theme.current(refresh=True)
    from PySide6.QtGui import QIcon

    from contactplan.paths import icon_path

    packaged = icon_path()
    app.setWindowIcon(QIcon(str(packaged)) if packaged.exists() else icons.icon("app"))
    win = MainWindow()
    install_excepthook(win)
    win.show()
    recovered = offer_recovery(win)
    if not recovered:
        target = Path(path) if path else demo_scenario()
        win.open_path(target)
    log.info("started on %s", path or "the demo")
    return app.exec()


if __name__ == "__main__":  # pragma: no cover
    sys.exit(run_app(sys.argv[1] if len(sys.argv) > 1 else None))
