"""``lintamp check [PATH ...]``: check netlist files and folders, write one report.

Library first: :func:`lintamp.api.check_paths` checks and decides; this module reads
the options, finds the files (and, with ``--dependents``, the decks that include the
named ones), shows progress on a terminal, writes the report and picks the exit code
(:func:`lintamp.decide.exit_code`).
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from lintamp.commands.common import (EXIT_TROUBLE, UsageError, add_config_options, add_op_from_option,
                                     config_error, epilog, load_config, op_from, output_target,
                                     report_internal_errors, simulator_settings)

FORMATS = ("text", "json", "sarif", "github", "junit")

EXAMPLES = epilog(
    ("lintamp check", "check every netlist under the current folder (the config's netlists globs)"),
    ("lintamp check blocks/ --only connectivity --fail-on error",
     "only the connectivity rules in blocks/; only errors fail the run"),
    ("lintamp check --format sarif -o lintamp.sarif",
     "a SARIF 2.1.0 log for code scanning in CI"),
)


def register(sub) -> None:
    """Add ``check`` and its options to the CLI's subcommands."""
    p = sub.add_parser("check", help="check netlist files and folders",
                       description="Check SPICE netlists for topology and impedance mistakes.\n"
                                   "Exit status: 0 nothing at or above --fail-on, 1 findings at or "
                                   "above it,\n2 lintamp could not do its job (bad option or "
                                   "config, path not found).",
                       epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("paths", nargs="*", metavar="PATH",
                   help="netlist files or folders to check (default: the current folder)")
    p.add_argument("--format", default="text", choices=FORMATS,
                   help="report format: text for people, json, sarif, github annotations "
                        "or junit for machines (default: text)")
    p.add_argument("-o", "--output", metavar="FILE", help="write the report to FILE, not to stdout")
    p.add_argument("--color", default="auto", choices=["auto", "always", "never"],
                   help="colour the text report: auto colours on a terminal, honouring "
                        "NO_COLOR and FORCE_COLOR (default: auto)")
    add_config_options(p)
    p.add_argument("--only", metavar="RULE,...",
                   help="check only these rules or categories (comma-separated)")
    p.add_argument("--skip", metavar="RULE,...", help="do not check these rules or categories")
    p.add_argument("--fail-on", choices=["error", "warning", "info", "never"],
                   help="lowest severity that fails the run (default: warning)")
    p.add_argument("--baseline", metavar="FILE",
                   help="report only findings that FILE does not already accept")
    p.add_argument("--write-baseline", metavar="FILE", help="record today's findings in FILE")
    p.add_argument("--top", metavar="CELL", help="the cell to elaborate as the top level")
    p.add_argument("--op", metavar="FILE",
                   help="operating-point table from your simulator (CSV or JSON)")
    add_op_from_option(p)
    p.add_argument("--bandwidth", metavar="FREQ", help="the signal band, e.g. 20meg")
    p.add_argument("--include-path", action="append", default=[], metavar="DIR",
                   help="another folder .include/.lib may read from (repeatable)")
    p.add_argument("--dependents", action="store_true",
                   help="also check the netlists that include the named files, directly or "
                        "through other includes (what the pre-commit hook passes)")
    p.add_argument("--jobs", type=int, default=1, metavar="N", help="check N files at once")
    p.add_argument("--no-cache", action="store_true",
                   help="neither read nor write the results cache (.lintamp_cache/)")
    p.add_argument("--counts", action="store_true",
                   help="end the text report with the number of findings per rule")
    p.add_argument("--quiet", action="store_true", help="print findings only, no summary")
    p.set_defaults(run=run)


def _config(args):
    from lintamp.commands.common import known_rules
    from lintamp.config import ConfigError, parse_fail_on, parse_rule_list, with_overrides
    start = Path(args.paths[0]) if args.paths else Path.cwd()
    config = load_config(args, start)
    known = known_rules()  # after the config: its rule-paths may have added rules
    changes = {}
    try:
        if args.only:
            changes["only"] = parse_rule_list(args.only, option="--only", known_rules=known)
        if args.skip:
            changes["skip"] = parse_rule_list(args.skip, option="--skip", known_rules=known)
        if args.fail_on:
            changes["fail_on"] = parse_fail_on(args.fail_on)
    except ConfigError as exc:
        raise config_error(exc) from None
    if args.bandwidth:
        changes["bandwidth"] = args.bandwidth
    return with_overrides(config, **changes) if changes else config


def _baseline(args):
    if not args.baseline:
        return None
    from lintamp.baseline import load_baseline
    from lintamp.config import ConfigError
    try:
        return load_baseline(Path(args.baseline))
    except ConfigError as exc:
        raise config_error(exc) from None


def _files(args, config) -> list[Path]:
    """The files to check: those named and found under the folders named, then (with
    ``--dependents``) the decks that include a named file."""
    from lintamp.api import collect_paths
    files = collect_paths(args.paths or ["."], config)
    if not args.dependents:
        return files
    from lintamp.commands.dependents import with_dependents
    include_paths = [*config.include_paths, *(Path(p) for p in args.include_path)]
    return with_dependents(files, config, include_paths)


def run(args) -> int:
    from lintamp.api import check_paths
    from lintamp.decide import exit_code

    for p in args.paths or ["."]:
        if not Path(p).exists():
            raise UsageError(f"{p}: no such file or folder")
    if args.jobs < 1:
        raise UsageError("--jobs must be at least 1")
    args.jobs = min(args.jobs, os.cpu_count() or 1)  # more processes than cores only thrash
    if args.bandwidth:  # refused here as audit refuses it, not ignored
        from lintamp.connectivity.intent import parse_frequency
        if parse_frequency(args.bandwidth) is None:
            raise UsageError(f"--bandwidth {args.bandwidth}: not a frequency "
                             "(write e.g. 20meg, 1.5g or 2e7)")
    output = output_target("-o", args.output) if args.output else None
    baseline_out = output_target("--write-baseline", args.write_baseline) if args.write_baseline else None
    config = _config(args)
    baseline = _baseline(args)
    files = _files(args, config)
    options = {"bandwidth": args.bandwidth, "op_file": args.op}
    include_paths = [Path(p) for p in args.include_path]
    use_cache = not args.no_cache
    simulator = op_from(args, config)
    if simulator and not args.op:
        settings = simulator_settings(config)
        options.update(op_from=simulator, simulator=settings)
        include_paths += list(settings.include_paths)
        use_cache = False  # ngspice's answer depends on files and a program the cache cannot see
    from lintamp.commands.progress import progress_for
    with progress_for(files, sys.stderr, machine_stdout=args.format != "text" and output is None) \
            as progress:
        report, errors = check_paths(files, config, top=args.top,
                                     include_paths=include_paths,
                                     baseline=baseline, options=options, jobs=args.jobs,
                                     use_cache=use_cache, progress=progress)
    if baseline_out is not None:
        from lintamp.baseline import write_baseline
        from lintamp.config import ConfigError
        try:  # never through a link, never over a netlist checked (lintamp.safe_paths)
            write_baseline(baseline_out, report, protect=[*report.files, *report.files_read])
        except ConfigError as exc:
            raise UsageError(f"--write-baseline: {exc}") from None
    write_report(args, report, output)
    if report_internal_errors(errors, sys.stderr):
        return EXIT_TROUBLE
    return exit_code(report, config.fail_on)


def write_report(args, report, output: Path | None = None) -> None:
    """The report in ``--format``, to ``output`` (``-o FILE``, never coloured) or to stdout."""
    from lintamp import __version__
    from lintamp.registry import all_rules
    from lintamp.report import get_reporter, want_color
    from lintamp.report.base import emit

    reporter_cls = get_reporter(args.format)
    if output is not None:
        import io
        from lintamp.safe_paths import write_atomic
        stream = io.StringIO(newline="\n")
        emit(reporter_cls(stream, color=False, rules=all_rules(), tool_version=__version__,
                          counts=args.counts, summary=not args.quiet), report)
        try:  # never through a link, never over a netlist checked
            write_atomic(output, stream.getvalue().encode("utf-8"),
                         protect=[*report.files, *report.files_read])
        except OSError as exc:
            raise UsageError(f"-o {args.output}: cannot write it ({exc.strerror or exc})") from None
        return
    color = want_color(args.color, sys.stdout) if args.format == "text" else False
    emit(reporter_cls(sys.stdout, color=color, rules=all_rules(), tool_version=__version__,
                      counts=args.counts, summary=not args.quiet), report)
