"""The one intent analysis: each source of intent, and check, impedance and audit agreeing.

Precedence from INTERFACE.md, "Where intent comes from": pragma > config > pin
directions (*.PININFO) > testbench > names.  Decks are scenarios of our own.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from lintamp.api import default_config, flat_circuit_from_text
from lintamp.connectivity.intent import IntentAnalysis, band_of, parse_frequency
from lintamp.netlist.parser import parse_text

REPO = Path(__file__).resolve().parent.parent
ROLES = REPO / "tests" / "fixtures" / "roles"
MODELS = ".model nch nmos level=1 vto=0.5 kp=200u\n.model pch pmos level=1 vto=-0.5 kp=80u\n"


def ports_of(text: str, top=None):
    netlist = parse_text(text, "t.sp")
    circuit = flat_circuit_from_text(text, "t.sp", top=top)
    cell = netlist.top if top is None else next(c for c in netlist.all_cells() if c.name == top)
    intent = IntentAnalysis(netlist, circuit, default_config()).block(cell, "", list(cell.ports) if top else None)
    return {p.net: (p.kind, p.source) for p in intent.ports}, intent


def test_pin_directions_decide_ports_of_a_cell_without_sources():
    deck = ("* t\n.subckt a p q o vdd vss\n*.PININFO p:I q:I o:O vdd:B vss:B\n"
            "m1 x p t vss nch\nm2 o q t vss nch\nm3 x x vdd vdd pch\nm4 o x vdd vdd pch\n"
            "m5 t vb vss vss nch\n.ends\n" + MODELS)
    ports, intent = ports_of(deck, "a")
    assert ports == {"p": ("voltage-input", "pin direction"), "q": ("voltage-input", "pin direction"),
                     "o": ("voltage-output", "pin direction")}
    circuit = flat_circuit_from_text(deck, "t.sp", top="a")
    assert {circuit.find_net("vdd"), circuit.find_net("vss")} <= set(intent.rails)


def test_pragma_beats_pin_direction_and_name_never_beats_testbench():
    deck = ("* t\n* lintamp: voltage-output p\nvdd vdd 0 1.8\nvcm cm 0 0.9\nvinp inp cm ac 1\n"
            "vinn inn cm 0\nm1 x inp t 0 nch\nm2 p inn t 0 nch\nrd vdd x 10k\nrd2 vdd p 10k\n"
            "it t 0 10u\n" + MODELS)
    ports, intent = ports_of(deck)
    assert ports["p"] == ("voltage-output", "pragma")
    # the stacked input is the input; inn, AC-grounded through vinn, is none
    assert ports["inp"] == ("voltage-input", "testbench") and "inn" not in ports
    assert any("inn" in n for n in intent.notes)


def test_observed_net_is_an_output_and_the_ac_stop_is_no_band():
    deck = "* t\nvin a 0 ac 1\nr1 a b 1k\nc1 b 0 1n\n.ac dec 10 1 1g\n.print ac v(b)\n"
    ports, intent = ports_of(deck)
    assert ports == {"a": ("voltage-input", "testbench"), "b": ("voltage-output", "testbench")}
    assert intent.band.hz is None
    assert parse_frequency("20meg") == 2e7 and parse_frequency("0") is None


def test_band_precedence():
    netlist = parse_text("* t\n* lintamp: bandwidth 1meg\nr1 a 0 1k\n", "t.sp")
    assert band_of(netlist).hz == 1e6
    assert band_of(netlist, option="2meg").hz == 2e6


def _audit_ports(path: Path) -> dict:
    from lintamp.audit.sheet import AuditError, build_sheet

    try:
        data = build_sheet(path, plots=False).data
    except AuditError:  # a cell library without a testbench: no block to review
        return {}
    return {p["net"]: p["kind"] for p in data["ports"]}


def _impedance_ports(path: Path) -> dict:
    from lintamp.commands.impedance import block_ports, load_flat_circuit

    circuit, _, netlist, config = load_flat_circuit(path, top=None)
    return {p.net: p.kind for p in block_ports(netlist, circuit, config, None)}


def _check_ports(path: Path) -> dict | None:
    """The ports check's port finder judges at the top level (None: no numbers, so
    the impedance rules judge no port)."""
    from lintamp.api import load_design
    from lintamp.netlist.parser import parse_file
    from lintamp.rulekit.context import Context
    from lintamp.rulekit.impedance_numbers import Numbers, impedance_numbers
    from lintamp.rulekit.ports import port_finder

    config = default_config()
    netlist = parse_file(path)
    ctx = Context(netlist, load_design(netlist, config), config=config)
    numbers = impedance_numbers(ctx)
    if not isinstance(numbers, Numbers):
        return None
    return {p.net: p.kind for prefix, view, p in port_finder(ctx, numbers).declared() if prefix == ""}


def test_check_impedance_and_audit_agree_on_the_ports():
    decks = sorted((REPO / "samples").glob("*.sp")) + sorted((REPO / "tests" / "fixtures").rglob("*.sp"))
    compared = with_ports = 0
    for path in decks:
        try:
            audit = _audit_ports(path)
        except Exception:  # noqa: BLE001 - a deck the audit refuses (usage error) is not this test's
            continue
        assert _impedance_ports(path) == audit, path
        check = _check_ports(path)
        if check is not None:
            assert check == audit, path
        compared += 1
        with_ports += bool(audit)
    assert compared >= 30 and with_ports >= 10


def test_pininfo_is_kept_on_the_cell_with_buses():
    netlist = parse_text("* t\n.subckt a x y s<1> s<0> g\n*.PININFO x:I y:O s[1:0]:I g:B\nr1 x y 1k\n.ends\n",
                         "t.sp")
    cell = next(c for c in netlist.all_cells() if c.name == "a")
    assert cell.pin_info["x"] == "i" and cell.pin_info["y"] == "o" and cell.pin_info["g"] == "b"
    assert cell.pin_info["s<1>"] == cell.pin_info["s<0>"] == "i"


def _audit(path: Path, top=None) -> dict:
    args = [sys.executable, "-m", "lintamp", "audit", str(path), "--format", "json"]
    if top:
        args += ["--top", top]
    out = subprocess.run(args, capture_output=True, text=True, cwd=REPO, timeout=300)
    return json.loads(out.stdout)


def test_every_labelled_deck_with_an_ac_stimulus_gets_its_path_from_the_right_input():
    # the inputs are the nets the testbench's AC sources drive (ngspice-39 AC analysis
    # drives exactly these); the output is the net the deck prints or declares
    expected = {"ota_tb.sp": ("inp", "out"), "tia_tb.sp": ("pin", "out"), "ce_line.sp": ("sig", "line")}
    for deck, (src, dst) in expected.items():
        data = _audit(ROLES / deck)
        paths = [(p["from"], p["to"]) for p in data["paths"]]
        assert paths == [(src, dst)], deck
        assert data["band"]["freq_hz"] is None  # the .ac stop is no band


def test_corpus_testbenches_get_paths_from_both_inputs():
    corpus = REPO.parent / "shared" / "corpus" / "ALIGN-analoglayout__ALIGN-public" / "CircuitsDatabase" \
        / "Sized_Netlists" / "Low_frequency_analog"
    if not corpus.is_dir():
        import pytest
        pytest.skip(f"corpus not found at {corpus}")
    for deck in ("Current_mirror_OTA/current_mirror_ota.sp",
                 "Cascode_current_mirror_OTA/cascode_current_mirror_ota.sp"):
        data = _audit(corpus / deck)
        assert {(p["from"], p["to"]) for p in data["paths"]} == {("vinn", "voutp"), ("vinp", "voutp")}


def test_cells_without_numbers_get_paths_by_inspection():
    data = _audit(ROLES / "miller_ota.sp", "miller_ota")
    forms = {p["from"]: p["formula"] for p in data["paths"]}
    # Razavi 2nd ed. sec. 10.2 (two-stage op amp): g_m1 (r_o2 || r_o4), then g_m6 (r_o6 || r_o7)
    assert forms["inp"] == "g_m1 (r_o2 ∥ r_o4), then g_m6 (r_o6 ∥ r_o18)"
    stages = {s["label"]: s["role"] for s in data["stages"]}
    assert stages["m18..m29 (12 units)"] == "current-mirror output"
    assert not any(s["device"] == "m19" for s in data["stages"])  # a composite is listed once
    bgr = _audit(ROLES / "bandgap.sp", "bgr_core")
    assert bgr["paths"] == [] and any("no signal path" in n for n in bgr["notes"])


def test_unbuffered_output_judges_a_coupled_line():
    # a common-emitter stage (R_out ~ R_C = 4.7 kohm) into 600 ohm through 100 uF loses
    # 1 - 600/(600 + 4.39k) = 88 % (voltage divider, common practice)
    from lintamp.api import check_text

    text = (ROLES / "ce_line.sp").read_text()
    for deck, subject in ((text, "line"), (text.replace("* lintamp: voltage-output line\n", ""), "c")):
        found = [f for f in check_text(deck, "ce.sp").findings if f.rule == "unbuffered-output"]
        assert [f.subject for f in found] == [subject]
        assert abs(found[0].values["loss"] - 0.88) < 0.01


def test_inspection_forms_take_numbers_from_the_operating_point():
    # Razavi 2nd ed. sec. 10.2: A_v ~ g_m1 (r_o2 || r_o4) g_m6 (r_o6 || r_o7); against the
    # MNA gain of the same operating point the product of the forms is within 10 %
    data = _audit(ROLES / "ota_tb.sp")
    path = data["paths"][0]
    form = path["by_inspection"]
    assert form["formula"] == "g_m1 (r_o2 ∥ r_o4), then g_m6 (r_o6 ∥ r_o7)"
    assert abs(form["value"] / path["gain"]["mag"] - 1) < 0.10


def test_config_ports_beat_pin_directions():
    from lintamp.config import Config, with_overrides

    deck = ("* t\n.subckt a p o2 vdd vss\n*.PININFO p:I o2:I vdd:B vss:B\nm1 o2 p vss vss nch\n"
            "r1 vdd o2 10k\n.ends\n" + MODELS)
    netlist = parse_text(deck, "t.sp")
    circuit = flat_circuit_from_text(deck, "t.sp", top="a")
    cell = next(c for c in netlist.all_cells() if c.name == "a")
    config = with_overrides(Config(), ports={"voltage-output": ("o2",)})
    ports = {p.net: (p.kind, p.source) for p in IntentAnalysis(netlist, circuit, config).block(
        cell, "", list(cell.ports)).ports}
    assert ports["o2"] == ("voltage-output", "config") and ports["p"] == ("voltage-input", "pin direction")


def test_an_ac_current_into_an_input_is_a_current_input_and_one_on_an_output_a_probe():
    # common practice: a sensor is a current source with its capacitance or its source
    # resistance (a Norton source) into a stage's input; a 1 A AC source on a drain with
    # nothing else there is how a testbench measures an output impedance
    sensor = "* t\nvdd vdd 0 3\nipd pd 0 ac 1\ncpd pd 0 1p\nr1 pd 0 1k\n"
    ports, _ = ports_of(sensor)
    assert ports["pd"] == ("current-input", "testbench")
    norton, _ = ports_of(sensor.replace("cpd pd 0 1p\n", ""))
    assert norton["pd"] == ("current-input", "testbench")
    stage = ("* t\nvdd vdd 0 3\nvg g 0 1\nm1 d g 0 0 nch\nrd vdd d 10k\niprobe 0 d ac 1\n"
             + MODELS)
    probe, _ = ports_of(stage)
    assert "d" not in probe or probe["d"][0] != "current-input"


def test_rail_sources():
    deck = ("* t\n.global vglob\n.subckt a x y vdd vss well\n*.PININFO x:I y:O vdd:B vss:B well:B\n"
            "m1 y x vss nw nch\nm2 y x vdd vdd pch\nm3 y x vglob vss nch\nm4 y x well vdd pch\n.ends\n"
            + MODELS)
    netlist = parse_text(deck, "t.sp")
    circuit = flat_circuit_from_text(deck, "t.sp", top="a")
    cell = next(c for c in netlist.all_cells() if c.name == "a")
    intent = IntentAnalysis(netlist, circuit, default_config()).block(cell, "", list(cell.ports))
    why = {circuit.nets[i]: w for i, w in intent.rails.items()}
    assert "rail pattern" in why["vdd"] and "rail pattern" in why["vss"]
    assert "global" in why["vglob"]
    assert "bodies" in why["nw"]  # only a body ties to it
    assert "bidirectional" in why["well"]  # a B pin only sources and bodies touch
    assert "x" not in why and "y" not in why


def test_xschem_pin_lines_give_pin_directions_at_the_top_level():
    # xschem netlists a cell as a testbench with its '.subckt' line commented out and one
    # '*.ipin NET' / '*.opin NET' / '*.iopin NET' line per pin (common practice); those are
    # the pin directions, stronger than names: 'sense' is no name pattern of an input
    deck = ("**.subckt amp sense vdd vss result\n*.ipin sense\n*.iopin vdd\n*.iopin vss\n"
            "*.opin result\nm1 result sense vss vss nch\nm2 result result vdd vdd pch\n" + MODELS)
    ports, _ = ports_of(deck)
    assert ports["sense"] == ("voltage-input", "pin direction")
    assert ports["result"] == ("voltage-output", "pin direction")
