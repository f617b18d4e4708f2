"""``lintamp audit NETLIST``: the review sheet of a block.

Library first: :func:`lintamp.audit.sheet.build_sheet` computes the sheet;
this module reads the options, picks the renderer and writes the result
(atomically with ``-o``: a temporary file beside the target, then a rename).
Nothing is ever written beside the netlist.
"""

from __future__ import annotations

import json
import os
import sys
import tempfile
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


def write_atomically(path: Path, payload: bytes) -> None:
    """Write ``payload`` to ``path`` through a temporary file in the same folder."""
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(payload)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; a sheet is for sharing
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise


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
        try:
            table = load_op_table(Path(args.op).read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise UsageError(f"--op {args.op}: {exc}") from None
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
    from lintamp.cli import EXIT_OK, EXIT_TROUBLE, UsageError

    try:
        sheet = build_sheet(path, top=args.top, bandwidth=args.bandwidth, table=table,
                            include_paths=[Path(p) for p in args.include_path], config=config,
                            plots=want_plots)
    except AuditError as exc:
        raise UsageError(str(exc)) from None
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
        text = render_text(sheet.data)
    elif args.format == "markdown":
        from lintamp.audit.render_markdown import render_markdown
        stem = output.stem if output is not None else "audit"
        names = {key: f"{stem}-{key}.png" for key in images}
        text = render_markdown(sheet.data, names)
    else:
        from lintamp.audit.render_html import render_html
        text = render_html(sheet.data, images)
    if output is None:
        sys.stdout.write(text)
    else:
        if args.format == "markdown":
            for key, payload in images.items():
                write_atomically(output.parent / f"{output.stem}-{key}.png", payload)
        write_atomically(output, text.encode("utf-8"))
    if sheet.data.get("internal_errors"):
        for error in sheet.data["internal_errors"]:
            print(f"lintamp: internal error: {error}", file=sys.stderr)
        return EXIT_TROUBLE
    return EXIT_OK
