"""Stage recognition: what role each transistor plays, from topology and AC grounds.

Roles follow the textbook vocabulary (Razavi ch. 3 and ch. 5; Sedra & Smith
ch. 7): common source / emitter, common gate / base, common drain (source
follower) / emitter follower, cascode, current-mirror reference and output,
differential pair, diode-connected load, current source.  AC ground = ground and
nets tied to it by independent voltage sources that carry no AC value and no
waveform (a source with ``AC`` or a waveform is taken as a signal input).
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from lintamp.engine.looking_into import ac_ground_nets

if TYPE_CHECKING:
    from lintamp.engine.operating_point import OperatingPoint
from lintamp.circuit.flat import FlatCircuit, FlatDevice

MOS = ("nmos", "pmos")
BJT = ("npn", "pnp")


@dataclass
class Stage:
    device: str
    role: str
    related: list[str] = field(default_factory=list)
    region: str = ""
    gm_s: float | None = None
    ro_ohm: float | None = None


def _pins(dev: FlatDevice):
    """(out, control, common) = drain/gate/source or collector/base/emitter."""
    return dev.nodes[0], dev.nodes[1], dev.nodes[2]


def recognise_stages(circuit: FlatCircuit, op: OperatingPoint | None = None) -> list[Stage]:
    """One :class:`Stage` per MOS/BJT device, in netlist order.

    Notes
    -----
    Near-linear: the lists of related devices come from indexes by net, and the
    differential-pair scan of a shared common net is skipped when counts show it
    finds nothing (one bias line or supply may reach thousands of devices).  Only
    a common net whose devices mostly share one control or output net, with a few
    that do not, costs O(devices on it) per device.
    """
    acg = ac_ground_nets(circuit, signal_sources_ground=False)
    trans = [d for d in circuit.devices if d.kind in MOS + BJT]
    by_common: dict[tuple, list[FlatDevice]] = {}
    by_out: dict[tuple, list[FlatDevice]] = {}
    diodes: dict[tuple, list[FlatDevice]] = {}  # (kind, ctl, com): out == ctl
    not_diodes: dict[tuple, list[FlatDevice]] = {}  # (kind, ctl, com): out != ctl
    # per common net: how many of its devices have each control net, each output net,
    # and each (control, output) pair
    counts: Counter = Counter()
    for d in trans:
        out, ctl, com = _pins(d)
        fam = d.kind
        by_common.setdefault((fam, com), []).append(d)
        by_out.setdefault((fam, out), []).append(d)
        (diodes if out == ctl else not_diodes).setdefault((fam, ctl, com), []).append(d)
        counts.update((("ctl", fam, com, ctl), ("out", fam, com, out), ("both", fam, com, ctl, out)))
    pairs: dict[tuple, list[str]] = {}

    def partners(fam, com, ctl, out) -> list[str]:
        """Devices on the same common net with another control and another output net
        (a differential pair's other half); found once per four nets, and not looked
        for when the counts say there is none."""
        key = (fam, com, ctl, out)
        got = pairs.get(key)
        if got is None:
            group = by_common[(fam, com)]
            others = (len(group) - counts[("ctl", fam, com, ctl)] - counts[("out", fam, com, out)]
                      + counts[("both", fam, com, ctl, out)])
            got = pairs[key] = [o.name for o in group if _pins(o)[1] != ctl and _pins(o)[0] != out] \
                if others else []
        return got

    below_of: dict[tuple, list[str]] = {}

    def below(fam, com) -> list[str]:
        """Devices whose output is this common net (what a cascode stands on)."""
        got = below_of.get((fam, com))
        if got is None:
            got = below_of[(fam, com)] = [o.name for o in by_out.get((fam, com), ())]
        return got

    stages = []
    for d in trans:
        out, ctl, com = _pins(d)
        mos = d.kind in MOS
        words = {
            "cs": "common source" if mos else "common emitter",
            "cg": "common gate" if mos else "common base",
            "cd": "common drain (source follower)" if mos else "emitter follower",
        }
        related: list[str] = []
        diode = out == ctl
        if out == com:
            role = "shorted (output tied to common terminal)"
        elif diode:
            # the other devices on this control and common net that are not diodes
            outs = [o.name for o in not_diodes.get((d.kind, ctl, com), ())]
            role = "current-mirror reference (diode-connected)" if outs else "diode-connected load"
            related = outs
        else:
            # (d itself is no diode and its output is not its common net: it is in
            # neither list below)
            refs = [o.name for o in diodes.get((d.kind, ctl, com), ())]
            pair, under = ([], []) if com in acg else (partners(d.kind, com, ctl, out),
                                                       below(d.kind, com))
            if refs:
                role, related = "current-mirror output", refs
            elif ctl in acg and under:
                role, related = "cascode", under
            elif ctl in acg and com in acg:
                role = "current source (fixed bias)"
            elif out in acg and com not in acg:
                role = words["cd"]
            elif ctl in acg:
                role = words["cg"]
            elif pair:
                role, related = "differential pair", pair
            elif com in acg:
                role = words["cs"]
            else:
                role = words["cs"] + " with degeneration"
        st = Stage(d.name, role, related)
        if op is not None and d.name in op.devices:
            dop = op.devices[d.name]
            st.region = dop.region
            st.gm_s = dop.values.get("gm_s")
            st.ro_ohm = dop.values.get("ro_ohm")
        stages.append(st)
    return stages
