"""The example rule in DEVELOPERS.md ("Writing a rule") works as printed.

The module is cut out of the page, loaded as a rule the way the registry loads one,
and run over a netlist of our own: a newcomer who copies it gets a working rule
without knowing how lintamp stores the cards of a big cell.
"""

from __future__ import annotations

import importlib.util
import re
from pathlib import Path

from lintamp.api import default_config, load_design
from lintamp.netlist.parser import parse_text
from lintamp.netlist.reader import ReadOptions
from lintamp.registry import _from_module
from lintamp.rulekit.context import Context

PAGE = Path(__file__).resolve().parent.parent / "DEVELOPERS.md"
BLOCK = re.compile(r"<!-- example-rule -->\s*```python\n(.*?)```\s*<!-- end example-rule -->", re.S)
DECK = """* sizes written and forgotten
.model nch nmos level=1
.subckt pair d g
M1 d g 0 0 nch l=0.15u
M2 d g 0 0 nch w=1u l=0.15u
.ends
X1 out in pair
M3 out in 0 0 nch
R1 out 0 1k
"""


def example_rule(tmp_path):
    found = BLOCK.search(PAGE.read_text(encoding="utf-8"))
    assert found, "DEVELOPERS.md lost its example rule"
    path = tmp_path / "mos_without_size.py"
    path.write_text(found.group(1), encoding="utf-8")
    spec = importlib.util.spec_from_file_location("mos_without_size", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return _from_module(module)


def test_the_example_is_a_complete_rule(tmp_path):
    rule = example_rule(tmp_path)
    assert rule.name == "mos-without-size" and rule.check is not None
    for section in ("What it finds", "Why it matters", "Example", "Fix"):
        assert section in rule.doc


def test_the_example_finds_what_it_says(tmp_path):
    rule = example_rule(tmp_path)
    netlist = parse_text(DECK, "sizes.sp", ReadOptions(root=tmp_path, display_root=tmp_path))
    config = default_config()
    ctx = Context(netlist, load_design(netlist, config), config=config, options={})
    ctx.rule = rule
    found = sorted((f.subject, f.location.line, f.values["missing"]) for f in rule.check(ctx))
    # M1 (line 4) has no W, M3 (line 8) neither W nor L; M2 is sized
    assert found == [("m1", 4, "w"), ("m3", 8, "w,l")]
