"""Which subcircuit names are really transistors, resistors ... (PDK wrappers).

Open PDKs wrap every device in a subcircuit (``XM1 d g s b sky130_fd_pr__nfet_01v8
...``) whose definition lives in a model library that is often absent.  The map
turns such an instance into a device of a known kind with named pins, so that the
gate of a wrapped transistor is a gate for every rule.

The built-in entries are the open PDKs' device names in full (never a prefix); they
apply only to a name no ``.subckt`` read defines.  A project's ``[devices]`` table
comes first and wins, even over a definition.  Matching is a case-insensitive glob on
the subcircuit name; the first match wins.
"""

from __future__ import annotations

import fnmatch
import re
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


def _names(kind, names, pins=None, prefix=""):
    return tuple(_b(prefix + n, kind, pins) for n in names.split())


# The open PDKs' own device names, written out in full (from the PDKs' model
# libraries, from memory): never a prefix, because layout extractors write one small
# .subckt per device geometry named after the device plus a suffix, with its pins in
# their own order, and such a cell is the cell it is (see DeviceMap.lookup).
_SKY = "sky130_fd_pr__"
BUILTIN = (
    # generic transistor names that schematic flows instantiate as subcircuits
    _b("nmos", "nmos"), _b("pmos", "pmos"), _b("nfet", "nmos"), _b("pfet", "pmos"),
    # SkyWater sky130
    *_names("nmos", "nfet_01v8 nfet_01v8_lvt nfet_03v3_nvt nfet_05v0_nvt nfet_g5v0d10v5 "
                    "nfet_g5v0d16v0 nfet_20v0 nfet_20v0_nvt nfet_20v0_iso nfet_20v0_zvt "
                    "esd_nfet_01v8 esd_nfet_g5v0d10v5 esd_nfet_g5v0d10v5_nvt "
                    "esd_nfet_05v0_nvt special_nfet_01v8 special_nfet_latch special_nfet_pass",
            prefix=_SKY),
    *_names("pmos", "pfet_01v8 pfet_01v8_lvt pfet_01v8_hvt pfet_01v8_mvt pfet_g5v0d10v5 "
                    "pfet_g5v0d16v0 pfet_20v0 esd_pfet_g5v0d10v5 special_pfet_01v8_hvt "
                    "special_pfet_latch special_pfet_pass", prefix=_SKY),
    *_names("resistor", "res_generic_nd res_generic_pd res_generic_po res_generic_l1 "
                        "res_generic_m1 res_generic_m2 res_generic_m3 res_generic_m4 "
                        "res_generic_m5 res_generic_nd__hv res_generic_pd__hv res_iso_pw "
                        "res_high_po res_high_po_0p35 res_high_po_0p69 res_high_po_1p41 "
                        "res_high_po_2p85 res_high_po_5p73 res_xhigh_po res_xhigh_po_0p35 "
                        "res_xhigh_po_0p69 res_xhigh_po_1p41 res_xhigh_po_2p85 res_xhigh_po_5p73",
            ("p", "n", "b"), prefix=_SKY),
    *_names("capacitor", "cap_mim_m3_1 cap_mim_m3_2", prefix=_SKY),
    *_names("capacitor", "cap_var cap_var_lvt cap_var_hvt", ("p", "n", "b"), prefix=_SKY),
    *_names("diode", "diode_pw2nd_05v5 diode_pw2nd_05v5_lvt diode_pw2nd_05v5_nvt "
                     "diode_pw2nd_11v0 diode_pd2nw_05v5 diode_pd2nw_05v5_lvt diode_pd2nw_05v5_hvt "
                     "diode_pd2nw_11v0", prefix=_SKY),
    *_names("npn", "npn_05v5_W1p00L1p00 npn_05v5_W1p00L2p00 npn_11v0_W1p00L1p00", prefix=_SKY),
    *_names("pnp", "pnp_05v5_W0p68L0p68 pnp_05v5_W3p40L3p40", prefix=_SKY),
    # GlobalFoundries gf180mcu
    *_names("nmos", "nfet_03v3 nfet_05v0 nfet_06v0 nfet_06v0_nvt nfet_03v3_dss nfet_05v0_dss "
                    "nfet_06v0_dss"),
    *_names("pmos", "pfet_03v3 pfet_05v0 pfet_06v0 pfet_03v3_dss pfet_05v0_dss pfet_06v0_dss"),
    # (the names its layout-versus-schematic netlists write)
    *_names("nmos", "nmos_3p3 nmos_6p0 nmos_6p0_nat nmos_3p3_sab nmos_6p0_sab"),
    *_names("pmos", "pmos_3p3 pmos_6p0 pmos_3p3_sab pmos_6p0_sab"),
    # (its capacitors and diodes: two terminals, top/gate first)
    *_names("capacitor", "cap_mim_1f0fF cap_mim_1f5fF cap_mim_2f0fF cap_nmos_03v3 cap_pmos_03v3 "
                         "cap_nmos_06v0 cap_pmos_06v0 cap_nmos_03v3_b cap_pmos_03v3_b "
                         "cap_nmos_06v0_b cap_pmos_06v0_b"),
    *_names("diode", "diode_nd2ps_03v3 diode_pd2nw_03v3 diode_nd2ps_06v0 diode_pd2nw_06v0 "
                     "diode_nw2ps_03v3 diode_nw2ps_06v0 diode_pw2dw diode_dw2ps"),
    # IHP SG13G2
    *_names("nmos", "sg13_lv_nmos sg13_hv_nmos"),
    *_names("pmos", "sg13_lv_pmos sg13_hv_pmos"),
    *_names("npn", "npn13G2 npn13G2l npn13G2v"), _b("pnpMPA", "pnp"),
    *_names("resistor", "rsil rppd rhigh", ("p", "n", "b")), _b("cap_cmim", "capacitor"),
)


