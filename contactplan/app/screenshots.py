"""Render README pictures: the planner on the bundled demo, and the weekly report's first page.

    python -m contactplan.app.screenshots docs/images

Writes ``planner.png`` (light), ``planner-dark.png``, ``mask-editor.png`` (a demo
station's horizon mask), ``draft-dialog.png`` and ``report-page1.png`` (when the
report writer and a PDF rasteriser, ``pypdfium2`` or poppler's ``pdftoppm``, are
available). The demo is an invented mission.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path


def _dark_palette():
    from PySide6.QtGui import QColor, QPalette

    pal = QPalette()
    roles = QPalette.ColorRole
    for role, colour in ((roles.Window, "#23272B"), (roles.WindowText, "#E8EAED"), (roles.Base, "#1E2226"),
                         (roles.AlternateBase, "#262B30"), (roles.Text, "#E8EAED"), (roles.Button, "#2C3136"),
                         (roles.ButtonText, "#E8EAED"), (roles.Highlight, "#0072B2"),
                         (roles.HighlightedText, "#FFFFFF"), (roles.ToolTipBase, "#2C3136"),
                         (roles.ToolTipText, "#E8EAED")):
        pal.setColor(role, QColor(colour))
    return pal


def render_window(plan, out: Path, dark: bool = False, size=(1500, 920)) -> Path:
    """Show the main window on a computed plan and save it as PNG."""
    import copy

    from PySide6.QtCore import QSettings, QStandardPaths

    from contactplan.app.autosave import Autosaver
    from contactplan.app.document import Selection
    from contactplan.app.window import MainWindow
    from contactplan.scenario import load_scenario

    QStandardPaths.setTestModeEnabled(True)  # never touch the user's settings or autosave folder
    app = _themed(dark)
    tmp = Path(tempfile.mkdtemp(prefix="contactplan-shot-"))
    try:
        win = MainWindow(settings=QSettings(str(tmp / "s.ini"), QSettings.Format.IniFormat),
                         autosaver=Autosaver(tmp / "autosave"))
        win.resize(*size)
        sc = load_scenario(plan.scenario.path)
        res = copy.copy(plan)
        res.scenario = sc
        win.set_scenario(sc, result=res)
        win.show()
        # pick a booked pass so the sky view and the elevation strip have something to show
        booked = [b for b in sc.bookings if win.doc.pass_at(b.station, 0.5 * (b.start_tt + b.end_tt))]
        if booked:
            win.doc.select(Selection("booking", booked[0].id))
        win.doc.wait_checked()  # the findings of the plan shown, not "checking..."
        win.findings_dock.raise_()
        win.timeline.show_week(sc.start_tt)
        for _ in range(5):
            app.processEvents()
        out.parent.mkdir(parents=True, exist_ok=True)
        win.grab().save(str(out))
        win.doc.undo_stack.setClean()
        win.close()
        win.deleteLater()
        app.processEvents()
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return out


def _themed(dark: bool):
    from PySide6.QtWidgets import QApplication

    from contactplan.app import icons, theme

    app = QApplication.instance()
    app.setPalette(_dark_palette() if dark else app.style().standardPalette())
    theme.set_theme(theme.dark_theme() if dark else theme.light_theme())
    icons.icon.cache_clear()
    return app


def render_dialog(dlg, out: Path, size=None) -> Path:
    """Show a dialog, let it lay out and paint, save it as PNG and close it."""
    from PySide6.QtWidgets import QApplication

    app = QApplication.instance()
    if size is not None:
        dlg.resize(*size)
    dlg.show()
    for _ in range(5):
        app.processEvents()
    out.parent.mkdir(parents=True, exist_ok=True)
    dlg.grab().save(str(out))
    dlg.close()
    dlg.deleteLater()
    app.processEvents()
    return out


def render_mask_editor(sc, out: Path, dark: bool = False) -> Path:
    """The mask editor on the demo station with the most mask points."""
    from contactplan.app.maskeditor import MaskEditor

    _themed(dark)
    st = max(sc.stations, key=lambda s: len(s.horizon_mask))
    return render_dialog(MaskEditor(st.id, st.horizon_mask, st.min_elevation_deg), out, (820, 480))


def render_draft_dialog(sc, out: Path, dark: bool = False) -> Path:
    from contactplan.app.draftdialog import DraftDialog

    _themed(dark)
    return render_dialog(DraftDialog(sc), out)


def pdf_first_page_png(pdf: Path, out: Path, dpi: int = 110) -> Path | None:
    """Rasterise page 1 of a PDF: pypdfium2 when installed, else poppler's pdftoppm; None if neither."""
    try:
        import pypdfium2 as pdfium  # optional

        doc = pdfium.PdfDocument(str(pdf))
        doc[0].render(scale=dpi / 72.0).to_pil().save(str(out))
        return out
    except ImportError:
        pass
    exe = shutil.which("pdftoppm")
    if exe is None:
        return None
    stem = out.with_suffix("")
    subprocess.run([exe, "-png", "-r", str(dpi), "-f", "1", "-l", "1", "-singlefile", str(pdf), str(stem)],
                   check=True, capture_output=True)
    return out if out.exists() else None


def render_report(plan, out: Path) -> Path | None:
    try:
        from contactplan.io.report import write_report
    except ImportError:
        return None
    with tempfile.TemporaryDirectory() as tmp:
        pdf = Path(tmp) / "report.pdf"
        write_report(plan, pdf)
        return pdf_first_page_png(pdf, out)


def main(argv=None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    folder = Path(argv[0] if argv else "docs/images")
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from contactplan.data import configure_astropy

    configure_astropy()
    from contactplan.app.main import application
    from contactplan.paths import demo_scenario
    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario import load_scenario

    application()
    plan = compute_plan(load_scenario(demo_scenario()))
    for name, dark in (("planner.png", False), ("planner-dark.png", True)):
        print(f"wrote {render_window(plan, folder / name, dark=dark)}")
    print(f"wrote {render_mask_editor(plan.scenario, folder / 'mask-editor.png')}")
    print(f"wrote {render_draft_dialog(plan.scenario, folder / 'draft-dialog.png')}")
    rep = render_report(plan, folder / "report-page1.png")
    print(f"wrote {rep}" if rep else "report page not rendered (no report writer or PDF rasteriser)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
