"""What a block is for: its rails, its ports (direction and kind), its loads and its band.

One analysis that ``check`` (through :mod:`lintamp.rulekit.ports`), ``impedance`` and
``audit`` share.  Every port and rail says what decided it.  Strongest first
(INTERFACE.md, "Where intent comes from"):

1. a pragma in the cell (``current-input``, ``voltage-input``, ``voltage-output``,
   ``current-output``, ``load``, ``bandwidth``);
2. the configuration's ``[ports]`` globs;
3. pin directions a schematic export writes (``*.PININFO net:I|O|B``);
4. the testbench: an independent V or I source with an ``AC`` value or a waveform
   (its far end at AC ground, possibly through a common-mode source), the nets that
   ``.print/.plot/.meas/.save/.probe`` look at, load elements;
5. names.

A weaker source never overrides a stronger one: a net a DC-only source holds at AC
ground is no input whatever its name, and a net a stronger source has decided is
not looked at again.  The ``.ac`` sweep's range is never the band: a sweep usually
runs far past it.

Rails come from V sources without a signal (their nets are AC ground), ``.global``
names, supply-like bidirectional pins, port names that match the supply and ground
globs (``[ports] supply`` / ``ground`` in the configuration) and the nets bodies tie
to, so a cell read without a testbench still has ``vdd`` and ``vss`` as rails.
"""

from __future__ import annotations

import fnmatch
import re
from dataclasses import dataclass, field
from functools import lru_cache

from lintamp.circuit.flat import FlatCircuit
from lintamp.circuit.kinds import MOS, TRANSISTORS

PORT_VERBS = ("current-input", "voltage-input", "voltage-output", "current-output")
DEFAULT_PATTERNS: dict[str, tuple[str, ...]] = {
    "current-input": ("iin", "iin?", "iin_*", "*_iin"),
    "current-output": ("iout", "iout?", "iout_*", "*_iout"),
    "voltage-input": ("in", "inp", "inn", "in?", "in_*", "*_in", "vin", "vin?", "vin_*", "vinp",
                      "vinn", "vip", "vim", "in+", "in-"),
    "voltage-output": ("out", "out?", "outp", "outn", "out_*", "*_out", "vout", "vout?", "vout_*",
                       "voutp", "voutn"),
    "load": ("rload*", "cload*", "zload*", "rl_load*", "cl_load*"),
    # common practice in open PDK cells and textbook decks
    "supply": ("vdd", "vdd?", "vdd_*", "vdd!", "avdd*", "dvdd*", "vdda", "vddd", "vcc", "vcc?",
               "vcc_*", "vpwr", "vpb", "vccd*", "vcca*", "vdd3v3", "vdd1v8", "supply", "vplus",
               "vpos", "v+", "vddio*"),
    "ground": ("0", "gnd", "gnd!", "gnd?", "gnd_*", "agnd*", "dgnd*", "vss", "vss?", "vss_*",
               "vss!", "avss*", "dvss*", "vssa", "vssd*", "vee", "vee?", "vgnd", "vnb", "vneg",
               "vminus", "v-", "sub", "vsub*"),
}
# nets that carry bias or logic, not the signal: never a signal port by name or pin
# direction (common practice)
BIAS_NAMES = ("ibias*", "iref*", "ib", "ib?", "ib_*", "vbias*", "vb", "vb?", "vb_*", "bias*",
              "vcasc*", "vcas*", "vbcas*", "vbc?", "vbc_*", "iptat*", "ictat*", "*_bias", "vbn*", "vbp*", "nbias*",
              "pbias*")
LOGIC_NAMES = ("en", "en?", "enb", "en_*", "*_en", "*_enb", "ena", "enable*", "pwrdn*", "pwdn*",
               "pdn", "pd_b", "pdb", "sel*", "*_sel", "*_sel_b", "*_selb", "clk*", "*clk", "clkb", "rst*", "reset*", "latch*",
               "phi?", "phi?b", "sleep*", "stby*", "standby*", "ctrl*")
