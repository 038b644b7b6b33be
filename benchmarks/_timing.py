"""Shared helpers for the benchmark scripts (not a test).

The machine is shared: figures are CPU seconds of this process (``time.process_time``) or
of child processes (``resource.getrusage(RUSAGE_CHILDREN)``) unless they say "wall", and
ratios are measured in the same run. Every figure line carries the CPU count (:data:`CPUS`).
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import time


def cpu_count() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


#: printed beside every figure
CPUS = f"[{cpu_count()} CPUs]"


def best_of(fn, repeat: int = 3, clock=time.process_time):
    """Run ``fn`` ``repeat`` times; return (fastest time in s by ``clock``, default CPU time of this
    process, and the result of the last run)."""
    best = float("inf")
    out = None
    for _ in range(repeat):
        t0 = clock()
        out = fn()
        best = min(best, clock() - t0)
    return best, out


def best_of_wall(fn, repeat: int = 3):
    """Like :func:`best_of` but wall time (for what runs in other processes or waits on an event loop)."""
    return best_of(fn, repeat, time.perf_counter)


def children_cpu() -> float:
    """CPU seconds (user + system) of the finished child processes so far."""
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def process_cpu(args, repeat: int = 3, env=None):
    """Run ``python -m contactplan ARGS`` ``repeat`` times; (median CPU s of the whole process, median wall s)."""
    cpu, wall = [], []
    base = dict(os.environ if env is None else env)
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    base["PYTHONPATH"] = root + (os.pathsep + base["PYTHONPATH"] if base.get("PYTHONPATH") else "")
    for _ in range(repeat):
        c0, t0 = children_cpu(), time.perf_counter()
        subprocess.run([sys.executable, "-m", "contactplan", *args], check=True, env=base,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        cpu.append(children_cpu() - c0)
        wall.append(time.perf_counter() - t0)
    return sorted(cpu)[len(cpu) // 2], sorted(wall)[len(wall) // 2]
