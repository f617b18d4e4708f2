"""``--op-from ngspice``: lintamp's small-signal answers at ngspice's operating point.

Every deck is a scenario of our own: BSIM4 model cards (ngspice level 54, a handful of
parameters; no PDK files) inside PDK-style wrapper subcircuits that the ``[devices]``
config maps to transistors, as an open PDK's cells look.  lintamp cannot evaluate
BSIM4 itself; with ``--op-from ngspice`` it takes g_m, g_ds and g_mbs from ngspice and
solves the network.  The reference is ngspice-39's own ``.ac`` answer at 1 Hz (the
capacitances do not matter there): impedances and gains agree within 1 %.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path

import pytest

import ngspice_harness as ng
from lintamp.config import parse_config

MODELS = """\
.model nch nmos level=54 vth0=0.4 toxe=2.5e-9 u0=0.035 k1=0.45 k2=0.02 pclm=1.0
.model pch pmos level=54 vth0=-0.4 toxe=2.5e-9 u0=0.012 k1=0.45 k2=0.02 pclm=1.0
.subckt acme_nfet d g s b w=1u l=0.18u
m1 d g s b nch w={w} l={l}
.ends
.subckt acme_pfet d g s b w=1u l=0.18u
m1 d g s b pch w={w} l={l}
.ends
"""
CONFIG = {"devices": {"acme_nfet": {"kind": "nmos", "pins": ["d", "g", "s", "b"]},
                      "acme_pfet": {"kind": "pmos", "pins": ["d", "g", "s", "b"]}}}
# inputs are biased through 1 GΩ so that they are not AC ground: the voltage gain is then
# V(out)/V(in) under a current injected at the input, in ngspice and in lintamp alike
BIASED_IN = "vbias bias 0 {vb}\nrbias bias in 1g\n"

DECKS = {
    # common source, resistor load (Razavi, Design of Analog CMOS ICs, 2nd ed., sec. 3.3.1)
    "cs_resistor": (BIASED_IN.format(vb=0.65) + "vdd vdd 0 1.2\nrd vdd out 10k\n"
                    "x1 out in 0 0 acme_nfet w=2u l=0.18u\n", "out", ("in", "out")),
    # common source, PMOS current-source load (Razavi sec. 3.3.3)
    "cs_pmos_load": (BIASED_IN.format(vb=0.6) + "vdd vdd 0 1.2\nvp pb 0 0.62\n"
                     "x1 out in 0 0 acme_nfet w=2u l=0.5u\nx2 out pb vdd vdd acme_pfet w=4u l=0.5u\n"
                     "rl out 0 200k\n", "out", ("in", "out")),
    # common gate, input at the source (Razavi sec. 3.5): R_in ~ 1/(gm + gmb)
    "cg": ("vdd vdd 0 1.2\nvg g 0 0.9\nib src 0 50u\nrd vdd out 8k\n"
           "x1 out g src 0 acme_nfet w=4u l=0.18u\n", "src", ("src", "out")),
    # source follower with body effect (Razavi sec. 3.4): R_out ~ 1/(gm + gmb)
    "follower": (BIASED_IN.format(vb=1.0) + "vdd vdd 0 1.2\nvn nb 0 0.55\n"
                 "x1 vdd in out 0 acme_nfet w=4u l=0.18u\nx2 out nb 0 0 acme_nfet w=2u l=0.5u\n",
                 "out", ("in", "out")),
    # cascode with a resistor load (Razavi sec. 3.6)
    "cascode": (BIASED_IN.format(vb=0.6) + "vdd vdd 0 1.8\nvc casc 0 1.0\nrd vdd out 20k\n"
                "x1 mid in 0 0 acme_nfet w=2u l=0.3u\nx2 out casc mid 0 acme_nfet w=2u l=0.3u\n",
                "out", ("in", "out")),
    # cascode output resistance ~ gm2 ro2 ro1 (Razavi sec. 3.6.1), no load
    "cascode_rout": ("vdd vdd 0 1.8\nvg in 0 0.6\nvc casc 0 1.0\nib vdd out 40u\nrl out 0 10meg\n"
                     "x1 mid in 0 0 acme_nfet w=2u l=0.3u\nx2 out casc mid 0 acme_nfet w=2u l=0.3u\n",
                     "out", None),
    # current mirror: the diode node ~ 1/gm, the output ~ ro (Razavi sec. 5.2)
    "mirror_diode": ("vdd vdd 0 1.2\niref vdd d 20u\nro vdd out 30k\n"
                     "x1 d d 0 0 acme_nfet w=2u l=0.5u\nx2 out d 0 0 acme_nfet w=4u l=0.5u\n",
                     "d", ("d", "out")),
    "mirror_out": ("vdd vdd 0 1.2\niref vdd d 20u\nro vdd out 30k\n"
                   "x1 d d 0 0 acme_nfet w=2u l=0.5u\nx2 out d 0 0 acme_nfet w=4u l=0.5u\n",
                   "out", None),
    # differential pair with a mirror load, the five-transistor OTA (Razavi sec. 5.3)
    "diff_pair": ("vdd vdd 0 1.8\nvbp bp 0 0.9\nrbp bp inp 1g\nvbn inn 0 0.9\nvt tail_b 0 0.6\n"
                  "x1 d1 inp tail 0 acme_nfet w=4u l=0.5u\nx2 out inn tail 0 acme_nfet w=4u l=0.5u\n"
                  "x3 d1 d1 vdd vdd acme_pfet w=8u l=0.5u\nx4 out d1 vdd vdd acme_pfet w=8u l=0.5u\n"
                  "x5 tail tail_b 0 0 acme_nfet w=4u l=0.5u\nrl out 0 1meg\n", "out", ("inp", "out")),
    # two-stage op-amp in an inverting closed loop, gain ~ -Rf/Rin (Razavi sec. 9.2, 8.1)
    "two_stage": ("vdd vdd 0 1.8\nvcm inp 0 0.9\nvin src 0 0.9\nrin src inn 10k\nrf inn out 100k\n"
                  "vt tail_b 0 0.6\n"
                  "x1 d1 inn tail 0 acme_nfet w=4u l=0.5u\nx2 o1 inp tail 0 acme_nfet w=4u l=0.5u\n"
                  "x3 d1 d1 vdd vdd acme_pfet w=8u l=0.5u\nx4 o1 d1 vdd vdd acme_pfet w=8u l=0.5u\n"
                  "x5 tail tail_b 0 0 acme_nfet w=4u l=0.5u\n"
                  "x6 out o1 vdd vdd acme_pfet w=16u l=0.3u\nx7 out tail_b 0 0 acme_nfet w=8u l=0.5u\n",
                  "out", ("inn", "out")),
    # shunt-feedback transimpedance amplifier (Razavi, Design of Integrated Circuits for
    # Optical Communications, sec. 4.2): Z_in ~ (R_F + R_D) / (1 + gm R_D)
    "tia": ("vdd vdd 0 1.2\nrd vdd out 5k\nrf out in 20k\nx1 out in 0 0 acme_nfet w=4u l=0.18u\n",
            "in", ("in", "out")),
    # the same common source one level down the hierarchy: names map x1/x1 -> m.x1.x1.m1
    "nested_cs": (".subckt amp a y vdd\nrd vdd y 10k\nx1 y a 0 0 acme_nfet w=2u l=0.18u\n.ends\n"
                  + BIASED_IN.format(vb=0.65) + "vdd vdd 0 1.2\nxamp in out vdd amp\n", "out", ("in", "out")),
    # common emitter with emitter degeneration, Gummel-Poon with Early effect (Gray, Hurst,
    # Lewis, Meyer, Analysis and Design of Analog ICs, 5th ed., sec. 3.3.4); a diode load
    "bjt_ce_diode": ("vdd vdd 0 5\nvb bias 0 0.75\nrb bias in 100k\nrc vdd out 10k\nre e 0 100\n"
                     ".model qn npn is=1e-16 bf=150 vaf=60 br=2\n.model dd d is=1e-15 n=1.1\n"
                     "q1 out in e qn\nd1 out dn dd\nidn dn 0 5u\nrdn dn 0 1meg\n", "out", ("in", "out")),
}


def _write(tmp_path: Path, body: str, name: str = "deck.sp") -> Path:
    path = tmp_path / name
    path.write_text(f"* {name}\n" + MODELS + body + ".end\n")
    return path


def _config(tmp_path: Path, extra: dict | None = None):
    return parse_config({**CONFIG, **(extra or {})}, source=tmp_path / "lintamp.toml")


def _lintamp_table(path: Path, config):
    from lintamp.commands.common import table_from_simulator
    table, note = table_from_simulator(path, config, top=None)
    return table, note


def _lintamp_solver(path: Path, config):
    from lintamp.commands.impedance import load_flat_circuit
    from lintamp.engine.small_signal import ImpedanceSolver
    from lintamp.rulekit.impedance_report import resolve_operating_point
    table, note = _lintamp_table(path, config)
    assert table is not None, note
    circuit, _problems, _netlist, _config = load_flat_circuit(path, top=None, config=config)
    op, source, _notes = resolve_operating_point(circuit, table)
    assert source == "ngspice"  # the numbers say where they came from
    return ImpedanceSolver(circuit, op, 1.0)


@pytest.mark.parametrize("name", sorted(DECKS))
def test_impedance_and_gain_agree_with_ngspice_ac(tmp_path, name):
    ng.require_ngspice()
    body, node, gain = DECKS[name]
    path = _write(tmp_path, body)
    solver = _lintamp_solver(path, _config(tmp_path))
    netlist = path.read_text()
    # ngspice-39 AC analysis at 1 Hz: V(node) per 1 A injected
    z_ngspice = ng.impedance(netlist, node.replace("/", "."))[0]
    z_lintamp = solver.z(node)
    assert abs(z_lintamp - z_ngspice) <= 0.01 * abs(z_ngspice), (z_lintamp, z_ngspice)
    if gain is not None:
        src, out = gain
        # ngspice-39 AC analysis: V(out)/V(in) with the current injected at in
        a_ngspice = ng.transfer(netlist, src, out) / ng.impedance(netlist, src)[0]
        a_lintamp = solver.transfer(src, out) / solver.z(src)
        assert abs(a_lintamp - a_ngspice) <= 0.01 * abs(a_ngspice), (a_lintamp, a_ngspice)


def test_bipolar_capacitances_from_ngspice_set_the_impedance_at_high_frequency(tmp_path):
    ng.require_ngspice()
    # a common emitter whose output pole is set by C_mu (Miller) and C_pi: Gummel-Poon with
    # junction and transit-time charge (Gray, Hurst, Lewis, Meyer, 5th ed., sec. 7.2.4)
    body = ("vdd vdd 0 5\nvb bias 0 0.75\nrb bias in 10k\nrc vdd out 10k\n"
            ".model qn npn is=1e-16 bf=150 vaf=60 br=2 cje=50f cjc=20f tf=100p\nq1 out in 0 qn\n")
    path = _write(tmp_path, body)
    from lintamp.commands.impedance import load_flat_circuit
    from lintamp.engine.small_signal import ImpedanceSolver
    from lintamp.rulekit.impedance_report import resolve_operating_point
    config = _config(tmp_path)
    table, note = _lintamp_table(path, config)
    assert table["q1"].values["cbe"] > 0 and table["q1"].values["cbc"] > 0, note
    circuit, _p, _n, _c = load_flat_circuit(path, top=None, config=config)
    op, source, _notes = resolve_operating_point(circuit, table)
    assert source == "ngspice"
    # up to 10 MHz within 1 %; at 30 MHz lintamp is 1.4 % off ngspice here (C_pi and C_mu
    # only: ngspice's AC load of the bipolar carries more charge terms than those two)
    for freq_hz in (1e6, 1e7):
        z_lintamp = ImpedanceSolver(circuit, op, freq_hz).z("in")
        z_ngspice = ng.impedance(path.read_text(), "in", (freq_hz,))[0]  # ngspice-39 AC analysis
        assert abs(z_lintamp - z_ngspice) <= 0.01 * abs(z_ngspice), (freq_hz, z_lintamp, z_ngspice)


def test_wrapper_gets_the_values_of_the_transistor_inside(tmp_path):
    ng.require_ngspice()
    body = DECKS["nested_cs"][0]
    path = _write(tmp_path, body)
    table, _note = _lintamp_table(path, _config(tmp_path))
    assert set(table) == {"xamp/x1"}
    # ngspice-39 operating point of the transistor inside the wrapper
    ref = ng.operating_point(path.read_text(), device_params=[("m.xamp.x1.m1", "gm"), ("m.xamp.x1.m1", "gds")])
    assert table["xamp/x1"].values["gm"] == pytest.approx(ref["@m.xamp.x1.m1[gm]"], rel=1e-6)
    assert table["xamp/x1"].values["gds"] == pytest.approx(ref["@m.xamp.x1.m1[gds]"], rel=1e-6)
    assert table["xamp/x1"].region == "saturation"


def _run_cli(tmp_path, *args, config_text=None):
    cfg = tmp_path / "lintamp.toml"
    cfg.write_text(config_text if config_text is not None else
                   '[devices]\n"acme_nfet" = {kind = "nmos", pins = ["d", "g", "s", "b"]}\n'
                   '"acme_pfet" = {kind = "pmos", pins = ["d", "g", "s", "b"]}\n')
    root = Path(__file__).resolve().parent.parent
    env = dict(os.environ, PYTHONPATH=str(root))
    return subprocess.run([sys.executable, "-m", "lintamp", *args, "--config", str(cfg)],
                          capture_output=True, text=True, cwd=tmp_path, env=env, timeout=120)


def test_control_block_of_the_deck_never_runs(tmp_path):
    ng.require_ngspice()
    marker = tmp_path / "pwned"
    body = (DECKS["cs_resistor"][0] + f".control\nshell touch {marker}\necho x > {marker}\n"
            f"write {marker}.raw\n.endc\n.tran 1n 10n\n.print tran v(out)\n")
    path = _write(tmp_path, body)
    # the same deck run by ngspice itself does create the file: the test can fail
    probe = tmp_path / "probe"
    probe.mkdir()
    subprocess.run([ng.require_ngspice(), "-b", str(path)], cwd=probe, capture_output=True,
                   stdin=subprocess.DEVNULL, timeout=60)
    assert marker.exists() or Path(f"{marker}.raw").exists()
    for leftover in (marker, Path(f"{marker}.raw")):
        leftover.unlink(missing_ok=True)
    done = _run_cli(tmp_path, "impedance", str(path), "out", "--op-from", "ngspice")
    assert done.returncode == 0, done.stderr
    assert "operating point from ngspice" in done.stdout
    assert not marker.exists() and not Path(f"{marker}.raw").exists()
    # and the deck lintamp writes holds nothing of the control block nor the analyses
    from lintamp.api import load_design, read_options
    from lintamp.engine.ngspice_op import ngspice_names, write_deck
    from lintamp.netlist.parser import parse_file
    from lintamp.circuit.flatten import flatten
    config = _config(tmp_path)
    opts = read_options(path, config)
    netlist = parse_file(path, opts)
    design = load_design(netlist, config)
    deck = write_deck(path, opts, ngspice_names(design, netlist, flatten(design)))
    low = deck.text.lower()
    assert "shell" not in low and ".control" not in low and "write" not in low and ".tran" not in low
    assert ".op" in low and "@m.x1.m1[gm]" in low


def test_a_deck_that_keeps_ngspice_busy_is_cut_at_the_timeout(tmp_path):
    ng.require_ngspice()
    from lintamp.engine.ngspice_op import SimulatorFailed, SimulatorSettings, run_ngspice
    lines = ["* busy", MODELS, "vdd vdd 0 1.2"]
    for k in range(3000):  # 6000 BSIM4 transistors: seconds of ngspice, far past 0.05 s
        lines += [f"r{k} vdd d{k} 20k", f"m{k}a d{k} d{k} 0 0 nch w=2u l=0.18u",
                  f"m{k}b o{k} d{k} 0 0 nch w=2u l=0.18u", f"ro{k} vdd o{k} 20k"]
    deck = "\n".join(lines) + "\n.op\n.end\n"
    started = time.monotonic()
    with pytest.raises(SimulatorFailed, match="did not finish within 0.05 s"):
        run_ngspice(deck, SimulatorSettings(command=ng.require_ngspice(), timeout_s=0.05))
    assert time.monotonic() - started < 5.0


def test_without_ngspice_one_note_and_the_same_exit_code(tmp_path):
    path = _write(tmp_path, DECKS["cs_resistor"][0])
    cfg = ('[devices]\n"acme_nfet" = {kind = "nmos", pins = ["d", "g", "s", "b"]}\n'
           '[simulator]\ncommand = "ngspice-not-installed-here"\n')
    plain = _run_cli(tmp_path, "check", str(path), "--no-cache", config_text=cfg)
    asked = _run_cli(tmp_path, "check", str(path), "--op-from", "ngspice", config_text=cfg)
    assert asked.returncode == plain.returncode
    assert asked.stdout == plain.stdout  # the findings by inspection, unchanged
    notes = [line for line in asked.stderr.splitlines() if "--op-from ngspice" in line]
    assert len(notes) == 1 and "not found" in notes[0] and "by inspection" in notes[0]
    imp = _run_cli(tmp_path, "impedance", str(path), "out", "--op-from", "ngspice", config_text=cfg)
    assert imp.returncode == 0 and "not found; reasoning by inspection" in imp.stdout


def test_ngspice_crashing_is_one_note(tmp_path):
    ng.require_ngspice()
    # ngspice-39 dies on a function that calls itself (seen here: a segmentation fault)
    path = _write(tmp_path, ".func f(x) {f(x)+1}\n.param p={f(1)}\nr9 out 0 {p}\n" + DECKS["cs_resistor"][0])
    table, note = _lintamp_table(path, _config(tmp_path))
    assert table is None and "by inspection" in note


def test_ngspice_is_never_run_unless_asked(tmp_path, monkeypatch):
    import lintamp.engine.ngspice_op as ngspice_op
    calls = []
    monkeypatch.setattr(ngspice_op, "run_ngspice", lambda *a, **k: calls.append(a) or b"")
    from lintamp.api import check_paths
    path = _write(tmp_path, DECKS["cs_resistor"][0])
    check_paths([path], _config(tmp_path), options={"bandwidth": None, "op_file": None})
    assert calls == []


def test_simulator_config_is_validated(tmp_path):
    from lintamp.config import ConfigError
    good = _config(tmp_path, {"simulator": {"op-from": "ngspice", "timeout": 5, "memory": "1G"}})
    assert good.simulator.timeout_s == 5 and good.simulator.memory_bytes == 1 << 30
    for bad in ({"command": "/usr/bin/ngspice"}, {"command": "ngspice -b"}, {"timeout": 0},
                {"timeout": "fast"}, {"memory": "lots"}, {"op-from": "spectre"}, {"shell": "x"}):
        with pytest.raises(ConfigError):
            _config(tmp_path, {"simulator": bad})


def test_raw_reader_reads_ascii_and_binary_alike(tmp_path):
    exe = ng.require_ngspice()
    from lintamp.engine.raw_file import read_raw
    path = _write(tmp_path, DECKS["cs_resistor"][0].replace(".end", "") + ".save @m.x1.m1[gm] v(out)\n.op\n")
    got = []
    for ascii_flag in ("0", "1"):
        env = dict(os.environ)
        if ascii_flag == "1":
            env["SPICE_ASCIIRAWFILE"] = "1"
        out = tmp_path / f"out{ascii_flag}.raw"
        subprocess.run([exe, "-b", "-r", str(out), str(path)], cwd=tmp_path, env=env,
                       capture_output=True, stdin=subprocess.DEVNULL, timeout=60)
        plot = read_raw(out.read_bytes())[0]
        got.append(plot.vectors)
    assert got[0].keys() == got[1].keys()
    for key in got[0]:
        assert got[0][key][0] == pytest.approx(got[1][key][0], rel=1e-12)
    # ngspice-39 operating point, printed
    ref = ng.operating_point(path.read_text(), nodes=["out"])
    assert got[0]["v(out)"][0] == pytest.approx(ref["out"], rel=1e-9)


def test_check_and_audit_reason_at_ngspice_operating_point(tmp_path):
    ng.require_ngspice()
    path = _write(tmp_path, DECKS["diff_pair"][0])
    plain = _run_cli(tmp_path, "check", str(path), "--no-cache")
    assert "no trusted operating point" in plain.stdout  # BSIM4 inside wrappers: lintamp alone has none
    asked = _run_cli(tmp_path, "check", str(path), "--op-from", "ngspice")
    assert asked.returncode == 0 and "no trusted operating point" not in asked.stdout, asked.stdout
    sheet = _run_cli(tmp_path, "audit", str(path), "--op-from", "ngspice", "--format", "json")
    import json
    data = json.loads(sheet.stdout)
    assert data["operating_point"] == "ngspice"
    assert not any("no trusted operating point" in f.get("message", "") for f in data.get("findings", []))
    # the sheet's gain is the one ngspice-39's AC analysis gives (V(out)/V(inp), within 1 %)
    netlist = path.read_text()
    a_ngspice = (ng.transfer(netlist, "inp", "out") / ng.impedance(netlist, "inp")[0]).real
    values = [p["gain"]["mag"] * p["gain"].get("sign", 1) for p in data["paths"]
              if p["from"] == "inp" and p["to"] == "out"]
    assert values and abs(values[0] - a_ngspice) <= 0.01 * abs(a_ngspice), (values, a_ngspice)
    # ngspice's MOS capacitances are not read: the sheet claims no -3 dB point either way
    for p in data["paths"]:
        assert p["f3db_hz"] is None and "no MOS capacitances" in p["f3db_why"]
        assert not any("no capacitance limits" in n for n in p["notes"])


def test_op_file_may_be_the_raw_file_of_the_designers_own_run(tmp_path):
    exe = ng.require_ngspice()
    body = DECKS["cs_resistor"][0]
    path = _write(tmp_path, body)
    run = _write(tmp_path, body + ".save @m.x1.m1[gm] @m.x1.m1[gds] @m.x1.m1[gmbs] @m.x1.m1[id]\n.op\n",
                 "run.sp")
    subprocess.run([exe, "-b", "-r", str(tmp_path / "own.raw"), str(run)], cwd=tmp_path,
                   capture_output=True, stdin=subprocess.DEVNULL, timeout=60)
    done = _run_cli(tmp_path, "impedance", str(path), "out", "--op", str(tmp_path / "own.raw"),
                    "--format", "json")
    assert done.returncode == 0, done.stderr
    import json
    z_lintamp = json.loads(done.stdout)["z_ohm"]["mag"]
    z_ngspice = abs(ng.impedance(path.read_text(), "out")[0])  # ngspice-39 AC analysis
    assert abs(z_lintamp - z_ngspice) <= 0.01 * z_ngspice
    # a raw file without any device quantity is refused with what to save (exit 2)
    bare = _write(tmp_path, body + ".save v(out)\n.op\n", "bare.sp")
    subprocess.run([exe, "-b", "-r", str(tmp_path / "bare.raw"), str(bare)], cwd=tmp_path,
                   capture_output=True, stdin=subprocess.DEVNULL, timeout=60)
    lacking = _run_cli(tmp_path, "impedance", str(path), "out", "--op", str(tmp_path / "bare.raw"))
    assert lacking.returncode == 2 and "no device quantities" in lacking.stderr


def test_pdk_models_come_through_include_and_lib_sections(tmp_path):
    ng.require_ngspice()
    pdk = tmp_path / "pdk"
    pdk.mkdir()
    # a PDK-style library file: corners as .lib sections, the wrapper in the section
    (pdk / "models.lib").write_text(".lib tt\n" + MODELS + ".endl tt\n.lib ff\n"
                                    + MODELS.replace("vth0=0.4", "vth0=0.3") + ".endl ff\n")
    body = DECKS["cs_resistor"][0]
    proj = tmp_path / "proj"
    proj.mkdir()
    deck = proj / "cs.sp"
    deck.write_text(f"* cs\n.lib '{pdk / 'models.lib'}' tt\n" + body + ".end\n")
    config = parse_config(CONFIG, source=proj / "lintamp.toml")
    from lintamp.commands.common import table_from_simulator
    # outside the project root and not given as an include path: not read, so no models
    table, note = table_from_simulator(deck, config, top=None)
    assert table is None and "by inspection" in note
    table, note = table_from_simulator(deck, config, top=None, include_paths=[pdk])
    assert table is not None, note
    # ngspice-39 operating point of the same deck, the tt section read by ngspice itself
    ref = ng.operating_point(deck.read_text(), device_params=[("m.x1.m1", "gm")])
    assert table["x1"].values["gm"] == pytest.approx(ref["@m.x1.m1[gm]"], rel=1e-6)


def test_raw_reader_refuses_malformed_files_with_a_message():
    import random
    from lintamp.engine.raw_file import RawFileError, read_raw
    good = (b"Title: t\nDate: x\nPlotname: Operating Point\nFlags: real\nNo. Variables: 2\n"
            b"No. Points: 1\nVariables:\n\t0\tv(a)\tvoltage\n\t1\t@m1[gm]\tadmittance\nBinary:\n"
            + __import__("struct").pack("<2d", 1.5, 2e-4))
    assert read_raw(good)[0].vectors == {"v(a)": [1.5], "@m1[gm]": [2e-4]}  # the layout the manual gives
    bad = [b"", b"Title: t\n", good[:-3], good.replace(b"No. Points: 1", b"No. Points: 99999999"),
           good.replace(b"No. Variables: 2", b"No. Variables: x"), b"\x00" * 100]
    rng = random.Random(22)
    for _ in range(200):  # random damage: a message or a result, never another exception
        data = bytearray(good)
        for _k in range(rng.randint(1, 8)):
            data[rng.randrange(len(data))] = rng.randrange(256)
        bad.append(bytes(data))
    for data in bad:
        try:
            read_raw(data)
        except RawFileError:
            pass


def test_a_committed_config_cannot_name_another_program_as_the_simulator(tmp_path):
    # a pull request's lintamp.toml must not make lintamp run a shell on the checked deck
    # (common practice for tools run on untrusted pull requests)
    from lintamp.config import ConfigError, load_config
    for command in ("sh", "bash", "python3", "/usr/bin/ngspice", "ngspice -x"):
        (tmp_path / "lintamp.toml").write_text(f'[simulator]\ncommand = "{command}"\n')
        with pytest.raises(ConfigError, match="simulator.command"):
            load_config(tmp_path / "lintamp.toml", no_config=False, start=tmp_path, known_rules={})
    (tmp_path / "lintamp.toml").write_text('[simulator]\ncommand = "ngspice-39"\n')
    assert load_config(tmp_path / "lintamp.toml", no_config=False, start=tmp_path,
                       known_rules={}).simulator.command == "ngspice-39"


def test_without_the_flag_a_wrapper_around_bsim4_gets_no_made_up_numbers(tmp_path):
    # lintamp evaluates level-1 only: a [devices]-mapped wrapper whose transistor is a
    # BSIM4 card has no operating point of lintamp's own, so the impedance is by
    # inspection ("—" in numbers' place), never a level-1 solve with default parameters
    # (ngspice-39 gives this device g_m in the hundreds of µS; defaults gave a number that
    # was no one's)
    path = _write(tmp_path, DECKS["cs_resistor"][0])
    imp = _run_cli(tmp_path, "impedance", str(path), "out")
    assert imp.returncode == 0, imp.stderr
    assert "level-1" not in imp.stdout and "by inspection" in imp.stdout, imp.stdout


def test_device_region_says_whose_vdsat_it_compares(tmp_path):
    # with ngspice's operating point V_DSAT is ngspice's vdsat (for BSIM below
    # V_GS - V_TH); only lintamp's own level-1 solve may call it V_GS - V_TH
    ng.require_ngspice()
    fixture = Path(__file__).resolve().parent / "fixtures" / "rules" / "device-region" / "bad.sp"
    deck = tmp_path / "region.sp"
    deck.write_text(fixture.read_text())
    own = _run_cli(tmp_path, "check", str(deck), "--format", "json")
    theirs = _run_cli(tmp_path, "check", str(deck), "--format", "json", "--op-from", "ngspice")
    import json as _json
    def steps(run):
        return " ".join(s for f in _json.loads(run.stdout)["findings"] if f["rule"] == "device-region"
                        for s in f["explanation"])
    assert "V_DSAT = V_GS - V_TH" in steps(own)
    assert "ngspice's vdsat" in steps(theirs) and "V_GS - V_TH =" not in steps(theirs)
