"""Impedances lintamp prints on a post-layout deck agree with ngspice-39's ``.ac``.

The deck: 30,000 elements in the shape a layout extractor writes (bench/extracted_shape.py,
seeded: wrapper cells per device geometry, coordinate net names, resistor trees per wire,
local coupling capacitance, stubs; a scenario of our own) around a known pre-layout core,
a common-gate NMOS stage with a current input.  ngspice-39 runs the same deck with a 1 A AC
current into ``in``: its v(in) is the impedance looking into ``in``.  Floating metal is left
out of this deck only because ngspice's own ``.op`` needs minutes with it
(tests/test_reduce.py holds lintamp's handling of floating metal against the formula).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from ngspice_harness import require_ngspice

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "bench"))
from extracted_shape import extracted  # noqa: E402  bench generator: a scenario of our own

pytestmark = pytest.mark.slow  # ngspice's .ac on 30k elements takes about 15 s here

ELEMENTS = 30_000
SEED = 3
FREQS_HZ = (1e6, 1e8, 1e9)  # points of the deck's '.ac dec 10 1k 10g'


@pytest.fixture(scope="module")
def decks(tmp_path_factory):
    exe = require_ngspice()
    folder = tmp_path_factory.mktemp("post-layout")
    ngspice_deck = folder / "probe.sp"
    ngspice_deck.write_text(extracted(ELEMENTS, seed=SEED, core="cg_amp", analysis="ac", probe="in",
                                      floating_metal=False))
    lintamp_deck = folder / "deck.sp"
    lintamp_deck.write_text(extracted(ELEMENTS, seed=SEED, core="cg_amp", floating_metal=False))
    proc = subprocess.run([exe, "-b", str(ngspice_deck)], capture_output=True, text=True,
                          timeout=600, cwd=folder)
    z_ngspice = {}
    for line in proc.stdout.splitlines():
        parts = line.split()
        if len(parts) == 4 and parts[0].isdigit():
            freq = float(parts[1])
            z_ngspice[freq] = complex(float(parts[2]), float(parts[3]))
    assert z_ngspice, f"ngspice printed no AC table:\n{proc.stdout[-2000:]}\n{proc.stderr[-2000:]}"
    return lintamp_deck, z_ngspice


def _at(table: dict[float, complex], freq_hz: float) -> complex:
    near = min(table, key=lambda f: abs(f - freq_hz) / freq_hz)
    assert abs(near - freq_hz) <= 1e-6 * freq_hz
    return table[near]


def test_element_count_is_post_layout_scale(decks):
    deck, _ = decks
    cards = [ln for ln in deck.read_text().splitlines() if ln[:1].lower() in ("r", "c", "m", "x")]
    assert len(cards) >= 0.9 * ELEMENTS


def test_impedance_command_agrees_with_ngspice_ac(decks, capsys):
    # ngspice-39 AC analysis: v(in) per 1 A injected into in, the whole extracted deck attached
    from lintamp.cli import main
    deck, z_ngspice = decks
    for freq_hz in FREQS_HZ:
        assert main(["impedance", str(deck), "in", "--freq", f"{freq_hz:g}", "--format", "json",
                     "--no-config"]) == 0
        report = json.loads(capsys.readouterr().out)
        assert report["operating_point"] == "level1"
        z = complex(report["z_ohm"]["re"], report["z_ohm"]["im"])
        expected = _at(z_ngspice, freq_hz)
        assert abs(z - expected) <= 0.01 * abs(expected), (freq_hz, z, expected)


def test_audit_sheet_port_row_agrees_with_ngspice_ac(decks):
    # ngspice-39 AC analysis, as above, at the frequency the sheet's port row is taken at
    from lintamp.audit.sheet import build_sheet
    deck, z_ngspice = decks
    sheet = build_sheet(deck, bandwidth="100meg", plots=False)
    row = next(p for p in sheet.data["ports"] if p["net"] == "in")
    assert row["kind"] == "current-input"
    z_band = row["z_band_ohm"]
    expected = _at(z_ngspice, 1e8)
    assert abs(z_band["mag"] - abs(expected)) <= 0.01 * abs(expected), (z_band, expected)
