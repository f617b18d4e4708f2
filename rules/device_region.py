"""A transistor outside the region its role in the circuit needs.

What it finds
    With an operating point, a device whose region contradicts its role, the
    role recognised from the topology (common source/gate/drain, cascode, mirror,
    differential pair, current source, diode-connected):

    * a gain, cascode, mirror-output, current-source or differential-pair MOS
      with ``|V_DS| < V_DSAT + saturation-margin-v`` (triode or at its edge), or
      cut off;
    * the same roles in bipolar form with ``|V_CE| < bjt-vce-min-v``
      (saturated), or cut off;
    * a follower (source or emitter follower) cut off;
    * a diode-connected device or mirror reference cut off (no current).

    Devices used as switches -- a gate driven by a pulse or other waveform
    (directly or through up to three resistors), or tied straight to ground or a
    supply rail -- devices with drain tied to source (MOS capacitors), and
    devices whose drain or collector a source holds (a characterisation bench:
    V_DS is the stimulus) are not judged.  When most transistors of the deck are
    cut off (supplies at 0 V, a sweep start, a logic state) the operating point
    is not a working point and cut-off devices are not reported; a deck driven
    by waveforms where most transistors sit fully on or off is a logic or
    switching circuit and is not judged at all.

Why it matters
    The small-signal picture of every impedance rule, and the designer's gain,
    assume saturation (forward-active for a bipolar).  A current source in
    triode is a resistor, a mirror output in triode copies the wrong current, a
    cascode in triode gives up its output resistance, a saturated bipolar gain
    stage has no gain, and a follower that is cut off passes nothing.

    Thresholds, with their defaults (analog-knowledge section 3, common practice):

    * ``saturation-margin-v`` = 0.05 V: keep V_DS >= V_DSAT + 50...100 mV; the
      lower end so that only devices clearly at or past the edge are reported.
    * ``bjt-vce-min-v`` = 0.3 V: V_CE,sat is ~0.1-0.2 V; below ~0.3 V the
      base-collector junction starts to conduct.

Example
    ::

        vbias vb 0 1.0
        m1 sink vb 0 0 nch w=10u l=1u      <- a 0.5 V overdrive current sink
        rpull vdd sink 100k                 <- leaves it 30 mV: V_DS < V_DSAT = 0.5 V

Fix
    Re-bias: lower the load drop or the cascode gate voltage so V_DS clears
    V_DSAT by the margin, size the device for a smaller overdrive, or check the
    bias net that should turn the device on.
"""

from lintamp.circuit.kinds import BJT, MOS, TRANSISTORS
from lintamp.rulekit.impedance_numbers import Numbers, impedance_numbers
from lintamp.rules._numbers import no_numbers_findings
from lintamp.rulekit.ports import port_finder
from lintamp.config import register_threshold
from lintamp.findings import Related, Severity
from lintamp.text import si
from lintamp.rules._islands import MAX_LISTED, listing

NAME = "device-region"
CATEGORY = "bias"
SEVERITY = Severity.WARNING
SUMMARY = "a device outside the region its role needs (e.g. a current source in triode, a follower cut off)"

SAT_MARGIN = register_threshold(
    "saturation-margin-v", 0.05, "V",
    "a saturated MOS must keep |V_DS| at least this much above V_DSAT")
VCE_MIN = register_threshold(
    "bjt-vce-min-v", 0.3, "V",
    "smallest V_CE of a bipolar transistor that must stay forward-active")

NEEDS_SATURATION = ("common source", "common source with degeneration", "common gate", "cascode",
                    "current source (fixed bias)", "current-mirror output", "differential pair",
                    "common emitter", "common emitter with degeneration", "common base")
NEEDS_CURRENT = ("common drain (source follower)", "emitter follower", "diode-connected load",
                 "current-mirror reference (diode-connected)")


def _switch_gates(circuit, op, fixed) -> set[int]:
    """Nets that drive gates as switches: waveform sources, ground and the supply rails."""
    rails = {0}
    rails.update(_driven_through_resistors(circuit))
    volts = [v for v in op.node_voltages_v.values()]
    top, bottom = (max(volts), min(volts)) if volts else (0.0, 0.0)
    for dev in circuit.devices:
        if dev.kind != "vsource":
            continue
        a, b = dev.nodes[0], dev.nodes[1]
        if dev.source is not None and dev.source.time_varying:
            rails.update(n for n in (a, b) if n != 0)
            continue
        for n in (a, b):
            v = op.node_voltages_v.get(circuit.nets[n]) if n else 0.0
            if n and v is not None and n in fixed and (abs(v - top) < 1e-6 or abs(v - bottom) < 1e-6):
                rails.add(n)
    return rails


