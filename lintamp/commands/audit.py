"""``lintamp audit NETLIST``: the review sheet of a block.

Library first: :func:`lintamp.audit.sheet.build_sheet` computes the sheet;
this module reads the options, picks the renderer and writes the result
(atomically with ``-o``: a temporary file beside the target, then a rename).
Nothing is ever written beside the netlist.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from lintamp.commands.common import (EXIT_TROUBLE, UsageError, add_config_options, epilog,
                                     existing_file, load_config, load_op, output_target,
                                     report_internal_errors, add_op_from_option, op_from,
                                     table_from_simulator)

FORMATS = ("text", "json", "markdown", "html")

EXAMPLES = epilog(
    ("lintamp audit samples/sensor_frontend.sp",
     "ports, stages, node impedances and findings of the block, as text"),
    ("lintamp audit amp.sp --format html -o sheet.html",
     "the sheet as one HTML page with its plots (the plots extra)"),
    ("lintamp audit amp.sp --format markdown -o review/amp.md --op op.csv",
     "markdown with PNG plots beside it, at your simulator's operating point"),
)


def register(sub) -> None:
    p = sub.add_parser("audit", help="the review sheet of a block",
                       description="The review sheet of a block: its ports and their "
                                   "impedances, each transistor's role and bias margin, each "
                                   "signal path's gain and -3 dB frequency, and the findings.",
                       epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", metavar="NETLIST", help="the netlist file of the block")
    p.add_argument("--top", metavar="CELL", help="the cell to elaborate as the top level")
    p.add_argument("--format", default="text", choices=FORMATS,
                   help="text, json, markdown or html; html, and markdown written with -o, "
                        "carry plots (default: text)")
    p.add_argument("-o", "--output", metavar="FILE",
                   help="write the sheet to FILE (replaced whole, never half-written)")
    p.add_argument("--op", metavar="FILE",
                   help="operating-point table from your simulator (CSV or JSON)")
    add_op_from_option(p)
    p.add_argument("--bandwidth", metavar="FREQ", help="the signal band, e.g. 20meg")
    p.add_argument("--include-path", action="append", default=[], metavar="DIR",
                   help="another folder .include/.lib may read from (repeatable)")
    add_config_options(p)
    p.set_defaults(run=run)




def write_atomically(path: Path, payload: bytes, protect=()) -> None:
    """Write ``payload`` to ``path`` through a temporary file in the same folder; never
    through a symbolic link nor over a file in ``protect`` (lintamp.safe_paths)."""
    from lintamp.safe_paths import write_atomic
    try:
        write_atomic(path, payload, protect=protect, durable=False)
    except OSError as exc:
        raise UsageError(f"-o {path}: cannot write it ({exc.strerror or exc})") from None


def run(args) -> int:
    path = existing_file(args.netlist)
    output = output_target("-o", args.output) if args.output else None
    config = load_config(args, path.resolve().parent)
    table = load_op(args.op)
    simulator_note = None
    if table is None and op_from(args, config):
        table, simulator_note = table_from_simulator(path, config, top=args.top,
                                                     include_paths=[Path(p) for p in args.include_path])
    args.simulator_note = simulator_note
    want_plots = args.format in ("markdown", "html") and (args.format == "html" or output is not None)
    try:
        return _audit(args, path, output, config, table, want_plots)
    except (UsageError, KeyboardInterrupt, BrokenPipeError):
        raise
    except Exception as exc:  # a bug: one line naming the netlist, never a traceback
        print(f"lintamp: internal error while auditing {args.netlist}: {type(exc).__name__}: "
              f"{_one_line(exc)} (please report it with the netlist)", file=sys.stderr)
        return EXIT_TROUBLE


def _one_line(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    return text[:300] + ("..." if len(text) > 300 else "")


def _audit(args, path, output, config, table, want_plots) -> int:
    from lintamp.audit.sheet import AuditError, build_sheet
    from lintamp.audit.solves import finite_for_json

    try:
        sheet = build_sheet(path, top=args.top, bandwidth=args.bandwidth, table=table,
                            include_paths=[Path(p) for p in args.include_path], config=config,
                            plots=want_plots)
    except AuditError as exc:
        raise UsageError(str(exc)) from None
    if getattr(args, "simulator_note", None):
        sheet.data["notes"] = [args.simulator_note, *(sheet.data.get("notes") or [])]
    non_finite: list = []
    sheet.data = finite_for_json(sheet.data, notes=non_finite)
    if non_finite:
        sheet.data["non_finite"] = non_finite

    images: dict[str, bytes] = {}
    if args.format in ("markdown", "html"):
        from lintamp.audit.plots import render_plots
        plots = render_plots(sheet.curves) if want_plots else None
        if plots is None:
            reason = "markdown written to standard output has nowhere to put images; use -o FILE"
            sheet.data["plots"] = {"made": False, "reason": reason}
        else:
            sheet.data["plots"] = {"made": plots.made, "reason": plots.reason,
                                   "files": sorted(plots.images)}
            images = plots.images
    if args.format == "json":
        text = json.dumps(sheet.data, indent=2, allow_nan=False, default=str) + "\n"
    elif args.format == "text":
        from lintamp.audit.render_text import render_text
        from lintamp.report.base import printable
        # names are the netlist's: no ESC or OSC-8 sequence reaches the terminal or the log
        text = "\n".join(printable(line) for line in render_text(sheet.data).split("\n"))
    elif args.format == "markdown":
        from lintamp.audit.render_markdown import render_markdown
        stem = output.stem if output is not None else "audit"
        from lintamp.audit.plots import plot_file_name
        names = {key: plot_file_name(stem, key) for key in images}
        text = render_markdown(sheet.data, names)
    else:
        from lintamp.audit.render_html import render_html
        text = render_html(sheet.data, images)
    if output is None:
        sys.stdout.write(text)
    else:
        inputs = [path, *sheet.files_read]  # the netlist and its includes are never overwritten
        if args.format == "markdown":
            for key, payload in images.items():
                write_atomically(output.parent / names[key], payload, inputs)
        write_atomically(output, text.encode("utf-8"), inputs)
    return report_internal_errors(sheet.data.get("internal_errors") or (), sys.stderr)
