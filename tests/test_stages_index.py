"""Stage roles from net indexes agree with the plain scan they replaced.

``recognise_stages`` finds related transistors (mirror references and outputs,
differential-pair partners, devices below a cascode) through indexes by net and
per-net counts, so that a bias line or supply shared by thousands of devices
costs no scan per device.  Here it is held to the plain definition, which scans
every transistor on the same nets, on every rule fixture, the samples, a slice of
the real corpus and the bench's stress shapes (common practice: two
implementations of one function are held to each other).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

import lintamp.engine.stages as stages_module
from lintamp.engine.looking_into import ac_ground_nets
from lintamp.engine.stages import BJT, MOS, _pins, recognise_stages
from lintamp.api import flat_circuit_from_text

REPO = Path(__file__).resolve().parent.parent
CORPUS = REPO.parent / "shared" / "corpus"
DECKS = sorted((REPO / "tests" / "fixtures" / "rules").glob("*/*.sp")) + sorted((REPO / "samples").glob("*.sp"))


def _plain_stages(circuit, op=None):
    """The roles by their definition (the scan before the indexes).

    One :class:`Stage` per MOS/BJT device, in netlist order.

    Notes
    -----
    O(T^2) in the number of transistors sharing nets (indexes by net keep it
    near-linear for netlist-like circuits).
    """
    acg = ac_ground_nets(circuit, signal_sources_ground=False)
    trans = [d for d in circuit.devices if d.kind in MOS + BJT]
    by_common: dict[tuple, list[FlatDevice]] = {}
    by_control: dict[tuple, list[FlatDevice]] = {}
    by_out: dict[tuple, list[FlatDevice]] = {}
    for d in trans:
        out, ctl, com = _pins(d)
        fam = d.kind
        by_common.setdefault((fam, com), []).append(d)
        by_control.setdefault((fam, ctl), []).append(d)
        by_out.setdefault((fam, out), []).append(d)
    stages = []
    for d in trans:
        out, ctl, com = _pins(d)
        mos = d.kind in MOS
        words = {
            "cs": "common source" if mos else "common emitter",
            "cg": "common gate" if mos else "common base",
            "cd": "common drain (source follower)" if mos else "emitter follower",
        }
        related: list[str] = []
        siblings = [o for o in by_control.get((d.kind, ctl), []) if o is not d]
        diode = out == ctl
        if out == com:
            role = "shorted (output tied to common terminal)"
        elif diode:
            outs = [o.name for o in siblings if _pins(o)[2] == com and _pins(o)[0] != ctl]
            role = "current-mirror reference (diode-connected)" if outs else "diode-connected load"
            related = outs
        else:
            refs = [o.name for o in siblings if _pins(o)[0] == ctl and _pins(o)[2] == com]
            pair = [
                o.name
                for o in by_common.get((d.kind, com), [])
                if o is not d and _pins(o)[1] != ctl and _pins(o)[0] != out and com not in acg
            ]
            below = [o.name for o in by_out.get((d.kind, com), []) if o is not d] if com not in acg else []
            if refs:
                role, related = "current-mirror output", refs
            elif ctl in acg and below:
                role, related = "cascode", below
            elif ctl in acg and com in acg:
                role = "current source (fixed bias)"
            elif out in acg and com not in acg:
                role = words["cd"]
            elif ctl in acg:
                role = words["cg"]
            elif pair:
                role, related = "differential pair", pair
            elif com in acg:
                role = words["cs"]
            else:
                role = words["cs"] + " with degeneration"
        st = stages_module.Stage(d.name, role, related)
        if op is not None and d.name in op.devices:
            dop = op.devices[d.name]
            st.region = dop.region
            st.gm_s = dop.values.get("gm_s")
            st.ro_ohm = dop.values.get("ro_ohm")
        stages.append(st)
    return stages


def _roles(stages):
    return [(s.device, s.role, list(s.related)) for s in stages]


def _flat(path: Path):
    text = path.read_text(encoding="utf-8", errors="replace")
    try:
        return flat_circuit_from_text(text, str(path))
    except Exception:  # a deck the engine cannot flatten is not this test's business
        return None


def _check(circuit):
    assert _roles(recognise_stages(circuit)) == _roles(_plain_stages(circuit))


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