def _switching_deck(circuit, op, transistors) -> bool:
    """A deck driven by waveforms where most transistors sit fully on or off: logic or
    switching, whose operating point is a logic state, not a bias point."""
    if not any(d.source is not None and d.source.time_varying for d in circuit.devices):
        return False
    analog = sum(1 for d in transistors if op.devices[d.name].region in ("saturation", "forward-active")
                 and not (d.kind in BJT and op.devices[d.name].region == "saturation"))
    return analog * 2 < len(transistors)


def _dc_conduction_count(circuit) -> dict[int, int]:
    """How many element terminals conduct DC at each net (gates and capacitors do not)."""
    count: dict[int, int] = {}
    for dev in circuit.devices:
        if dev.kind == "capacitor":
            continue
        pins = dev.nodes[:2]
        if dev.kind in MOS:
            pins = (dev.nodes[0], dev.nodes[2])
        elif dev.kind in ("vcvs", "vccs"):
            pins = dev.nodes[:2]
        elif dev.kind in BJT:
            pins = dev.nodes[:3]
        for n in set(pins):
            count[n] = count.get(n, 0) + 1
    return count


def _driven_through_resistors(circuit, hops: int = 3) -> set[int]:
    """Nets within a few resistors of a waveform source: a logic input drives them."""
    start = set()
    for dev in circuit.devices:
        if dev.kind == "vsource" and dev.source is not None and dev.source.time_varying:
            start.update(n for n in dev.nodes[:2] if n != 0)
    by_net: dict[int, list] = {}
    for dev in circuit.devices:
        if dev.kind == "resistor":
            for n in dev.nodes[:2]:
                by_net.setdefault(n, []).append(dev)
    seen, frontier = set(start), set(start)
    for _ in range(hops):
        nxt = set()
        for net in frontier:
            for r in by_net.get(net, []):
                nxt.update(n for n in r.nodes[:2] if n not in seen and n != 0)
        seen |= nxt
        frontier = nxt
    return seen


def check(ctx):
    numbers = impedance_numbers(ctx)
    if not isinstance(numbers, Numbers):
        yield from no_numbers_findings(ctx, numbers)
        return
    circuit, op = numbers.circuit, numbers.op
    finder = port_finder(ctx, numbers)
    margin = ctx.threshold(SAT_MARGIN.name, SAT_MARGIN.default)
    vce_min = ctx.threshold(VCE_MIN.name, VCE_MIN.default)
    switches = _switch_gates(circuit, op, numbers.ac_ground)
    transistors = [d for d in circuit.devices if d.kind in TRANSISTORS and d.name in op.devices]
    off = sum(1 for d in transistors if op.devices[d.name].region == "cutoff")
    # most devices off: supplies at 0 V, a sweep or a logic state -- not a working point
    judge_cutoff = off * 2 <= len(transistors)
    if _switching_deck(circuit, op, transistors):
        return
    dc_nets = _dc_conduction_count(circuit)
    seen = set()
    for dev in circuit.devices:
        if dev.kind not in TRANSISTORS:
            continue
        stage = finder.roles.get(dev.name)
        dop = op.devices.get(dev.name)
        if stage is None or dop is None or dev.nodes[0] == dev.nodes[2]:
            continue
        if dev.nodes[1] in switches and stage.role not in NEEDS_CURRENT:
            continue
        if dc_nets.get(dev.nodes[0], 0) < 2:
            continue  # nothing else conducts DC at the drain: the connectivity rules report that
        if stage.role in NEEDS_SATURATION and dev.nodes[0] in numbers.ac_ground:
            continue  # drain held by a source: a device-characterisation bench, V_DS is the stimulus
        problem = _problem(dev, stage.role, dop, margin, vce_min, numbers.source)
        if problem is None or (problem[2].get("region") == "cutoff" and not judge_cutoff):
            continue
        message, steps, values = problem
        view, local = finder.view_of(dev.name), dev.name.rsplit("/", 1)[-1]
        if stage.units and stage.units[0] != dev.name:
            continue  # a composite's later unit: its first unit stands for it
        key = (id(view), local)
        if key in seen:
            continue
        seen.add(key)
        # a cell used more than once: the numbers are this instance's, so it is named
        shown = dev.name if ctx.design.instance_count(view) > 1 else local
        steps.append(f"role from the topology: {stage.role}"
                     + (f" (with {listing(stage.related)})" if stage.related else ""))
        steps.append(f"numbers from {numbers.source_words}")
        related = [Related(d.location, f"{d.name}: related device") for n in stage.related[:MAX_LISTED]
                   for d in [finder.by_name.get(n)] if d is not None]
        yield ctx.finding(
            location=dev.location, subject=local, view=view, message=f"{shown}: {message}",
            elements=[local], explanation=steps, values=values, related=related,
            fix="re-bias the device: lower the load or level-shift drop so V_DS clears V_DSAT by the margin, "
                "adjust the cascode or bias gate voltage, size for a smaller overdrive, or check the bias "
                "net that should turn it on")


