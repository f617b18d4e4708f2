"""The exact wire reduction before the DC solve (lintamp/engine/reduce.py).

The reduced solve is held against the unreduced one (linear algebra: one dense solve of
the whole nodal system, every net an unknown) on random RC networks, and a deck with
stubs and floating metal against ngspice-39.
"""

from __future__ import annotations

import numpy as np
import pytest

from lintamp.circuit.flat import FlatCircuit, FlatDevice, SourceValues
from lintamp.engine.engine_kinds import OPEN_OHM
from lintamp.engine.mna import compile_circuit
from lintamp.engine.operating_point import solve_operating_point
from lintamp.engine.reduce import reduce_for_dc
from lintamp.engine.small_signal import ImpedanceSolver
from lintamp.location import Location

LOC = Location("<test>", 1)


def _random_rc_network(seed: int, n_nets: int = 400) -> FlatCircuit:
    """Sources on a few nets; chains, trees, a mesh, parallel pairs and stubs of random
    resistors between them; capacitors anywhere (open at DC).  Every net has a DC path."""
    rng = np.random.default_rng(seed)
    c = FlatCircuit()
    nets = [c.net(f"n{k}") for k in range(n_nets)]
    c.add(FlatDevice("v1", "vsource", (nets[0], 0), LOC, source=SourceValues(dc=1.0)))
    c.add(FlatDevice("v2", "vsource", (nets[1], 0), LOC, source=SourceValues(dc=-0.4)))
    c.add(FlatDevice("i1", "isource", (nets[2], 0), LOC, source=SourceValues(dc=1e-3)))
    k = 0
    for n in range(2, n_nets):  # a random tree: each net joins an earlier one
        parent = int(rng.integers(0, n)) if rng.random() < 0.3 else n - 1  # mostly chains
        c.add(FlatDevice(f"r{k}", "resistor", (nets[parent], nets[n]), LOC, value=float(rng.uniform(0.1, 1e3))))
        k += 1
    for _ in range(n_nets // 4):  # loops (a mesh), some in parallel with a tree resistor
        a, b = (int(x) for x in rng.integers(0, n_nets, 2))
        if a != b:
            c.add(FlatDevice(f"r{k}", "resistor", (nets[a], nets[b]), LOC, value=float(rng.uniform(1, 1e4))))
            k += 1
    for _ in range(n_nets // 5):  # to ground
        a = int(rng.integers(2, n_nets))
        c.add(FlatDevice(f"r{k}", "resistor", (nets[a], 0), LOC, value=float(rng.uniform(1e2, 1e5))))
        k += 1
    for j in range(n_nets // 2):
        a, b = (int(x) for x in rng.integers(0, n_nets, 2))
        c.add(FlatDevice(f"c{j}", "capacitor", (nets[a], nets[b] if rng.random() < 0.5 else 0), LOC,
                         value=float(rng.uniform(1e-16, 1e-13))))
    return c


def _unreduced_voltages(c: FlatCircuit) -> dict[str, float]:
    """Every net an unknown, one dense solve (no reduction at all)."""
    cc = compile_circuit(c)
    rows, cols, vals, _ = cc.conductance.arrays()
    matrix = np.zeros((cc.size, cc.size))
    np.add.at(matrix, (rows, cols), vals)
    x = np.linalg.solve(matrix, cc.rhs_sources)
    return {name: float(x[cc.node_index[n]]) for n, name in enumerate(c.nets) if n}


@pytest.mark.parametrize("seed", range(6))
def test_reduced_dc_solve_equals_the_unreduced_one(seed):
    # linear algebra: elimination of wire nodes is exact, so only round-off may differ
    c = _random_rc_network(seed)
    reduction = reduce_for_dc(c)
    assert reduction.steps, "the network must give the reduction something to do"
    assert len(reduction.circuit.devices) < len(c.devices) / 2
    reference = _unreduced_voltages(c)
    got = solve_operating_point(c).node_voltages_v
    assert set(got) == set(reference)
    scale = max(abs(v) for v in reference.values())
    worst = max(abs(got[n] - reference[n]) for n in reference)
    assert worst <= 1e-10 * scale


def test_reduction_keeps_device_nets_and_named_nets():
    c = _random_rc_network(7, n_nets=60)
    named = c.find_net("n30")
    reduction = reduce_for_dc(c, keep=[named])
    eliminated = {s.net for s in reduction.steps} | reduction.floating
    assert named not in eliminated
    for n in (c.find_net("n0"), c.find_net("n1"), c.find_net("n2")):  # source terminals
        assert n not in eliminated
    left = {n for d in reduction.circuit.devices for n in d.nodes}
    assert not (left & eliminated)


def test_floating_metal_has_no_dc_level_and_changes_nothing_else():
    c = _random_rc_network(3, n_nets=80)
    before = solve_operating_point(c).node_voltages_v
    fl, fl2, stub = c.net("fill1#"), c.net("fill2#"), c.net("stub#")
    n5, n9 = c.find_net("n5"), c.find_net("n9")
    c.add(FlatDevice("cf1", "capacitor", (n5, fl), LOC, value=1e-15))
    c.add(FlatDevice("cf2", "capacitor", (fl, 0), LOC, value=2e-15))
    c.add(FlatDevice("rf", "resistor", (fl, fl2), LOC, value=10.0))  # a floating resistor piece
    c.add(FlatDevice("cf3", "capacitor", (fl2, n9), LOC, value=1e-15))
    c.add(FlatDevice("rstub", "resistor", (n9, stub), LOC, value=5.0))  # a dead-end stub
    op = solve_operating_point(c)
    after = op.node_voltages_v
    assert "fill1#" not in after and "fill2#" not in after  # no DC level: never a number
    assert after["stub#"] == pytest.approx(after["n9"], rel=1e-12)  # no current in a stub
    for name, v in before.items():
        assert after[name] == pytest.approx(v, rel=1e-9, abs=1e-12)


def test_dangling_stub_and_floating_metal_at_ac_against_formula():
    # circuit theory: a resistor to a dead end carries no current; two capacitors in series
    # through floating metal are C1 C2 / (C1 + C2) -- the AC solve sees both exactly
    c = FlatCircuit()
    a, fl, dead = c.net("a"), c.net("fl#"), c.net("dead#")
    c.add(FlatDevice("r1", "resistor", (a, 0), LOC, value=1e3))
    c.add(FlatDevice("rdead", "resistor", (a, dead), LOC, value=50.0))
    c.add(FlatDevice("c1", "capacitor", (a, fl), LOC, value=1e-12))
    c.add(FlatDevice("c2", "capacitor", (fl, 0), LOC, value=3e-12))
    freq_hz = 100e6
    z = ImpedanceSolver(c, solve_operating_point(c), freq_hz).z("a")
    c_series = 1e-12 * 3e-12 / 4e-12
    expected = 1 / (1 / 1e3 + 2j * np.pi * freq_hz * c_series)
    assert abs(z - expected) <= 1e-9 * abs(expected)


def _amplifier_with_wires(seed: int) -> FlatCircuit:
    """Common-source stages on random RC wiring (a scenario of our own)."""
    from lintamp.circuit.flat import ModelCard
    rng = np.random.default_rng(seed)
    c = FlatCircuit()
    model = ModelCard("nch", "nmos", {"vto": 0.5, "kp": 2e-4, "lambda": 0.1, "tox": 9e-9,
                                      "cgso": 2e-10, "cgdo": 2e-10})
    vdd, vin = c.net("vdd"), c.net("vin")
    c.add(FlatDevice("vdd", "vsource", (vdd, 0), LOC, source=SourceValues(dc=3.0)))
    c.add(FlatDevice("vin", "vsource", (vin, 0), LOC, source=SourceValues(dc=1.0, ac_mag=1.0)))
    wires = [c.net(f"w{k}") for k in range(400)]  # above the dense limit
    for k, w in enumerate(wires):
        prev = wires[k - 1] if k else vin
        c.add(FlatDevice(f"rw{k}", "resistor", (prev, w), LOC, value=float(rng.uniform(1, 50))))
        if k % 50 == 49:  # a bleed resistor: no piece of wire floats at DC whatever is detached
            c.add(FlatDevice(f"rb{k}", "resistor", (w, 0), LOC, value=1e5))
        c.add(FlatDevice(f"cw{k}", "capacitor", (w, wires[int(rng.integers(0, 400))] if k % 3 else 0), LOC,
                         value=float(rng.uniform(1e-15, 1e-13))))
    for j in range(4):
        d = c.net(f"d{j}")
        c.add(FlatDevice(f"rd{j}", "resistor", (vdd, d), LOC, value=10e3))
        c.add(FlatDevice(f"m{j}", "nmos", (d, wires[90 * j + 7], 0, 0), LOC, model=model,
                         params={"w": 10e-6, "l": 1e-6}))
        c.add(FlatDevice(f"cl{j}", "capacitor", (d, 0), LOC, value=1e-13))
    return c


@pytest.mark.parametrize("seed", range(3))
def test_variants_from_one_factor_equal_their_own_factorisation(seed, monkeypatch):
    # linear algebra: Y' = Y + U V^T solved through Y's LU (Woodbury) against an LU of Y' itself
    from lintamp.engine import shared_factor, small_signal
    c = _amplifier_with_wires(seed)
    op = solve_operating_point(c)
    variants = [dict(), dict(detach=("cl1", "rd2")), dict(detach=("m0",)), dict(grounded=("d1",)),
                dict(detach=("vin",)), dict(driven="w40", detach=("rw41",)), dict(grounded=("w10", "w90"))]
    nets = ["d0", "d1", "d3", "w7", "w55", "w399"]
    for freq_hz in (0.0, 1e6, 3e8):
        for kwargs in variants:
            monkeypatch.setattr(small_signal, "SHARED_FACTOR_MIN", 10**9)
            own = ImpedanceSolver(c, op, freq_hz, **kwargs)
            monkeypatch.setattr(small_signal, "SHARED_FACTOR_MIN", 0)
            shared_factor.clear()
            ImpedanceSolver(c, op, freq_hz)  # the base, factored once
            variant = ImpedanceSolver(c, op, freq_hz, **kwargs)
            assert isinstance(variant._lu, shared_factor.VariantFactor)
            for net in nets:
                z_own, z_var = own.z(net), variant.z(net)
                if abs(z_own) >= OPEN_OHM:  # an open node: any value past the limit means open
                    assert abs(z_var) >= OPEN_OHM
                    continue
                assert abs(z_var - z_own) <= 1e-9 * max(abs(z_own), 1e-9), (freq_hz, kwargs, net)
            if "driven" in kwargs:
                for net in nets:
                    assert abs(variant.gain_to(net) - own.gain_to(net)) <= 1e-9 * abs(own.gain_to(net)) + 1e-12
            for name in ("rd0", "m3", "cw5"):
                sol_own, sol_var = own.solve_injection("d0"), variant.solve_injection("d0")
                i_own = own.element_current(sol_own, name, "d0")
                i_var = variant.element_current(sol_var, name, "d0")
                assert abs(i_var - i_own) <= 1e-9 * max(abs(i_own), 1e-12)
    shared_factor.clear()
