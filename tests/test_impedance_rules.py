"""The impedance rules: fixtures, both directions, and every printed number against ngspice-39.

Fixture folders ``tests/fixtures/rules/<rule>/{bad,good}.sp`` list the findings they
expect in header lines ``* expect: RULE SUBJECT``; ``good.sp`` expects none from
these four rules.

Reference checks (source: "ngspice-39 AC analysis" and "ngspice-39 operating
point"): the same deck text goes to ngspice with every AC stimulus zeroed and a
1 A AC probe into the node (tests/ngspice_harness.py).  A detached capacitor is
removed (it carries no DC current); a detached resistor gets a 1e9 H inductor in
series, so it still carries its DC current but is open at the analysis frequency.
Tolerance 2 %.  Textbook forms named in the rule docs: Razavi, *Design of Analog
CMOS Integrated Circuits*, ch. 3 (CG input (R_D + r_o)/(1 + (g_m+g_mb) r_o), CS
output r_o1 || r_o2); Baker, *CMOS Circuit Design* 3rd ed. pp. 867-871 (dueling
current sources, dI (r_o1 || r_o2)); analog-knowledge section 3 (10 % divider loss,
pole 3-10x above the band, R_in <= 1/(2 pi BW C_in)) -- common practice.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import pytest

import ngspice_harness as ng
from lintamp.rulekit.context import Context
from lintamp.api import load_design, read_options
from lintamp.config import Config, with_overrides
from lintamp.netlist.parser import parse_file, parse_text
from lintamp.netlist.reader import ReadOptions
from lintamp.registry import all_rules

FIXTURES = Path(__file__).parent / "fixtures" / "rules"
RULES = ("high-z-current-input", "unbuffered-output", "undefined-dc-level", "device-region")
EXPECT = re.compile(r"^\*\s*expect:\s*(\S+)\s+(\S+)", re.I | re.M)
TOLERANCE = 0.02


def run_rules(ctx) -> list:
    out = []
    for name in RULES:
        rule = all_rules()[name]
        ctx.rule = rule
        out.extend(rule.check(ctx))
    return out


def check_file(path: Path, options=None, config=None) -> list:
    config = config or Config()
    netlist = parse_file(path, read_options(path, config))
    return run_rules(Context(netlist, load_design(netlist, config), config=config, options=options or {}))


def check_deck(text: str, options=None, config=None) -> list:
    config = config or Config()
    netlist = parse_text(text, "<deck>", ReadOptions(root=Path.cwd(), display_root=Path.cwd()))
    return run_rules(Context(netlist, load_design(netlist, config), config=config, options=options or {}))


def expected(path: Path) -> set[tuple[str, str]]:
    return {(r.lower(), s.lower()) for r, s in EXPECT.findall(path.read_text())}


# -- fixtures -------------------------------------------------------------------------
@pytest.mark.parametrize("rule", RULES)
def test_bad_fixture_gives_exactly_the_expected_findings(rule):
    bad = FIXTURES / rule / "bad.sp"
    found = {(f.rule, f.subject) for f in check_file(bad)}
    assert found == expected(bad)


@pytest.mark.parametrize("rule", RULES)
def test_good_fixture_is_clean(rule):
    assert check_file(FIXTURES / rule / "good.sp") == []


# -- deck editing for the reference runs --------------------------------------------
def zero_ac(text: str) -> str:
    """Every AC stimulus off (the probe is the only AC source)."""
    return "\n".join(re.sub(r"\s+ac\s+\S+", "", line, flags=re.I) if line[:1].lower() in "vi" else line
                     for line in text.splitlines())


def detach_at_ac(text: str, names) -> str:
    names = {n.rsplit("/", 1)[-1].lower() for n in names}
    out = []
    for line in text.splitlines():
        words = line.split()
        key = words[0].lower() if words else ""
        if key in names and key[0] == "c":
            continue
        if key in names and key[0] == "r":
            out.append(f"{words[0]} {words[1]} det_{key} {' '.join(words[3:])}")
            out.append(f"ldet_{key} det_{key} {words[2]} 1e9")
            continue
        out.append(line)
    return "\n".join(out)


def ng_z(text: str, node: str, freq_hz: float) -> float:
    return abs(ng.impedance(zero_ac(text), node, [max(freq_hz, 1.0)])[0])


def ng_pole(text: str, node: str, low_hz: float) -> float:
    """-3 dB frequency of the node's impedance (ngspice-39 AC sweep + meas)."""
    z0 = ng_z(text, node, low_hz)
    deck = zero_ac(text) + f"\niprobe_lintamp 0 {node} dc 0 ac 1\n"
    raw = ng.run_deck(deck, [f"ac dec 400 {low_hz:g} 1e10", f"meas ac f3 when vm({node})={z0 / math.sqrt(2):.9g} fall=1"])
    return raw["f3"]


