"""Property-based fuzzing of the whole check path, and regressions for what fuzzing found.

Netlist text is untrusted (a CI gate reads pull requests from anyone), so whatever
the bytes, lintamp must finish without an uncaught exception, put every finding at
a real place (line >= 1, column >= 1), keep messages to short excerpts, and exit
0, 1 or 2.  The inputs are mutations of the real netlists in ../shared/corpus
(read in place; skipped with a message when absent) and of the samples, plus
decks from the small card grammar in ``fuzz/grammar.py``.

The budget is fixed and small (``derandomize=True``: the same examples every run,
so the CI gate is not flaky); ``fuzz/run_fuzz.py`` is the long, random search.
Expected behaviour throughout is common practice for linters of untrusted input,
unless a comment names another source.
"""

from __future__ import annotations

import json
import random
import tempfile
import time
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.configuration import set_hypothesis_home_dir

from fuzz import grammar
from fuzz.target import MAX_MESSAGE_CHARS, check_finding, exercise, make_sandbox
from lintamp.api import check_file, check_text, flat_circuit_from_text
from lintamp.cli import main
from lintamp.config import Config
from lintamp.netlist.expr import compile_expr, ExprError, evaluate_params
from lintamp.netlist.units import parse_number

REPO = Path(__file__).resolve().parent.parent
# hypothesis keeps working files; they belong in tmp, not in the checkout
set_hypothesis_home_dir(str(Path(tempfile.gettempdir()) / "lintamp-hypothesis"))
CORPUS = REPO.parent / "shared" / "corpus"
SAMPLES = sorted(p for p in (REPO / "samples").iterdir() if p.is_file())
SAMPLE_BYTES = [p.read_bytes() for p in SAMPLES]
SMALL_BYTES = 8 * 1024

FUZZ = settings(max_examples=200, deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                       HealthCheck.filter_too_much])


