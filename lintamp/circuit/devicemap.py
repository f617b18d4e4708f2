"""Which subcircuit names are really transistors, resistors ... (PDK wrappers).

Open PDKs wrap every device in a subcircuit (``XM1 d g s b sky130_fd_pr__nfet_01v8
...``) whose definition lives in a model library that is often absent.  The map
turns such an instance into a device of a known kind with named pins, so that the
gate of a wrapped transistor is a gate for every rule.

The built-in entries cover the open PDKs' usual device names; a project's
``[devices]`` table comes first and wins.  Matching is a case-insensitive glob on
the subcircuit name; the first match wins.
"""

from __future__ import annotations

import fnmatch
from dataclasses import dataclass
from functools import lru_cache

KIND_PINS = {
    "nmos": ("d", "g", "s", "b"),
    "pmos": ("d", "g", "s", "b"),
    "npn": ("c", "b", "e", "s"),
    "pnp": ("c", "b", "e", "s"),
    "diode": ("a", "k"),
    "resistor": ("p", "n"),
    "capacitor": ("p", "n"),
    "inductor": ("p", "n"),
}
EXTRA_PINS = {"b", "s", "sub", "body", "well", "t"}  # body / substrate / thermal pins


@dataclass(frozen=True, slots=True)
class DeviceSpec:
    pattern: str
    kind: str
    pins: tuple[str, ...]
    value: str | None = None  # instance parameter holding the value in ohm / farad / henry
    builtin: bool = False

    def matches(self, name: str) -> bool:
        name, pattern = name.lower(), self.pattern.lower()
        literal = _literal_head(pattern)
        if len(literal) == len(pattern):  # no wildcard at all
            return name == pattern
        # A glob matches only names that begin with its text before the first wildcard;
        # testing that first spares compiling the glob for the names it cannot match
        # (most of the table, for any one name).
        return name.startswith(literal) and fnmatch.fnmatchcase(name, pattern)


@lru_cache(maxsize=1024)
def _literal_head(pattern: str) -> str:
    """The text of a glob before its first ``*``, ``?`` or ``[`` (all of it if none)."""
    cut = min((i for i in map(pattern.find, "*?[") if i >= 0), default=len(pattern))
    return pattern[:cut]


def _b(pattern, kind, pins=None, value=None):
    return DeviceSpec(pattern, kind, tuple(pins or KIND_PINS[kind]), value, builtin=True)


BUILTIN = (
    # generic transistor names that schematic flows instantiate as subcircuits
    _b("nmos", "nmos"), _b("pmos", "pmos"), _b("nmos_*", "nmos"), _b("pmos_*", "pmos"),
    _b("nfet", "nmos"), _b("pfet", "pmos"),
    # SkyWater sky130
    _b("sky130_fd_pr__nfet_*", "nmos"), _b("sky130_fd_pr__special_nfet*", "nmos"),
    _b("sky130_fd_pr__esd_nfet*", "nmos"),
    _b("sky130_fd_pr__pfet_*", "pmos"), _b("sky130_fd_pr__special_pfet*", "pmos"),
    _b("sky130_fd_pr__esd_pfet*", "pmos"),
    _b("sky130_fd_pr__res_*", "resistor", ("p", "n", "b")),
    _b("sky130_fd_pr__cap_mim*", "capacitor"), _b("sky130_fd_pr__cap_var*", "capacitor", ("p", "n", "b")),
    _b("sky130_fd_pr__diode_*", "diode"),
    _b("sky130_fd_pr__npn*", "npn"), _b("sky130_fd_pr__pnp*", "pnp"),
    # GlobalFoundries gf180mcu
    _b("nfet_03v3*", "nmos"), _b("nfet_05v0*", "nmos"), _b("nfet_06v0*", "nmos"),
    _b("pfet_03v3*", "pmos"), _b("pfet_05v0*", "pmos"), _b("pfet_06v0*", "pmos"),
    # IHP SG13G2
    _b("sg13_lv_nmos", "nmos"), _b("sg13_hv_nmos", "nmos"),
    _b("sg13_lv_pmos", "pmos"), _b("sg13_hv_pmos", "pmos"),
    _b("npn13g2*", "npn"), _b("pnpmpa", "pnp"),
    _b("rsil", "resistor", ("p", "n", "b")), _b("rppd", "resistor", ("p", "n", "b")),
    _b("rhigh", "resistor", ("p", "n", "b")), _b("cap_cmim", "capacitor"),
)


class DeviceMap:
    """Ordered glob table: project entries first, then the built-in ones."""

    def __init__(self, entries: tuple[DeviceSpec, ...] = (), *, builtin: bool = True):
        self.entries = tuple(entries) + (BUILTIN if builtin else ())
        self._memo: dict[str, DeviceSpec | None] = {}

    def lookup(self, subckt: str) -> DeviceSpec | None:
        key = subckt.lower()
        if key not in self._memo:
            self._memo[key] = next((e for e in self.entries if e.matches(key)), None)
        return self._memo[key]


def spec_from_config(pattern: str, table: dict) -> DeviceSpec:
    """Build one entry from a ``[devices]`` table value; raises ValueError when malformed."""
    kind = str(table.get("kind", "")).lower()
    if kind not in KIND_PINS:
        raise ValueError(f"kind {kind!r} is not one of {', '.join(KIND_PINS)}")
    pins = tuple(str(p).lower() for p in table.get("pins", KIND_PINS[kind]))
    needed = set(KIND_PINS[kind]) - {"s"} if kind in ("npn", "pnp") else set(KIND_PINS[kind])
    if kind in ("nmos", "pmos"):
        needed = {"d", "g", "s"}
    missing = needed - set(pins)
    unknown = set(pins) - set(KIND_PINS[kind]) - EXTRA_PINS
    if missing:
        raise ValueError(f"pins {list(pins)} lack {sorted(missing)} for a {kind}")
    if unknown:
        raise ValueError(f"pins {sorted(unknown)} are not pins of a {kind}")
    value = table.get("value")
    return DeviceSpec(pattern, kind, pins, str(value).lower() if value else None)
