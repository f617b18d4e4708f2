"""The one info finding per file that says the impedance rules had no numbers, shared by
the rules that need an operating point (high-z-current-input, unbuffered-output,
undefined-dc-level, device-region)."""

from __future__ import annotations

from lintamp.findings import Severity
from lintamp.rulekit.impedance_numbers import NoNumbers

# the rules that need an operating point and small-signal values, as the finding lists them
NUMBER_RULES = ("high-z-current-input", "unbuffered-output", "undefined-dc-level", "device-region")


def no_numbers_findings(ctx, numbers) -> list:
    """At most one info finding per file saying the impedance rules had no numbers."""
    if not isinstance(numbers, NoNumbers) or numbers.reported_elsewhere:
        return []
    broken = [d for d in (*ctx.netlist.diagnostics, *ctx.design.diagnostics) if d.severity == "error"]
    if broken:
        return []  # the deck does not simulate as written; its errors say why
    if "singular matrix" in numbers.reason:
        return []  # a floating node or a source loop: the connectivity rules report it
    box = ctx.memo("impedance-numbers-reported", lambda: [False])
    if box[0]:
        return []
    box[0] = True
    top = ctx.design.top
    location = top.devices[0].location if top.devices else top.cell.location
    return [ctx.finding(
        location=location, subject="(operating point)", severity=Severity.INFO,
        message="no trusted operating point, so the bias and impedance rules did not judge "
                "this deck (" + (numbers.reason if len(numbers.reason) <= 100
                                 else numbers.reason[:100] + "...") + ")",
        explanation=[
            f"why: {numbers.reason if len(numbers.reason) <= 400 else numbers.reason[:400] + '...'}",
            f"{', '.join(NUMBER_RULES[:-1])} and {NUMBER_RULES[-1]} need "
            "an operating point and small-signal values",
            "lintamp solves level-1 MOS, Gummel-Poon BJT and diode models itself; other models, "
            "PDK devices without their model cards and symbolic sizes give no numbers it trusts",
        ],
        fix="give the operating point from your simulator with --op FILE (CSV/JSON of gm, gds, gmb, "
            "ids, region per device), or include the model library",
        values={"reason": numbers.reason})]
