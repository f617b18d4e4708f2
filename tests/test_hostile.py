"""One test per hostile netlist structure: a clear message, bounded time and memory.

Each heavy case runs ``lintamp check`` in a child process so that its peak memory
(``ru_maxrss`` of the child alone) and wall time can be bounded; the bounds are
generous ceilings that catch a hang or a blow-up, not benchmarks (bench/ holds the
timed targets).  The child runs under an address-space limit so that a runaway
fails fast instead of taking the machine down.  Expected behaviour is common
practice for tools that read untrusted input unless a comment names a source.
"""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from lintamp.findings import Severity

from lintamp.api import check_text, load_design
from lintamp.circuit.flatten import FlattenLimit, flat_element_count, flatten
from lintamp.config import Config
from lintamp.netlist.parser import parse_text
from lintamp.netlist.reader import MAX_LINE_BYTES

REPO = Path(__file__).resolve().parent.parent
CEILING_S = 20.0
CEILING_MB = 500

_CHILD = textwrap.dedent("""
    import json, resource, sys, time, io, contextlib
    sys.path.insert(0, sys.argv[1])
    resource.setrlimit(resource.RLIMIT_AS, (3 * 1024 ** 3, resource.RLIM_INFINITY))
    from lintamp.cli import main
    out = io.StringIO()
    start = time.perf_counter()
    with contextlib.redirect_stdout(out):
        code = main(["check", "--no-config", "--no-cache", "--format", "json", *sys.argv[2:]])
    seconds = time.perf_counter() - start
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(json.dumps({"code": code, "seconds": seconds, "peak_mb": peak_mb,
                      "report": json.loads(out.getvalue())}))
""")


def check_in_child(*args: str, timeout_s: float = 300) -> dict:
    """Run ``lintamp check --format json ARGS`` in a fresh interpreter; returns the
    exit code, wall time of the check, the child's peak RSS and the report."""
    done = subprocess.run([sys.executable, "-c", _CHILD, str(REPO), *args], capture_output=True,
                          text=True, timeout=timeout_s)
    assert done.returncode == 0, done.stderr[-2000:]
    return json.loads(done.stdout)


def findings(result: dict) -> list[dict]:
    return result["report"]["findings"]


def messages(text: str, **kw) -> list[tuple[str, str]]:
    return [(f.rule, f.message) for f in check_text(text, "hostile.sp", Config(), **kw).findings]


def timed(func, *args):
    start = time.perf_counter()
    value = func(*args)
    return value, time.perf_counter() - start


# ------------------------------------------------------------------- hierarchy
def test_directly_recursive_subcircuit():
    # a subcircuit that instantiates itself cannot be elaborated (any SPICE, common practice)
    found, seconds = timed(messages, "* t\n.subckt a p q\nxa p q a\nr1 p q 1k\n.ends\nx1 n 0 a\n")
    assert seconds < CEILING_S
    assert any(rule == "unknown-cell" and "recursive subcircuit: a -> a" in m for rule, m in found)


def test_indirectly_recursive_subcircuits():
    text = ("* t\n.subckt a p\nxb p b\n.ends\n.subckt b p\nxc p c\n.ends\n"
            ".subckt c p\nxa p a\n.ends\nx1 n a\n")
    found, seconds = timed(messages, text)
    assert seconds < CEILING_S
    assert any("recursive subcircuit: a -> b -> c -> a" in m for _, m in found), found
    design = load_design(parse_text(text))
    assert flat_element_count(design.top) == 1  # the cut instance stays one opaque element


def _hierarchy(levels: int, fan: int) -> str:
    lines = ["* exponential hierarchy", ".subckt c0 a b", "r1 a b 1k", ".ends c0"]
    for level in range(1, levels + 1):
        lines += [f".subckt c{level} a b", *(f"x{i} a b c{level - 1}" for i in range(fan)),
                  f".ends c{level}"]
    return "\n".join(lines + [f"xtop n 0 c{levels}", "v1 n 0 1"]) + "\n"


