"""``contactplan check``: exit status, text and JSON output, re-validation with --ephemeris (invented data)."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from contactplan import CAUTION
from contactplan.cli import main

TIME_RE = re.compile(r"^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z$")


def _clean_copy(minimal_path: Path, tmp_path: Path) -> Path:
    """The minimal scenario without its burns, slew and requirements: nothing can be an error."""
    text = minimal_path.read_text(encoding="utf-8")
    text = text.split("[[activities]]")[0] + "\n"
    p = tmp_path / "clean.toml"
    p.write_text(text, encoding="utf-8")
    return p


def test_json_output_shape_and_exit_1_on_errors(minimal_path, capsys):
    rc = main(["check", str(minimal_path), "--format", "json"])
    out = json.loads(capsys.readouterr().out)
    assert rc == 1
    assert set(out) == {"findings", "errors", "warnings"}
    assert out["errors"] == sum(1 for f in out["findings"] if f["severity"] == "error") >= 1
    assert out["warnings"] == sum(1 for f in out["findings"] if f["severity"] == "warning")
    for f in out["findings"]:
        assert set(f) == {"rule", "severity", "subjects", "start", "end", "message"}
        assert TIME_RE.match(f["start"]) and TIME_RE.match(f["end"]) and f["start"] <= f["end"]
    burn = [f for f in out["findings"] if f["rule"] == "burn-unmonitored"]
    # SK-01 at 2027-01-15T14:00Z for 20 min, monitored 30 min either side, no booking then
    assert burn[0]["subjects"] == ["SK-01"] and burn[0]["start"] == "2027-01-15T13:30:00.000Z"
    assert burn[0]["end"] == "2027-01-15T14:50:00.000Z" and "80 min" in burn[0]["message"]
    starts = [f["start"] for f in out["findings"]]
    assert starts == sorted(starts)


def test_text_output_and_exit_0_without_errors(minimal_path, tmp_path, capsys):
    rc = main(["check", str(_clean_copy(minimal_path, tmp_path))])
    out = capsys.readouterr().out
    assert rc == 0
    assert out.splitlines()[0].startswith("Week 03: 2027-01-12T00:00:00Z to 2027-01-19T00:00:00Z, 0 bookings")
    assert "ERROR" not in out and out.rstrip().endswith(CAUTION)
    assert re.search(r"^0 errors, \d+ warnings?$|^no findings", out, re.M)


def test_text_lists_errors(minimal_path, capsys):
    assert main(["check", str(minimal_path)]) == 1
    out = capsys.readouterr().out
    assert re.search(r"^ERROR +2027-01-15T13:30:00\.000Z +burn-unmonitored +SK-01: ", out, re.M)
    assert re.search(r"^1 error, \d+ warnings$", out, re.M)


@pytest.mark.parametrize("content, expect", [
    ("[scenario\nname = 1\n", r"bad\.toml:1: not valid TOML"),
    (None, r"missing\.toml: file not found"),
])
def test_bad_input_exit_2_one_line(tmp_path, capsys, content, expect):
    name = "bad.toml" if content is not None else "missing.toml"
    p = tmp_path / name
    if content is not None:
        p.write_text(content, encoding="utf-8")
    assert main(["check", str(p)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("contactplan: error: ") and "\n" not in err and re.search(expect, err)


def test_bad_ephemeris_exit_2(minimal_path, tmp_path, capsys):
    bad = tmp_path / "new.oem"
    bad.write_text("this is not an orbit file\n", encoding="utf-8")
    assert main(["check", str(minimal_path), "--ephemeris", str(bad)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("contactplan: error: ") and "new.oem" in err and "\n" not in err


def test_revalidation_with_a_new_oem(minimal_path, tmp_path, capsys):
    from contactplan.ephemeris import ephemeris_for
    from contactplan.io.oem import write_ephemeris_oem
    from contactplan.scenario import load_scenario
    from test_revalidate import S_PER_DEG, Turned

    sc = load_scenario(minimal_path)
    eph = ephemeris_for(sc)
    new = tmp_path / "delivery.oem"
    # sampled every 10 min and interpolated back by the OEM reader
    write_ephemeris_oem(new, Turned(eph, 1.0), sc.start_tt - 86400.0, sc.end_tt + 86400.0, step_s=600.0,
                        object_name="INVENTED PROBE", object_id="2027-900A")
    rc = main(["check", str(minimal_path), "--ephemeris", str(new), "--format", "json"])
    out = json.loads(capsys.readouterr().out)
    assert rc == 1  # the burn is still unmonitored
    assert set(out) == {"findings", "errors", "warnings", "revalidation"}
    b = out["revalidation"]["bookings"][0]
    assert b["booking"] == "B001" and b["checked"] is True
    # a 1 degree turn about the polar axis: passes 239.3 s later (IERS Conventions 2010 eq. 5.15)
    assert b["aos_shift_s"] == pytest.approx(S_PER_DEG, abs=5.0)
    assert b["los_shift_s"] == pytest.approx(S_PER_DEG, abs=5.0)

    rc = main(["check", str(minimal_path), "--ephemeris", str(new)])
    text = capsys.readouterr().out
    assert "Re-validation against delivery.oem" in text
    assert re.search(r"^B001 +NRV +\+2\d\d\.\d +\+2\d\d\.\d  ", text, re.M)
