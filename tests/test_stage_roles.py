"""One small deck per stage role (scenarios of our own; vocabulary from Razavi, Design of
Analog CMOS ICs, 2nd ed., ch. 3-5, and Weste & Harris, CMOS VLSI Design, ch. 1)."""

from __future__ import annotations

import pytest

from lintamp.api import flat_circuit_from_text
from lintamp.engine.stage_paths import block_paths, tag
from lintamp.engine.stages import Role, composite_stages, recognise_stages
from lintamp.netlist.parser import parse_text

MODELS = ".model nch nmos level=1\n.model pch pmos level=1\n.model qn npn\n"


def roles(body: str, ports: str = "vdd vss") -> dict[str, Role]:
    """Roles inside a cell read without a testbench (no sources at all)."""
    text = f"* t\n.subckt c {ports}\n{body}.ends\n{MODELS}"
    circuit = flat_circuit_from_text(text, "t.sp", top="c")
    return {s.device: s.role for s in recognise_stages(circuit)}


CASES = [
    # role, deck body, device
    (Role.INVERTER, "mn o i vss vss nch\nmp o i vdd vdd pch\n", "mn"),
    (Role.SWITCH, "ms a en b vss nch\nm1 b g vss vss nch\n", "ms"),
    (Role.TRANSMISSION_GATE, "mn a c b vss nch\nmp a cb b vdd pch\n", "mp"),
    (Role.MOS_RESISTOR, "mr a vdd b vss nch\n", "mr"),
    (Role.DUMMY, "md vss vss vss vss nch\n", "md"),
    (Role.DUMMY, "md x vss y vss nch\n", "md"),  # gate on the rail that keeps it off
    (Role.MOS_CAPACITOR, "mc a g a vss nch\n", "mc"),
    (Role.DIFFERENTIAL_PAIR, "m1 x a t vss nch\nm2 y b t vss nch\nm5 t nb vss vss nch\nm0 nb nb vss vss nch\n", "m2"),
    (Role.MIRROR_REFERENCE, "m0 nb nb vss vss nch\nm5 t nb vss vss nch\n", "m0"),
    (Role.MIRROR_OUTPUT, "m0 nb nb vss vss nch\nm5 t nb vss vss nch\n", "m5"),
    (Role.COMMON_SOURCE, "m6 o y vdd vdd pch\nm7 o y2 vss vss nch\n", "m6"),
    (Role.COMMON_SOURCE_DEGENERATED, "m1 o a s vss nch\nrs s vss 1k\nrd vdd o 10k\n", "m1"),
    (Role.SOURCE_FOLLOWER, "m1 vdd a o vss nch\nrs o vss 1k\n", "m1"),
    (Role.CASCODE, "m1 x a vss vss nch\nm2 o vbcas x vss nch\n", "m2"),  # gate on a bias line
    (Role.COMMON_GATE, "m1 o g s vss nch\nrg1 vdd g 100k\nrg2 g vss 100k\ncg g vss 10p\n"
                       "rs a s 50\nrd vdd o 10k\n", "m1"),  # gate bypassed: CG, not CS
    (Role.CURRENT_SOURCE, "m5 t vbn vss vss nch\n", "m5"),
    (Role.CROSS_COUPLED, "m1 a b vss vss nch\nm2 b a vss vss nch\n", "m1"),
    (Role.DIODE_LOAD, "m1 a a vdd vdd pch\nm2 a i vss vss nch\n", "m1"),
    (Role.COMMON_EMITTER, "q1 c b e qn\nre e vss 1k\nce e vss 10u\nrc vdd c 4k\n", "q1"),
]


@pytest.mark.parametrize("role, body, device", CASES, ids=[f"{c[0].name.lower()}-{c[2]}" for c in CASES])
def test_role(role, body, device):
    ports = "vdd vss " + " ".join(sorted({w for line in body.splitlines() for w in line.split()[1:4]}
                                          - {"vdd", "vss"}))
    assert roles(body, ports)[device] == role


def test_both_halves_of_a_pair_share_the_role_and_rails_need_no_sources():
    got = roles("m1 x a t vss nch\nm2 y b t vss nch\nm3 x x vdd vdd pch\nm4 y x vdd vdd pch\n"
                "m6 o y vdd vdd pch\nm7 o nb vss vss nch\nm5 t nb vss vss nch\nm0 nb nb vss vss nch\n",
                "a b o nb vdd vss")
    assert got["m1"] == got["m2"] == Role.DIFFERENTIAL_PAIR
    assert got["m6"] == Role.COMMON_SOURCE  # not a pair with m3/m4 on vdd


def test_units_are_one_composite():
    body = "".join(f"m{k} o nb vss vss nch\n" for k in range(18, 30)) + "m0 nb nb vss vss nch\n"
    text = f"* t\n.subckt c o nb vdd vss\n{body}.ends\n{MODELS}"
    stages = composite_stages(recognise_stages(flat_circuit_from_text(text, "t.sp", top="c")))
    labels = [s.label for s in stages]
    assert "m18..m29 (12 units)" in labels and len(labels) == 2


def test_series_units_are_one_device():
    got = roles("m1 o a mid vss nch\nm1s mid a t vss nch\nm2 o2 b t vss nch\nm5 t nb vss vss nch\n",
                "a b o o2 nb vdd vss")
    assert got["m1"] == got["m1s"] == got["m2"] == Role.DIFFERENTIAL_PAIR


def test_role_words_print_as_before():
    assert f"{Role.CASCODE}" == "cascode" and Role.CASCODE == "cascode"


def test_miller_ota_path_by_inspection():
    # Razavi 2nd ed. sec. 10.2: A_v = g_m1 (r_o2 || r_o4) * g_m6 (r_o6 || r_o7)
    text = ("* t\n.subckt ota inp inn out nb vdd vss\n*.PININFO inp:I inn:I out:O nb:I vdd:B vss:B\n"
            "m1 x inp t vss nch\nm2 y inn t vss nch\nm3 x x vdd vdd pch\nm4 y x vdd vdd pch\n"
            "m5 t nb vss vss nch\nm6 out y vdd vdd pch\nm7 out nb vss vss nch\n.ends\n" + MODELS)
    from lintamp.api import default_config
    from lintamp.connectivity.intent import IntentAnalysis

    netlist = parse_text(text, "t.sp")
    circuit = flat_circuit_from_text(text, "t.sp", top="ota")
    cell = next(c for c in netlist.all_cells() if c.name == "ota")
    intent = IntentAnalysis(netlist, circuit, default_config()).block(cell, "", list(cell.ports))
    rows, notes = block_paths(circuit, intent)
    by_input = {r["from"]: r for r in rows}
    assert by_input["inp"]["formula"] == "g_m1 (r_o2 ∥ r_o4), then g_m6 (r_o6 ∥ r_o7)"
    assert by_input["inp"]["to"] == "out" and "inn" in by_input


def test_tags():
    assert (tag("m1"), tag("xm18"), tag("mpass"), tag("x1/m3")) == ("1", "18", "pass", "3")