def close(a, b, tol=TOLERANCE):
    return abs(a - b) <= tol * max(abs(b), 1e-30)


def finding(findings, rule, subject):
    hits = [f for f in findings if f.rule == rule and f.subject == subject]
    assert hits, f"no {rule} finding on {subject}"
    return hits[0]


# -- ngspice reference values ---------------------------------------------------------
# (subject, node in ngspice, elements detached at AC)
HIGH_Z = [("sense", "sense", ["ctouch"]), ("iin", "pd", ["cpd"]), ("emit", "emit", ["csig"])]


@pytest.mark.parametrize("subject,node,detached", HIGH_Z)
def test_high_z_numbers_agree_with_ngspice(subject, node, detached):
    ng.require_ngspice()
    text = (FIXTURES / "high-z-current-input" / "bad.sp").read_text()
    f = finding(check_file(FIXTURES / "high-z-current-input" / "bad.sp"), "high-z-current-input", subject)
    v = f.values
    # ngspice-39 AC analysis: |Z_in| at the band with the node capacitor removed
    assert close(v["z_ohm"], ng_z(detach_at_ac(text, detached), node, v["freq_hz"]))
    # ngspice-39 AC sweep: the node's -3 dB frequency with its capacitance in place
    # equals the printed 1/(2 pi |Z_in| C) (single pole; Razavi optical-receiver TIA chapter form)
    assert close(v["pole_hz"], ng_pole(text, node, v["freq_hz"] / 1e4))
    assert close(v["limit_ohm"], 1 / (2 * math.pi * v["band_hz"] * v["c_farad"]), 1e-9)  # definition


def test_high_z_cg_matches_razavi_form():
    # Razavi ch. 3, CG input: R_in = (R_D + r_o)/(1 + (g_m+g_mb) r_o) with the ngspice-39 op values
    # of analog-knowledge 5.3 (g_m 676.4 uS, g_mb 150.6 uS, g_ds 8.742 uS) and R_D = 1 Mohm
    f = finding(check_file(FIXTURES / "high-z-current-input" / "bad.sp"), "high-z-current-input", "iin")
    ro = 1 / 8.742e-6
    assert close(f.values["z_ohm"], (1e6 + ro) / (1 + (676.4e-6 + 150.6e-6) * ro))


# (subject, node, loads detached at AC, load caps)
UNBUFFERED = [("out", "out", ["cc"], []), ("vout", "vout", ["rload"], []), ("ifout", "ifout", ["ccable"], ["ccable"])]