@pytest.mark.parametrize("levels", [10, 30])
def test_exponential_hierarchy_is_counted_not_enumerated(levels):
    # 10 levels x 10 instances is 10^10 leaf resistors; 30 levels is 10^30
    start = time.perf_counter()
    design = load_design(parse_text(_hierarchy(levels, 10)))
    leaf = next(v for v in design.cells if v.name == "c0")
    assert design.instance_count(leaf) == 10 ** levels
    assert len(design.instances(leaf)) == 20  # listed paths are capped
    assert flat_element_count(design.top) == 10 ** levels + 1
    with pytest.raises(FlattenLimit, match=f"has {10 ** levels + 1} elements"):
        flatten(design)
    # nothing wrong with it; at most the note that impedance rules skip a deck this size
    findings = check_text(_hierarchy(levels, 10), "h.sp", Config()).findings
    assert [f.rule for f in findings if f.severity > Severity.INFO] == []
    assert time.perf_counter() - start < CEILING_S


def test_exponential_hierarchy_in_a_child_stays_small(tmp_path):
    deck = tmp_path / "exp.sp"
    deck.write_text(_hierarchy(12, 10))
    result = check_in_child(str(deck))
    assert result["code"] == 0 and result["seconds"] < CEILING_S and result["peak_mb"] < CEILING_MB


def test_two_thousand_levels_of_nesting(tmp_path):
    lines = ["* deep"] + [f".subckt c{i} a\nx1 a c{i + 1}\n.ends" for i in range(2000)]
    text = "\n".join(lines + [".subckt c2000 a\nr1 a 0 1\n.ends", "x0 n c0"]) + "\n"
    found, seconds = timed(messages, text)
    assert seconds < CEILING_S
    with pytest.raises(FlattenLimit, match="nested more than 100 deep"):
        flatten(load_design(parse_text(text)))


# ------------------------------------------------------------------- includes
def test_include_cycle_and_self_include(tmp_path):
    (tmp_path / "a.inc").write_text(".include b.inc\nr1 a 0 1k\n")
    (tmp_path / "b.inc").write_text(".include a.inc\nr2 b 0 1k\n")
    (tmp_path / "self.inc").write_text(".include self.inc\n")
    (tmp_path / "deck.sp").write_text("* t\n.include a.inc\n.include self.inc\n.include deck.sp\n")
    result = check_in_child(str(tmp_path / "deck.sp"))
    cycles = [f for f in findings(result) if f["rule"] == "bad-include"]
    assert len(cycles) == 3 and all("include cycle" in f["message"] for f in cycles)
    assert result["seconds"] < CEILING_S


# ------------------------------------------------------------------ parameters
def test_mutually_recursive_params():
    found = messages("* t\n.param a={b} b={a}\nr1 n 0 {a}\n")
    assert any("circular definition: a -> b -> a" in m for _, m in found), found


def test_ten_thousand_deep_param_chain():
    n = 10_000
    text = "* t\n" + "".join(f".param p{i}={{p{i + 1}+1}}\n" for i in range(n)) + f".param p{n}=1\nr1 a 0 {{p0}}\n"
    found, seconds = timed(messages, text)
    assert seconds < CEILING_S
    assert not [m for rule, m in found if rule in ("undefined-param", "parse-error")], found[:3]
    cyclic = text.replace(f".param p{n}=1", f".param p{n}={{p0}}")
    found, seconds = timed(messages, cyclic)
    assert seconds < CEILING_S
    assert any("circular definition: p0 -> p1" in m and len(m) < 300 for _, m in found)


def test_hundred_kilobyte_expression():
    expr = "+".join(["1"] * 50_000)  # 100 KB, over the 64 KB expression limit
    found, seconds = timed(messages, f"* t\n.param big={{{expr}}}\nr1 a 0 {{big}}\n")
    assert seconds < CEILING_S
    assert any("longer than 65536 characters" in m and len(m) < 300 for _, m in found), found


def test_deeply_nested_expression():
    found = messages("* t\n.param p={" + "(" * 10_000 + "1" + ")" * 10_000 + "}\n")
    assert any("nested too deeply" in m for _, m in found), found


# ---------------------------------------------------------------- sheer size
def test_hundred_megabyte_single_line(tmp_path):
    deck = tmp_path / "oneline.sp"
    with open(deck, "wb") as out:
        out.write(b"* one huge line\nr1 a 0 1k\nr2 a b ")
        chunk = b"x" * (1 << 20)
        for _ in range(100):
            out.write(chunk)
        out.write(b"\nr3 b 0 1k\n")
    result = check_in_child(str(deck))
    too_long = [f for f in findings(result) if "over the" in f["message"]]
    assert [(f["rule"], f["line"], f["column"]) for f in too_long] == [("parse-error", 3, 1)]
    assert f"{MAX_LINE_BYTES}-byte limit" in too_long[0]["message"]
    assert len(too_long[0]["message"]) < 300
    assert result["seconds"] < CEILING_S and result["peak_mb"] < CEILING_MB, result