def _problem(dev, role, dop, margin, vce_min, source="level1"):
    v = dop.values
    region = dop.region
    mos = dev.kind in MOS
    if role in NEEDS_CURRENT:
        if region == "cutoff":
            return (f"{role} is cut off (no current)",
                    [f"{dev.name} is a {role}; it must conduct, but the operating point has it cut off"
                     + (f" (V_GS = {si(v['vgs_v'], 'V')}, V_TH = {si(v['vth_v'], 'V')})"
                        if mos and "vgs_v" in v else "")],
                    {"region": region})
        return None
    if role not in NEEDS_SATURATION:
        return None
    if region == "cutoff":
        words = (f" (V_GS = {si(v['vgs_v'], 'V')}, V_TH = {si(v['vth_v'], 'V')})" if mos and "vgs_v" in v else "")
        return (f"{role} device is cut off{words}",
                [f"a {role} must conduct and stay saturated; the operating point has it cut off{words}"],
                {"region": region})
    if mos:
        if "vds_v" not in v or "vdsat_v" not in v:
            if region in ("triode", "linear"):
                return (f"{role} device is in {region} (from the table)",
                        [f"a {role} must stay saturated; the table gives region {region}"], {"region": region})
            return None
        vds, vdsat = abs(v["vds_v"]), v["vdsat_v"]
        if vds >= vdsat + margin:
            return None
        where = "in triode" if vds < vdsat else "at the edge of saturation"
        return (f"{role} device is {where}: |V_DS| = {si(vds, 'V')} against V_DSAT = {si(vdsat, 'V')} "
                f"+ {si(margin, 'V')} margin",
                [f"a {role} must stay saturated: |V_DS| >= V_DSAT + margin",
                 f"|V_DS| = {si(vds, 'V')}, {_vdsat_words(source)} = {si(vdsat, 'V')}, headroom "
                 f"{si(vds - vdsat, 'V')}; margin {si(margin, 'V')} (threshold saturation-margin-v)"],
                {"region": region, "vds_v": vds, "vdsat_v": vdsat, "margin_v": margin,
                 "headroom_v": vds - vdsat})
    if "vce_v" not in v:
        return None
    vce = abs(v["vce_v"])
    if vce >= vce_min and region != "saturation":
        return None
    return (f"{role} transistor is saturated: |V_CE| = {si(vce, 'V')} below {si(vce_min, 'V')}",
            [f"a {role} must stay forward-active: |V_CE| >= {si(vce_min, 'V')} (threshold bjt-vce-min-v)",
             f"|V_CE| = {si(vce, 'V')}, region {region}"],
            {"region": region, "vce_v": vce, "vce_min_v": vce_min})


def _vdsat_words(source: str) -> str:
    """What V_DSAT is, by where the operating point came from: level-1's square law
    gives V_GS - V_TH; a BSIM-class model in ngspice or a simulator's table gives its
    own (velocity saturation lowers it below V_GS - V_TH)."""
    if source == "level1":
        return "V_DSAT = V_GS - V_TH"
    return "V_DSAT (ngspice's vdsat)" if source == "ngspice" else "V_DSAT (from the --op table)"
