"""Command line: build the parser from the command modules, run the one asked for.

Exit codes (INTERFACE.md): 0 nothing at or above ``--fail-on``; 1 findings at or
above it; 2 the tool could not do its job (bad option or config, path not found,
internal error).  Each command lives in its own module under :mod:`lintamp.commands`
(``register`` adds its options, ``run`` does it); what they share is in
:mod:`lintamp.commands.common`.  Imports of the heavier layers are kept inside the
commands: a pre-commit hook pays only for what the command it runs needs.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from lintamp import __version__
from lintamp.commands import COMMANDS
from lintamp.commands.common import EXIT_FINDINGS, EXIT_OK, EXIT_TROUBLE, UsageError, epilog

__all__ = ["main", "run", "build_parser", "EXIT_OK", "EXIT_FINDINGS", "EXIT_TROUBLE", "UsageError"]


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # argparse's own exit code is 2 too; keep its one-line form
        self.print_usage(sys.stderr)
        self.exit(EXIT_TROUBLE, f"lintamp: error: {message}\n")


EXAMPLES = epilog(
    ("lintamp check samples/", "check every netlist in a folder"),
    ("lintamp impedance samples/sensor_frontend.sp pd --freq 1k",
     "the impedance looking into a net, and why"),
    ("lintamp explain unbiased-gate", "what a rule finds and how to fix it"),
)


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="lintamp", description="Topology and impedance checks for analog "
                     "SPICE netlists.\n`lintamp COMMAND --help` describes a command.",
                     epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"lintamp {__version__}",
                        help="print the version and exit")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMANDS:
        importlib.import_module(f"lintamp.commands.{name}").register(sub)
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "run", None) is None:
        parser.print_help()
        return EXIT_TROUBLE
    try:
        return args.run(args)
    except UsageError as exc:
        print(f"lintamp: {exc}", file=sys.stderr)
        return EXIT_TROUBLE
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except Exception as exc:  # noqa: BLE001 -- the exit-2 handler: nothing is swallowed silently
        return _could_not_run(exc)


def _could_not_run(exc: Exception) -> int:
    """Exit 2 for what escaped a command: a rule plugin that cannot be used gets one line
    naming it; anything else is a bug, shown with its traceback and a request to report it."""
    from lintamp.registry import RuleLoadError
    if isinstance(exc, RuleLoadError):
        print(f"lintamp: {exc}", file=sys.stderr)
        return EXIT_TROUBLE
    import traceback
    traceback.print_exception(exc, file=sys.stderr)
    print(f"lintamp: internal error: {type(exc).__name__}: {exc}; this is a bug in lintamp, "
          "please report it with the command line and the netlist", file=sys.stderr)
    return EXIT_TROUBLE


def run() -> None:
    """The ``lintamp`` program: :func:`main`, then leave without freeing the last
    file's objects one by one (see :mod:`lintamp.gcpause`); every report is written
    and closed by then, and the streams are flushed here."""
    import os

    from lintamp import gcpause
    gcpause.retain_until_exit = True
    code = main()
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (BrokenPipeError, ValueError):  # a closed pipe or stream: nothing left to say
        pass
    os._exit(code)


if __name__ == "__main__":
    sys.exit(main())
