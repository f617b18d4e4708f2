"""What two rules say about a circuit, held against what ngspice-39 does with it.

* unbiased-gate: the explanation says what ngspice-39 really does with a floating gate
  (it warns, steps GMIN and the sources, and its transient operating point lands on a
  dead point), checked by running ngspice-39 on the rule's own bad example;
* undefined-dc-level: a mirror-loaded differential pair's output is set by the mirror
  (Razavi, Design of Analog CMOS ICs, 2nd ed., sec. 5.3: at balance v_out = v_d1), so
  no finding; the same pair with its PMOS load gated from a fixed bias still gets one.
"""

from __future__ import annotations

import subprocess
from pathlib import Path

import pytest

import ngspice_harness as ng
from lintamp.api import check_text

HERE = Path(__file__).resolve().parent
BAD_UNBIASED = HERE / "fixtures" / "rules" / "unbiased-gate" / "bad.sp"
PAIR = HERE / "fixtures" / "audit_family" / "diff_pair_mirror_load.sp"


def test_unbiased_gate_says_what_ngspice_does(tmp_path):
    exe = ng.require_ngspice()
    deck = ng._strip_end(BAD_UNBIASED.read_text())
    deck += "\n.control\nop\nprint v(g1) v(nb) @m3[id] @m1[id]\n.endc\n.end\n"
    (tmp_path / "deck.cir").write_text(deck)
    proc = subprocess.run([exe, "-b", "deck.cir"], capture_output=True, text=True, timeout=60, cwd=tmp_path)
    said = proc.stdout + proc.stderr
    # ngspice-39 batch run: a warning, the homotopies, then a dead operating point
    assert "singular matrix" in said and "gmin stepping" in said.lower()
    assert "Transient op finished successfully" in said
    values = {}
    for line in proc.stdout.splitlines():
        parts = line.split(" = ")
        if len(parts) == 2:
            try:
                values[parts[0].strip().lower()] = float(parts[1])
            except ValueError:
                pass
    assert abs(values["v(g1)"]) < 1e-6 and abs(values["v(nb)"]) < 1e-6
    assert abs(values["@m3[id]"]) < 1e-9 and abs(values["@m1[id]"]) < 1e-9
    report = check_text(BAD_UNBIASED.read_text(), str(BAD_UNBIASED))
    floating = [f for f in report.findings if f.rule == "unbiased-gate" and f.subject == "g1"]
    assert floating
    words = " ".join(floating[0].explanation)
    assert "stops" not in words
    assert "singular matrix" in words and "GMIN" in words and "dead point" in words


def _rules(text: str, path: str) -> list[tuple[str, str]]:
    return [(f.rule, f.subject) for f in check_text(text, path).findings]


def test_mirror_loaded_pair_has_a_defined_level():
    found = _rules(PAIR.read_text(), str(PAIR))
    assert ("undefined-dc-level", "out") not in found


def test_pair_with_a_fixed_bias_load_still_has_an_undefined_level():
    # the PMOS loads take their gate from a bias source instead of the diode side: two
    # current sources fight at "out" (Baker, CMOS Circuit Design, 3rd ed., pp. 867-871)
    text = PAIR.read_text().replace("m3 d1 d1 vdd vdd pch", "m3 d1 pb vdd vdd pch") \
        .replace("m4 out d1 vdd vdd pch", "m4 out pb vdd vdd pch").replace(".end", "vpb pb 0 0.9\n.end")
    found = _rules(text, "fixed_bias_pair.sp")
    assert ("undefined-dc-level", "out") in found
