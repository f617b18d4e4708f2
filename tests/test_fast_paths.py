"""Fast paths of the reader and parser agree with the general code they shortcut.

Each fast path (plain decimal numbers, plain element cards, whole blocks of ASCII
lines) must give exactly what the general path gives, including where it refuses.
The tokens and cards below are chosen to sit on the edges of the fast paths.  Sources:
SPICE number syntax (integer or floating point, optional exponent, optional scale
factor, letters after it ignored) from the ngspice manual as summarised in
../shared/reference/spice-syntax.md section 3, "Numbers and units"; element lines from
its section 2 (ngspice manual ch. 3); what Python's float() accepts beyond that
('inf', 'nan', '1_0', blanks, other scripts' digits) from memory.
"""

from __future__ import annotations

import math
import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from lintamp.netlist import reader
from lintamp.netlist.units import _read_by_pattern, parse_number


def same_number(a: float | None, b: float | None) -> bool:
    """Equal values, None alike, and the sign of a zero alike."""
    if a is None or b is None:
        return a is b
    return a == b and math.copysign(1.0, a) == math.copysign(1.0, b)


# spice-syntax.md section 3 (ngspice numbers and scale factors) for the forms; the edge
# cases (what float() takes but a SPICE number field does not) from memory of float().
TRICKY_TOKENS = [
    "0", "1", "-0", "+0", "-0.0", "326.145", "1.", ".5", "-.5", "+.5", ".", "-", "+", "",
    "1e", "1e3", "1E3", "1e+3", "1e-3", "1e+", "1e-", "e3", "E3", ".e3", "1.e3", "1e3.", "1e3e",
    "1ee3", "1e3k", "1e+3k", "1E-3m", "1d3", "1D-3", "1.5.3", "1..2", "+-1", "-+1", "--1", "1-",
    "1+2", "2*3", "inf", "-inf", "+inf", "nan", "NaN", "infinity", "Infinity", "1_0", "1_000",
    "_1", " 1", "1 ", "\t1", "1\n", "1MEG", "1meg", "1Meg", "1mil", "1MIL", "1m", "1M", "10M",
    "1k", "1K", "4.7f", "4.7F", "1.350f", "2.2u", "2.2U", "3n", "3N", "5p", "5P", "1t", "1T",
    "1g", "1G", "1\u00b5", "1\u03bc", "1\u039c", "k", ".k", "1..2k", "-k", "+1k", "-2.5u",
    "10uF", "5kohm", "1x", "1a", "3k3", "0x10", "0X10", "0b1", "0o7", "1j", "1e400", "-1e999",
    "1e308", "1.8e308", "1e-400", "1e-330", "2.5e-3k", "1e000000000001", "1e0000000000001",
    "1e+00000000001", "1e+000000000001", "1e-00000000001", "1e-000000000001",
    "9" * 400, "9" * 308, "0." + "0" * 400 + "1", "1" + "0" * 400 + "e-400", "9" * 5000 + "=",
    "1e" + "9" * 5000, "\u0661\u0662", "\uff11", "\u0661.5", "1\u00b2", "\u00bd", "1,5",
]


@pytest.mark.parametrize("token", TRICKY_TOKENS)
def test_parse_number_fast_paths_agree_with_the_pattern(token):
    assert same_number(parse_number(token), _read_by_pattern(token))


def test_parse_number_fast_paths_keep_the_refusals():
    # spice-syntax.md section 3: a number is digits with an optional point, exponent and
    # scale factor; Python's float() would also take these (from memory): not SPICE numbers
    for token in ("inf", "nan", "infinity", " 1", "1 ", "1e400", "1e0000000000001", "e3", "."):
        assert parse_number(token) is None, token
    # and these are read as ngspice reads a number field (see tests/test_expr.py)
    assert parse_number("1_0") == 1.0 and parse_number("1e") == 1.0
    assert parse_number("1MEG") == 1e6 and parse_number("1mil") == pytest.approx(25.4e-6)
    assert parse_number("0x10") == 0.0 and parse_number("1.350f") == 1.350e-15