SOURCES = ("pragma", "config", "pin direction", "testbench", "name")
MAX_PREFIXES = 10_000


def parse_frequency(text) -> float | None:
    """``"20meg"``, ``"1.5GHz"``, ``"2e7"`` -> hertz; None for text that is not a
    positive, finite frequency.

    >>> parse_frequency("20meg"), parse_frequency("1khz"), parse_frequency("-3")
    (20000000.0, 1000.0, None)
    """
    from lintamp.netlist.units import parse_number

    if text is None:
        return None
    word = str(text).strip().lower()
    if word.endswith("hz"):
        word = word[:-2]
    try:
        value = parse_number(word)
    except (ValueError, TypeError):
        return None
    if value is None or not value > 0 or value == float("inf"):
        return None
    return float(value)


# ------------------------------------------------------------------ band
@dataclass(frozen=True, slots=True)
class SignalBand:
    """``hz`` is None when nothing says what the band is; ``source`` says what did."""

    hz: float | None
    source: str

    @property
    def freq_hz(self) -> float | None:
        return self.hz


def _pragma_band(cell) -> SignalBand | None:
    for pragma in cell.pragmas:
        if pragma.verb == "bandwidth" and pragma.args:
            hz = parse_frequency(pragma.args[0])
            if hz is not None:
                loc = pragma.location
                return SignalBand(hz, f"pragma ({loc.path}:{loc.line})")
    return None


def band_of(netlist, cells=(), *, option=None, config_value=None) -> SignalBand:
    """The band: ``--bandwidth``, a pragma of the first of ``cells`` that has one, the
    top level's pragma, the configuration; else unknown (``hz`` None).

    Raises ``ValueError`` for an ``option`` that is not a frequency (a usage error).
    """
    if option:
        hz = parse_frequency(option)
        if hz is None:
            raise ValueError(f"--bandwidth {option}: not a frequency (write e.g. 20meg, 1.5g)")
        return SignalBand(hz, "--bandwidth")
    for cell in (*cells, netlist.top):
        if cell is not None:
            band = _pragma_band(cell)
            if band is not None:
                return band
    hz = parse_frequency(config_value)
    if hz is not None:
        return SignalBand(hz, "config")
    return SignalBand(None, "none")


def signal_band(ctx, view=None, also=()) -> SignalBand | None:
    """The band for findings in ``view`` (and the cells in ``also`` whose ports the
    judged net is), or None when nothing gives one."""
    cells = [v.cell for v in (view, *also) if v is not None and not v.cell.is_top]
    try:
        band = band_of(ctx.netlist, cells, option=(ctx.options or {}).get("bandwidth"),
                       config_value=getattr(ctx.config, "bandwidth", None))
    except ValueError:
        band = band_of(ctx.netlist, cells, config_value=getattr(ctx.config, "bandwidth", None))
    return band if band.hz is not None else None


def ac_sweep_hz(netlist) -> tuple[float, float] | None:
    """(start, stop) of the deck's first ``.ac`` card: a plotting range, never the band."""
    for analysis in netlist.analyses:
        args = [a for a in analysis.args if "=" not in a]
        if analysis.kind == "ac" and len(args) >= 4 and args[0].lower() in ("dec", "oct", "lin"):
            start, stop = parse_frequency(args[2]), parse_frequency(args[3])
            if start is not None and stop is not None and stop > start:
                return start, stop
    return None


# ------------------------------------------------------------------ names
def patterns(config, kind: str) -> tuple[str, ...]:
    ports = getattr(config, "ports", None) or {}
    return tuple(ports.get(kind, DEFAULT_PATTERNS[kind]))


@lru_cache(maxsize=256)
def _any_of(globs: tuple[str, ...]):
    return re.compile("|".join(f"(?:{fnmatch.translate(g.lower())})" for g in globs) or "(?!)")


