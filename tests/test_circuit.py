"""Elaboration, device recognition, the connectivity graph and flattening."""

from __future__ import annotations

import pytest

from lintamp.api import flat_circuit_from_text, load_design
from lintamp.circuit.devicemap import DeviceMap, spec_from_config
from lintamp.circuit.design import elaborate
from lintamp.circuit.flatten import FlattenLimit, flatten
from lintamp.netlist.parser import parse_text


def design_of(body: str, **kw):
    return elaborate(parse_text("title\n" + body), **kw)


def test_device_kinds_from_model_types():
    d = design_of(".model nch nmos\n.model pch pmos\n.model qn npn\n.model qp pnp\n"
                  "M1 d g s b nch\nM2 d g s b pch\nQ1 c b e qn\nQ2 c b e qp\nD1 a k dm\n")
    kinds = {dev.name: (dev.kind, dev.polarity_from) for dev in d.top.devices}
    assert kinds == {"m1": ("nmos", "model"), "m2": ("pmos", "model"), "q1": ("npn", "model"),
                     "q2": ("pnp", "model"), "d1": ("diode", "")}


def test_polarity_guessed_from_name_only_when_model_is_missing_and_says_so():
    d = design_of("M1 d g s b nfet_lv\nM2 d g s b pch_hv\nM3 d g s b mystery\n")
    assert [(x.kind, x.polarity_from) for x in d.top.devices] == [
        ("nmos", "name"), ("pmos", "name"), ("mos", "")]


def test_pin_roles():
    d = design_of(".model nch nmos\nM1 dd gg ss bb nch\n")
    (m1,) = d.top.devices
    assert dict(m1.terminals()) == {"d": "dd", "g": "gg", "s": "ss", "b": "bb"}


def test_pdk_subcircuit_devices_are_mapped():
    # sky130 writes transistors as X instances of PDK subcircuits (spice-syntax.md 2)
    d = design_of("XM1 d g s b sky130_fd_pr__nfet_01v8 L=0.15 W=1 nf=2\n")
    (xm1,) = d.top.devices
    assert xm1.kind == "nmos" and xm1.net("g") == "g" and xm1.polarity_from == "map"


def test_project_device_map_wins_and_is_validated():
    spec = spec_from_config("acme_nfet_*", {"kind": "nmos", "pins": ["d", "g", "s", "b"]})
    d = design_of("X1 a b c d acme_nfet_lv\n", devmap=DeviceMap((spec,)))
    assert d.top.devices[0].kind == "nmos"
    with pytest.raises(ValueError):
        spec_from_config("x*", {"kind": "nmos", "pins": ["d", "s"]})
    with pytest.raises(ValueError):
        spec_from_config("x*", {"kind": "triode"})


def test_generated_wrapper_sharing_a_pdk_prefix_uses_its_definition():
    d = design_of(".subckt sky130_fd_pr__nfet_01v8_ABC12 a b c d e f\n.ends\n"
                  "X1 1 2 3 4 5 6 sky130_fd_pr__nfet_01v8_ABC12\n")
    x1 = d.top.devices[0]
    assert x1.kind == "instance" and x1.subcell is not None


def test_hierarchy_counts_and_paths():
    d = design_of(".subckt leaf a\nR1 a 0 1k\n.ends\n.subckt mid a\nX1 a leaf\nX2 a leaf\n.ends\n"
                  "XA n1 mid\nXB n2 mid\n")
    leaf = next(v for v in d.cells if v.name == "leaf")
    assert d.instance_count(leaf) == 4
    assert sorted("/".join(p) for p in d.instances(leaf)) == ["xa/x1", "xa/x2", "xb/x1", "xb/x2"]


def test_recursive_subcircuit_is_cut():
    d = design_of(".subckt a p\nX1 p b\n.ends\n.subckt b p\nX1 p a\n.ends\nX0 n a\n")
    assert [x.rule for x in d.diagnostics] == ["unknown-cell"]
    assert "recursive" in d.diagnostics[0].message


def test_net_terminals_join_nets_and_device_pins():
    # SPICE element syntax (ngspice-39 manual, ch. 3): R and C nodes are n+ then n-
    d = design_of("R1 a b 1k\nC1 b 0 1p\n")
    terminals = d.top.net_terminals
    assert set(terminals) == {"a", "b", "0"}
    assert [(dev.name, pin) for dev, pin in terminals["b"]] == [("r1", "n"), ("c1", "p")]
    assert d.top.is_external("0") and not d.top.is_external("a")


def test_library_roots_when_top_is_empty():
    d = design_of(".subckt inv a y\n.ends\n.subckt buf a y\nX1 a m inv\nX2 m y inv\n.ends\n")
    assert sorted(v.label for v in d.roots) == ["(top)", "buf"]
    assert not d.in_deck(d.roots[1])


def test_flatten_names_and_parameter_binding():
    flat = flat_circuit_from_text(
        "t\n.param rtop=2k\n.subckt div in out r1=1k\nRa in out {r1}\nRb out 0 {2*r1}\n.ends\n"
        "X1 a b div r1={rtop}\nX2 b c div\nV1 a 0 1\n")
    values = {d.name: d.value for d in flat.devices}
    assert values == {"x1/ra": 2000.0, "x1/rb": 4000.0, "x2/ra": 1000.0, "x2/rb": 2000.0, "v1": 1.0}
    assert flat.nets[flat.devices[1].nodes[0]] == "b"  # the port maps to the parent's net
    assert flat.find_net("x1/out") == flat.find_net("b")  # a port seen from inside


def test_flatten_sources_models_and_ground_alias():
    flat = flat_circuit_from_text("t\n.model nch nmos vto=0.5 kp=200u\nV1 vdd gnd DC 3 AC 1\n"
                                  "M1 vdd g 0 0 nch W=10u L=1u\nVg g 0 SIN(0.7 1m 1k)\n")
    v1, m1, vg = flat.devices
    assert v1.nodes[1] == 0 and v1.source.dc == 3.0 and v1.source.ac_mag == 1.0
    assert m1.model.params == {"vto": 0.5, "kp": 200e-6} and m1.params["w"] == pytest.approx(10e-6)
    assert vg.source.dc == pytest.approx(0.7) and vg.source.time_varying


def test_flatten_limit():
    netlist = parse_text("t\n" + "".join(f"R{i} n{i} 0 1k\n" for i in range(50)))
    with pytest.raises(FlattenLimit):
        flatten(load_design(netlist), limit=10)