@settings(max_examples=500, deadline=None)
@given(st.text(alphabet="0123456789.eEdD+-_ kKmMgGfFuUnNpPtTaxil\u00b5\u0661", max_size=14))
def test_parse_number_fast_paths_agree_on_random_tokens(token):
    assert same_number(parse_number(token), _read_by_pattern(token))


# ------------------------------------------------------------------ physical lines

def lines_by_definition(data: bytes, limit: int) -> list[tuple[int, str | None, int]]:
    """What :func:`physical_lines` promises, computed on the whole stream at once: line
    ends as Python's universal newlines (CR LF, CR, LF), a UTF-8 byte-order mark
    dropped, each line UTF-8 when valid else latin-1, a line over ``limit`` bytes
    skipped (None), and no empty line after a final line end."""
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    pieces = re.split(rb"\r\n|\r|\n", data)
    if len(pieces) > 1 and pieces[-1] == b"":
        pieces.pop()
    return [(number, None if len(piece) > limit else reader.decode(piece), len(piece))
            for number, piece in enumerate(pieces, 1)]


PIECES_ASCII = [b"r1 a b 1k", b"+ w=1u", b"a", b" ", b"\n", b"\r", b"\r\n", b"* c"]
PIECES_ANY = PIECES_ASCII + [b"\xc3\xa9", b"\xc3", b"\xff", b"\xef\xbb\xbf", b"\xb5"]


@settings(max_examples=400, deadline=None)
@given(st.data())
def test_physical_lines_agree_with_their_definition(data):
    pieces = data.draw(st.sampled_from([PIECES_ASCII, PIECES_ANY]))
    stream = b"".join(data.draw(st.lists(st.sampled_from(pieces), max_size=40)))
    limit = data.draw(st.sampled_from([3, 8, 20, reader.MAX_LINE_BYTES]))
    chunk_bytes = data.draw(st.sampled_from([4, 7, 64, reader._READ_CHUNK_BYTES]))
    cuts = sorted(data.draw(st.sets(st.integers(3, max(3, len(stream) - 1)), max_size=6)))
    chunks = [stream[a:b] for a, b in zip([0] + cuts, cuts + [len(stream)])]
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(reader, "MAX_LINE_BYTES", limit)
        patch.setattr(reader, "_READ_CHUNK_BYTES", chunk_bytes)
        got = list(reader.physical_lines(chunks))
    assert got == lines_by_definition(stream, limit)


def expanded(items):
    """physical_lines items with each run of lines given back as its lines."""
    out = []
    for lineno, line, length in items:
        if length < 0:
            pieces = line.split("\n")
            assert pieces.pop() == "" and len(pieces) == -length >= 2
            out.extend(zip(range(lineno, lineno + len(pieces)), pieces, map(len, pieces)))
        else:
            out.append((lineno, line, length))
    return out


@settings(max_examples=400, deadline=None)
@given(st.data())
def test_physical_lines_with_runs_agree_with_their_definition(data):
    from lintamp.netlist.parser import PLAIN_RUNS
    pieces = [b"r1 a b 1k\n", b"c2 x 0 1p\r\n", b"r3 a b 1k\r\n", b"+ w=1u\n", b"\r",
              b"* c\n", b"\n", b"l4 a b 1u"]
    stream = b"".join(data.draw(st.lists(st.sampled_from(pieces), max_size=60)))
    chunk_bytes = data.draw(st.sampled_from([7, 64, reader._READ_CHUNK_BYTES]))
    chunks = [stream[i:i + chunk_bytes] for i in range(0, len(stream), chunk_bytes)]
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(reader, "_READ_CHUNK_BYTES", chunk_bytes)
        got = list(reader.physical_lines(chunks, PLAIN_RUNS))
    assert expanded(got) == lines_by_definition(stream, reader.MAX_LINE_BYTES)


