"""One fuzz input through lintamp, in process: read, parse, elaborate, rules, decide, render.

:func:`exercise` raises on anything that would be a bug for a user: an exception
escaping the library, a rule that failed (lintamp turns that into an internal
error, exit 2), a finding without a valid place, or a message that echoes too
much of its input.  The fuzz script and ``tests/test_fuzz.py`` both use it.
"""

from __future__ import annotations

import io
import os
import re
from pathlib import Path

from lintamp.api import analyse, default_config, load_design
from lintamp.decide import decide
from lintamp.netlist.parser import is_fragment, parse_read
from lintamp.netlist.reader import ReadOptions, read

MAX_MESSAGE_CHARS = 600  # a message quotes short excerpts only, whatever the input
FORMATS = ("text", "json", "sarif", "github", "junit")


class FuzzFailure(AssertionError):
    """lintamp misbehaved on an input (not a crash of the library itself)."""


def make_sandbox(folder: Path) -> Path:
    """A project root holding the include targets the card grammar names.

    Includes that cycle (``a.inc`` <-> ``b.inc``, ``self.inc``), a library with
    sections, a symlink out of the root, a folder and a FIFO named like files.
    """
    folder.mkdir(parents=True, exist_ok=True)
    files = {
        "a.inc": "* a\n.include b.inc\nra a 0 1k\n",
        "b.inc": "* b\n.include a.inc\nrb b 0 1k\n",
        "self.inc": ".include self.inc\nrs s 0 1\n",
        "models.lib": ".lib tt\n.model nch nmos level=1 vto=0.5\n.endl tt\n"
                      ".lib ff\n.lib models.lib tt\n.endl ff\n",
        "sub/keep.inc": "r1 a b 1\n",
    }
    for rel, text in files.items():
        target = folder / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(text, encoding="utf-8")
    (folder / "dir.inc").mkdir(exist_ok=True)
    outside = folder.parent / (folder.name + "-outside")
    outside.mkdir(exist_ok=True)
    (outside / "secret.inc").write_text("* outside the root\nrsecret x 0 1\n", encoding="utf-8")
    (outside / "a.inc").write_text("* outside too\n", encoding="utf-8")
    for link, to in (("escape_link.inc", outside / "secret.inc"), ("dirlink", outside)):
        if not (folder / link).is_symlink():
            os.symlink(to, folder / link)
    fifo = folder / "fifo.inc"
    if not fifo.exists():
        os.mkfifo(fifo)
    return folder


COMMANDS = ("check", "impedance", "audit")
_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f]")  # what no text output may hold raw


def exercise(data: bytes, sandbox: Path, *, engine: bool = False, formats=FORMATS,
             config=None, commands=("check",)) -> int:
    """Check ``data`` as the file ``sandbox/deck.sp``; returns the number of findings.

    ``commands`` beyond ``check``: ``impedance`` (as ``engine``, with its text
    rendered) and ``audit`` (the review sheet, rendered as text, JSON and Markdown);
    their text outputs must hold no raw control character (ESC, OSC-8 ...).

    Raises
    ------
    FuzzFailure
        A rule failed, a finding has no valid place, or a message is too long.
    Exception
        Whatever escaped lintamp: that is the crash being looked for.
    """
    config = config or default_config()
    path = sandbox / "deck.sp"
    opts = ReadOptions(root=sandbox, include_paths=(), display_root=sandbox)
    first = data.split(b"\n", 1)[0].decode("latin-1")
    result = read(path, opts, data=data, title=not is_fragment(first))
    netlist = parse_read(result, "deck.sp")
    checked = analyse(netlist, config)
    if checked.internal_errors:
        raise FuzzFailure("; ".join(checked.internal_errors))
    for finding in checked.findings:
        check_finding(finding)
    report = decide(checked.findings, checked.pragmas, config)
    for finding in report.findings:
        check_finding(finding)
    for name in formats:
        out = render(report, name)
        if name in ("text", "github") and _CONTROL.search(out):
            raise FuzzFailure(f"the {name} report holds a raw control character")
    if engine or "impedance" in commands:
        run_engine(netlist, config)
    if "audit" in commands:
        run_audit(data, sandbox, config)
    return len(report.findings)


def run_audit(data: bytes, sandbox: Path, config) -> None:
    """``lintamp audit`` on ``data``: the sheet, rendered as text, JSON and Markdown."""
    import json

    from lintamp.audit.render_markdown import render_markdown
    from lintamp.audit.render_text import render_text
    from lintamp.audit.sheet import AuditError, build_sheet
    from lintamp.report.base import printable

    path = sandbox / f"audit-{os.getpid()}.sp"
    path.write_bytes(data)
    try:
        sheet = build_sheet(path, config=config, plots=False)
    except AuditError:
        return  # documented refusal: one line, exit 2
    text = "\n".join(printable(line) for line in render_text(sheet.data).split("\n"))  # as the command
    from lintamp.audit.solves import finite_for_json
    json.dumps(finite_for_json(sheet.data), allow_nan=False, default=str)  # as the command writes it
    markdown = render_markdown(sheet.data, {})
    for name, out in (("text", text), ("markdown", markdown)):
        if _CONTROL.search(out):
            raise FuzzFailure(f"the audit {name} output holds a raw control character")


def check_finding(finding) -> None:
    loc = finding.location
    if not (isinstance(loc.line, int) and isinstance(loc.column, int) and loc.line >= 1
            and loc.column >= 1):
        raise FuzzFailure(f"finding {finding.rule} has no valid place: {loc!r}")
    if len(finding.message) > MAX_MESSAGE_CHARS:
        raise FuzzFailure(f"finding {finding.rule} message is {len(finding.message)} characters")


def render(report, name: str) -> str:
    from lintamp import __version__
    from lintamp.registry import all_rules
    from lintamp.report import get_reporter
    from lintamp.report.base import emit

    stream = io.StringIO()
    reporter = get_reporter(name)(stream, color=False, rules=all_rules(),
                                  tool_version=__version__, counts=True)
    emit(reporter, report)
    return stream.getvalue()


def run_engine(netlist, config) -> None:
    """Flatten (small limit) and ask for one impedance, as ``lintamp impedance`` does."""
    from lintamp.rulekit.impedance_report import impedance_report
    from lintamp.engine.operating_point import OperatingPointError
    from lintamp.engine.small_signal import SmallSignalError
    from lintamp.circuit.flatten import FlattenLimit, flatten

    design = load_design(netlist, config)
    try:
        circuit = flatten(design, limit=20_000)
    except FlattenLimit:
        return
    nets = [n for n in circuit.nets if n != "0"]
    if nets:
        from lintamp.commands.impedance import render_text
        from lintamp.report.base import printable
        try:
            report = impedance_report(circuit, nets[0], 1e3)
        except (OperatingPointError, SmallSignalError):
            return  # documented refusals: `lintamp impedance` says them in one line, exit 2
        text = "\n".join(printable(line) for line in render_text(report).split("\n"))  # as the command
        if _CONTROL.search(text):
            raise FuzzFailure("the impedance text holds a raw control character")