@pytest.mark.parametrize("subject,node,loads,caps", UNBUFFERED)
def test_unbuffered_numbers_agree_with_ngspice(subject, node, loads, caps):
    ng.require_ngspice()
    path = FIXTURES / "unbuffered-output" / "bad.sp"
    text = path.read_text()
    v = finding(check_file(path), "unbuffered-output", subject).values
    # ngspice-39 AC analysis: R_out with the load open at AC
    z_out = ng_z(detach_at_ac(text, loads), node, v["freq_hz"])
    assert close(v["z_ohm"], z_out)
    if "loss" in v:
        z_tot = ng_z(detach_at_ac(text, caps), node, v["freq_hz"])
        assert close(1 - v["loss"], z_tot / z_out)  # divider R_L/(R_L+R_out), common practice
        assert close(v["load_ohm"], 1 / abs(1 / z_tot - 1 / z_out), 0.05)
    if "pole_hz" in v:
        # ngspice-39 AC sweep: -3 dB of the loaded node equals 1/(2 pi R_out C_L)
        assert close(v["pole_hz"], ng_pole(text, node, v["band_hz"] / 1e4))


# (subject, node, devices as ngspice names)
UNDEFINED = [("ifout", "ifout", ["m1", "m2"])]


def test_undefined_dc_level_numbers_agree_with_ngspice():
    ng.require_ngspice()
    path = FIXTURES / "undefined-dc-level" / "bad.sp"
    text = path.read_text()
    v = finding(check_file(path), "undefined-dc-level", "ifout").values
    # ngspice-39 AC analysis at 1 Hz: r_o1 || r_o2 seen at the node (Baker pp. 867-871 form)
    assert close(v["z_ohm"], ng_z(text, "ifout", 1.0))
    op = ng.operating_point(zero_ac(text), ["ifout"], [("m1", "id"), ("m2", "vdsat"), ("m2", "vds"),
                                                         ("m1", "vdsat"), ("m1", "vds")])
    assert close(v["current_a"], abs(op["@m1[id]"]))  # ngspice-39 operating point
    headroom = min(abs(op["@m1[vds]"]) - abs(op["@m1[vdsat]"]), abs(op["@m2[vds]"]) - abs(op["@m2[vdsat]"]))
    assert close(v["headroom_v"], headroom)
    assert close(v["delta_v"], 0.01 * abs(op["@m1[id]"]) * ng_z(text, "ifout", 1.0))


REGION = [("m1", "m1", None), ("m1b", "m.xcasc.m1b", None), ("msf", "msf", None), ("q1", None, ("col", None))]


def test_device_region_numbers_agree_with_ngspice():
    ng.require_ngspice()
    path = FIXTURES / "device-region" / "bad.sp"
    text = zero_ac(path.read_text())
    found = check_file(path)
    op = ng.operating_point(text, ["col"], [("m1", "vds"), ("m1", "vdsat"), ("m.xcasc.m1b", "vds"),
                                            ("m.xcasc.m1b", "vdsat"), ("msf", "id")])
    for name in ("m1", "m.xcasc.m1b"):  # ngspice-39 operating point: V_DS and V_DSAT
        v = finding(found, "device-region", name.rsplit(".", 1)[-1]).values
        assert close(v["vds_v"], abs(op[f"@{name}[vds]"]))
        assert close(v["vdsat_v"], abs(op[f"@{name}[vdsat]"]))
    assert close(finding(found, "device-region", "q1").values["vce_v"], op["col"])  # emitter at ground
    assert abs(op["@msf[id]"]) < 1e-9  # ngspice agrees the follower carries no current
    assert finding(found, "device-region", "msf").values["region"] == "cutoff"


# -- both directions: broken fires, fixed is silent --------------------------------------
NCH = ".model nch nmos level=1 vto=0.5 kp=200u gamma=0.5 phi=0.7 lambda=0.1\n"
PCH = ".model pch pmos level=1 vto=-0.5 kp=100u gamma=0.4 phi=0.8 lambda=0.1\n"


def rules_of(findings):
    return {(f.rule, f.subject) for f in findings}


