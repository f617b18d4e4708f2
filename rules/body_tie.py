"""An NMOS body off the lowest rail, a PMOS body off the highest, or a forward-biased body junction.

What it finds
    Only on clear evidence, never on net names alone:

    * an NMOS body on the highest supply rail of the deck (a PMOS body on the lowest),
      where V sources fix the rail voltages and the body is not the device's own source;
    * a body junction that the known rail voltages forward-bias by more than 0.3 V: an
      NMOS body above its source or drain, a PMOS body below them;
    * a floating body: a body net that touches nothing but bodies (and capacitors) and
      is not a port (several such nets in one cell, as an extraction with untied wells
      writes them, are one finding);
    * where no voltages are known, one body net shared by NMOS and PMOS devices: one of
      the two kinds sits on the wrong side.

    Not reported: a body on its own source, bodies on intermediate rails whose
    junctions the known voltages do not forward-bias, bulk-driven or dynamic-threshold
    designs (body on a signal net), MOS capacitors (drain = source = body), and SOI
    devices (their fourth node is the substrate, not a body), and a body on a net named
    for the device's own rail (a PMOS on ``vdd``) that the deck holds at the other end
    (a supply swept up from 0 V).

Why it matters
    A forward-biased source/drain-body junction conducts IS*exp(V/VT): the device leaks
    into the body, the threshold shifts and, on silicon, latch-up can follow.  A
    floating body lets the threshold wander with leakage.

Example
    ::

        V1 vdd 0 1.8
        M1 out in 0 vdd nch     <- NMOS body on the 1.8 V rail, source at 0 V

Fix
    NMOS bodies to the lowest rail, PMOS bodies to the highest, or to the device's own
    source where the process gives it a separate well.
"""

import re

from lintamp.circuit.kinds import MOS, MOS_KINDS
from lintamp.connectivity.rails import get_rails
from lintamp.findings import Related, Severity
from lintamp.rules._islands import sealed_cells
from lintamp.rules._supply import declared_pins

NAME = "body-tie"
CATEGORY = "connectivity"
SEVERITY = Severity.WARNING
SUMMARY = ("an NMOS body off the lowest rail, a PMOS body off the highest, or a "
           "forward-biased body junction")

FORWARD_V = 0.3  # junction forward bias worth reporting (analog-knowledge 4.7, common practice)


def _is_mos_cap(dev) -> bool:
    return dev.net("d") == dev.net("s") == dev.net("b")


SOI_LEVELS = frozenset({9, 10, 55, 56, 57, 58, 70})  # ngspice BSIM3SOI / B4SOI levels


def _is_soi(dev) -> bool:
    """SOI models take the substrate (back gate) as the fourth node, not a body."""
    if len(dev.nets) > 4:
        return True
    model = dev.model
    if model is None:
        return False
    try:
        return int(float(model.params.get("level", "1"))) in SOI_LEVELS
    except ValueError:
        return False


def _transistors(view):
    for dev in view.devices_of(kinds=MOS):
        if (dev.kind in MOS and dev.net("b") is not None and not _is_mos_cap(dev)
                and not _is_soi(dev)):
            yield dev


_SUPPLY_NAME = re.compile(r"([ad]?v(dd|cc|pwr|pp|pb)\w*|vdd)", re.I)
_GROUND_NAME = re.compile(r"([ad]?v(ss|ee|gnd|nb)\w*|[ad]?gnd\w*|0)", re.I)


def _named_for_own_rail(net: str, nmos: bool) -> bool:
    return (_GROUND_NAME if nmos else _SUPPLY_NAME).fullmatch(net) is not None


def _fmt(v: float) -> str:
    return f"{v:g} V"


