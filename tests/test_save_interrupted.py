"""A save killed (SIGKILL) at any point leaves the last good scenario file readable.

A child process loads a scenario, grows it to thousands of bookings (a big file) and
saves it; a hook makes it stop at a chosen point of the save and tell the parent,
which then kills it outright. The old file must still load, byte for byte unchanged.
"""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from contactplan.scenario import load_scenario, save_scenario

pytestmark = pytest.mark.skipif(sys.platform.startswith("win"), reason="SIGKILL is POSIX")

ROOT = Path(__file__).resolve().parents[1]

CHILD = textwrap.dedent(r"""
    import os, sys, time
    path, hook = sys.argv[1], sys.argv[2]
    from contactplan.scenario import load_scenario, save_scenario
    from contactplan.scenario import model as m

    sc = load_scenario(path)
    t0 = sc.start_tt
    # about 0.6 MB of TOML, so that random kills land inside the save; a hooked save stops at its
    # step whatever the size, so a small plan does
    for i in range(6000 if hook == "none" else 300):
        sc.bookings.append(m.Booking(id=f"X{i:05d}", station="NRV", start_tt=t0 + i * 60.0,
                                     end_tt=t0 + i * 60.0 + 30.0, purposes=["downlink", "ranging"]))

    def stop():
        print("READY", flush=True)
        while True:
            time.sleep(1)

    if hook == "write":  # stop half-way through writing the temporary file
        real_fdopen = os.fdopen
        class Half:
            def __init__(self, fh): self.fh = fh
            def __enter__(self): return self
            def __exit__(self, *a): return self.fh.__exit__(*a)
            def write(self, data):
                self.fh.write(data[: len(data) // 2]); self.fh.flush(); stop()
            def __getattr__(self, k): return getattr(self.fh, k)
        os.fdopen = lambda fd, mode="r", *a, **k: Half(real_fdopen(fd, mode, *a, **k))
    elif hook == "fsync":  # temporary file complete, not yet renamed
        real_fsync = os.fsync
        def fsync(fd):
            real_fsync(fd); stop()
        os.fsync = fsync
    elif hook == "backup":  # while the backup link is being made
        os.link = lambda *a, **k: stop()
    elif hook == "rename":  # just before the temporary file is renamed over the scenario
        real_replace = os.replace
        def replace(src, dst):
            if str(dst) == str(path):
                stop()
            return real_replace(src, dst)
        os.replace = replace
    elif hook != "none":
        raise SystemExit("unknown hook " + hook)
    print("SAVING", flush=True)
    save_scenario(sc)
    print("DONE", flush=True)
""")


def _start(path: Path, hook: str) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.Popen([sys.executable, "-c", CHILD, str(path), hook], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=env, cwd=str(path.parent))


def _kill(proc: subprocess.Popen) -> None:
    try:
        os.kill(proc.pid, signal.SIGKILL)
    except ProcessLookupError:
        pass
    proc.wait(timeout=30)


@pytest.fixture
def plan(tmp_path, minimal_path) -> Path:
    p = tmp_path / "plan.toml"
    p.write_bytes(minimal_path.read_bytes())
    save_scenario(load_scenario(p))  # a file this version wrote, with a backup next to it
    return p


@pytest.mark.parametrize("hook", ["write", "fsync", "backup", "rename"])
def test_kill_at_each_step_keeps_the_old_file(plan, hook):
    before = plan.read_bytes()
    proc = _start(plan, hook)
    try:
        lines = []
        for line in proc.stdout:
            lines.append(line.strip())
            if line.strip() == "READY":
                break
        assert "READY" in lines, proc.stderr.read()
    finally:
        _kill(proc)
    assert proc.returncode == -signal.SIGKILL
    assert plan.read_bytes() == before
    sc = load_scenario(plan)
    assert [b.id for b in sc.bookings] == ["B001"]
    # the next save works and still keeps a backup
    sc.name = "after the crash"
    save_scenario(sc)
    assert load_scenario(plan).name == "after the crash"
    assert Path(str(plan) + "~").read_bytes() == before


def test_kill_at_random_moments_leaves_old_or_new_file(plan):
    # Unhooked saves killed after random delays: the file is always the old one or the complete new one.
    rng = random.Random(20270112)
    before = plan.read_bytes()
    outcomes = set()
    for _ in range(4):
        proc = _start(plan, "none")
        assert proc.stdout.readline().strip() == "SAVING", proc.stderr.read()
        time.sleep(rng.uniform(0.0, 0.4))
        _kill(proc)
        sc = load_scenario(plan)  # never half a file
        n = len(sc.bookings)
        assert n in (1, 6001)
        outcomes.add(n)
        if n == 6001:
            plan.write_bytes(before)
    assert outcomes