def test_photodiode_into_gate_fires_and_a_shunt_feedback_tia_fixes_it():
    base = ("pd\n" + NCH + "* lintamp: bandwidth 10meg\nvdd vdd 0 3\nipd vdd pd dc 0 ac 1\ncpd pd 0 1p\n"
            "rd vdd out 10k\nm1 out pd 0 0 nch w=10u l=1u\n")
    broken = base + "rb pd vb 1meg\nvb vb 0 0.7\n"
    fixed = base + "rf out pd 20k\n"  # shunt feedback: R_F/(1+A), a gate but a virtual ground
    assert ("high-z-current-input", "pd") in rules_of(check_deck(broken))
    assert rules_of(check_deck(fixed)) == set()


def test_cg_input_passes_with_resistor_load_and_fires_with_current_source_load():
    # analog-knowledge 5.3 decks: 1.30 kohm vs 11.7 kohm at the source with 1 pF, band 20 MHz
    head = "cg\n" + NCH + "* lintamp: bandwidth 20meg\nvdd vdd 0 3\nvg g 0 1.5\ni1 s 0 100u\n" \
        "ipd s 0 dc 0 ac 1\ncpd s 0 1p\nm1 d g s 0 nch w=10u l=1u\n"
    assert rules_of(check_deck(head + "rd vdd d 10k\n")) == set()
    assert ("high-z-current-input", "s") in rules_of(check_deck(head + "id vdd d 100u\nrd d vb 1meg\nvb vb 0 2\n"))


def test_cs_output_into_low_ohm_load_fires_and_a_follower_fixes_it():
    head = "hp\n" + NCH + "* lintamp: bandwidth 20k\nvdd vdd 0 5\nvin in 0 dc 0.75 ac 1\nrd vdd d 10k\n" \
        "m1 d in 0 0 nch w=10u l=1u\n"
    broken = head + "rload d 0 10k\n* lintamp: voltage-output d\n"
    fixed = head + "m2 vdd d out 0 nch w=200u l=1u\nisf out 0 2m\nrload out 0 10k\n* lintamp: voltage-output out\n"
    assert ("unbuffered-output", "d") in rules_of(check_deck(broken))
    assert rules_of(check_deck(fixed)) == set()


def test_open_loop_ota_fires_and_unity_feedback_fixes_it():
    ota = ("ota\n" + NCH + PCH + "vdd vdd 0 3\nvin inp 0 dc 1.5 ac 1\nvbn vbn 0 0.8\n"
           "mt tail vbn 0 0 nch w=10u l=1u\nm1 mir inp tail 0 nch w=10u l=1u\nm2 out {inn} tail 0 nch w=10u l=1u\n"
           "m3 mir mir vdd vdd pch w=20u l=1u\nm4 out mir vdd vdd pch w=20u l=1u\n")
    open_loop = ota.replace("{inn}", "inn") + "vinn inn 0 1.5\n"
    fixed = ota.replace("{inn}", "out")
    # the mirror load copies the diode side's current: it sets the open-loop output's level
    # (Razavi, Design of Analog CMOS ICs, 2nd ed., sec. 5.3), so no finding there ...
    assert ("undefined-dc-level", "out") not in rules_of(check_deck(open_loop))
    # ... but a load gated from a fixed bias fights the pair's output device
    broken = open_loop.replace("m4 out mir vdd", "m4 out vbp vdd") + "vbp vbp 0 2.2\n"
    assert ("undefined-dc-level", "out") in rules_of(check_deck(broken))
    assert rules_of(check_deck(fixed)) == set()


def test_feedback_through_a_resistive_divider_is_found():
    # the OTA closed with a gain-of-2 divider back to the inverting gate
    deck = ("ota\n" + NCH + PCH + "vdd vdd 0 3\nvin inp 0 dc 1.0 ac 1\nvbn vbn 0 0.8\n"
            "mt tail vbn 0 0 nch w=10u l=1u\nm1 mir inp tail 0 nch w=10u l=1u\nm2 out inn tail 0 nch w=10u l=1u\n"
            "m3 mir mir vdd vdd pch w=20u l=1u\nm4 out mir vdd vdd pch w=20u l=1u\n"
            "rf out inn 100k\nrg inn 0 100k\n")
    assert not any(f.rule == "undefined-dc-level" for f in check_deck(deck))