def corpus_seeds(limit: int = 400) -> list[bytes]:
    """A fixed, spread-out selection of the small real netlists (every k-th file)."""
    if not CORPUS.is_dir():
        return []
    files = sorted(p for p in CORPUS.rglob("*") if p.is_file() and p.suffix != ".tsv"
                   and p.stat().st_size <= SMALL_BYTES)
    step = max(1, len(files) // limit)
    return [p.read_bytes() for p in files[::step][:limit]]


CORPUS_SEEDS = corpus_seeds()
SEEDS = SAMPLE_BYTES + CORPUS_SEEDS


@pytest.fixture(scope="module")
def sandbox(tmp_path_factory):
    return make_sandbox(tmp_path_factory.mktemp("fuzz") / "root")


CONFIG = Config()


def run(data: bytes, sandbox: Path, engine: bool = False) -> None:
    exercise(data, sandbox, engine=engine, formats=("text", "json"), config=CONFIG)


# ----------------------------------------------------------------- property tests
@FUZZ
@given(seed=st.sampled_from(CORPUS_SEEDS or [b""]), r=st.randoms(use_true_random=False))
def test_mutated_real_netlists(sandbox, seed, r):
    if not CORPUS_SEEDS:
        pytest.skip(f"the shared corpus is not at {CORPUS}; mutating the samples only")
    run(grammar.mutate(r, seed, CORPUS_SEEDS), sandbox)


@FUZZ
@given(seed=st.sampled_from(SAMPLE_BYTES), r=st.randoms(use_true_random=False))
def test_mutated_samples(sandbox, seed, r):
    run(grammar.mutate(r, seed, SAMPLE_BYTES), sandbox, engine=r.random() < 0.2)


@FUZZ
@given(seed=st.sampled_from(SEEDS), cut=st.floats(0, 1))
def test_truncation(sandbox, seed, cut):
    run(seed[: int(len(seed) * cut)], sandbox)


@FUZZ
@given(seed=st.sampled_from(SEEDS),
       flips=st.lists(st.tuples(st.floats(0, 1, exclude_max=True), st.integers(0, 255)),
                      min_size=1, max_size=8))
def test_byte_flips(sandbox, seed, flips):
    if not seed:
        return
    buf = bytearray(seed)
    for where, byte in flips:
        buf[int(where * len(buf))] = byte
    run(bytes(buf), sandbox)


@FUZZ
@given(seed=st.sampled_from(SEEDS), r=st.randoms(use_true_random=False))
def test_shuffled_lines(sandbox, seed, r):
    lines = seed.split(b"\n")
    r.shuffle(lines)
    run(b"\n".join(lines), sandbox)


@FUZZ
@given(r=st.randoms(use_true_random=False), cards=st.integers(0, 40))
def test_random_cards_from_the_grammar(sandbox, r, cards):
    run(grammar.deck(r, cards).encode("utf-8", "surrogatepass"), sandbox, engine=r.random() < 0.2)


HIERARCHY_CARDS = [".subckt a p q", ".subckt b p", ".subckt a", ".ends", ".ends a", ".ends zz",
                   "xa p q a", "xb p b", "xc p q c", "x1 a", "r1 p q 1k", ".subckt", ".ends b c",
                   ".end", ".endl", ".lib tt", "m1 p q 0 0 nch", ".model nch nmos"]


@FUZZ
@given(cards=st.lists(st.sampled_from(HIERARCHY_CARDS), max_size=30))
def test_unbalanced_subckt_and_ends(sandbox, cards):
    run(("* hierarchy\n" + "\n".join(cards) + "\n").encode(), sandbox, engine=True)


@FUZZ
@given(digits=st.integers(1, 30_000), exponent=st.integers(-10 ** 6, 10 ** 6),
       suffix=st.sampled_from(["", "k", "meg", "mil", "x", "=", "e", "e+", ".5", "**9"]),
       wrap=st.sampled_from(["%s", "{%s}", "'%s'", "{%s+1}"]))
def test_huge_numbers(sandbox, digits, exponent, suffix, wrap):
    number = "9" * digits + f"e{exponent}" + suffix
    text = f"* big\nr1 a 0 {wrap % number}\n.param p={wrap % number}\nv1 a 0 dc {number}\n"
    run(text.encode(), sandbox, engine=True)


EXPRESSIONS = st.recursive(
    st.sampled_from(["1", "a", "1e308", "0", "-1", "x1", "1k"]),
    lambda inner: st.one_of(
        st.tuples(inner, st.sampled_from(grammar.OPS), inner).map(" ".join),
        inner.map(lambda e: f"({e})"),
        st.tuples(st.sampled_from(grammar.FUNCS), st.lists(inner, max_size=3)).map(
            lambda t: f"{t[0]}({', '.join(t[1])})"),
        st.tuples(inner, inner, inner).map(lambda t: f"{t[0]} ? {t[1]} : {t[2]}"),
        inner.map(lambda e: "-" + e)),
    max_leaves=60)


@FUZZ
@given(expr=EXPRESSIONS, depth=st.integers(0, 3000), kind=st.integers(0, 3))
def test_deep_expressions(sandbox, expr, depth, kind):
    deep = ("(" * depth + expr + ")" * depth, "-" * depth + expr,
            "+".join([expr] * min(depth, 500) or [expr]), "f(" * depth + "1" + ")" * depth)[kind]
    text = (f"* expr\n.param a=1\n.func f(x) {{x+1}}\n.param p={{{deep}}}\n"
            f"r1 n1 0 {{{deep}}}\nx1 n1 0 sub w={{{deep}}}\n.subckt sub p q w=1\nr1 p q {{w}}\n.ends\n")
    run(text.encode(), sandbox, engine=True)


@FUZZ
@given(seed=st.sampled_from(SEEDS), noise=st.text(max_size=40), where=st.floats(0, 1))
def test_random_unicode(sandbox, seed, noise, where):
    text = seed.decode("utf-8", "replace")
    at = int(len(text) * where)
    run((text[:at] + noise + text[at:]).encode("utf-8", "surrogatepass"), sandbox)


@FUZZ
@given(seed=st.sampled_from(SEEDS), ending=st.sampled_from([b"\r", b"\r\n", b"\r\r\n", b"\n\r"]),
       nul_at=st.none() | st.floats(0, 1))
def test_nul_bytes_and_cr_line_ends(sandbox, seed, ending, nul_at):
    data = seed.replace(b"\n", ending)
    if nul_at is not None:
        at = int(len(data) * nul_at)
        data = data[:at] + b"\x00" + data[at:]
    run(data, sandbox)


@settings(FUZZ, max_examples=60)
@given(seed=st.sampled_from(SEEDS), r=st.randoms(use_true_random=False),
       fmt=st.sampled_from(["text", "json", "sarif", "github", "junit"]))
def test_check_file_and_cli_main(sandbox, seed, r, fmt):
    data = grammar.mutate(r, seed, SAMPLE_BYTES)
    path = sandbox / "deck.sp"
    path.write_bytes(data)
    result = check_file(path, CONFIG)
    assert not result.internal_errors
    for finding in result.findings:
        check_finding(finding)
    out = sandbox.parent / "report.out"
    code = main(["check", str(path), "--no-config", "--no-cache", "--format", fmt, "-o", str(out)])
    assert code in (0, 1, 2)
    assert code != 2, out.read_text(encoding="utf-8")[:500]  # bad netlist text is a finding
    if fmt in ("json", "sarif"):
        json.loads(out.read_text(encoding="utf-8"))


# ------------------------------------------------ regressions found by run_fuzz.py
def _messages(text: str) -> list[str]:
    return [f.message for f in check_text(text, "fuzz.sp", CONFIG).findings]


def test_rules_quote_only_an_excerpt_of_long_names():
    # found: unknown-cell, unknown-model and undefined-param messages quoting whole
    # 15 000-character names and expressions
    long = "n" * 20_000
    text = (f"* t\n.model nch nmos\nr1 a b {{{long}}}\nx{long} a b {long}\n"
            f"m1 d g s b {long}\nr2 a b 1k {long}=1\n")
    messages = _messages(text)
    assert {"undefined-param", "unknown-cell", "unknown-model"} <= {
        f.rule for f in check_text(text, "fuzz.sp", CONFIG).findings}
    assert max(len(m) for m in messages) < 300


def test_long_digit_string_is_refused_in_linear_time():
    # found: the number pattern backtracked quadratically on a failed match
    # (20 000 digits then '=' took 15 s; a 4 MB card would never finish)
    start = time.perf_counter()
    assert parse_number("9" * 200_000 + "=") is None
    with pytest.raises(ExprError):
        compile_expr("9" * 60_000 + " x")
    assert time.perf_counter() - start < 10  # a hang guard, not a benchmark


def test_exponent_with_thousands_of_digits_is_out_of_range_not_a_crash():
    # found: int() refuses strings over 4300 digits (ValueError out of parse_number)
    assert parse_number("1e" + "9" * 5000) is None
    assert parse_number("1e-" + "9" * 5000) is None
    assert parse_number("1e308") == 1e308  # ordinary numbers unchanged
    assert parse_number("2.5e-3k") == 2.5


def test_expression_messages_quote_only_an_excerpt():
    name = "q" * 10_000
    values, errors = evaluate_params([("p", "{%s}" % name), ("big", "{%s+1}" % ("9" * 5000 + "e9999"))], {})
    assert all(len(str(e)) < 200 for e in errors.values()), errors


def test_long_parameter_cycle_message_names_its_ends_only():
    n = 10_000
    defs = [(f"a{i}", f"{{a{i + 1}+1}}") for i in range(n)] + [(f"a{n}", "{a0}")]
    _, errors = evaluate_params(defs, {})
    assert len(errors) == n + 1
    assert "circular definition: a0 -> a1" in str(errors["a0"])
    assert len(str(errors["a0"])) < 200


ENGINE_DECKS = {
    # found: ZeroDivisionError in the junction series resistances (rs / area)
    "diode area 0": "* t\nv1 a 0 1\nr1 a b 1k\nd1 b 0 dm area=0\n.model dm d rs=1\n",
    "bjt area 0": "* t\nv1 a 0 1\nr1 a b 100k\nq1 a b 0 qm area=0\n.model qm npn rb=10\n",
    # found: IndexError in the MNA set-up; ngspice-39 needs four MOS nodes (d g s b)
    "mos without body": "* t\nv1 a 0 1\nr1 a g 1k\nm1 a g 0 nch\n.model nch nmos\n",
    # found: CircuitError (a ValueError) escaping the operating point
    "ccvs without control": "* t\nh1 a 0 vnone 2\nr1 a 0 1k\n",
    "cccs without control": "* t\nf1 a 0 vnone 2\nr1 a 0 1k\n",
}


@pytest.mark.parametrize("name", sorted(ENGINE_DECKS))
def test_engine_refuses_unevaluable_devices_with_a_note(name):
    from lintamp.rulekit.impedance_report import impedance_report
    report = impedance_report(flat_circuit_from_text(ENGINE_DECKS[name]), "a", 1e3)
    assert report["operating_point"] == "assumed"
    assert report["z_ohm"]["mag"] is None
    assert any("cannot" in note for note in report["notes"]), report["notes"]


def test_pwl_from_a_file_has_no_initial_value_to_take(tmp_path):
    # found in a real deck (Xyce regression netlist 'VIN IN 0 PWL file ./table.pwl'):
    # flatten indexed the missing first PWL value (IndexError)
    circuit = flat_circuit_from_text("* t\nvin in 0 pwl file ./table.pwl\nr1 in 0 1k\n")
    assert circuit.device("vin").source.dc == 0.0


def test_subckt_names_in_ends_messages_are_excerpted():
    # found: mismatched-ends and 'never closed' messages quoted a 1 000-character .subckt name
    name = "s" * 5000
    found = check_text(f"* t\n.subckt {name} a\n.ends other\n.subckt {name}x b\n", "f.sp", CONFIG).findings
    assert {f.rule for f in found} >= {"mismatched-ends", "parse-error"}
    assert max(len(f.message) for f in found) < 300


def test_singular_matrix_description_survives_an_overflowed_matrix():
    # found: numpy's SVD raised LinAlgError on a matrix holding nan (an overflowed
    # junction value) while the operating point was describing why it was singular
    import numpy as np
    import scipy.sparse as sparse
    from lintamp.engine.mna import compile_circuit
    from lintamp.engine.operating_point import describe_singular
    cc = compile_circuit(flat_circuit_from_text("* t\nv1 a 0 1\nr1 a 0 1k\n"))
    matrix = sparse.csr_matrix(np.full((cc.size, cc.size), np.nan))
    assert describe_singular(cc, matrix).startswith("singular matrix")


def test_impedance_command_detaching_a_controlling_source_is_a_clear_exit_2(tmp_path, capsys):
    # found: SmallSignalError escaped `lintamp impedance` as a traceback (exit 1)
    deck = tmp_path / "f.sp"
    deck.write_text("* t\nv1 a 0 1\nr1 a b 1k\nf1 b 0 v1 2\nr2 b 0 1k\n.end\n")
    assert main(["impedance", str(deck), "b", "--detach", "v1"]) == 2
    err = capsys.readouterr().err
    assert "controlling source 'v1'" in err and "Traceback" not in err


def test_message_bound_used_by_the_fuzz_target_is_generous():
    assert MAX_MESSAGE_CHARS >= 300
    r = random.Random(3)
    assert grammar.deck(r, 5).startswith("* fuzz deck")