def check(ctx):
    rails = get_rails(ctx)
    portless = {k for k, v in sealed_cells(ctx).items() if not v.ports}  # no-dc-path says it once
    for view in ctx.cells():
        if id(view) in portless:
            continue
        known = rails.of(view)
        low, high = rails.lowest_v, rails.highest_v
        if not ctx.design.in_deck(view) or low is None:
            local = list(known.volts.values())
            low, high = (min(local), max(local)) if local else (None, None)
        shared_done = set()
        body_nets = _BodyNets(view)
        floating: list = []
        for dev in _transistors(view):
            yield from _check_device(ctx, view, dev, known, low, high, shared_done, body_nets,
                                     floating)
        if len(floating) == 1:
            yield floating[0][2]
        elif floating:
            yield _floating_bodies(ctx, view, floating, body_nets)


def _floating_bodies(ctx, view, floating, body_nets):
    """Several body nets that float in one cell (an extraction that left its wells
    and substrate untied, most often): one finding with the nets and their bodies."""
    nets = [net for net, _, _ in floating]
    first = floating[0][1]
    bodies = sum(len(body_nets.terms(n)) for n in nets)
    shown = ", ".join(nets[:6]) + (f" and {len(nets) - 6} more" if len(nets) > 6 else "")
    return ctx.finding(
        location=first.location, subject=nets[0], view=view, nets=nets[:50],
        elements=[dev.name for _, dev, _ in floating][:50],
        message=f"{len(nets)} body nets float: they touch only transistor bodies ({shown})",
        explanation=[f"{bodies} transistor bodies sit on nets that nothing else reaches",
                     "a body reached only through its own junctions settles wherever their "
                     "leakage puts it; the threshold voltage follows",
                     "in an extracted netlist this is most often a well or the substrate "
                     "the extraction did not tie to its rail"],
        fix="tie the wells and the substrate to their rails (well taps), or extract with "
            "the substrate connected",
        values={"body_nets": len(nets), "bodies": bodies},
        related=[Related(dev.location, f"body of {dev.display} on {net}")
                 for net, dev, _ in floating[1:9]])


class _BodyNets:
    """What the structural checks need of each body net, worked out once per net: a
    body net may carry a terminal of every device of an extracted block."""

    def __init__(self, view):
        self.view = view
        self._terms: dict[str, list] = {}
        self._only_bodies: dict[str, bool] = {}
        self._bodies_of: dict[tuple[str, str], list] = {}

    def terms(self, net: str) -> list:
        got = self._terms.get(net)
        if got is None:
            got = self._terms[net] = self.view.net_terminals.get(net, [])
        return got

    def only_bodies(self, net: str) -> bool:
        """Whether the net touches nothing but transistor bodies and capacitors."""
        got = self._only_bodies.get(net)
        if got is None:
            got = self._only_bodies[net] = all(
                (d.kind in MOS_KINDS and p == "b") or d.kind == "capacitor"
                for d, p in self.terms(net))
        return got

    def bodies_of(self, net: str, kind: str) -> list:
        """Devices of ``kind`` with their body on the net, away from their own source
        (MOS capacitors left out)."""
        got = self._bodies_of.get((net, kind))
        if got is None:
            got = self._bodies_of[(net, kind)] = [
                d for d, p in self.terms(net) if p == "b" and d.kind == kind and not _is_mos_cap(d)
                and d.net("s") != net]
        return got


def _evidence(known, *nets):
    return [f"{n} = {_fmt(known.volts[n])} (set by {known.source[n]})" for n in nets
            if n in known.volts]


def _where(dev, view) -> dict:
    """The finding's place; built only for a device that is reported."""
    return dict(location=dev.location, subject=dev.name, view=view)