def test_current_sink_in_triode_fires_and_a_smaller_pull_up_fixes_it():
    head = "cs\n" + NCH + "vdd vdd 0 3\nvb vb 0 1.0\nm1 x vb 0 0 nch w=10u l=1u\n"
    assert ("device-region", "m1") in rules_of(check_deck(head + "rp vdd x 100k\n"))
    assert rules_of(check_deck(head + "rp vdd x 5k\n")) == set()


# -- bands, thresholds, no numbers -------------------------------------------------------
def test_band_sources_in_order():
    deck = ("b\n" + NCH + "* lintamp: bandwidth 1meg\nvdd vdd 0 3\nipd vdd pd dc 0 ac 1\ncpd pd 0 1p\n"
            "rb pd vb 100k\nvb vb 0 0.7\nm1 out pd 0 0 nch w=10u l=1u\nrd vdd out 10k\n.ac dec 10 1 1g\n")
    # 100 kohm and 1 pF: pole 1.59 MHz; above a 1 MHz band, below 2 MHz from --bandwidth
    assert check_deck(deck) == []
    f = check_deck(deck, options={"bandwidth": "2meg"})[0]
    assert f.values["band_hz"] == 2e6 and "--bandwidth" in " ".join(f.explanation)
    # without the pragma the band is unknown: the .ac sweep's stop (1 GHz) is not a band
    # (INTERFACE.md, "Where intent comes from"), so nothing is judged against it
    found = check_deck(deck.replace("* lintamp: bandwidth 1meg\n", ""))
    assert all("band_hz" not in f.values for f in found)


def test_thresholds_come_from_the_config():
    deck = ("t\n" + NCH + "* lintamp: bandwidth 1meg\nvdd vdd 0 3\nipd vdd pd dc 0 ac 1\ncpd pd 0 1p\n"
            "rb pd vb 100k\nvb vb 0 0.7\nm1 out pd 0 0 nch w=10u l=1u\nrd vdd out 10k\n")
    config = with_overrides(Config(), thresholds={"current-input-pole-margin": 2.0})
    f = check_deck(deck, config=config)[0]
    assert f.values["margin"] == 2.0


def test_no_numbers_gives_one_info_per_file():
    deck = ("n\n.model nch nmos level=54\nvdd vdd 0 3\nipd vdd pd dc 0 ac 1\ncpd pd 0 1p\n"
            "m1 out pd 0 0 nch w=1u l=1u\nrd vdd out 10k\n")
    found = check_deck(deck)
    assert len(found) == 1 and found[0].severity.label == "info"
    assert "level 54" in found[0].values["reason"]


def test_config_port_patterns_pick_outputs_and_loads():
    deck = ("p\n" + NCH + "* lintamp: bandwidth 20k\nvdd vdd 0 5\nvin in 0 dc 0.75 ac 1\nrd vdd lineo 10k\n"
            "m1 lineo in 0 0 nch w=10u l=1u\nrjack lineo 0 1k\n")
    assert check_deck(deck) == []
    config = with_overrides(Config(), ports={"voltage-output": ("line?",), "load": ("rjack",)})
    assert rules_of(check_deck(deck, config=config)) == {("unbuffered-output", "lineo")}


def test_garbage_and_missing_models_do_not_crash():
    for deck in ("x\nm1 a b c d nomodel\n", "x\nr1 a 0 {undefined}\ni1 a 0 ac 1\nc1 a 0 1p\n", "x\n.end\n",
                 "x\nq1 c b e missing\nvcc c 0 5\n"):
        check_deck(deck)