def matches(name: str, globs) -> str | None:
    """The first of ``globs`` that ``name`` matches (case-insensitive), or None."""
    low = name.lower()
    globs = tuple(globs)
    if not _any_of(globs).match(low):
        return None
    for g in globs:
        if fnmatch.fnmatchcase(low, g.lower()):
            return g
    return None


def local_name(flat_name: str) -> str:
    return flat_name.rsplit("/", 1)[-1]


def is_control_name(name: str) -> str | None:
    """``"bias"`` or ``"logic"`` for a net named like a bias or logic line."""
    if matches(name, BIAS_NAMES):
        return "bias"
    if matches(name, LOGIC_NAMES):
        return "logic"
    return None


# ------------------------------------------------------------------ rails
def ac_ground(circuit: FlatCircuit, detach=()) -> set[int]:
    """Ground and the nets V sources without an AC value or a waveform tie to it."""
    detached = set(detach)
    adj: dict[int, list[int]] = {}
    for dev in circuit.devices:
        if dev.kind != "vsource" or dev.name in detached or len(dev.nodes) < 2:
            continue
        if dev.source is not None and (dev.source.ac_mag or dev.source.time_varying):
            continue
        a, b = dev.nodes[0], dev.nodes[1]
        adj.setdefault(a, []).append(b)
        adj.setdefault(b, []).append(a)
    seen, todo = {0}, [0]
    while todo:
        for m in adj.get(todo.pop(), ()):
            if m not in seen:
                seen.add(m)
                todo.append(m)
    return seen


def _aliases(circuit: FlatCircuit) -> dict[int, list[str]]:
    index = getattr(circuit, "_index", None) or {n: i for i, n in enumerate(circuit.nets)}
    out: dict[int, list[str]] = {}
    for name, idx in index.items():
        out.setdefault(idx, []).append(name)
    return out


def flat_rails(circuit: FlatCircuit, config=None, globals_=(), bidirectional=()) -> dict[int, str]:
    """Flat net index -> why it is a rail.

    ``globals_``: ``.global`` names; ``bidirectional``: flat names of pins a schematic
    export marks ``B`` (a rail when only sources, bodies and capacitors touch them).

    Notes
    -----
    O(names + device terminals).
    """
    rails: dict[int, str] = {}
    for idx in ac_ground(circuit):
        rails[idx] = "ground" if idx == 0 else "held by a V source without a signal"
    supply, ground = patterns(config, "supply"), patterns(config, "ground")
    for idx, names in _aliases(circuit).items():
        if idx in rails:
            continue
        for name in names:
            local = local_name(name)
            g = matches(local, supply) or matches(local, ground)
            if g:
                rails[idx] = f"name {local} matches the rail pattern {g!r}"
                break
            if name in globals_:
                rails[idx] = f"{name} is a .global net"
                break
    body, active, other = _touches(circuit)
    for idx in body - active - other:
        rails.setdefault(idx, "bodies tie to it")
    add_bidirectional(rails, circuit, bidirectional, active, other)
    return rails


def _touches(circuit: FlatCircuit) -> tuple[set[int], set[int], set[int]]:
    """(nets MOS bodies tie to, nets a transistor's drain/gate/collector/base touches,
    nets another element than a capacitor or V source touches)."""
    body, active, other = set(), set(), set()
    for dev in circuit.devices:
        if dev.kind in TRANSISTORS:
            active.update(dev.nodes[:2])
            if dev.kind in MOS and len(dev.nodes) > 3:
                body.add(dev.nodes[3])
        elif dev.kind not in ("capacitor", "vsource"):
            other.update(dev.nodes[:2])
    return body, active, other


def add_bidirectional(rails: dict[int, str], circuit: FlatCircuit, names, active, other) -> None:
    """A pin a schematic export marks B is a rail when only sources, bodies and
    capacitors touch it."""
    for name in names:
        idx = circuit.find_net(name)
        if idx is not None and idx not in active and idx not in other:
            rails.setdefault(idx, f"bidirectional pin {local_name(name)} that only sources and "
                                  "bodies touch")


