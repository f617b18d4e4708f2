"""The flattened, numeric circuit the analysis engine simulates.

Built from an elaborated design by :func:`lintamp.circuit.flatten`; tests may also
build one by hand.  Net index 0 is always ground.  Every value here is a number
(expressions evaluated with the parameters of each instance); a device whose value
could not be evaluated has ``value=None`` and the engine says so rather than guess.

Device kinds and their pin order (``nodes``):

=============  =============================  ==========================================
kind           nodes                          numbers
=============  =============================  ==========================================
resistor       p, n                           value = ohm
capacitor      p, n                           value = farad
inductor       p, n                           value = henry
vsource        p, n                           source.dc / ac_mag / ac_phase_deg (volt)
isource        p, n                           source (ampere; flows p -> n inside source)
vcvs (E)       p, n, cp, cn                   value = gain V/V
vccs (G)       p, n, cp, cn                   value = gain A/V (flows p -> n inside)
cccs (F)       p, n                           value = gain, control = V source name
ccvs (H)       p, n                           value = gain ohm, control = V source name
diode          a, k                           model, params area / m
npn, pnp       c, b, e [, s]                  model, params area / m
njf, pjf       d, g, s                        model, params area
nmos, pmos     d, g, s, b                     model, params w / l / m / nf ...
other          any                            kind_detail says what (behavioural, switch,
                                              line, xspice ...); the engine cannot simulate it
=============  =============================  ==========================================
"""

from __future__ import annotations

from dataclasses import dataclass, field

from lintamp.location import Location

GROUND = 0


@dataclass(slots=True)
class ModelCard:
    """A ``.model`` with numeric parameters (lower-case keys)."""

    name: str
    type: str  # nmos pmos npn pnp d njf pjf r c ...
    params: dict[str, float] = field(default_factory=dict)
    level: int = 1


@dataclass(slots=True)
class SourceValues:
    dc: float = 0.0
    ac_mag: float = 0.0
    ac_phase_deg: float = 0.0
    time_varying: bool = False  # a PULSE/SIN/PWL/... waveform is present
    z0_ohm: float = 0.0  # series impedance of an RF port source (portnum/z0)


@dataclass(slots=True)
class FlatDevice:
    name: str  # hierarchical, '/'-joined, lower case: "x1/m3"
    kind: str
    nodes: tuple[int, ...]
    location: Location
    value: float | None = None
    model: ModelCard | None = None
    params: dict[str, float] = field(default_factory=dict)
    source: SourceValues | None = None
    control: str | None = None  # hierarchical name of the controlling V source (F, H)
    kind_detail: str = ""
    display_name: str = ""  # original spelling, hierarchical


@dataclass(slots=True)
class FlatCircuit:
    nets: list[str] = field(default_factory=lambda: ["0"])
    devices: list[FlatDevice] = field(default_factory=list)
    temperature_c: float = 27.0
    _index: dict[str, int] = field(default_factory=lambda: {"0": 0}, repr=False)

    def net(self, name: str) -> int:
        """Index of net ``name``, adding it if new (``"0"`` is ground)."""
        key = name.lower()
        idx = self._index.get(key)
        if idx is None:
            idx = len(self.nets)
            self.nets.append(key)
            self._index[key] = idx
        return idx

    def alias(self, name: str, index: int) -> None:
        """Another name for net ``index`` (a subcircuit port seen from inside)."""
        self._index.setdefault(name.lower(), index)

    def find_net(self, name: str) -> int | None:
        return self._index.get(name.lower())

    def add(self, device: FlatDevice) -> FlatDevice:
        self.devices.append(device)
        return device

    def device(self, name: str) -> FlatDevice | None:
        key = name.lower()
        for dev in self.devices:
            if dev.name == key:
                return dev
        return None
