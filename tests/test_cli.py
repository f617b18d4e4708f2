"""The command line as a user meets it: exit codes, formats, rules, explain."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from lintamp import __version__
from lintamp.cli import main

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "samples"


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "lintamp", *args], capture_output=True,
                          text=True, cwd=cwd or REPO, env={"PYTHONPATH": str(REPO), "NO_COLOR": "1",
                                                          "PATH": "/usr/bin:/bin"})


def test_version():
    out = run("--version")
    assert out.returncode == 0 and out.stdout.strip() == f"lintamp {__version__}"


def test_clean_file_exits_0(tmp_path):
    f = tmp_path / "ok.sp"
    f.write_text("divider\nv1 a 0 1\nr1 a b 1k\nr2 b 0 1k\n.end\n")
    assert main(["check", "--no-config", "--no-cache", str(f)]) == 0


def test_findings_exit_1_and_fail_on_never_exits_0():
    assert main(["check", "--no-config", "--no-cache", str(SAMPLES / "review_typos.sp")]) == 1
    assert main(["check", "--no-config", "--no-cache", "--fail-on", "never", str(SAMPLES / "review_typos.sp")]) == 0


def test_missing_path_and_bad_option_exit_2(capsys):
    assert main(["check", "no/such/file.sp"]) == 2
    assert "no such file" in capsys.readouterr().err
    with pytest.raises(SystemExit) as exc:
        main(["check", "--format", "yaml"])
    assert exc.value.code == 2


def test_unknown_rule_in_only_exits_2(capsys):
    assert main(["check", "--no-config", "--no-cache", "--only", "no-such-rule", str(SAMPLES)]) == 2
    assert "no-such-rule" in capsys.readouterr().err


def test_json_report_shape(tmp_path):
    out = tmp_path / "r.json"
    code = main(["check", "--no-config", "--no-cache", "--format", "json", "-o", str(out), str(SAMPLES)])
    data = json.loads(out.read_text())
    assert code == 1
    assert data["tool"] == "lintamp" and data["schema"] == 1 and data["version"] == __version__
    rules = sorted(f["rule"] for f in data["findings"])
    # review_typos.sp's four slips, mic_preamp.sp's two unbiased gates, and the impedance
    # samples' deliberate mistakes
    assert rules == ["duplicate-name", "high-z-current-input", "pin-mismatch", "unbiased-gate",
                     "unbiased-gate", "unbuffered-output", "undefined-param", "unknown-model"]
    fields = {"rule", "severity", "path", "line", "column", "cell", "instances", "subject", "nets",
              "elements", "message", "explanation", "fix", "values", "related", "fingerprint"}
    for finding in data["findings"]:
        assert fields <= set(finding)
    assert data["summary"]["errors"] == 6


def test_text_report_lines():
    out = run("check", "--no-config", "--no-cache", "samples/review_typos.sp")
    assert out.returncode == 1
    first = out.stdout.splitlines()[0]
    assert first.startswith("samples/review_typos.sp:16:1: error pin-mismatch:")


def test_two_runs_are_byte_identical():
    a = run("check", "--no-config", "--no-cache", "--format", "json", "samples")
    b = run("check", "--no-config", "--no-cache", "--format", "json", "samples")
    assert a.stdout == b.stdout and a.stdout


def test_rules_and_explain():
    out = run("rules", "--format", "json")
    names = {r["name"] for r in json.loads(out.stdout)}
    assert {"parse-error", "undefined-param", "unknown-cell", "pin-mismatch", "unknown-model",
            "duplicate-name"} <= names
    page = run("explain", "pin-mismatch")
    assert page.returncode == 0
    for section in ("What it finds", "Why it matters", "Example", "Fix"):
        assert section in page.stdout
    assert run("explain", "pin-mismach").returncode == 2


def test_every_rule_documents_itself():
    from lintamp.registry import all_rules
    for rule in all_rules().values():
        for section in ("What it finds", "Why it matters", "Example", "Fix"):
            assert section in rule.doc, f"{rule.name} lacks '{section}'"
        assert rule.summary and rule.category


def test_impedance_command_json_matches_the_worked_common_gate_example():
    # analog-knowledge.md 5.3 (reproduced with ngspice-39): CG input, VG=1.5 V, 100 uA sink,
    # RD=10k, level-1 model of 5.1: Rin = 1301.1 ohm
    out = run("impedance", "samples/sensor_frontend.sp", "pd", "--freq", "1k", "--format", "json")
    assert out.returncode == 0, out.stderr
    data = json.loads(out.stdout)
    assert data["node"] == "pd" and data["operating_point"] == "level1"
    assert data["z_ohm"]["mag"] == pytest.approx(1301.1, rel=1e-3)
    assert data["branches"][0]["via"].startswith("source of m1")


def test_impedance_command_text_and_errors():
    out = run("impedance", "samples/sensor_frontend.sp", "out")
    assert out.returncode == 0 and out.stdout.startswith("looking into out at DC:")
    bad = run("impedance", "samples/sensor_frontend.sp", "nowhere")
    assert bad.returncode == 2 and "no net 'nowhere'" in bad.stderr
    port = run("impedance", "samples/bias_block.sp", "xbias/nbias")
    assert port.returncode == 0


def test_undefined_param_leaves_a_library_its_includers_parameters():
    # SPICE scoping (ngspice-39 manual 2.8.3, from memory): a .param at a deck's top
    # level is visible inside the subcircuits it includes, so a cell library checked
    # alone (ngspice's examples/klu iscas_stdcells.lib sizes every cell with Wmin,
    # Lmin, Ldiff) names parameters only its includer defines
    from lintamp.api import check_text
    from lintamp.findings import Severity
    library = ("* cells\n.subckt inv a y vdd vss\nmn y a vss vss nch w={wmin} l={lmin}\n"
               "mp y a vdd vdd pch w={2*wmin} l={lmin}\n.ends\n"
               ".subckt buf a y vdd vss\nx1 a m vdd vss inv\nx2 m y vdd vss inv\nr1 y vss {rload}\n.ends\n"
               ".model nch nmos\n.model pch pmos\n")
    found = [f for f in check_text(library).findings if f.rule == "undefined-param"]
    assert [(f.severity, f.values["names"], f.values["count"]) for f in found] == [
        (Severity.INFO, ["lmin", "wmin"], 4), (Severity.INFO, ["rload"], 1)]
    # the same cells in a deck that instantiates them: the names are missing for real
    # a near miss of a name the library defines is a slip, even in a library
    slip = library.replace("{rload}", "{rlaod}").replace("* cells\n", "* cells\n.param rload=1k\n")
    found = [f for f in check_text(slip).findings if f.rule == "undefined-param"]
    assert [(f.severity, f.subject) for f in found if f.subject == "rlaod"] == [(Severity.ERROR, "rlaod")]
    deck = library + "x9 in out vdd 0 buf\nv1 vdd 0 1\nv2 in 0 0\n"
    found = [f for f in check_text(deck).findings if f.rule == "undefined-param"]
    assert {f.subject for f in found} == {"lmin", "rload", "wmin"}
    assert {f.severity for f in found} == {Severity.ERROR}


def test_undefined_param_knows_instance_passed_and_unsized_names():
    from lintamp.api import check_text
    # HSPICE and Xyce let an instance pass a parameter the .subckt line does not declare
    passed = ("t\n.subckt inv a y w1=1u\nm1 y a 0 0 nch w={wn}\n.ends\n"
              "x1 in out inv wn=2u\nv1 in 0 1\n.model nch nmos\n")
    assert [f for f in check_text(passed).findings if f.rule == "undefined-param"] == []
    # a netlist with no parameter definitions at all is unsized: bare names are symbolic
    unsized = "t\nr1 a 0 res=rK\nm1 a a 0 0 nch w=WA l=LA\n.model nch nmos\n"
    found = [f for f in check_text(unsized).findings if f.rule == "undefined-param"]
    assert [f.severity.label for f in found] == ["info"]
    # with parameters defined, a bare undefined name is a slip
    slip = ".param rval=1k\n".join(["t\n", "r1 a 0 rvla\n"])
    assert [f.subject for f in check_text(slip).findings if f.rule == "undefined-param"] == ["rvla"]


def test_program_exit_writes_everything_and_keeps_the_exit_code(tmp_path):
    # the program leaves with os._exit (lintamp.cli.run): what it printed to a pipe and
    # the exit code must be those of main() (common practice for command-line tools)
    deck = tmp_path / "open.sp"
    deck.write_text("* one resistor to nowhere\nv1 a 0 1\nr1 a b 1k\n.end\n")
    proc = run("check", "--no-config", "--no-cache", "--format", "json", str(deck), cwd=tmp_path)
    doc = json.loads(proc.stdout)
    assert proc.returncode == 1 and doc["summary"]["warnings"] >= 1, proc.stderr
    assert main(["check", "--no-config", "--no-cache", "--format", "json", "-o",
                 str(tmp_path / "out.json"), str(deck)]) == 1
    same = json.loads((tmp_path / "out.json").read_text())["findings"]
    assert [(f["rule"], f["line"], f["message"]) for f in same] == \
        [(f["rule"], f["line"], f["message"]) for f in doc["findings"]]  # paths differ: cwd


def test_only_the_program_keeps_a_file_alive_to_the_end():
    from lintamp import gcpause
    held = object()
    gcpause.retain(held)  # a Python caller: nothing is kept
    assert gcpause._retained == []
    gcpause.retain_until_exit = True
    try:
        gcpause.retain(held)
        assert gcpause._retained == [held]
        gcpause.release()
        assert gcpause._retained == []
    finally:
        gcpause.retain_until_exit = False
        gcpause.release()
