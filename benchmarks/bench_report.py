"""Benchmark: the weekly PDF of the demo week (contactplan.io.report.write_report).

    .venv/bin/python benchmarks/bench_report.py

Prints, in CPU seconds beside the CPU count: the plan (not counted), importing matplotlib and
reportlab, ``write_report`` on its first call in the process and again, and the whole
``contactplan export week.toml --out week.pdf`` process (child CPU, median of three).
Target: the weekly PDF (``write_report``) under 1.5 s.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from _timing import CPUS, process_cpu  # noqa: E402

TARGET_S = 1.5


def main() -> int:
    import warnings

    warnings.simplefilter("ignore")
    from contactplan.plan.pipeline import compute_plan
    from contactplan.scenario import load_scenario

    week = ROOT / "resources" / "demo" / "week.toml"
    plan = compute_plan(load_scenario(week))
    c = time.process_time
    t0 = c()
    import matplotlib.figure  # noqa: F401
    import reportlab.platypus  # noqa: F401
    t_imp = c() - t0
    from contactplan.io.report import write_report

    with tempfile.TemporaryDirectory(prefix="contactplan-bench-") as tmp:
        out = os.path.join(tmp, "week.pdf")
        t0 = c()
        pages = write_report(plan, out)
        t_first = c() - t0
        t_again = float("inf")
        for _ in range(2):
            t0 = c()
            write_report(plan, out)
            t_again = min(t_again, c() - t0)
        size_kb = os.path.getsize(out) / 1e3
        env = dict(os.environ, CONTACTPLAN_CACHE_DIR=os.path.join(tmp, "cache"),
                   PYTHONPYCACHEPREFIX=os.path.join(tmp, "pycache"))
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        cmd = ["export", str(week), "--out", out]
        process_cpu(cmd, repeat=1, env=env)  # warm the caches and the compiled modules
        cpu_proc, wall_proc = process_cpu(cmd, repeat=3, env=env)
    print(f"importing matplotlib and reportlab: {t_imp:.2f} s CPU {CPUS}")
    print(f"weekly PDF ({pages} pages, {size_kb:.0f} kB), write_report first call: {t_first:.2f} s CPU, "
          f"again: {t_again:.2f} s CPU {CPUS} (target < {TARGET_S} s: {'met' if t_first < TARGET_S else 'NOT met'})")
    print(f"whole process `contactplan export week.toml --out week.pdf`: {cpu_proc:.2f} s CPU "
          f"({wall_proc:.2f} s wall) {CPUS}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