# ------------------------------------------------------------------ ports
@dataclass(slots=True)
class Port:
    """One input or output of a block.  ``net`` is the cell's name, ``circuit_net``
    the flat circuit's (``x1/in`` for a cell under test in a testbench)."""

    net: str
    circuit_net: str
    kind: str  # current-input | voltage-input | voltage-output | current-output
    source: str  # one of SOURCES: what decided it
    decided_by: str  # the same with its detail: "pragma (path:line)", "testbench: AC V source vin"
    stimulus: str | None = None  # the testbench source driving an input (flat name)
    location: object = None

    @property
    def is_input(self) -> bool:
        return self.kind.endswith("-input")

    @property
    def signal(self) -> str:
        return self.kind.split("-")[0]

    def as_json(self) -> dict:
        return {"net": self.net, "kind": self.kind, "source": self.source,
                "decided_by": self.decided_by}


@dataclass
class Intent:
    """The ports, rails, controls and loads of one block, and its band."""

    ports: list[Port]
    rails: dict[int, str]  # flat net -> why
    controls: dict[str, str] = field(default_factory=dict)  # net -> "bias" | "logic" (and why)
    loads: list[str] = field(default_factory=list)  # flat element names
    band: SignalBand | None = None
    notes: list[str] = field(default_factory=list)
    control_nets: dict[int, str] = field(default_factory=dict)  # flat net -> "bias" | "logic"
    input_nets: list[int] = field(default_factory=list)  # flat nets of the input ports
    rail_nets: dict[str, str] = field(default_factory=dict)  # the block's own nets that are rails -> why

    def stage_hints(self) -> dict:
        """Keyword arguments for :func:`lintamp.engine.stages.recognise_stages`."""
        return {"rails": self.rails,
                "bias_nets": {n for n, w in self.control_nets.items() if w == "bias"},
                "logic_nets": {n for n, w in self.control_nets.items() if w == "logic"}}


def stimuli(circuit: FlatCircuit, acg: set[int]) -> dict[int, tuple[str, str, str]]:
    """Flat net -> (kind, flat source name, words) for every source with an AC value or a
    waveform whose other end is at AC ground (directly, or through a common-mode source:
    ``vinp inp cm`` on ``vcm cm 0``).  An I source counts only into a net with a
    capacitor to AC ground (a sensor's model), or into a net no drain, collector or
    controlled-source output drives (a Norton source feeding a gate, a source or an
    emitter); one on an output node, with no capacitance there, is an impedance probe."""
    caps: set[int] = set()
    driven: set[int] = set()
    for dev in circuit.devices:
        if dev.kind in TRANSISTORS and dev.nodes:
            driven.add(dev.nodes[0])
        elif dev.kind in ("vccs", "vcvs", "cccs", "ccvs") and len(dev.nodes) >= 2:
            driven.update(dev.nodes[:2])
    for dev in circuit.devices:
        if dev.kind == "capacitor" and len(dev.nodes) >= 2:
            a, b = dev.nodes[0], dev.nodes[1]
            if a in acg and b not in acg:
                caps.add(b)
            elif b in acg and a not in acg:
                caps.add(a)
    out: dict[int, tuple[str, str, str]] = {}
    for dev in circuit.devices:
        src = dev.source
        if dev.kind not in ("vsource", "isource") or src is None or not (src.ac_mag or src.time_varying):
            continue
        a, b = dev.nodes[0], dev.nodes[1]
        if (a in acg) == (b in acg):
            continue
        net = b if a in acg else a
        stim = "AC" if src.ac_mag else "waveform"
        name = dev.display_name or dev.name
        if dev.kind == "isource":
            if net not in caps and net in driven:
                continue
            out.setdefault(net, ("current-input", dev.name, f"{stim} I source {name}"))
        else:
            via = "" if (a == 0 or b == 0) else f" on {circuit.nets[a if net == b else b]}"
            out.setdefault(net, ("voltage-input", dev.name, f"{stim} V source {name}{via}"))
    return out