# A fully differential two-stage amplifier of behavioural stages (G sources with their
# own output resistors, as schematic libraries draw an ideal OTA) with Miller capacitors
# and nulling resistors from each output back to the first stage: a Miller capacitor is
# no coupling capacitor, and a stage's own output resistor is no load (common practice:
# the load is the 10 pF on each output; nothing divides the signal down).
BEHAVIOURAL_MILLER = """fully differential behavioural two-stage amplifier
xa cmv inp inm m2 m1 gstage rout=10e6 gain=5000
xb cmv m1 m2 outp outm gstage rout=100e3 gain=100
cm1 outm k1 1p
rm1 k1 m1 10k
cm2 outp k2 1p
rm2 k2 m2 10k
vcmi icm gnd1 0.8
vp inp icm dc 0 ac 0.5 0
vm inm icm dc 0 ac 0.5 180
cl1 outp gnd1 10p
cl2 outm gnd1 10p
vg gnd1 0 0
vcm cmv gnd1 1.65
.control
ac dec 10 1 1g
let vd = v(outp) - v(outm)
plot vdb(vd)
.endc
.subckt gstage cmv ip im op om rout=1e6 gain=1000
G1 om cmv ip im {0.5*gain/rout}
R1 om cmv {rout}
G2 op cmv im ip {0.5*gain/rout}
R2 op cmv {rout}
.ends
.end
"""


def test_a_miller_capacitor_is_no_coupling_capacitor_and_a_stages_own_resistor_no_load():
    findings = check_deck(BEHAVIOURAL_MILLER)
    assert [f for f in findings if f.rule == "unbuffered-output"] == []


# An LC oscillator of our own (a Colpitts-type tank on the collector side, taken out
# through a capacitor and plotted): the tank's L and C return the node to the supply and
# ground, but they are the oscillator, not a load that takes signal power (common
# practice: a load behind a coupling capacitor has a resistance, a line or an earpiece)
LC_TANK = """lc oscillator
.model qx npn(bf=100 va=60)
vcc vcc 0 6
lchoke vcc b 47u
cb b 0 4.7n
q1 c b 0 qx
re c 0 3.3k
cfb c tank 150p
csplit c 0 470p
ct tank 0 1.5n
lt tank vcc 5.6u
.tran 10n 30u
.plot tran v(tank)
.end
"""


def test_an_oscillator_tank_behind_a_capacitor_is_no_load():
    findings = check_deck(LC_TANK)
    assert [f for f in findings if f.rule == "unbuffered-output"] == []


def test_a_sensor_current_into_a_sense_resistor_is_no_unbuffered_output():
    # a photodiode model (a G source for the photocurrent, the junction beside it) into
    # a 1 ohm monitor resistor whose voltage the testbench plots: a current measured by
    # design, not a voltage stage losing its signal (common practice for current sensing)
    deck = ("* photodiode monitor\n.subckt pin input cathode anode resp=0.5\n"
            "gin dk da input 0 {resp}\nrin input 0 1g\ncin input 0 {resp}\ndpn da dk pnd\n"
            "ra anode da 0.001ohm\nrk cathode dk 0.001ohm\n"
            ".model pnd d is=0.974p rs=0.1 n=1.986 cjo=99.2p vj=0.455 m=0.418 tt=500n\n.ends\n"
            "vbias psu 0 10\nvlight input 0 2m\nxpin input cathode anode pin resp=0.7\n"
            "rmon anode 0 1\nrq psu cathode 1k\n.dc vlight 0 10m 0.01m\n"
            ".control\nplot v(anode)\n.endc\n.end\n")
    assert "unbuffered-output" not in {rule for rule, _ in rules_of(check_deck(deck))}
    # a common-source stage plotted, AC coupled into 32 ohm, is still judged (Razavi ch. 3;
    # the unbuffered-output fixture's headphone driver)
    stage = ("* cs into a heavy load\n.model nch nmos level=1 vto=0.5 kp=200u gamma=0.5 phi=0.7 "
             "lambda=0.1\nvdd vdd 0 3\nvin in 0 dc 0.75 ac 1\nrd vdd out 10k\n"
             "m1 out in 0 0 nch w=10u l=1u\ncc out hp 220u\nrhp hp 0 32\n"
             ".ac dec 10 1k 1meg\n.print ac v(out)\n.end\n")
    assert ("unbuffered-output", "out") in rules_of(check_deck(stage))


