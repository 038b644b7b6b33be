"""Acceptance review of scenario files as they arrive from other machines (invented test data)."""

from __future__ import annotations

from contactplan.scenario.load import load_scenario


def test_byte_order_mark_and_windows_line_ends_are_accepted(minimal_path, tmp_path):
    # Editors on Windows may start UTF-8 files with U+FEFF and end lines with CR LF; TOML 1.0 allows
    # CR LF line ends, and a leading U+FEFF is an encoding signature, not content (Unicode standard,
    # section 23.8, from memory).
    plain = load_scenario(minimal_path)
    path = tmp_path / "week.toml"
    path.write_bytes(b"\xef\xbb\xbf" + minimal_path.read_bytes().replace(b"\n", b"\r\n"))
    sc = load_scenario(path)
    assert sc.name == plain.name == "Week 03"
    assert [s.id for s in sc.stations] == ["NRV", "KAL"]
    assert (sc.start_tt, sc.end_tt) == (plain.start_tt, plain.end_tt)
    assert [b.id for b in sc.bookings] == ["B001"]