def test_two_million_comment_lines(tmp_path):
    deck = tmp_path / "comments.sp"
    deck.write_bytes(b"* comments\n" + b"* nothing to see\n" * 2_000_000 + b"r1 a 0 1k\n")
    result = check_in_child(str(deck))
    assert result["code"] == 0
    assert result["seconds"] < 60 and result["peak_mb"] < CEILING_MB, result


def test_three_hundred_thousand_resistor_cards(tmp_path):
    # linear in cards (measured: 1 000 000 cards in about a minute, 1.4 GB peak);
    # the unit test keeps a third of that
    n = 300_000
    deck = tmp_path / "ladder.sp"
    deck.write_text("* ladder\nv1 n0 0 1\n" + "".join(f"r{i} n{i} n{i + 1} 1k\n" for i in range(n))
                    + f"r{n} n{n} 0 1k\n")
    result = check_in_child(str(deck))
    assert result["code"] == 0
    assert result["seconds"] < 120 and result["peak_mb"] < 1000, result


# ---------------------------------------------------------- not netlists at all
PNG = (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x01\x00\x00\x00\x01\x08\x06\x00\x00\x00"
       b"\x1f\x15\xc4\x89\x00\x00\x00\rIDATx\x9cc\xf8\x0f\x00\x00\x01\x01\x00\x05\x18\xd8N\x00\x00"
       b"\x00\x00IEND\xaeB`\x82")


@pytest.mark.parametrize("name,data,words", [
    ("image.png", PNG, "binary file"),
    ("random.bin", bytes(range(256)) * 64, "binary file"),
    ("utf16.sp", "* título\nr1 a 0 1k\n".encode("utf-16"), "UTF-16"),
    ("utf16be.sp", b"\xfe\xff" + "* t\nr1 a 0 1k\n".encode("utf-16-be"), "UTF-16"),
])
def test_binary_and_wide_encoded_files_are_refused_clearly(tmp_path, name, data, words):
    (tmp_path / name).write_bytes(data)
    result = check_in_child(str(tmp_path / name))
    assert [(f["rule"], f["line"], f["column"]) for f in findings(result)] == [("parse-error", 1, 1)]
    assert words in findings(result)[0]["message"] and result["code"] == 1


def test_empty_file_has_no_findings(tmp_path):
    (tmp_path / "empty.sp").write_bytes(b"")
    result = check_in_child(str(tmp_path / "empty.sp"))
    assert result["code"] == 0 and findings(result) == []


@pytest.mark.parametrize("name,text", [
    ("script.sp", "#!/usr/bin/env python3\nimport os\nprint(os.getcwd())\nos.system('rm -rf /')\n"),
    ("data.sp", '{"tool": "x", "list": [1, 2, {"a": "b"}],\n "n": null}\n'),
])
def test_text_that_is_not_a_netlist_gives_findings_not_a_crash(tmp_path, name, text):
    (tmp_path / name).write_text(text)
    result = check_in_child(str(tmp_path / name))
    assert result["code"] in (0, 1)
    for f in findings(result):
        assert f["line"] >= 1 and f["column"] >= 1 and len(f["message"]) < 300
    assert any(f["rule"] == "parse-error" for f in findings(result))


def test_latin1_netlist_is_read_as_latin1(tmp_path):
    # bytes that are not UTF-8 are read as latin-1, so a comment with 'µ' or 'é' in an
    # old deck does not stop the check
    (tmp_path / "latin1.sp").write_bytes("* résistance 1µA\nr1 a 0 1k ; é\n9bad a 0\n".encode("latin-1"))
    result = check_in_child(str(tmp_path / "latin1.sp"))
    assert [(f["rule"], f["line"]) for f in findings(result)] == [("parse-error", 3)]


def test_cr_only_line_ends_are_lines(tmp_path):
    (tmp_path / "mac.sp").write_bytes(b"* old deck\rr1 a 0 1k\r9bad a 0\r")
    result = check_in_child(str(tmp_path / "mac.sp"))
    assert [(f["rule"], f["line"]) for f in findings(result)] == [("parse-error", 3)]
