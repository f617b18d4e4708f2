"""``lintamp impedance NETLIST NODE``: what the circuit looks like from NODE, and why."""

from __future__ import annotations

import difflib
import json
import sys
from pathlib import Path

from lintamp.report.si import si, si_for_key


class _Usage(Exception):
    pass


def load_flat_circuit(netlist_path: Path, *, top: str | None, include_paths=(), config=None):
    """Parse, elaborate and flatten a netlist file (with its includes)."""
    from lintamp.api import default_config, load_design, read_options
    from lintamp.circuit.flatten import FlattenLimit, flatten
    from lintamp.netlist.parser import parse_file

    config = config or default_config()
    netlist = parse_file(netlist_path, read_options(netlist_path, config, include_paths))
    problems = [d for d in netlist.diagnostics if d.severity == "error"]
    design = load_design(netlist, config, top=top)
    try:
        circuit = flatten(design)
    except FlattenLimit as exc:
        raise _Usage(str(exc)) from None
    return circuit, problems


def parse_frequency(text: str) -> float:
    from lintamp.netlist.expr import parse_number
    value = parse_number(text.strip().lower().removesuffix("hz"))
    if value is None or value < 0:
        raise _Usage(f"--freq {text}: not a frequency (write e.g. 0, 1k, 20meg)")
    return value


def cmd_impedance(args) -> int:
    from lintamp.cli import EXIT_TROUBLE, UsageError

    try:
        return _impedance(args)
    except (UsageError, KeyboardInterrupt, BrokenPipeError):
        raise
    except Exception as exc:  # a bug: one line naming the netlist, never a traceback
        text = " ".join(str(exc).split())[:300]
        print(f"lintamp: internal error while computing the impedance in {args.netlist}: "
              f"{type(exc).__name__}: {text} (please report it with the netlist)", file=sys.stderr)
        return EXIT_TROUBLE


def _impedance(args) -> int:
    from lintamp.rulekit.impedance_report import impedance_report
    from lintamp.engine.operating_point import OperatingPointError
    from lintamp.engine.small_signal import SmallSignalError
    from lintamp.cli import EXIT_OK, UsageError

    path = Path(args.netlist)
    if not path.is_file():
        raise UsageError(f"{args.netlist}: no such file")
    try:
        freq_hz = parse_frequency(args.freq)
        circuit, problems = load_flat_circuit(path, top=args.top,
                                              include_paths=[Path(p) for p in args.include_path])
        node = args.node.lower()
        if circuit.find_net(node) is None:
            close = difflib.get_close_matches(node, circuit.nets, n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise _Usage(f"{args.netlist}: no net '{args.node}'{hint}")
        missing = [name for name in args.detach if circuit.device(name) is None]
        if missing:
            raise _Usage(f"--detach: no element {', '.join(missing)} in {args.netlist}")
        table = None
        if args.op:
            from lintamp.engine.op_table import load_op_table
            try:
                table = load_op_table(Path(args.op).read_text(encoding="utf-8"))
            except (OSError, ValueError) as exc:
                raise _Usage(f"--op {args.op}: {exc}") from None
        report = impedance_report(circuit, node, freq_hz, detach=[d.lower() for d in args.detach],
                                  table=table)
    except _Usage as exc:
        raise UsageError(str(exc)) from None
    except (OperatingPointError, SmallSignalError) as exc:  # the engine's documented refusals
        raise UsageError(f"{args.netlist}: {exc}") from None
    for diag in problems:
        print(f"lintamp: {diag.location}: {diag.message} (the impedance is computed without it)",
              file=sys.stderr)
    if args.format == "json":
        from lintamp.audit.solves import finite_for_json
        print(json.dumps(finite_for_json(report), indent=2, sort_keys=False, allow_nan=False, default=str))
    else:
        print(render_text(report))
    return EXIT_OK


_SOURCES = {"level1": "lintamp's level-1 models", "table": "the operating-point table",
            "assumed": "no numbers (by inspection)"}


def render_text(report: dict) -> str:
    z = report["z_ohm"]
    freq = report["freq_hz"]
    at = "DC" if freq == 0 else si(freq, "Hz")
    lines = []
    if z.get("open"):
        head = "open (no finite impedance)"
    elif z.get("mag") is None:
        head = f"class: {report.get('class', 'unknown')}"
    else:
        head = f"{si(z['mag'], 'Ω')}  ∠ {z['phase_deg']:.1f}°"
    lines.append(f"looking into {report['node']} at {at}: {head}")
    lines.append(f"  operating point from {_SOURCES.get(report['operating_point'], report['operating_point'])}")
    for br in report["branches"]:
        if br.get("z_ohm") is None:
            lines.append(f"  via {br['via']}: {br['formula']}")
        else:
            lines.append(f"  via {br['via']}: {br['formula']} = {si(br['z_ohm'], 'Ω')}")
        terms = br.get("terms") or {}
        if len(terms) == 1 and next(iter(terms)).rsplit("_", 1)[0] in br["formula"]:
            terms = {}  # the formula already is the term
        if terms:
            shown = ", ".join(f"{k.rsplit('_', 1)[0]} = {si_for_key(k, v)}" for k, v in terms.items()
                              if v is not None)
            if shown:
                lines.append(f"      with {shown}")
        if br.get("note"):
            lines.append(f"      note: {br['note']}")
    stages = report.get("stages") or []
    if stages:
        lines.append("  stages: " + "; ".join(f"{s['device']} {s['role']} ({s['region']})" for s in stages))
    for note in report.get("notes") or []:
        lines.append(f"  note: {note}")
    return "\n".join(lines)
