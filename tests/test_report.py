"""Weekly report PDF: text read back with pypdf, page sizes in points, first page rendered when a renderer exists."""

from __future__ import annotations

import shutil
import subprocess

import pytest

from contactplan import CAUTION
from test_export_plan import NOW_TT, make_plan

# ISO 216 A4 is 210 x 297 mm and ANSI Letter 8.5 x 11 in; 1 pt = 1/72 in (PDF 1.7, ISO 32000-1 8.3.2.3)
A4_PT = (210 / 25.4 * 72, 297 / 25.4 * 72)
LETTER_PT = (612.0, 792.0)


def _text(path):
    from pypdf import PdfReader  # independent PDF reader

    reader = PdfReader(str(path))
    return reader, " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)


@pytest.mark.parametrize("paper, size", [("a4", A4_PT), ("letter", LETTER_PT)])
def test_report_pages_text_and_size(data_dir, tmp_path, paper, size):
    from contactplan.commands.export import export

    plan = make_plan(data_dir)
    out = tmp_path / f"week-{paper}.pdf"
    msg = export(plan.scenario, out, plan=plan, paper=paper, now_tt=NOW_TT)
    reader, text = _text(out)
    n = len(reader.pages)
    assert msg == f"wrote the weekly report ({n} pages, {'A4' if paper == 'a4' else 'Letter'}) to {out}"
    assert n >= 4
    orient = []
    for page in reader.pages:
        w, h = float(page.mediabox.width), float(page.mediabox.height)
        if w > h:  # the timeline page is the same sheet turned to landscape
            w, h = h, w
            orient.append("wide")
        else:
            orient.append("tall")
        assert w == pytest.approx(size[0], abs=0.01) and h == pytest.approx(size[1], abs=0.01)
    assert orient[:3] == ["tall", "wide", "tall"] and orient.count("wide") == 1
    assert "The week at a glance" in " ".join((reader.pages[1].extract_text() or "").split())
    for bid in ("B001", "B002", "B003"):
        assert bid in text
    assert CAUTION in text
    cover = " ".join((reader.pages[0].extract_text() or "").split())
    for words in ("Weekly contact plan", "Invented probe", "Week 03", "Plan revision 4",
                  "2027-01-12T00:00:00Z to 2027-01-19T00:00:00Z", "2027-012T00:00:00Z to 2027-019T00:00:00Z",
                  "Generated (UTC) 2027-01-11T09:30:00Z", "1 error, 1 warning", CAUTION,
                  "built-in libration-point orbit: a planning approximation"):
        assert words in cover, words
    for words in ("outside-pass", "no-ranging", "move it to start at 2027-01-14T09:12:00Z",
                  "Recorder", "lost 12.5 Gbit", "Rate and volume per pass", "16000"):
        assert words in text, words
    assert reader.metadata.title == "Weekly contact plan: Week 03"
    # only the base-14 Helvetica family: nothing to embed, present in every reader
    fonts = set()
    for page in reader.pages:
        for f in (page["/Resources"].get("/Font") or {}).values():
            fonts.add(str(f.get_object()["/BaseFont"]))
    assert fonts and all(f.startswith("/Helvetica") for f in fonts), fonts


def test_report_first_page_renders(data_dir, tmp_path):
    exe = shutil.which("pdftoppm")
    if exe is None:
        pytest.skip("pdftoppm (poppler-utils) is not installed; page size is checked in points above")
    from contactplan.io.report import write_report

    plan = make_plan(data_dir)
    out = tmp_path / "week.pdf"
    write_report(plan, out, paper="letter", now_tt=NOW_TT)
    for page, size in ((1, (612, 792)), (2, (792, 612))):  # Letter at 72 dpi; page 2 is the landscape timeline
        stem = tmp_path / f"p{page}"
        subprocess.run([exe, "-png", "-r", "72", "-f", str(page), "-l", str(page), "-singlefile", str(out),
                        str(stem)], check=True, timeout=120)
        png = stem.with_suffix(".png").read_bytes()
        # PNG IHDR: width and height are big-endian 32-bit at bytes 16-24 (PNG spec, ISO/IEC 15948 11.2.2)
        assert png[:8] == b"\x89PNG\r\n\x1a\n"
        w, h = int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")
        assert (w, h) == size


def test_report_with_empty_plan(data_dir, tmp_path):
    from contactplan.io.report import write_report
    from contactplan.plan.pipeline import PlanResult

    plan = make_plan(data_dir)
    sc = plan.scenario
    sc.bookings.clear()
    empty = PlanResult(scenario=sc, ephemeris=None)
    pages = write_report(empty, tmp_path / "empty.pdf", now_tt=NOW_TT)
    reader, text = _text(tmp_path / "empty.pdf")
    assert pages == len(reader.pages)
    assert "No bookings in this plan yet." in text and "No passes in the window." in text
    assert "The scenario has no recorder." in text and "No findings" in text


def test_report_refuses_unknown_paper(data_dir, tmp_path):
    from contactplan.errors import InputError
    from contactplan.io.report import write_report

    with pytest.raises(InputError, match="choose a4 or letter"):
        write_report(make_plan(data_dir), tmp_path / "x.pdf", paper="a3")
    assert not (tmp_path / "x.pdf").exists()


def test_report_first_page_renders_with_pdfium(data_dir, tmp_path):
    """Independent renderer (PDFium through pypdfium2, a test extra): page 1 rasterises to the paper size."""
    pdfium = pytest.importorskip("pypdfium2")
    from contactplan.io.report import write_report

    plan = make_plan(data_dir)
    out = tmp_path / "week.pdf"
    write_report(plan, out, paper="a4", now_tt=NOW_TT)
    doc = pdfium.PdfDocument(str(out))
    try:
        image = doc[0].render(scale=1.0).to_pil()  # 72 dpi: one pixel per point
        # A4 is 210 x 297 mm = 595.28 x 841.89 pt (ISO 216); PDFium rounds to whole pixels.
        assert abs(image.width - 595) <= 1 and abs(image.height - 842) <= 1
        # Not blank: the cover carries text and a framed caution box.
        lo, hi = image.convert("L").getextrema()
        assert lo < 100 and hi > 200
    finally:
        doc.close()


def test_report_shows_services_rate_plan_and_links(data_dir, tmp_path):
    from contactplan.io.report import write_report

    plan = make_plan(data_dir)
    out = tmp_path / "week.pdf"
    write_report(plan, out, now_tt=NOW_TT)
    _reader, text = _text(out)
    # B001's services, its track and its rate plan on DN (make_plan: steps at 20:26:15 and 02:33:45 UTC)
    for words in ("telemetry, playback, commanding, ranging, doppler", "19:45 to 02:45",
                  "DN: 19:45-20:26 1000; 20:26-02:33 16000; 02:33-02:45 1000", "355.95 / 101.25",
                  "Links and station services", "DN margin (dB)", "4.6"):
        assert words in text, words
    assert "purposes" not in text.lower() and "setup" not in text.lower()