def test_physical_lines_of_a_big_ascii_file_in_one_chunk():
    # bytes held in memory come as one chunk; lines cross the fast path's block ends
    text = "".join(f"r{i} n{i} n{i + 1} {i}.5\r\n" if i % 7 else f"c{i} a 0 1f\n"
                   for i in range(40_000))
    stream = text.encode() + b"\rlast"
    got = list(reader.physical_lines([stream]))
    assert got == lines_by_definition(stream, reader.MAX_LINE_BYTES)
    assert got[-1] == (40_002, "last", 4) and got[-2] == (40_001, "", 0)


# ------------------------------------------------------------------ plain element cards

# Cards on both sides of the plain-card fast path (ngspice manual ch. 3 element lines:
# R/C/L 'n+ n- value', M 'nd ng ns nb model params'; the odd ones from memory of decks).
CARDS = [
    "r1 a b 10.5", "R1 A B 10K", "Rload Out 0 1MEG", "c1 a 0 1.2f", "C2 a b 4.7e-15",
    "l1 a b 1u", "r2 a b", "r3 a", "r4 a b 1k 2k", "r5 a b rmod", "r6 a b 10 tc1=1e-3",
    "r7 a b r=5k", "r8 a b 1k m=2 w=1u", "r9 a b 1k m=", "r10 a b 1k =3", "r11 a b 1k a==b",
    "r12 a b 1k tc1 = 1", "r13=1 a b 1k", "c3 a b 1e400", "c4 a b inf", "c5 a b 1_0",
    "c6 a b .5", "c7 a b 1.", "c8 a b -0", "c9 a b 10uF", "c10 a b 1e", "r14 a b 1k3",
    "m1 d g s b nch w=1u l=0.15u", "M2 D G S B PCH", "m3 d g s b nch", "m4 d g s nch",
    "m5 d g s b nch off", "m6 d g s b 2n7000", "m7 d g s b nch 1u 0.15u", "m8 d g s b e f g h nch",
    "m9 d g s b nch w=1u l", "m10 d g s b {mod}", "m11 d g s b nch w = 1u", "mx", "m12 d g s",
    "M13 d g s b NCH W=1U L=0.15U AD=1P nf=2", "m14 d g s b 1k", "m15 d g s b thermal",
    "r15 a b 1k ; comment", "r16 a b 1k $ comment", "r17 a b {rval}", "r18 a b 'rval*2'",
    "c11 a b 1p ic=0", "r19 N1 n1 5", "l2 a b 1n k=1",
]


def parsed(text: str, plain: bool):
    from lintamp.netlist.parser import ParseContext, parse_text
    with pytest.MonkeyPatch.context() as patch:
        if not plain:
            patch.setattr(ParseContext, "plain_element", lambda self, card, text: None)
            patch.setattr(ParseContext, "runs", None)  # no runs of lines in bulk either
        netlist = parse_text(text, "deck.sp")
    return ([(e, dict(e.params)) for e in netlist.top.elements],
            [(d.rule, d.location, d.message) for d in netlist.diagnostics])


def assert_no_params_means_numeric(elements) -> None:
    # the promise lintamp.circuit.values.undefined_names relies on (see NO_PARAMS)
    from lintamp.netlist.statements import NO_PARAMS
    for element, _params in elements:
        if element.params is NO_PARAMS:
            assert element.source is None
            assert element.value is None or parse_number(element.value) is not None, element


def test_plain_cards_parse_as_the_general_parser_parses_them():
    deck = "title\n.model nch nmos\n.model 2n7000 nmos\n" + "\n".join(CARDS) + "\n.end\n"
    fast, general = parsed(deck, plain=True), parsed(deck, plain=False)
    assert fast == general
    assert len(fast[0]) > 40  # most of them are elements
    assert_no_params_means_numeric(fast[0])


@settings(max_examples=300, deadline=None)
@given(st.lists(st.sampled_from(["r1", "C2", "m3", "L4", "a", "B", "0", "n1", "1k", "2.5e-15",
                                 "4.7f", "10", "nch", "w=1u", "L=0.15U", "m=2", "=", "x=", "off",
                                 "1e", "inf"]), min_size=1, max_size=9))