class IntentAnalysis:
    """Intent for the blocks of one flat circuit (build once per netlist).

    ``netlist``: the parsed netlist (pragmas, PININFO, ``.global``, observed nets);
    ``design``: its elaborated design, or None when only the netlist is at hand.
    """

    def __init__(self, netlist, circuit: FlatCircuit, config=None, options=None):
        self.netlist = netlist
        self.circuit = circuit
        self.config = config
        self.options = options or {}
        self.acg = ac_ground(circuit)
        self.stimuli = stimuli(circuit, self.acg)
        self._rails: dict[int, str] | None = None
        self._touch: tuple = (set(), set(), set())
        self._load_index: dict[str, list[str]] | None = None
        self.gate_lines = _shared_gate_lines(circuit, self.rails())
        self.observed = {i for i in (circuit.find_net(n) for n in getattr(netlist, "observed", ()))
                         if i is not None}

    def rails(self, bidirectional=()) -> dict[int, str]:
        """The circuit's rails; with ``bidirectional`` (flat names of B pins) those too."""
        if self._rails is None:
            self._rails = flat_rails(self.circuit, self.config, getattr(self.netlist, "globals", ()))
            self._touch = _touches(self.circuit)
        if not bidirectional:
            return self._rails
        rails = dict(self._rails)
        add_bidirectional(rails, self.circuit, bidirectional, self._touch[1], self._touch[2])
        return rails

    def block(self, cell, prefix: str = "", candidates=None) -> Intent:
        """The intent of ``cell`` placed at ``prefix`` in the circuit.  ``candidates``:
        the cell's nets that may be ports (its ``.subckt`` ports; every top-level net
        of a testbench)."""
        circuit = self.circuit
        if candidates is None:
            candidates = list(cell.ports) if not cell.is_top else [n for n in circuit.nets[1:] if "/" not in n]
        pins = {k.lower(): v for k, v in (getattr(cell, "pin_info", None) or {}).items()}
        rails = self.rails([prefix + n for n, d in pins.items() if d == "b"])
        chosen: dict[str, Port] = {}
        controls: dict[str, str] = {}
        seen_idx: set[int] = set()

        def idx_of(net: str) -> int | None:
            return circuit.find_net(prefix + net)

        def add(net: str, kind: str, source: str, why: str, location=None) -> None:
            net = net.lower()
            idx = idx_of(net)
            if net in chosen or net in controls or idx is None or idx == 0:
                return
            if source != "pragma" and (idx in rails or idx in seen_idx):
                return
            stim = self.stimuli.get(idx)
            chosen[net] = Port(net, circuit.nets[idx] if not prefix else prefix + net, kind, source,
                               why, stim[1] if stim and kind.endswith("-input") else None, location)
            seen_idx.add(idx)

        for pragma in cell.pragmas:
            if pragma.verb in PORT_VERBS:
                loc = pragma.location
                for net in pragma.args:
                    add(net, pragma.verb, "pragma", f"pragma ({loc.path}:{loc.line})", loc)
        config_ports = getattr(self.config, "ports", None) or {}
        ordered = sorted(dict.fromkeys(c.lower() for c in candidates))
        for kind in PORT_VERBS:
            globs = config_ports.get(kind)
            if globs:
                for net in ordered:
                    g = matches(net, globs)
                    if g:
                        add(net, kind, "config", f"config [ports] {kind} {g!r}")
        for net in ordered:
            if idx_of(net) in self.gate_lines and net not in chosen:
                controls[net] = "bias (one gate line for devices on different sources: a cascode bias)"
        for net in ordered:
            d = pins.get(net)
            if d in ("i", "o"):
                what = is_control_name(net)
                if what:
                    controls[net] = f"{what} (pin direction {d.upper()}, named like a {what} line)"
                    continue
                if d == "i":
                    stim = self.stimuli.get(idx_of(net) or -1)
                    kind = "current-input" if (stim and stim[0] == "current-input") or matches(
                        net, patterns(self.config, "current-input")) else "voltage-input"
                else:
                    kind = "current-output" if matches(net, patterns(self.config, "current-output")) \
                        else "voltage-output"
                add(net, kind, "pin direction", f"pin direction ({net}:{d.upper()}, from the schematic export)")
        for net in ordered:
            idx = idx_of(net)
            if idx in self.stimuli:
                kind, _, words = self.stimuli[idx]
                add(net, kind, "testbench", f"testbench: {words}")
        for net in ordered:
            idx = idx_of(net)
            if idx in self.observed and idx not in self.acg and idx not in self.stimuli:
                kind = "current-output" if matches(net, patterns(self.config, "current-output")) \
                    else "voltage-output"
                add(net, kind, "testbench", "testbench: a .print/.plot/.meas/.save/.probe looks at it")
        for net in ordered:
            idx = idx_of(net)
            if idx is None or idx in self.acg:
                continue  # a DC-held net is no port, whatever its name
            if "#" in net:
                continue  # an extractor's own name ('out_n12#', 'a_120_n45#'): no designer chose it
            what = is_control_name(net)
            if what:
                controls.setdefault(net, f"{what} (named like a {what} line)")
                continue
            for kind in ("current-input", "current-output", "voltage-input", "voltage-output"):
                g = matches(net, patterns(self.config, kind))
                if g:
                    add(net, kind, "name", "name")
                    break
        ports = sorted(chosen.values(), key=lambda p: (not p.is_input, p.net))
        notes = []
        grounded = [n for n in ordered if (idx_of(n) in self.acg and idx_of(n) != 0
                                           and matches(n, patterns(self.config, "voltage-input")))]
        for n in grounded:
            notes.append(f"{n} is named like an input but a DC source holds it at AC ground: "
                         "not an input")
        band = None
        try:
            band = band_of(self.netlist, [cell] if not cell.is_top else [],
                           option=self.options.get("bandwidth"),
                           config_value=getattr(self.config, "bandwidth", None))
        except ValueError:
            band = band_of(self.netlist, [cell] if not cell.is_top else [],
                           config_value=getattr(self.config, "bandwidth", None))
        control_nets = {idx_of(n): w.split(" ", 1)[0] for n, w in controls.items() if idx_of(n) is not None}
        inputs = [i for i in (circuit.find_net(p.circuit_net) for p in ports if p.is_input) if i is not None]
        own_rails = {n: rails[idx_of(n)] for n in ordered if idx_of(n) in rails and idx_of(n) != 0}
        for n in own_rails:  # a pin direction is a stronger source than a V source or a name
            if pins.get(n) == "b" and not own_rails[n].startswith("bidirectional"):
                own_rails[n] = f"bidirectional pin ({n}:B in *.PININFO); also {own_rails[n]}"
        return Intent(ports, rails, controls, self.loads(cell, prefix), band, notes, control_nets, inputs,
                      own_rails)

    def loads(self, cell, prefix: str = "") -> list[str]:
        """Flat names of the elements that are the load: a ``load`` pragma, the load
        globs (config, else the default names), in the cell itself."""
        if self._load_index is None:  # once: prefix -> the elements named like loads
            globs = patterns(self.config, "load")
            self._load_index = {}
            self._device_names = {d.name for d in self.circuit.devices}
            for dev in self.circuit.devices:
                head, _, local = dev.name.rpartition("/")
                if matches(local, globs):
                    self._load_index.setdefault(head + "/" if head else "", []).append(dev.name)
        out = [prefix + a.lower() for pragma in cell.pragmas if pragma.verb == "load"
               for a in pragma.args if prefix + a.lower() in self._device_names]
        out += self._load_index.get(prefix, [])
        return sorted(set(out))