def _check_device(ctx, view, dev, known, low, high, shared_done, body_nets, floating):
    nmos = dev.kind == "nmos"
    body, src, drn = dev.net("b"), dev.net("s"), dev.net("d")
    if body == src:
        return
    kind = "NMOS" if nmos else "PMOS"
    vb = known.volts.get(body)
    if vb is not None and low is not None and high is not None and high > low:
        wrong_rail = high if nmos else low
        # a body on a net named for its own rail (a PMOS on vdd) is tied as meant even
        # where the deck holds that rail at the other end (a supply swept up from 0 V)
        if abs(vb - wrong_rail) < 1e-9 and not _named_for_own_rail(body, nmos):
            yield ctx.finding(
                **_where(dev, view), nets=[body], elements=[dev.name],
                message=f"{kind} {dev.display} has its body on the "
                        f"{'highest' if nmos else 'lowest'} rail {body} ({_fmt(vb)})",
                explanation=[*_evidence(known, body, src, drn),
                             f"rails of the deck span {_fmt(low)} to {_fmt(high)}",
                             f"an {kind} body belongs on the {'lowest' if nmos else 'highest'} "
                             "rail (or its own source): its source and drain junctions are "
                             "then reverse-biased"],
                fix=f"tie the body of {dev.display} to the {'lowest' if nmos else 'highest'} "
                    "rail, or to its own source",
                values={"body_v": vb, "rail_low_v": low, "rail_high_v": high})
            return
    if vb is not None:
        for pin, net in (("source", src), ("drain", drn)):
            v = known.volts.get(net)
            if v is None:
                continue
            forward = (vb - v) if nmos else (v - vb)
            if forward > FORWARD_V:
                yield ctx.finding(
                    **_where(dev, view), nets=[body, net], elements=[dev.name],
                    message=f"the {pin}-body junction of {kind} {dev.display} is forward-"
                            f"biased by {forward:g} V",
                    explanation=[*_evidence(known, body, net),
                                 f"{'body above' if nmos else 'body below'} the {pin} by "
                                 f"{forward:g} V > {FORWARD_V} V: the junction diode conducts "
                                 "IS*exp(V/VT)"],
                    fix=f"tie the body of {dev.display} to the "
                        f"{'lowest' if nmos else 'highest'} rail or to its source",
                    values={"forward_v": forward, "body_v": vb, f"{pin}_v": v})
                return
        return
    # no voltages known: structural evidence only
    terms = body_nets.terms(body)
    if not view.is_external(body) and not (view.cell.is_top and body in declared_pins(ctx)):
        if body not in shared_done and body_nets.only_bodies(body):
            shared_done.add(body)
            others = [d for d, _ in terms if d is not dev and d.kind != "capacitor"]
            floating.append((body, dev, ctx.finding(
                **_where(dev, view), nets=[body],
                message=f"the body net {body} of {dev.display} floats: it touches only "
                        "transistor bodies",
                explanation=[f"{body} connects to: "
                             + ", ".join(f"body of {d.display}" if d.kind != "capacitor"
                                         else d.display for d, _ in terms[:8]),
                             "a body reached only through its own junctions settles wherever "
                             "their leakage puts it; the threshold voltage follows"],
                fix=f"tie {body} to the {'lowest' if nmos else 'highest'} rail or to the source",
                values={"bodies": len(terms)}, elements=[dev.name] + [d.name for d in others[:8]],
                related=[Related(d.location, f"body of {d.display}") for d in others[:8]])))
            return
    if body in shared_done or view.is_external(body) and not terms:
        return
    if not nmos:
        return  # a shared body is reported from its NMOS side
    mixed = body_nets.bodies_of(body, "pmos")
    if mixed:
        shared_done.add(body)
        yield ctx.finding(
            **_where(dev, view), nets=[body], elements=[dev.name] + [d.name for d in mixed[:8]],
            message=f"body net {body} is shared by NMOS {dev.display} and PMOS "
                    f"{', '.join(d.display for d in mixed[:4])}",
            explanation=["no V source fixes this net's voltage, so which side is wrong is "
                         "not known",
                         "an NMOS body belongs on the lowest rail and a PMOS body on the "
                         "highest: on one net, one of the two junction sets is forward-biased "
                         "or the rails are shorted"],
            fix="tie NMOS bodies to the lowest rail and PMOS bodies to the highest",
            values={"nmos": 1, "pmos": len(mixed)},
            related=[Related(d.location, f"body of {d.display}") for d in mixed[:8]])
