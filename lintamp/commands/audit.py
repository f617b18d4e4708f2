"""``lintamp audit NETLIST``: the review sheet of a block.

Library first: :func:`lintamp.audit.sheet.build_sheet` computes the sheet;
this module reads the options, picks the renderer and writes the result
(atomically with ``-o``: a temporary file beside the target, then a rename).
Nothing is ever written beside the netlist.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path


def _config(args):
    from lintamp.cli import UsageError
    from lintamp.config import ConfigError, load_config, with_overrides
    from lintamp.registry import all_rules

    known = {name: rule.category for name, rule in all_rules().items()}
    explicit = Path(args.config) if args.config else None
    if explicit is not None and not explicit.is_file():
        raise UsageError(f"--config {args.config}: no such file")
    try:
        config = load_config(explicit, isolated=args.isolated,
                             start=Path(args.netlist).resolve().parent, known_rules=known)
    except ConfigError as exc:
        raise UsageError(str(exc)) from None
    if config.source is None:
        config = with_overrides(config, root=Path.cwd().resolve())
    return config


def write_atomically(path: Path, payload: bytes, protect=()) -> None:
    """Write ``payload`` to ``path`` through a temporary file in the same folder; never
    through a symbolic link nor over a file in ``protect`` (lintamp.safe_paths)."""
    from lintamp.cli import UsageError
    from lintamp.safe_paths import write_atomic
    try:
        write_atomic(path, payload, protect=protect, durable=False)
    except OSError as exc:
        raise UsageError(f"-o {path}: cannot write it ({exc.strerror or exc})") from None


def json_safe(value):
    """``value`` with every non-finite float as the string JSON reports use ("inf", "nan")."""
    from lintamp.report.base import json_number
    if isinstance(value, dict):
        return {k: json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    return json_number(value)


def cmd_audit(args) -> int:
    from lintamp.audit.sheet import AuditError, build_sheet
    from lintamp.cli import EXIT_OK, EXIT_TROUBLE, UsageError

    path = Path(args.netlist)
    if not path.is_file():
        raise UsageError(f"{args.netlist}: no such file")
    output = Path(args.output) if args.output else None
    if output is not None and not (output.parent if str(output.parent) else Path(".")).is_dir():
        raise UsageError(f"-o {args.output}: no such folder")
    config = _config(args)
    table = None
    if args.op:
        from lintamp.engine.op_table import load_op_table
        from lintamp.safe_paths import read_text
        try:
            table = load_op_table(read_text(args.op))  # no pipe, no device
        except (OSError, ValueError) as exc:
            raise UsageError(f"--op {args.op}: {getattr(exc, 'strerror', None) or exc}") from None
    want_plots = args.format in ("markdown", "html") and (args.format == "html" or output is not None)
    try:
        sheet = build_sheet(path, top=args.top, bandwidth=args.bandwidth, table=table,
                            include_paths=[Path(p) for p in args.include_path], config=config,
                            plots=want_plots)
    except AuditError as exc:
        raise UsageError(str(exc)) from None
    except ValueError as exc:  # --bandwidth that is no frequency
        raise UsageError(str(exc)) from None

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
        # a number the sheet could not bound (a device without its model: an infinite
        # r_o) is written as check's JSON writes it, "inf", not a traceback
        text = json.dumps(json_safe(sheet.data), indent=2, allow_nan=False, default=str) + "\n"
    elif args.format == "text":
        from lintamp.audit.render_text import render_text
        from lintamp.report.base import printable
        # names are the netlist's: no ESC or OSC-8 sequence reaches the terminal or the log
        text = "\n".join(printable(line) for line in render_text(sheet.data).split("\n"))
    elif args.format == "markdown":
        from lintamp.audit.render_markdown import render_markdown
        from lintamp.audit.plots import plot_file_name
        stem = output.stem if output is not None else "audit"
        names = {key: plot_file_name(stem, key) for key in images}
        text = render_markdown(sheet.data, names)
    else:
        from lintamp.audit.render_html import render_html
        text = render_html(sheet.data, images)
    if output is None:
        sys.stdout.write(text)
    else:
        inputs = [path]  # the netlist checked is never overwritten
        if args.format == "markdown":
            for key, payload in images.items():
                write_atomically(output.parent / names[key], payload, inputs)
        write_atomically(output, text.encode("utf-8"), inputs)
    if sheet.data.get("internal_errors"):
        for error in sheet.data["internal_errors"]:
            print(f"lintamp: internal error: {error}", file=sys.stderr)
        return EXIT_TROUBLE
    return EXIT_OK
