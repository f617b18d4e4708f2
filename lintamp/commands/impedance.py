"""``lintamp impedance NETLIST NODE``: what the circuit looks like from NODE, and why."""

from __future__ import annotations

import argparse
import difflib
import json
import sys
from pathlib import Path

from lintamp.commands.common import (EXIT_OK, EXIT_TROUBLE, UsageError, add_config_options, epilog, existing_file,
                                     add_op_from_option, load_config, load_op, op_from, table_from_simulator)
from lintamp.report.si import si, si_for_key

EXAMPLES = epilog(
    ("lintamp impedance samples/sensor_frontend.sp pd --freq 1k",
     "the impedance looking into net pd at 1 kHz, with each branch's formula"),
    ("lintamp impedance amp.sp out --detach cload --format json",
     "the output impedance without the load capacitor, as JSON"),
    ("lintamp impedance top.sp xbias/nbias --op op.csv",
     "a net inside instance xbias, at the operating point your simulator found"),
)


def register(sub) -> None:
    p = sub.add_parser("impedance", help="small-signal impedance looking into a node",
                       description="The small-signal impedance looking into NODE, with every "
                                   "element attached and the independent sources zeroed, "
                                   "and the reasoning branch by branch.",
                       epilog=EXAMPLES, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("netlist", metavar="NETLIST", help="the netlist file")
    p.add_argument("node", metavar="NODE",
                   help="the net to look into; inside a hierarchy x1/net")
    p.add_argument("--freq", default="0", metavar="F",
                   help="frequency, e.g. 1k or 20meg (default: 0, DC)")
    p.add_argument("--detach", action="append", default=[], metavar="ELEMENT",
                   help="leave this element out of the network (repeatable)")
    p.add_argument("--top", metavar="CELL", help="the cell to elaborate as the top level")
    p.add_argument("--op", metavar="FILE",
                   help="operating-point table from your simulator (CSV or JSON)")
    add_op_from_option(p)
    p.add_argument("--format", default="text", choices=["text", "json"],
                   help="text for people, json for scripts (default: text)")
    p.add_argument("--include-path", action="append", default=[], metavar="DIR",
                   help="another folder .include/.lib may read from (repeatable)")
    add_config_options(p)
    p.set_defaults(run=run)


def load_flat_circuit(netlist_path: Path, *, top: str | None, include_paths=(), config=None):
    """Parse, elaborate and flatten a netlist file (with its includes)."""
    from lintamp.api import default_config, load_design, read_options
    from lintamp.circuit.flatten import FlattenLimit, flatten
    from lintamp.netlist.parser import parse_file

    config = config or default_config()
    netlist = parse_file(netlist_path, read_options(netlist_path, config, include_paths))
    problems = [d for d in netlist.diagnostics if d.severity == "error"]
    design = load_design(netlist, config, top=top)
    from lintamp.rulekit.impedance_numbers import MAX_ELEMENTS
    try:  # the element guard of check's impedance rules: a small deck of nested
        circuit = flatten(design, limit=MAX_ELEMENTS)  # instances must not run for minutes
    except FlattenLimit as exc:
        raise UsageError(str(exc)) from None
    return circuit, problems, netlist, config


def freq_option(text: str) -> float:
    """``--freq``: a frequency, or 0 for DC."""
    from lintamp.connectivity.intent import parse_frequency

    word = text.strip().lower()
    if word.removesuffix("hz") in ("0", "0.0", "dc"):
        return 0.0
    value = parse_frequency(word)
    if value is None:
        raise UsageError(f"--freq {text}: not a frequency (write e.g. 0, 1k, 20meg)")
    return value


def block_ports(netlist, circuit, config, top: str | None) -> list:
    """The ports the intent analysis finds for the block the circuit is built on (the
    top level, or the ``--top`` cell)."""
    from lintamp.connectivity.intent import IntentAnalysis

    cell = netlist.top
    if top:
        cell = next((c for c in netlist.all_cells() if not c.is_top and c.name == top.lower()), netlist.top)
    candidates = list(cell.ports) if not cell.is_top else None
    return IntentAnalysis(netlist, circuit, config).block(cell, "", candidates).ports


def run(args) -> int:
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

    path = existing_file(args.netlist)
    try:
        freq_hz = freq_option(args.freq)
        config = load_config(args, path.resolve().parent)
        circuit, problems, netlist, config = load_flat_circuit(path, top=args.top, config=config,
                                              include_paths=[Path(p) for p in args.include_path])
        node = args.node.lower()
        if circuit.find_net(node) is None:
            close = difflib.get_close_matches(node, circuit.nets, n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise UsageError(f"{args.netlist}: no net '{args.node}'{hint}")
        missing = [name for name in args.detach if circuit.device(name) is None]
        if missing:
            raise UsageError(f"--detach: no element {', '.join(missing)} in {args.netlist}")
        table = load_op(args.op)
        simulator_note = None
        if table is None and op_from(args, config):
            table, simulator_note = table_from_simulator(path, config, top=args.top,
                                                         include_paths=[Path(p) for p in args.include_path])
        report = impedance_report(circuit, node, freq_hz, detach=[d.lower() for d in args.detach],
                                  table=table)
        if simulator_note:
            report["notes"] = [simulator_note, *(report.get("notes") or [])]
        ports = block_ports(netlist, circuit, config, args.top)
        report["ports"] = [p.as_json() for p in ports]
        report["port"] = next((p.as_json() for p in ports if p.circuit_net == node), None)
    except (OperatingPointError, SmallSignalError) as exc:  # the engine's documented refusals
        raise UsageError(f"{args.netlist}: {exc}") from None
    from lintamp.report.base import printable  # names are the netlist's: no ESC reaches the terminal
    for diag in problems:
        print(printable(f"lintamp: {diag.location}: {diag.message} "
                        "(the impedance is computed without it)"), file=sys.stderr)
    if args.format == "json":
        from lintamp.audit.solves import finite_for_json
        print(json.dumps(finite_for_json(report), indent=2, sort_keys=False, allow_nan=False, default=str))
    else:
        print("\n".join(printable(line) for line in render_text(report).split("\n")))
    return EXIT_OK


_SOURCES = {"level1": "lintamp's level-1 models", "table": "the operating-point table",
            "ngspice": "ngspice (--op-from ngspice)",
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
    port = report.get("port")
    if port:
        lines.append(f"  {port['net']} is a {port['kind']} ({port['decided_by']})")
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