def test_extractor_made_names_are_no_ports_by_name():
    # magic names the pieces of a wire after a label and a coordinate ('out_n12#'); the
    # designer named only 'out' (common practice: '#' marks an extractor's own name)
    from lintamp.circuit.flatten import flatten
    from lintamp.connectivity.intent import intent_analysis
    deck = ("* extracted stage\nvdd vdd 0 1.8\nvin in 0 dc 0.8 ac 1\nrd vdd out 10k\n"
            "m1 out_n12# in 0 0 nch w=10u l=1u\nrw out_n12# out 2\ncl out 0 1p\n"
            ".model nch nmos level=1 vto=0.5 kp=200u lambda=0.1\n.end\n")
    from lintamp.api import load_design
    netlist = parse_text(deck, "<deck>", ReadOptions(root=Path.cwd(), display_root=Path.cwd()))
    ctx = Context(netlist, load_design(netlist, Config()), config=Config(), options={})
    block = intent_analysis(ctx, flatten(ctx.design)).block(ctx.design.top.cell)
    names = [p.net for p in block.ports]
    assert "out_n12#" not in names and "out" in names


def test_fingers_with_drain_and_source_swapped_are_one_device_not_a_cascade():
    # magic writes a two-finger device as M0 d g s / M1 s g d (shape from memory of
    # magic's extraction); they are one transistor in parallel, no common-gate stage
    # feeding the other's source (Razavi ch. 3: parallel devices add their widths)
    deck = ("* two fingers, common gate\nvdd vdd 0 3.3\nvb vb 0 1.0\nvin in 0 dc 0 ac 1\n"
            "rs in src 2k\nrb src 0 5k\nrd vdd out 20k\n"
            ".subckt nfet_2f d g s b\nm0 d g s b nch w=5u l=1u\nm1 s g d b nch w=5u l=1u\n.ends\n"
            "x1 out vb src 0 nfet_2f\n.model nch nmos level=1 vto=0.5 kp=200u lambda=0.1\n.end\n")
    assert "high-z-current-input" not in {rule for rule, _ in rules_of(check_deck(deck))}


def test_a_finger_drawn_the_other_way_is_read_as_it_conducts(tmp_path):
    # the same two fingers: looking into the output, each is a drain (ngspice-39 swaps
    # a symmetric MOS's pins where V_D < V_S; Razavi ch. 3, degenerated drain), not a
    # common-gate input at the netlist 'source' of the second finger
    import json, subprocess, sys
    deck = tmp_path / "fingers.sp"
    deck.write_text("* two fingers, common gate\nvdd vdd 0 1.8\nvb vb 0 1.2\nvin in 0 dc 0 ac 1\n"
                    "rs in src 2k\nrb src 0 10k\nrd vdd out 20k\n"
                    ".subckt nfet_2f d g s b\nm0 d g s b nch w=5u l=1u\nm1 s g d b nch w=5u l=1u\n.ends\n"
                    "x1 out vb src 0 nfet_2f\n.model nch nmos level=1 vto=0.5 kp=200u lambda=0.1\n.end\n")
    root = Path(__file__).resolve().parent.parent
    run = subprocess.run([sys.executable, "-m", "lintamp", "impedance", str(deck), "out", "--format",
                          "json", "--no-config"], capture_output=True, text=True, cwd=root, timeout=60)
    vias = [b["via"] for b in json.loads(run.stdout)["branches"] if "x1/m" in b["via"]]
    assert sorted(vias) == ["drain of x1/m0 (degenerated by R_S)", "drain of x1/m1 (degenerated by R_S)"]
