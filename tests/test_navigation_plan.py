"""The predicted accuracy through the pipeline: check, the CLI (text and JSON), the report."""

from __future__ import annotations

import io
import json

import pytest

OD = """
[orbit_determination]
required_position_km = 0.5
"""


@pytest.fixture(scope="module")
def od_scenario(tmp_path_factory):
    from conftest import DATA

    path = tmp_path_factory.mktemp("od") / "week.toml"
    text = (DATA / "minimal.toml").read_text("utf-8").replace("ranging_per_day_min = 1", "ranging_per_day_min = 1\ntracking_per_day_min_h = 4.0")
    path.write_text(text + OD, "utf-8")
    return path


@pytest.fixture(scope="module")
def plan(od_scenario):
    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario import load_scenario

    return compute_plan(load_scenario(od_scenario))


def test_check_predicts_the_accuracy_and_flags_it(plan):
    nav = plan.navigation
    assert nav is not None and nav.measurements > 0
    assert [c.kind for c in nav.checks] == ["cutoff", "end"]  # SK-01's cut-off 48 h before it, then the end
    # one 8-h booking on the first day: tracked, then a week of drift with the burn's 2 mm/s
    assert nav.checks[0].position_sigma_km < nav.checks[1].position_sigma_km
    od = [f for f in plan.findings if f.rule == "od-accuracy"]
    assert od and all("more than the 0.5 km required" in f.message for f in od)
    assert any(f.rule == "tracking-per-day" for f in plan.findings)


def test_check_reuses_the_prepared_model_after_an_edit(plan):
    from contactplan.plan.pipeline import check

    model = plan.navigation_model[1]
    before = plan.navigation.checks[-1].position_sigma_km
    b = plan.scenario.bookings[0]
    b.end_tt -= 3 * 3600.0
    try:
        check(plan)
        assert plan.navigation_model[1] is model
        assert plan.navigation.checks[-1].position_sigma_km > before  # a shorter track: worse
    finally:
        b.end_tt += 3 * 3600.0
        check(plan)
    assert plan.navigation.checks[-1].position_sigma_km == pytest.approx(before)


def test_cli_prints_the_values_and_the_json_member(od_scenario, capsys):
    from contactplan.cli import main

    main(["check", str(od_scenario)])
    out = capsys.readouterr().out
    assert "Predicted orbit determination (1-sigma" in out
    assert "cut-off for SK-01" in out and "window end" in out and "NOT MET" in out
    main(["check", str(od_scenario), "--format", "json"])
    doc = json.loads(capsys.readouterr().out)
    od = doc["orbit_determination"]
    assert [c["label"] for c in od["checks"]] == ["cut-off for SK-01", "window end"]
    assert od["checks"][1]["met"] is False and od["required_position_km"] == 0.5
    assert od["samples"][0]["time"] == "2027-01-12T00:00:00.000Z"


def test_report_section_reads_back(plan, tmp_path):
    """The report's section alone, built with reportlab and read back with pypdf (the whole
    report is exercised in test_report.py)."""
    from pypdf import PdfReader  # independent PDF reader
    from reportlab.lib.pagesizes import A4
    from reportlab.lib.styles import getSampleStyleSheet
    from reportlab.platypus import Image, Paragraph, SimpleDocTemplate, Table

    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from contactplan.io.report_navigation import navigation_story

    ss = getSampleStyleSheet()

    def figure(fig):
        buf = io.BytesIO()
        FigureCanvasAgg(fig).print_png(buf)
        buf.seek(0)
        w, h = fig.get_size_inches()
        return Image(buf, width=400, height=400 * h / w)

    story = navigation_story(plan, lambda t, st=ss["BodyText"]: Paragraph(str(t), st), figure,
                             lambda rows, widths: Table(rows, colWidths=widths), ss["BodyText"], ss["Heading2"],
                             450.0, 6.0)
    out = tmp_path / "nav.pdf"
    SimpleDocTemplate(str(out), pagesize=A4).build(story)
    text = " ".join((p.extract_text() or "") for p in PdfReader(str(out)).pages)
    assert "Orbit determination (predicted)" in text
    assert "cut-off for SK-01" in text and "window end" in text and "NO" in text
