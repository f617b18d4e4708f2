"""How many devices of runs of plain R/C/L cards each rule makes on a 100k deck.

A cell of an extracted netlist holds its plain cards as text and net numbers; a rule
that asks ``CellView``'s named queries (``devices_of``, ``instances``,
``devices_sharing_names``, ``devices_with_repeated_nets`` ...) makes a Device only
for the cards its answer names.  A natural ``for dev in view.devices`` makes them
all, about 250 bytes and 3 µs each (see DEVELOPERS.md, Benchmarks): this test
catches it.  The decks come from bench/generate.py and bench/shapes.py (scenarios of
our own).
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

from lintamp.api import default_config, enabled_rules, load_design
from lintamp.circuit import design as design_module
from lintamp.netlist.parser import parse_text
from lintamp.netlist.reader import ReadOptions
from lintamp.rulekit.context import Context

BENCH = Path(__file__).resolve().parent.parent / "bench"
sys.path.insert(0, str(BENCH))
from generate import flat  # noqa: E402
from shapes import long_ladder  # noqa: E402

N = 100_000


def made_per_rule(text: str) -> tuple[dict[str, int], dict[str, set[str]], int]:
    """Run devices made by each rule checked alone on a fresh design of ``text``, the
    elements each rule's findings name, and the number of device classes."""
    with pytest.MonkeyPatch.context() as monkeypatch:
        return _made_per_rule(text, monkeypatch)


def _made_per_rule(text: str, monkeypatch):
    made = [0]
    original = design_module._RunDevices._device

    def counting(self, element):
        made[0] += 1
        return original(self, element)

    monkeypatch.setattr(design_module._RunDevices, "_device", counting)
    config = default_config()
    netlist = parse_text(text, "deck.sp", ReadOptions(root=Path.cwd(), display_root=Path.cwd()))
    counts, named = {}, {}
    classes = 0
    for rule in enabled_rules(config):
        design = load_design(netlist, config)
        classes = sum(len(view.device_classes.keys) for view in design.cells)
        ctx = Context(netlist, design, config=config, options={"includes_missing": False})
        ctx.rule = rule
        made[0] = 0
        findings = list(rule.check(ctx))
        counts[rule.name] = made[0]
        named[rule.name] = {name for f in findings for name in f.elements}
    return counts, named, classes


@pytest.fixture(scope="module")
def random_mesh():
    return made_per_rule(flat(N))


def test_a_clean_deck_makes_no_run_device():
    # the DC analyses read a device class's roles from its key, not from a device of it
    counts, named, classes = made_per_rule(long_ladder(N))
    assert not any(named.values())  # a driven RC ladder: nothing to report
    assert classes == 3  # the ladder's R and C, its V source
    assert {rule: n for rule, n in counts.items() if n} == {}


@pytest.mark.parametrize("category", ["connectivity", "references", "syntax"])
def test_rules_make_only_the_devices_findings_name(random_mesh, category):
    counts, named, classes = random_mesh
    everything_named = set().union(*named.values())
    from lintamp.registry import all_rules
    rules = [name for name, rule in all_rules().items() if rule.category == category]
    assert rules
    for rule in rules:
        # the islands the three DC rules share are made once for all of them, so each
        # is held to what any finding names, not to its own findings
        assert counts[rule] <= len(everything_named), (rule, counts[rule])
        assert counts[rule] < N // 50, (rule, counts[rule])


def test_an_extracted_shape_deck_makes_only_the_devices_its_findings_need():
    # bench/extracted_shape.py (a scenario of our own): wrapper cells per transistor
    # geometry, coordinate net names, resistor trees, coupling capacitors, stubs and
    # floating metal.  The DC summary of a cell's ports looks for gate descriptions
    # only on the nets that hold a gate (it once made a Device for every card of the
    # top cell, a million on a 1M deck); the folded infos (stubs, floating metal) name
    # a few thousand elements between them.
    from extracted_shape import extracted

    n = 30_000
    counts, named, _ = made_per_rule(extracted(n, seed=3))
    assert named["dangling-net"]  # the folded info of the stubs names some of them
    for rule in ("no-dc-path", "unbiased-gate", "current-cutset", "unused-port", "body-tie",
                 "dangling-net"):
        assert counts[rule] < n // 5, (rule, counts[rule])