def _shared_gate_lines(circuit: FlatCircuit, rails) -> set[int]:
    """Nets only MOS gates touch, of two or more devices standing on different sources
    that are not rails: a cascode bias line (a signal input drives one device or one
    pair).  O(devices)."""
    other: set[int] = set()
    sources: dict[int, set[int]] = {}
    drains: dict[int, set[int]] = {}
    for dev in circuit.devices:
        if dev.kind in MOS:
            other.update((dev.nodes[0], dev.nodes[2]))
            sources.setdefault(dev.nodes[1], set()).add(dev.nodes[2])
            drains.setdefault(dev.nodes[1], set()).add(dev.nodes[0])
        else:
            other.update(dev.nodes)
    out = set()
    for n, coms in sources.items():
        coms = coms - drains.get(n, set())  # a series stack of units stands on one source
        if n not in other and n not in rails and len(coms) >= 2 and not (coms & set(rails)):
            out.add(n)
    return out


def instance_prefixes(design) -> list[tuple[str, object]]:
    """Every (flat prefix, cell view) pair below the top, the top as ``("", top)``.

    Notes
    -----
    Depth-first, O(instances), capped at ``MAX_PREFIXES``.
    """
    out = [("", design.top)]
    stack = [("", design.top, 0)]
    while stack and len(out) < MAX_PREFIXES:
        prefix, view, depth = stack.pop()
        if depth > 100:
            continue
        for dev in view.instances():
            if dev.subcell is not None:
                child = prefix + dev.name + "/"
                out.append((child, dev.subcell))
                stack.append((child, dev.subcell, depth + 1))
    return out