# Cell libraries of the open PDKs (standard cells, I/O cells, primitive devices):
# a netlist written for layout-versus-schematic or for a PDK flow names them and
# leaves their definitions to the PDK, which is then simply not among the files read.
PDK_LIBRARY_PREFIXES = ("sky130_fd_sc_", "sky130_osu_sc_", "sky130_fd_io__", "sky130_fd_pr__",
                        "sky130_ef_io__", "sky130_ef_sc_", "gf180mcu_fd_sc_", "gf180mcu_osu_sc_",
                        "gf180mcu_fd_io__", "gf180mcu_fd_pr__", "sg13g2_")

# Of those, the standard-cell libraries, by the prefix of their cell names (from
# memory of the PDKs' cell libraries).  A project that vendors one of them checks the
# PDK's netlists as published; what lintamp sees inside a cell the deck does not use
# is the PDK's, not the design's.
PDK_CELL_LIBRARIES = re.compile(
    r"^(sky130_fd_sc_[a-z]+|sky130_osu_sc_\w+?|gf180mcu_fd_sc_mcu\d+t\d+v\d+|"
    r"gf180mcu_osu_sc_\w+?|sg13g2)_(?:_)?[a-z]", re.IGNORECASE)


def pdk_cell_library(cell_name: str) -> str | None:
    """The PDK standard-cell library a cell name belongs to, or None.

    >>> pdk_cell_library("sky130_fd_sc_hd__inv_2"), pdk_cell_library("sg13g2_tiehi")
    ('sky130_fd_sc_hd', 'sg13g2')
    >>> pdk_cell_library("sky130_sw_ip__por") is None
    True
    """
    found = PDK_CELL_LIBRARIES.match(cell_name)
    return found.group(1).lower() if found else None


class DeviceMap:
    """Ordered glob table: project entries first, then the built-in ones."""

    def __init__(self, entries: tuple[DeviceSpec, ...] = (), *, builtin: bool = True):
        self.entries = tuple(entries) + (BUILTIN if builtin else ())
        self._memo: dict[str, DeviceSpec | None] = {}

    def lookup(self, subckt: str) -> DeviceSpec | None:
        """The first entry matching ``subckt``; callers use a built-in entry only where
        no ``.subckt`` of that name was read (a project's own entry wins even then)."""
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