def test_random_plain_cards_parse_as_the_general_parser_parses_them(words):
    deck = "title\n.model nch nmos\n" + " ".join(words) + "\n"
    fast = parsed(deck, plain=True)
    assert fast == parsed(deck, plain=False)
    assert_no_params_means_numeric(fast[0])


def test_elements_without_params_share_one_read_only_dict():
    import copy
    import pickle

    from lintamp.netlist.parser import parse_text
    from lintamp.netlist.statements import NO_PARAMS
    elements = parse_text("title\nr1 a b 1k\nc1 a 0 1p\nr2 a b 1k tc1=0\n").top.elements
    assert elements[0].params is elements[1].params is NO_PARAMS and NO_PARAMS == {}
    assert elements[2].params == {"tc1": "0"}
    with pytest.raises(TypeError):
        elements[0].params["r"] = "2k"
    assert pickle.loads(pickle.dumps(elements[0])).params is NO_PARAMS
    assert copy.deepcopy(elements[0]).params is NO_PARAMS
    assert elements[0].location == elements[0].location  # built on demand, equal each time
    assert (elements[1].location.line, elements[1].location.column) == (3, 1)


# ------------------------------------------------------------------ runs of plain cards

# Runs of R/C/L cards handed over in bulk (reader.split_runs, ParseContext.take_run) must
# parse as the same cards one at a time.  The layouts around them are the reader's edges
# (ngspice manual ch. 1 as summarised in spice-syntax.md sections 1-2: title line, '+'
# continuations, '*' comments, ';'/'$' inline comments, .control blocks, .if branches);
# the rest from memory of decks.
RUN_LINES = [
    "r1 a b 10.5", "R2 A B 10K", "c3 a 0 1.2f", "C4 Out 0 4.7e-15", "l5 a b 1u", "r6 a b 1MEG",
    "r7\ta\tb\t3.3", "r8 a b 2 ", "c9 a b .5", "c10 a b 1.", "c11 a b -0", "c12 a b 10uF",
    "r13 n+ n- 5", "r14 a*b c 5", "r15 a b 1e99", "r16 a b 1e+05meg",
    # plain MOS cards ride in runs too; the ones after are read as any card of one line
    "m1 d g s b nch w=1u l=0.15u", "M2 D G S B NCH W=1U", "m3 d g s b nch",
    "m4 d g s b 2n7000 w=1u", "m5 d g s b nch m=2 w=1u l=1u nf=2",
]
AROUND = [
    "+ 2k", "*comment", "* lintamp: waive no-dc-path -- ok", "", "  ", "r17 a b 1k ; c",
    "r18 a b 1k $ c", "m1 d g s b nch w=1u l=0.15u", ".control", ".endc", "print v(a)",
    ".if (1 == 0)", ".else", ".endif", ".param p=1", "   r19 a b 1", "r20 a b {p}",
    "c21 a b 1e400", "r22 a b 1k3", "r23 a b 1d3", "m6 d g s b nch off", "m7 d g s b nch w=1u l",
    "m8 d g s b nch w={w}", "m9 d g s nch", ".model 2n7000 nmos", ".subckt cell a b", ".ends", "x1 a b cell",
    ".end", "c24 A B 1e123", "r25 a b 1" + "0" * 16,
]


def bulk_spy(patch):
    from lintamp.netlist.parser import ParseContext
    taken = []
    original = ParseContext.take_run

    def spy(self, text, path, first_line, count):
        taken.append(count)
        return original(self, text, path, first_line, count)

    patch.setattr(ParseContext, "take_run", spy)
    return taken


def parsed_deck(text: str, bulk: bool):
    from lintamp.netlist.parser import ParseContext, parse_text
    with pytest.MonkeyPatch.context() as patch:
        taken = bulk_spy(patch)
        if not bulk:
            patch.setattr(ParseContext, "runs", None)
        netlist = parse_text(text, "deck.sp")
    return ([(c.name, [(e, e.location, dict(e.params)) for e in c.elements])
             for c in netlist.all_cells()],
            [(d.rule, d.location, d.message) for d in netlist.diagnostics],
            netlist.title, sorted((p.verb, p.location, p.element, p.element_nets)
                                  for c in netlist.all_cells() for p in c.pragmas)), taken