def intent_analysis(ctx, circuit: FlatCircuit) -> IntentAnalysis:
    """The netlist's one :class:`IntentAnalysis` for ``circuit`` (memoised on ``ctx``)."""
    return ctx.memo(("intent", id(circuit)),
                    lambda: IntentAnalysis(ctx.netlist, circuit, ctx.config, ctx.options))


def rail_levels(circuit: FlatCircuit, rails: dict[int, str]) -> dict[int, str]:
    """Rail net -> ``"high"`` (a supply), ``"low"`` (ground, a negative supply) or
    ``"bias"`` (a DC level between them), from the V sources' DC values, the rail
    names and the bodies that tie to them.

    Notes
    -----
    O(V sources + rails).
    """
    volts = {0: 0.0}
    adj: dict[int, list[tuple[int, float]]] = {}
    for dev in circuit.devices:
        if dev.kind == "vsource" and dev.source is not None and len(dev.nodes) >= 2:
            dc = dev.source.dc or 0.0
            a, b = dev.nodes[0], dev.nodes[1]
            adj.setdefault(b, []).append((a, dc))
            adj.setdefault(a, []).append((b, -dc))
    todo = [0]
    while todo:
        n = todo.pop()
        for m, delta in adj.get(n, ()):
            if m not in volts:
                volts[m] = volts[n] + delta
                todo.append(m)
    known = [volts[n] for n in rails if n in volts]
    top, bottom = (max(known), min(known)) if known else (0.0, 0.0)
    nbody, pbody = set(), set()
    for dev in circuit.devices:
        if dev.kind == "nmos" and len(dev.nodes) > 3:
            nbody.add(dev.nodes[3])
        elif dev.kind == "pmos" and len(dev.nodes) > 3:
            pbody.add(dev.nodes[3])
    names = _aliases(circuit)
    out: dict[int, str] = {}
    for n in rails:
        level = None
        if n in volts and top > bottom:
            v = volts[n]
            level = "high" if abs(v - top) < 1e-9 else ("low" if abs(v - bottom) < 1e-9 else "bias")
        elif n == 0:
            level = "low"
        if level is None or (level == "bias" and n not in volts):
            local = [local_name(x) for x in names.get(n, ())]
            if any(matches(x, DEFAULT_PATTERNS["supply"]) for x in local) or (n in pbody and n not in nbody):
                level = "high"
            elif any(matches(x, DEFAULT_PATTERNS["ground"]) for x in local) or (n in nbody and n not in pbody):
                level = "low"
            elif level is None:
                level = "high" if (n in volts and volts[n] > 0) else "bias"
        out[n] = level
    return out
