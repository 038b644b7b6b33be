"""``contactplan ARGS`` run in the test process (cheaper than a subprocess), for tests of the command line."""

from __future__ import annotations

import io
import warnings
from contextlib import redirect_stderr, redirect_stdout
from types import SimpleNamespace


def run_cli(*args) -> SimpleNamespace:
    """Exit status, stdout and stderr of ``contactplan ARGS`` (warnings silenced)."""
    from contactplan.cli import main

    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        code = main([str(a) for a in args])
    return SimpleNamespace(returncode=code, stdout=out.getvalue(), stderr=err.getvalue())
