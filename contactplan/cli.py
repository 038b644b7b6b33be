"""Command line: ``contactplan`` opens the planner; sub-commands run headless.

Each sub-command lives in ``contactplan/commands/<name>.py`` with ``HELP``,
``EXAMPLES``, ``add_arguments(parser)`` and ``run(args) -> int``; modules are
imported only when their command runs, so the start path stays light.
Exit status: 0 fine, 1 the plan has errors (check, draft), 2 bad input.
"""

from __future__ import annotations

import argparse
import importlib
import sys
import textwrap

from contactplan import CAUTION, __version__
from contactplan.errors import InputError

#: sub-command name -> (module, one-line help)
COMMANDS = {
    "passes": ("contactplan.commands.passes", "predict passes of each station over a window"),
    "check": ("contactplan.commands.check", "check the plan against every rule"),
    "draft": ("contactplan.commands.draft", "draft bookings for the window that meet the requirements"),
    "export": ("contactplan.commands.export", "export passes, bookings, ephemeris, the weekly report, or issue "
                                              "requests to the station network"),
    "reconcile": ("contactplan.commands.reconcile", "read the station network's replies into the plan"),
    "import-busy": ("contactplan.commands.import_busy", "add other users' busy time from an iCalendar file"),
    "diff": ("contactplan.commands.diff", "what changed between two revisions of a scenario"),
}


EXAMPLES = """\
examples:
  contactplan                                open the planner on the bundled demo
  contactplan week.toml                      open the planner on a scenario
  contactplan passes week.toml               passes of every station, as a table
  contactplan check week.toml                check the plan (exit status 1 when it has errors)
  contactplan export week.toml --out week.pdf
  contactplan export week.toml --what requests --out req.ics
  contactplan reconcile week.toml reply.ics --out week.toml
  contactplan diff week.r4.toml week.toml    what changed since revision 4 (exit status 1 when anything did)
  contactplan COMMAND --help                 options and examples of one command"""


class _OneLineParser(argparse.ArgumentParser):
    """argparse whose errors are one line, like every other error: ``contactplan: error: ...`` (exit 2)."""

    def error(self, message):
        from contactplan.errors import escape_text

        hint = f" (see {self.prog} --help)"
        self.exit(2, f"contactplan: error: {escape_text(' '.join(message.split()))}{hint}\n")


def _parser(only: str | None = None) -> argparse.ArgumentParser:
    """The command-line parser; with ``only`` (the sub-command being run) the other sub-commands'
    modules are not imported (they are listed, without their options)."""
    p = _OneLineParser(
        prog="contactplan",
        usage="contactplan [FILE]\n       contactplan [-h] [--version] COMMAND ...",
        description="Ground contact and downlink planner for libration-point missions. "
        "Without a sub-command, opens the desktop planner (on FILE, or on the bundled demo).",
        epilog=EXAMPLES + "\n\n" + textwrap.fill(CAUTION, 78),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--version", action="version", version=f"contactplan {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_OneLineParser)
    for name, (module, help_text) in COMMANDS.items():
        sp = sub.add_parser(name, prog=f"contactplan {name}", help=help_text, description=help_text,
                            formatter_class=argparse.RawDescriptionHelpFormatter)
        sp.set_defaults(_module=module)
        if only is not None and name != only:
            continue
        try:
            mod = importlib.import_module(module)
        except ModuleNotFoundError as exc:
            if exc.name != module:
                raise
            sp.set_defaults(_missing=True)
            sp.add_argument("rest", nargs=argparse.REMAINDER, help=argparse.SUPPRESS)
            continue
        mod.add_arguments(sp)
        if getattr(mod, "EXAMPLES", None):
            sp.epilog = "examples:\n" + mod.EXAMPLES
    return p


def _show_warning(message, category, filename, lineno, file=None, line=None):
    """Warnings reach the user as one plain line, like errors."""
    print(f"contactplan: warning: {' '.join(str(message).split())}", file=sys.stderr if file is None else file)


def main(argv: list[str] | None = None) -> int:
    import warnings

    warnings.showwarning = _show_warning
    argv = list(sys.argv[1:] if argv is None else argv)
    if not argv or (argv[0] not in COMMANDS and not argv[0].startswith("-")):
        return main_gui(argv[0] if argv else None)
    parser = _parser(argv[0] if argv[0] in COMMANDS else None)
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    if getattr(args, "_missing", False):
        print(f"contactplan: error: '{args.command}' is not available in this version", file=sys.stderr)
        return 2
    mod = importlib.import_module(args._module)
    try:
        return int(mod.run(args) or 0)
    except InputError as exc:
        print(f"contactplan: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("contactplan: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0


def main_gui(path: str | None = None) -> int:
    """Open the desktop planner (needs a display)."""
    import os

    if sys.platform.startswith("linux") and not (
        os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY") or os.environ.get("QT_QPA_PLATFORM")
    ):
        print("contactplan: no display found; the planner needs a desktop session. "
              "Headless use: contactplan passes|check|draft|export SCENARIO (see contactplan --help).",
              file=sys.stderr)
        return 1
    try:
        from contactplan.app.main import run_app
    except ImportError as exc:
        print(f"contactplan: error: the desktop planner cannot start: {exc}", file=sys.stderr)
        return 2
    return run_app(path)
