"""Stage recognition: what role each transistor plays, from topology and AC grounds.

Roles follow the textbook vocabulary (Razavi ch. 3 and ch. 5; Sedra & Smith
ch. 7): common source / emitter, common gate / base, common drain (source
follower) / emitter follower, cascode, current-mirror reference and output,
differential pair, diode-connected load, current source.  AC ground = ground and
nets tied to it by independent voltage sources that carry no AC value and no
waveform (a source with ``AC`` or a waveform is taken as a signal input).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from lintamp.analysis.looking_into import ac_ground_nets

if TYPE_CHECKING:
    from lintamp.analysis.operating_point import OperatingPoint
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
    if dev.kind in MOS:
        return dev.nodes[0], dev.nodes[1], dev.nodes[2]
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
    # per (kind, com): how many devices have each control net, each output net, each pair
    n_ctl: dict[tuple, int] = {}
    n_out: dict[tuple, int] = {}
    n_ctl_out: dict[tuple, int] = {}
    for d in trans:
        out, ctl, com = _pins(d)
        fam = d.kind
        by_common.setdefault((fam, com), []).append(d)
        by_out.setdefault((fam, out), []).append(d)
        (diodes if out == ctl else not_diodes).setdefault((fam, ctl, com), []).append(d)
        n_ctl[(fam, com, ctl)] = n_ctl.get((fam, com, ctl), 0) + 1
        n_out[(fam, com, out)] = n_out.get((fam, com, out), 0) + 1
        n_ctl_out[(fam, com, ctl, out)] = n_ctl_out.get((fam, com, ctl, out), 0) + 1
    pairs: dict[tuple, list[str]] = {}
    below_of: dict[tuple, list[str]] = {}
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
            pair = []
            if com not in acg:
                key = (d.kind, com, ctl, out)
                pair = pairs.get(key)
                if pair is None:
                    others = (len(by_common[(d.kind, com)]) - n_ctl[(d.kind, com, ctl)]
                              - n_out[(d.kind, com, out)] + n_ctl_out[key])
                    pair = pairs[key] = [
                        o.name for o in by_common[(d.kind, com)]
                        if _pins(o)[1] != ctl and _pins(o)[0] != out] if others else []
            below = []
            if com not in acg:
                below = below_of.get((d.kind, com))
                if below is None:
                    below = below_of[(d.kind, com)] = [o.name for o in by_out.get((d.kind, com), ())]
            if refs:
                role, related = "current-mirror output", refs
            elif ctl in acg and below:
                role, related = "cascode", below
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
