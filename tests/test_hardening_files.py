"""Exports never replace the scenario's inputs or special files; saves keep owners, warn on hard links,
never collide; inputs are regular files of a bounded size."""

from __future__ import annotations

import os
import shutil
import stat
import sys
import threading
from pathlib import Path

import pytest

from contactplan.cli import main
from contactplan.errors import InputError
from contactplan.fileio import MAX_INPUT_BYTES, atomic_write, read_input

posix = pytest.mark.skipif(sys.platform.startswith("win"), reason="POSIX files")


@pytest.fixture(scope="module")
def oem_week(tmp_path_factory):
    """A scenario on an OEM file beside it (two days of the built-in orbit at 600 s)."""
    d = tmp_path_factory.mktemp("oemweek")
    src = Path(__file__).parent / "data" / "minimal.toml"
    assert main(["export", str(src), "--out", str(d / "probe.oem"), "--start", "2027-01-12T00:00:00Z",
                 "--end", "2027-01-14T00:00:00Z"]) == 0
    lines = [('ephemeris = { oem = "probe.oem" }' if ln.startswith("ephemeris = { libration") else ln)
             for ln in src.read_text("utf-8").splitlines()]
    text = "\n".join(lines) + "\n"
    text = text.replace('end = "2027-019T00:00:00Z"', 'end = "2027-01-14T00:00:00Z"', 1)
    (d / "week.toml").write_text(text, "utf-8")
    return d


def _one_error_line(capsys):
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("contactplan: error: "), err
    return err[0]


def test_export_refuses_to_overwrite_the_scenarios_ephemeris(oem_week, capsys):
    oem = oem_week / "probe.oem"
    before = oem.read_bytes()
    assert main(["export", str(oem_week / "week.toml"), "--out", str(oem)]) == 2
    line = _one_error_line(capsys)
    assert "input of this scenario" in line and "probe.oem" in line
    assert oem.read_bytes() == before and not (oem_week / "probe.oem~").exists()


@posix
def test_export_refuses_a_link_to_an_input_and_the_scenario_itself(oem_week, capsys):
    link = oem_week / "alias.oem"
    if not link.exists():
        link.symlink_to(oem_week / "probe.oem")
    assert main(["export", str(oem_week / "week.toml"), "--out", str(link)]) == 2
    assert "input of this scenario" in _one_error_line(capsys)
    week = oem_week / "week.toml"
    json_copy = oem_week / "week.json"
    shutil.copy(week, json_copy)  # a scenario named .json, exported over itself
    before = json_copy.read_bytes()
    assert main(["passes", str(json_copy), "--out", str(json_copy)]) == 2
    assert "input of this scenario" in _one_error_line(capsys)
    assert json_copy.read_bytes() == before


def test_export_that_replaces_a_file_keeps_name_tilde(oem_week, capsys):
    out = oem_week / "table.csv"
    out.write_text("old table\n")
    assert main(["passes", str(oem_week / "week.toml"), "--out", str(out)]) == 0
    assert (oem_week / "table.csv~").read_text() == "old table\n"
    assert out.read_text().startswith("station")
    ics = oem_week / "cal.ics"
    ics.write_text("old calendar\n")
    assert main(["export", str(oem_week / "week.toml"), "--out", str(ics)]) == 0
    assert (oem_week / "cal.ics~").read_text() == "old calendar\n"
    capsys.readouterr()


@posix
def test_special_files_as_out_are_refused(oem_week, capsys, tmp_path):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    assert main(["passes", str(oem_week / "week.toml"), "--out", str(fifo)]) == 2
    assert "FIFO" in _one_error_line(capsys)
    assert stat.S_ISFIFO(fifo.stat().st_mode)
    if os.path.exists("/dev/null"):
        link = tmp_path / "null.csv"
        link.symlink_to("/dev/null")
        assert main(["export", str(oem_week / "week.toml"), "--out", str(link)]) == 2
        assert "character device" in _one_error_line(capsys)
        assert stat.S_ISCHR(os.stat("/dev/null").st_mode)
    with pytest.raises(InputError, match="FIFO"):
        atomic_write(fifo, "x")


@posix
def test_inputs_must_be_regular_files(tmp_path, capsys):
    fifo = tmp_path / "week.toml"
    os.mkfifo(fifo)
    with pytest.raises(InputError, match="FIFO") as e:  # returns at once, never blocks on the pipe
        read_input(fifo)
    assert str(fifo) in str(e.value)
    if os.path.exists("/dev/zero"):
        assert main(["check", "/dev/zero"]) == 2
        assert "character device, not a regular file" in _one_error_line(capsys)


def test_input_size_limit_is_generous_and_stated(tmp_path):
    # an OEM of 10^6 lines is about 120 MB: well inside the limit
    assert MAX_INPUT_BYTES >= 10**6 * 130
    big = tmp_path / "big.oem"
    with open(big, "wb") as fh:
        fh.truncate(MAX_INPUT_BYTES + 1)  # sparse: no disk used
    with pytest.raises(InputError, match="MiB") as e:
        read_input(big)
    assert str(big) in str(e.value)


@pytest.mark.filterwarnings("ignore:.*hard link")
def test_concurrent_saves_with_backup_never_collide(tmp_path):
    p = tmp_path / "plan.toml"
    atomic_write(p, "a = 0\n")
    errors = []
    barrier = threading.Barrier(6)

    def save(i):
        barrier.wait()
        try:
            for k in range(20):
                atomic_write(p, f"a = {i}{k}\n", backup=True)
        except Exception as exc:  # noqa: BLE001 - the test collects every failure
            errors.append(exc)

    threads = [threading.Thread(target=save, args=(i,)) for i in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    assert p.read_text().startswith("a = ") and (tmp_path / "plan.toml~").read_text().startswith("a = ")
    assert [x.name for x in tmp_path.iterdir() if x.name.endswith(".tmp")] == []


@posix
def test_save_over_a_hard_link_says_it_breaks_the_link(tmp_path):
    p = tmp_path / "plan.toml"
    p.write_text("a = 1\n")
    os.link(p, tmp_path / "other-name.toml")
    with pytest.warns(UserWarning, match="hard link"):
        atomic_write(p, "a = 2\n")
    assert (tmp_path / "other-name.toml").read_text() == "a = 1\n"


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() != 0, reason="changing owners needs root")
def test_save_keeps_owner_and_group(tmp_path):
    p = tmp_path / "plan.toml"
    p.write_text("a = 1\n")
    os.chown(p, 4321, 8765)
    atomic_write(p, "a = 2\n", backup=True)
    st = p.stat()
    assert (st.st_uid, st.st_gid) == (4321, 8765) and p.read_text() == "a = 2\n"
