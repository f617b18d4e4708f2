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


def test_a_clean_deck_makes_no_run_device_but_one_per_class():
    # the DC analyses read a device class's roles from its first device: at most one
    # device per class (here 3: the ladder's R and C, its V source), never one per card
    counts, named, classes = made_per_rule(long_ladder(N))
    assert not any(named.values())  # a driven RC ladder: nothing to report
    assert classes == 3
    assert {rule: n for rule, n in counts.items() if n > classes} == {}


@pytest.mark.parametrize("category", ["connectivity", "references", "syntax"])
def test_rules_make_only_the_devices_findings_name(random_mesh, category):
    counts, named, classes = random_mesh
    everything_named = set().union(*named.values())
    from lintamp.registry import all_rules
    rules = [name for name, rule in all_rules().items() if rule.category == category]
    assert rules
    for rule in rules:
        # the islands the three DC rules share are made once for all of them, so each
        # is held to what any finding names (and a device per class), not its own findings
        assert counts[rule] <= len(everything_named) + classes, (rule, counts[rule])
        assert counts[rule] < N // 50, (rule, counts[rule])
