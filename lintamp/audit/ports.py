"""Which nets of the block are its inputs and outputs, and of what kind.

Decided in this order, first answer wins per net:

1. a pragma in the cell: ``current-input``, ``voltage-input``, ``voltage-output``,
   ``current-output`` (INTERFACE.md, "Pragmas");
2. the config's ``[ports]`` name globs, when the config has them;
3. the testbench stimulus: an independent source with an ``AC`` value, an I source
   making its net a current input, a V source a voltage input (ngspice AC analysis
   drives exactly these);
4. the name: ``in``/``inp``/``inn``/``vin*``/``in_*`` voltage inputs, ``iin*`` current
   inputs, ``out*``/``vout*`` voltage outputs, ``iout*`` current outputs (common
   practice).

Elements named by a ``load`` pragma (or the config's ``load`` globs) are the load:
an output's Z_out is taken without them.  Temporary home: see the package docstring.
"""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass

from lintamp.circuit.flat import FlatCircuit

PORT_VERBS = ("current-input", "voltage-input", "voltage-output", "current-output")
_NAME_RULES = (  # (glob, kind), checked in order
    ("iin*", "current-input"), ("iout*", "current-output"),
    ("in", "voltage-input"), ("inp", "voltage-input"), ("inn", "voltage-input"),
    ("in_*", "voltage-input"), ("vin*", "voltage-input"),
    ("out*", "voltage-output"), ("vout*", "voltage-output"),
)


@dataclass(slots=True)
class Port:
    """One input or output.  ``net`` is the cell's name; ``circuit_net`` the flat
    circuit's (``x1/in`` for a cell under test in a testbench)."""

    net: str
    circuit_net: str
    kind: str  # current-input | voltage-input | voltage-output | current-output
    decided_by: str
    stimulus: str | None = None  # the testbench source driving an input

    @property
    def is_input(self) -> bool:
        return self.kind.endswith("-input")

    @property
    def signal(self) -> str:
        return self.kind.split("-")[0]


def _stimuli(circuit: FlatCircuit) -> dict[int, tuple[str, str]]:
    """Net index -> (kind, source name) for every AC-driven independent source."""
    out: dict[int, tuple[str, str]] = {}
    for dev in circuit.devices:
        if dev.kind not in ("vsource", "isource") or dev.source is None or dev.source.ac_mag == 0:
            continue
        p, n = dev.nodes[0], dev.nodes[1]
        if (p == 0) == (n == 0):
            continue  # floating or shorted stimulus: no single input net
        net = p or n
        kind = "current-input" if dev.kind == "isource" else "voltage-input"
        out.setdefault(net, (kind, dev.name))
    return out


def classify_ports(circuit: FlatCircuit, pragmas, *, candidates: list[str], prefix: str = "",
                   config_ports: dict | None = None) -> list[Port]:
    """The block's ports in a stable order (inputs first, then outputs, by name).

    Parameters
    ----------
    circuit : the flat circuit the numbers come from.
    pragmas : the cell's pragmas.
    candidates : the cell's nets that may be ports (a subcircuit's ports, or every
        net of a top level), cell-local names.
    prefix : instance path of the cell in ``circuit`` (``"x1/"``), "" at the top.
    config_ports : ``{kind: (glob, ...)}`` from the config, if it has any.

    Notes
    -----
    O(nets + devices).
    """
    chosen: dict[str, Port] = {}
    known = {c.lower() for c in candidates}

    def add(net: str, kind: str, why: str, stimulus: str | None = None) -> None:
        net = net.lower()
        if net in chosen or circuit.find_net(prefix + net) is None:
            return
        if circuit.find_net(prefix + net) == 0:
            return
        chosen[net] = Port(net, prefix + net, kind, why, stimulus)

    for pragma in pragmas:
        if pragma.verb in PORT_VERBS:
            for net in pragma.args:
                add(net, pragma.verb, f"pragma ({pragma.location.path}:{pragma.location.line})")
    for kind, globs in (config_ports or {}).items():
        if kind not in PORT_VERBS:
            continue
        for net in sorted(known):
            if any(fnmatch.fnmatchcase(net, g.lower()) for g in globs):
                add(net, kind, "config [ports]")
    stimuli = _stimuli(circuit)
    for net in sorted(known):
        idx = circuit.find_net(prefix + net)
        if idx in stimuli:
            kind, source = stimuli[idx]
            what = "AC current source" if kind == "current-input" else "AC voltage source"
            add(net, kind, f"testbench: {what} {source}", source)
    for net in sorted(known):
        for glob, kind in _NAME_RULES:
            if fnmatch.fnmatchcase(net, glob):
                add(net, kind, "name")
                break
    # a stimulus on a net chosen by pragma or name is still the source to detach
    for port in chosen.values():
        if port.is_input and port.stimulus is None:
            hit = stimuli.get(circuit.find_net(port.circuit_net))
            if hit is not None:
                port.stimulus = hit[1]
    return sorted(chosen.values(), key=lambda p: (not p.is_input, p.net))


def load_elements(circuit: FlatCircuit, pragmas, *, prefix: str = "",
                  config_ports: dict | None = None) -> list[str]:
    """Flat names of the elements that are the load (pragma ``load`` or config globs)."""
    names = {d.name for d in circuit.devices}
    out: list[str] = []
    for pragma in pragmas:
        if pragma.verb == "load":
            out += [prefix + a.lower() for a in pragma.args if prefix + a.lower() in names]
    globs = (config_ports or {}).get("load", ())
    for dev in circuit.devices:
        local = dev.name[len(prefix):] if dev.name.startswith(prefix) else None
        if local and "/" not in local and any(fnmatch.fnmatchcase(local, g.lower()) for g in globs):
            out.append(dev.name)
    return sorted(set(out))
