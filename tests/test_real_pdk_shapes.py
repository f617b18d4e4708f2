"""Netlists in the shapes open-PDK tools write (layout extraction, schematic export,
characterisation templates), checked for findings a reviewer keeps: one cause, one
finding, nothing wrong.  Each netlist is our own, written in the shape those tools
write (from memory of magic / KLayout / xschem output); the expected readings are
ngspice-39's where a simulator decides (named beside each check), else common practice.
"""

from __future__ import annotations

from collections import Counter

from lintamp.api import check_text
from lintamp.circuit.design import elaborate
from lintamp.netlist.parser import parse_text


def rules_of(text: str) -> Counter:
    return Counter(f.rule for f in check_text(text, "deck.spice").findings)


def loud(text: str) -> list:
    return [f for f in check_text(text, "deck.spice").findings if f.severity.label != "info"]


# -- 1. layout-extractor wrapper cells ------------------------------------------------
# magic writes one .subckt per device geometry, named after the device and six random
# characters, with its pins in its own order (here: source, drain, body, gate)
WRAPPED_INVERTER = """\
* NGSPICE file created from inv.ext - technology: sky130A

.subckt sky130_fd_pr__nfet_01v8_lvt_3HBZVM a_n73_n100# a_15_n100# VSUBS a_n33_n188#
X0 a_15_n100# a_n33_n188# a_n73_n100# VSUBS sky130_fd_pr__nfet_01v8_lvt ad=0.29 pd=2.58 as=0.29 ps=2.58 w=1 l=0.15
.ends

.subckt sky130_fd_pr__pfet_01v8_hvt_6WH9DB a_n73_n100# a_15_n100# w_n211_n319# a_n33_n197#
X0 a_15_n100# a_n33_n197# a_n73_n100# w_n211_n319# sky130_fd_pr__pfet_01v8_hvt ad=0.29 pd=2.58 as=0.29 ps=2.58 w=1 l=0.15
.ends

.subckt inv vdd vss a y
XXM1 vss y vss a sky130_fd_pr__nfet_01v8_lvt_3HBZVM
XXM2 vdd y vdd a sky130_fd_pr__pfet_01v8_hvt_6WH9DB
.ends
"""


def test_extractor_wrapper_cell_is_the_cell_it_defines_not_a_pdk_device_by_prefix():
    # read as bare transistors (d g s b) the two wrappers would put both bodies on
    # the input 'a' (a false body-tie); read as the cells they are, the transistors
    # inside have their bodies on vss and vdd (common practice: a .subckt read is
    # the definition a simulator uses, ngspice-39 included)
    design = elaborate(parse_text(WRAPPED_INVERTER))
    inv = next(v for v in design.cells if v.name == "inv")
    assert [d.kind for d in inv.devices] == ["instance", "instance"]
    assert all(d.subcell is not None for d in inv.devices)
    assert not loud(WRAPPED_INVERTER)


def test_builtin_map_names_full_device_names_only():
    from lintamp.circuit.devicemap import DeviceMap
    devmap = DeviceMap()
    assert devmap.lookup("sky130_fd_pr__nfet_01v8").kind == "nmos"
    assert devmap.lookup("SKY130_FD_PR__PFET_01V8_HVT").kind == "pmos"
    # the extractor's suffix makes another name, which the map does not claim
    assert devmap.lookup("sky130_fd_pr__nfet_01v8_lvt_3HBZVM") is None
    assert all("*" not in e.pattern and "?" not in e.pattern for e in devmap.entries)


def test_project_device_entry_overrides_a_definition():
    from lintamp.circuit.devicemap import DeviceMap, spec_from_config
    spec = spec_from_config("sky130_fd_pr__*_3HBZVM", {"kind": "nmos", "pins": ["s", "d", "b", "g"]})
    design = elaborate(parse_text(WRAPPED_INVERTER), devmap=DeviceMap((spec,)))
    inv = next(v for v in design.cells if v.name == "inv")
    assert inv.devices[0].kind == "nmos" and inv.devices[0].net("g") == "a"
