"""Command line: parse options, load the config, call the library, pick a reporter.

Exit codes: 0 nothing at or above ``--fail-on``; 1 findings at or above it; 2 the
tool could not do its job (bad option or config, path not found, internal error).
Imports are kept inside the commands: a pre-commit hook pays only for what the
command it runs needs.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from lintamp import __version__

EXIT_OK, EXIT_FINDINGS, EXIT_TROUBLE = 0, 1, 2


class UsageError(Exception):
    """Bad options or paths: reported as one line, exit 2."""


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # argparse's own exit code is 2 too; keep its one-line form
        self.print_usage(sys.stderr)
        self.exit(EXIT_TROUBLE, f"lintamp: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="lintamp", description="Topology and impedance checks for analog "
                     "SPICE netlists.")
    parser.add_argument("--version", action="version", version=f"lintamp {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    check = sub.add_parser("check", help="check netlist files and folders")
    check.add_argument("paths", nargs="*", metavar="PATH", help="files or folders (default: .)")
    check.add_argument("--format", default="text",
                       choices=["text", "json", "sarif", "github", "junit"])
    check.add_argument("-o", "--output", metavar="FILE", help="write the report to FILE")
    check.add_argument("--color", default="auto", choices=["auto", "always", "never"])
    check.add_argument("--config", metavar="FILE", help="use this config file")
    check.add_argument("--isolated", action="store_true", help="ignore every config file")
    check.add_argument("--select", metavar="RULE,...", help="check only these rules or categories")
    check.add_argument("--ignore", metavar="RULE,...", help="skip these rules or categories")
    check.add_argument("--fail-on", choices=["error", "warning", "info", "never"],
                       help="lowest severity that fails the run (default: warning)")
    check.add_argument("--baseline", metavar="FILE", help="report only findings not in FILE")
    check.add_argument("--write-baseline", metavar="FILE", help="record today's findings in FILE")
    check.add_argument("--top", metavar="CELL", help="the cell to elaborate as the top level")
    check.add_argument("--op", metavar="FILE", help="operating-point table (CSV or JSON)")
    check.add_argument("--bandwidth", metavar="FREQ", help="signal band, e.g. 20meg")
    check.add_argument("--include-path", action="append", default=[], metavar="DIR",
                       help="another folder .include/.lib may read from (repeatable)")
    check.add_argument("--jobs", type=int, default=1, metavar="N", help="check N files at once")
    check.add_argument("--no-cache", action="store_true", help="do not read or write the cache")
    check.add_argument("--statistics", action="store_true", help="add counts per rule")
    check.add_argument("--quiet", action="store_true", help="print findings only, no summary")

    rules = sub.add_parser("rules", help="list every rule")
    rules.add_argument("--format", default="text", choices=["text", "json"])

    explain = sub.add_parser("explain", help="show a rule's full page")
    explain.add_argument("rule", metavar="RULE")

    imp = sub.add_parser("impedance", help="small-signal impedance looking into a node")
    imp.add_argument("netlist", metavar="NETLIST")
    imp.add_argument("node", metavar="NODE")
    imp.add_argument("--freq", default="0", metavar="F", help="frequency in Hz (default: DC)")
    imp.add_argument("--detach", action="append", default=[], metavar="ELEMENT")
    imp.add_argument("--top", metavar="CELL")
    imp.add_argument("--op", metavar="FILE")
    imp.add_argument("--format", default="text", choices=["text", "json"])
    imp.add_argument("--include-path", action="append", default=[], metavar="DIR")

    audit = sub.add_parser("audit", help="the review sheet of a block")
    audit.add_argument("netlist", metavar="NETLIST")
    audit.add_argument("--top", metavar="CELL")
    audit.add_argument("--format", default="text", choices=["text", "json", "markdown", "html"])
    audit.add_argument("-o", "--output", metavar="FILE", help="write the sheet to FILE")
    audit.add_argument("--op", metavar="FILE", help="operating-point table (CSV or JSON)")
    audit.add_argument("--bandwidth", metavar="FREQ", help="signal band, e.g. 20meg")
    audit.add_argument("--include-path", action="append", default=[], metavar="DIR")
    audit.add_argument("--config", metavar="FILE", help="use this config file")
    audit.add_argument("--isolated", action="store_true", help="ignore every config file")
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        if args.command == "check":
            return cmd_check(args)
        if args.command == "rules":
            return cmd_rules(args)
        if args.command == "explain":
            return cmd_explain(args)
        if args.command == "impedance":
            from lintamp.commands.impedance import cmd_impedance
            return cmd_impedance(args)
        if args.command == "audit":
            from lintamp.commands.audit import cmd_audit
            return cmd_audit(args)
        parser.print_help()
        return EXIT_TROUBLE
    except UsageError as exc:
        print(f"lintamp: {exc}", file=sys.stderr)
        return EXIT_TROUBLE
    except KeyboardInterrupt:
        return 130
    except BrokenPipeError:
        return EXIT_OK


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


def _known_rules() -> dict[str, str]:
    from lintamp.registry import all_rules
    return {name: rule.category for name, rule in all_rules().items()}


def _load_config(args):
    from lintamp.config import ConfigError, load_config, parse_fail_on, parse_rule_list, with_overrides
    known = _known_rules()
    try:
        explicit = Path(args.config) if args.config else None
        if explicit is not None and not explicit.is_file():
            raise UsageError(f"--config {args.config}: no such file")
        start = Path(args.paths[0]) if getattr(args, "paths", None) else Path.cwd()
        start = start if start.is_dir() else start.parent
        config = load_config(explicit, isolated=args.isolated, start=start.resolve(),
                             known_rules=known)
        changes = {}
        if config.source is None:  # no config file: the cache and relative paths live here
            changes["root"] = Path.cwd().resolve()
        if args.select:
            changes["select"] = parse_rule_list(args.select, option="--select", known_rules=known)
        if args.ignore:
            changes["ignore"] = parse_rule_list(args.ignore, option="--ignore", known_rules=known)
        if args.fail_on:
            changes["fail_on"] = parse_fail_on(args.fail_on)
        if args.bandwidth:
            changes["bandwidth"] = args.bandwidth
        return with_overrides(config, **changes) if changes else config
    except ConfigError as exc:
        raise UsageError(str(exc)) from None


def cmd_check(args) -> int:
    from lintamp.api import check_paths
    from lintamp.findings import Severity

    paths = args.paths or ["."]
    for p in paths:
        if not Path(p).exists():
            raise UsageError(f"{p}: no such file or folder")
    if args.jobs < 1:
        raise UsageError("--jobs must be at least 1")
    args.jobs = min(args.jobs, os.cpu_count() or 1)  # more processes than cores only thrash
    if args.bandwidth:  # refused here as audit refuses it, not ignored
        from lintamp.connectivity.signal_band import parse_frequency_text
        if parse_frequency_text(args.bandwidth) is None:
            raise UsageError(f"--bandwidth {args.bandwidth}: not a frequency (write e.g. 20meg, 1.5g or 2e7)")
    config = _load_config(args)
    baseline = None
    if args.baseline:
        from lintamp.baseline import load_baseline
        from lintamp.config import ConfigError
        try:
            baseline = load_baseline(Path(args.baseline))
        except ConfigError as exc:
            raise UsageError(str(exc)) from None
    options = {"bandwidth": args.bandwidth, "op_file": args.op}
    report, errors = check_paths(paths, config, top=args.top,
                                 include_paths=[Path(p) for p in args.include_path],
                                 baseline=baseline, options=options, jobs=args.jobs,
                                 use_cache=not args.no_cache)
    if args.write_baseline:
        from lintamp.baseline import write_baseline
        from lintamp.config import ConfigError
        try:  # never through a link, never over a netlist checked (lintamp.safe_paths)
            write_baseline(Path(args.write_baseline), report, protect=report.files)
        except ConfigError as exc:
            raise UsageError(f"--write-baseline: {exc}") from None
    _write_report(args, report)
    for error in errors:
        print(f"lintamp: internal error: {error}", file=sys.stderr)
    if errors:
        return EXIT_TROUBLE
    fail_on = config.fail_on
    if fail_on is not None and any(f.severity >= fail_on for f in report.findings):
        return EXIT_FINDINGS
    del Severity
    return EXIT_OK


def _write_report(args, report) -> None:
    from lintamp.registry import all_rules
    from lintamp.report import get_reporter, want_color
    from lintamp.report.base import emit

    reporter_cls = get_reporter(args.format)
    if args.output:
        import io
        from lintamp.safe_paths import write_atomic
        stream = io.StringIO(newline="\n")
        reporter = reporter_cls(stream, color=False, rules=all_rules(),
                                tool_version=__version__, statistics=args.statistics)
        emit(reporter, report)
        try:  # never through a link, never over a netlist checked
            write_atomic(Path(args.output), stream.getvalue().encode("utf-8"), protect=report.files)
        except OSError as exc:
            raise UsageError(f"-o {args.output}: cannot write it ({exc.strerror or exc})") from None
        return
    color = want_color(args.color, sys.stdout) if args.format == "text" else False
    reporter = reporter_cls(sys.stdout, color=color, rules=all_rules(), tool_version=__version__,
                            statistics=args.statistics)
    emit(reporter, report)


def cmd_rules(args) -> int:
    from lintamp.registry import all_rules
    rules = all_rules()
    if args.format == "json":
        import json
        print(json.dumps([r.to_json() for r in rules.values()], indent=2))
        return EXIT_OK
    width = max(len(n) for n in rules)
    for rule in sorted(rules.values(), key=lambda r: (r.category, r.name)):
        print(f"{rule.name:<{width}}  {rule.category:<12}  {rule.severity.label:<7}  {rule.summary}")
    return EXIT_OK


def cmd_explain(args) -> int:
    from lintamp.registry import all_rules
    rules = all_rules()
    rule = rules.get(args.rule)
    if rule is None:
        close = [n for n in rules if args.rule.lower() in n or n in args.rule.lower()]
        hint = f"; did you mean {', '.join(close)}?" if close else "; `lintamp rules` lists them"
        raise UsageError(f"unknown rule '{args.rule}'{hint}")
    print(f"{rule.name}  ({rule.category}, default severity {rule.severity.label})")
    print()
    print(rule.doc)
    return EXIT_OK


if __name__ == "__main__":
    sys.exit(main())
