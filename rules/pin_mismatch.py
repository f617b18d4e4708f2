"""An instance whose node count differs from its subcircuit's ports.

What it finds
    An ``X`` line that connects more or fewer nets than the ``.subckt`` it names has
    ports (a device-map entry's pins, for a mapped PDK device).  PSPICE ``OPTIONAL:``
    ports may be left out, last ones first.

Why it matters
    A simulator refuses the instance.  When the count is off by one, the likely
    cause is a forgotten or doubled node, which shifts every later connection: the
    supply lands on an input, the output on the supply.

Example
    ::

        .subckt amp in out vdd vss
        ...
        .ends
        X1 in out vdd amp

Fix
    Connect exactly one net per port, in the order of the ``.subckt`` line.
"""

from lintamp.circuit.kinds import MOS
from lintamp.findings import Related, Severity
from lintamp.text import excerpt

NAME = "pin-mismatch"
CATEGORY = "references"
SEVERITY = Severity.ERROR
SUMMARY = "an instance whose node count differs from its subcircuit's ports"


def check(ctx):
    for view in ctx.cells():
        for dev in view.devices_of(letters="x"):  # instances and mapped devices
            optional = 0
            if dev.kind == "instance" and dev.subcell is not None:
                ports = dev.subcell.ports
                optional = len(dev.subcell.cell.optional_ports)
                where = dev.subcell.cell.location
                what = f".subckt {excerpt(dev.subcell.label)}"
            elif dev.spec is not None:
                ports = dev.spec.pins
                where = None
                what = f"the device map entry '{excerpt(dev.spec.pattern)}'"
            else:
                continue
            given = len(dev.nets)
            # a mapped BJT may omit its substrate pin, a resistor or capacitor its body
            optional_last = (dev.spec is not None and dev.spec.kind not in MOS
                             and ports and ports[-1] in ("b", "s"))
            if len(ports) - optional <= given <= len(ports) or (optional_last and given == len(ports) - 1):
                continue
            yield ctx.finding(
                location=dev.location, subject=dev.name, view=view, elements=[dev.name],
                message=f"{excerpt(dev.display)} connects {given} net(s), but {what} has "
                        f"{len(ports)} port(s)",
                explanation=[f"ports: {excerpt(' '.join(ports), 200) or '(none)'}",
                             f"nets given: {excerpt(' '.join(dev.element.raw_nodes), 200) or '(none)'}"],
                fix="connect one net per port, in the order of the .subckt line",
                values={"nets_given": given, "ports": len(ports)},
                related=[Related(where, f"{what} is defined here")] if where else [])
