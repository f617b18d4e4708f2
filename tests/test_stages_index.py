"""Stage roles from net indexes hold their invariants on real and stress decks.

``recognise_stages`` finds related transistors (mirror references and outputs,
differential-pair partners, devices below a cascode) through indexes by net and
per-net counts, so that a bias line or supply shared by thousands of devices
costs no scan per device.  Here its invariants are held on every rule fixture,
the samples, a slice of the real corpus and the bench's stress shapes.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

from lintamp.engine.stages import BJT, MOS, Role, recognise_stages
from lintamp.api import flat_circuit_from_text

REPO = Path(__file__).resolve().parent.parent
CORPUS = REPO.parent / "shared" / "corpus"
DECKS = sorted((REPO / "tests" / "fixtures" / "rules").glob("*/*.sp")) + sorted((REPO / "samples").glob("*.sp"))


def _roles(stages):
    return [(s.device, s.role, list(s.related)) for s in stages]


def _flat(path: Path):
    text = path.read_text(encoding="utf-8", errors="replace")
    try:
        return flat_circuit_from_text(text, str(path))
    except Exception:  # a deck the engine cannot flatten is not this test's business
        return None


def _check(circuit):
    """The invariants of the indexed recognition: one stage per transistor in netlist
    order; a pair's halves, an inverter's two devices and a composite's units share a
    role; every related device is a transistor of the circuit (common practice)."""
    stages = recognise_stages(circuit)
    trans = [d.name for d in circuit.devices if d.kind in MOS + BJT]
    assert [s.device for s in stages] == trans
    role = {s.device: s.role for s in stages}
    for s in stages:
        assert isinstance(s.role, Role)
        for other in s.related:
            assert other in role
            if s.role in (Role.DIFFERENTIAL_PAIR, Role.INVERTER, Role.CROSS_COUPLED):
                assert role[other] == s.role, (s.device, other)
        for unit in s.units:
            assert role[unit] == s.role


def test_fixtures_and_samples_agree():
    checked = 0
    for path in DECKS:
        circuit = _flat(path)
        if circuit is not None:
            _check(circuit)
            checked += 1
    assert checked > 20


def test_corpus_agrees():
    if not CORPUS.is_dir():
        pytest.skip(f"corpus not found at {CORPUS} (checked out beside the repo as ../shared/corpus)")
    files = sorted(p for p in CORPUS.rglob("*") if p.suffix.lower() in (".sp", ".cir", ".spice")
                   and p.is_file() and p.stat().st_size < 100_000)
    with_mos = 0
    for path in files[::max(1, len(files) // 150)][:150]:
        circuit = _flat(path)
        if circuit is not None:
            _check(circuit)
            with_mos += any(d.kind in MOS + BJT for d in circuit.devices)
    assert with_mos > 10


@pytest.mark.parametrize("shape", ["shared_body", "extracted_block", "floating_enable"])
def test_stress_shapes_agree(shape):
    sys.path.insert(0, str(REPO / "bench"))
    from shapes import SHAPES  # bench generators: scenarios of our own
    _check(flat_circuit_from_text(SHAPES[shape](600), f"{shape}.sp"))


def test_mirror_pair_and_cascode_roles():
    # a textbook mirror (Razavi 5.1) feeding a differential pair (Razavi 4.3) under
    # a cascode (Razavi 3.6): every related list is named
    text = """* mirror, pair, cascode
vdd vdd 0 1.8
vb vb 0 1.0
vin1 in1 0 dc 0.9 ac 1
vin2 in2 0 dc 0.9 ac -1
iref vdd ref 10u
m1 ref ref 0 0 nch w=1u l=1u
m2 tail ref 0 0 nch w=1u l=1u
m3 a in1 tail 0 nch w=1u l=1u
m4 b in2 tail 0 nch w=1u l=1u
m5 o vb a 0 nch w=1u l=1u
r1 vdd o 10k
r2 vdd b 10k
.model nch nmos level=1 vto=0.5 kp=200u
.end
"""
    circuit = flat_circuit_from_text(text, "mirror.sp")
    roles = {s.device: (s.role, s.related) for s in recognise_stages(circuit)}
    assert roles["m1"] == ("current-mirror reference (diode-connected)", ["m2"])
    assert roles["m2"] == ("current-mirror output", ["m1"])
    assert roles["m3"] == ("differential pair", ["m4"])
    assert roles["m4"] == ("differential pair", ["m3"])
    assert roles["m5"][0] == "cascode" and roles["m5"][1] == ["m3"]
    _check(circuit)