def test_runs_of_plain_cards_parse_as_the_cards_one_by_one():
    body = []
    for k, around in enumerate(AROUND):
        body.extend(RUN_LINES[k % 5:] + [around])
    deck = "\n".join(RUN_LINES[:4] + body + RUN_LINES) + "\n"  # the title line matches too
    fast, taken = parsed_deck(deck, bulk=True)
    slow, none = parsed_deck(deck, bulk=False)
    assert fast == slow
    assert none == [] and len(taken) > len(AROUND) // 2 and sum(taken) > 200  # runs were taken
    assert fast[2] == "r1 a b 10.5"
    assert any(element for _, _, element, _ in fast[3])  # a waiver above a run's card finds it
    # a run followed by '+' keeps its last line a card of its own, continued
    continued = [e for _, elements in fast[0] for e, _, _ in elements if e.value == "10.5"]
    assert any(e.params == {} and e.model is None for e in continued)


def test_a_run_inside_a_branch_not_taken_is_skipped():
    deck = "t\n.if (0)\n" + "\n".join(RUN_LINES * 3) + "\n.else\nr1 a 0 1\n.endif\n"
    (cells, diags, _, _), taken = parsed_deck(deck, bulk=True)
    assert taken and [e.name for e, _, _ in cells[0][1]] == ["r1"]
    assert (cells, diags) == parsed_deck(deck, bulk=False)[0][:2]


@settings(max_examples=300, deadline=None)
@given(st.lists(st.sampled_from(RUN_LINES * 3 + AROUND), max_size=40),
       st.sampled_from(["\n", "\r\n"]))
def test_random_decks_with_runs_parse_as_line_by_line(lines, end):
    deck = end.join(["title"] + lines) + end
    assert parsed_deck(deck, bulk=True)[0] == parsed_deck(deck, bulk=False)[0]


@settings(max_examples=500, deadline=None)
@given(st.from_regex(r"\A[+-]?(?:\d{1,15}(?:\.\d{0,15})?|\.\d{1,15})(?:[eE][+-]?\d{1,2})?"
                     r"[A-Za-z]*\Z"))
def test_every_number_a_run_takes_is_a_number(token):
    # the value field of the run pattern (parser._PLAIN_PASSIVE_LINE), as written there
    from lintamp.netlist.parser import PLAIN_RUNS
    assert parse_number(token) is not None
    assert PLAIN_RUNS.match(f"r1 a b {token}\nr2 a b 1\nr3 a b 1\n")


def test_physical_lines_with_runs_are_the_same_lines():
    from lintamp.netlist.parser import PLAIN_RUNS
    text = "".join(f"r{i} n{i} n{i + 1} {i}.5\n" if i % 9 else f"m{i} d g s b nch\n+ w=1u\n"
                   for i in range(30_000))
    stream = text.encode() + b"last"
    got = expanded(reader.physical_lines([stream], PLAIN_RUNS))
    assert got == lines_by_definition(stream, reader.MAX_LINE_BYTES)
    assert sum(-n for _, _, n in reader.physical_lines([stream], PLAIN_RUNS) if n < 0) > 20_000
    # Windows line ends: the same runs
    crlf = text.replace("\n", "\r\n").encode() + b"last"
    assert expanded(reader.physical_lines([crlf], PLAIN_RUNS)) == got
    assert sum(-n for _, _, n in reader.physical_lines([crlf], PLAIN_RUNS) if n < 0) > 20_000


# The corpus-wide comparison of parsing with and without runs is in test_corpus.py, in the
# one pass over the corpus that also checks every file.
CORPUS = __import__("pathlib").Path(__file__).resolve().parent.parent.parent / "shared" / "corpus"


def test_only_the_control_letters_have_controls():
    # the promise dc_paths relies on to look for current sensing by device class only:
    # the parser gives controls to K, F, H and W cards alone (E and G may have them; element syntax
    # from spice-syntax.md section 2, ngspice manual ch. 3-5)
    from lintamp.netlist.parser import parse_text
    from lintamp.netlist.statements import CONTROL_LETTERS
    deck = ("t\nv1 a 0 1\nvs b 0 0\nf1 c 0 vs 2\nh1 d 0 vs 1k\nw1 e 0 vs sw\ne1 f 0 poly(1) a 0 0 1\n"
            "g1 g 0 poly(2) a 0 b 0 0 1 1\nl1 a b 1u\nl2 c d 1u\nk1 l1 l2 0.5\nb1 h 0 v=v(a)\n"
            "f2 i 0 poly(2) vs v1 0 1 1\nr1 a b 1k\nc1 a 0 1p\nm1 d g s b nch\nx1 a b sub\n.end\n")
    paths = [None] + sorted(CORPUS.rglob("*.sp"))[::40] if CORPUS.is_dir() else [None]
    with_controls = set()
    for path in paths:
        text = deck if path is None else path.read_text(encoding="utf-8", errors="replace")
        for cell in parse_text(text, "deck.sp").all_cells():
            for element in cell.elements:
                if element.controls:
                    with_controls.add(element.letter)
                    assert element.letter in CONTROL_LETTERS, element
    assert with_controls >= set("kfhw")  # (E/G POLY forms name nodes, in their nodes)


def test_elements_beyond_runs_are_the_others():
    from lintamp.netlist.parser import parse_text
    deck = ("t\n" + "".join(f"r{i} a{i} b 1\n" for i in range(8)) + "m1 d g s b nch\n"
            + "".join(f"c{i} a{i} 0 1p\n" for i in range(5)) + "x1 a b sub\n.end\n")
    cell = parse_text(deck, "deck.sp").top
    assert [run.count for run in cell.elements.runs()] == [8, 5]
    assert [e.name for e in cell.elements_beyond_runs()] == ["m1", "x1"]
    # the cell's elements read and change as a list does (a run cut where needed)
    as_list = list(cell.elements)
    for elements in (cell.elements, as_list):
        elements.insert(3, elements.pop())
        elements.insert(0, elements.pop(10))
        elements.insert(len(elements), elements.pop(1))
        elements.insert(-2, elements.pop(-4))
    assert cell.elements == as_list and len(cell.elements) == len(as_list) == 15
    assert [cell.elements[i] for i in range(-15, 15)] == as_list + as_list
    assert cell.elements[2:9] == as_list[2:9] and cell.elements[::3] == as_list[::3]
    # an element taken out of a run and put back is an element of its own
    beyond = [e.name for e in cell.elements_beyond_runs()]
    assert beyond == [e.name for e in as_list if e.name in beyond] and {"x1", "m1"} <= set(beyond)
    assert sum(run.count for run in cell.elements.runs()) + len(beyond) == 15


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["insert", "pop"]), st.integers(-40, 40)), max_size=12))
def test_cell_elements_change_as_a_list_does(operations):
    # A cell's elements hold runs of plain cards as text (PlainRun); inserting into or
    # popping from the middle of a run cuts it. Checked against a plain list doing the
    # same (the model: Python's list semantics, from memory).
    from lintamp.netlist.parser import parse_text
    deck = ("t\n" + "".join(f"R{i} a{i % 3} B 1.{i}k\n" for i in range(9)) + "m1 d g s b nch\n"
            + "".join(f"c{i} a{i} 0 {i}p\n" for i in range(6)) + "x1 a b sub\n.end\n")
    cell = parse_text(deck, "deck.sp").top
    model = list(cell.elements)
    spare = model[-1]
    for operation, index in operations:
        for elements in (cell.elements, model):
            if operation == "insert":
                elements.insert(index, spare)
            elif elements:
                if -len(elements) <= index < len(elements):
                    elements.pop(index)
        assert len(cell.elements) == len(model)
    assert cell.elements == model
    assert [cell.elements[i] for i in range(len(model))] == model
    runs = cell.elements.runs()
    assert sum(run.count for run in runs) + len(cell.elements_beyond_runs()) == len(model)
    assert all(run.count > 0 for run in runs)
