"""Parser: logical cards -> typed statements (elements, cells, models, params).

The first letter of an element card decides its syntax (SPICE3/ngspice element
table).  Values are kept as text; the circuit layer evaluates them.  Anything the
parser cannot read becomes a ``parse-error`` diagnostic with the place and what
was expected, and the rest of the file is still read.
"""

from __future__ import annotations

import re
from array import array
from bisect import bisect_right
from dataclasses import dataclass
from operator import itemgetter
from pathlib import Path

from lintamp.gcpause import paused_gc
from lintamp.location import Location
from lintamp.netlist.expr import parse_number
from lintamp.netlist.reader import (MAX_DIAGNOSTICS_PER_RULE, Card, CommentLine, ReadOptions,
                                    ReadResult, excerpt, run_pattern, stored_link,
                                    open_regular, probed_nets, read, read_text,
                                    sandbox_roots)
from lintamp.netlist.statements import (NO_PARAMS, Analysis, Cell, Diagnostic, Element, FuncDef,
                                        Model, Netlist, Origin, ParamDef, PlainRun, Pragma, Source,
                                        new_plain_element)

WAVEFORMS = {"pulse", "sin", "sine", "pwl", "exp", "sffm", "am", "trrandom", "trnoise",
             "pat", "pwl_file"}
# source keywords that take a fixed number of values and say nothing of topology
SOURCE_KEYWORDS = {"portnum": 1, "z0": 1, "distof1": 2, "distof2": 2, "pwr": 1, "freq": 1}
SOURCE_WORDS = WAVEFORMS | {"dc", "ac"} | set(SOURCE_KEYWORDS)
_LEADING_WORD = re.compile(r"[A-Za-z]+")
# '.ic v(out)=0 v(x)={vx}': a node, then its value up to the next blank-separated field
_INITIAL_CONDITION = re.compile(r"\bv\(\s*([^\s(),=]+)\s*\)\s*=\s*(\S+)", re.IGNORECASE)
ANALYSES = {".op", ".dc", ".ac", ".tran", ".noise", ".tf", ".sens", ".pz", ".disto", ".pss",
            ".sp", ".hb", ".four", ".mpde", ".step", ".fft", ".lin"}
IGNORED_DOT = {".nodeset", ".save", ".print", ".plot", ".probe", ".meas", ".measure",
               ".width", ".title", ".csparam", ".preprocess", ".protect", ".unprotect", ".alter",
               ".options", ".option", ".opt", ".temp",
               ".global", ".param", ".func", ".model", ".subckt", ".ends", ".end", ".lib",
               ".endl", ".include", ".inc", ".incl", ".control", ".endc", ".data", ".enddata",
               ".global_param", ".sensitivity", ".noise", ".machine", ".endmachine",
               ".connect", ".backanno", ".macro", ".eom", ".hdl", ".verilog", ".distribution",
               ".agauss", ".variation", ".mc", ".use", ".resultname", ".objective", ".result",
               ".initcond", ".savebias", ".loadbias", ".checkpoint", ".scale", ".portdef",
               ".coupling", ".dcvolt", ".csdf", ".lprint"}

# Model types that make an element letter into a known device.
MOS_TYPES = {"nmos": "nmos", "pmos": "pmos", "nmf": "nmos", "pmf": "pmos", "vdmos": "vdmos"}
BJT_TYPES = {"npn": "npn", "pnp": "pnp", "lpnp": "pnp"}

# words after a device's model that are switches, not names (initial-condition
# 'off', self-heating 'thermal', CIDER 'save')
DEVICE_FLAGS = frozenset({"off", "on", "thermal", "save", "print"})

_TOKEN = re.compile(
    r"""\{(?:[^{}]|\{(?:[^{}]|\{[^{}]*\})*\})*\}   # {expr}, three levels of braces
      | '[^']*'                                    # 'expr'
      | "[^"]*"                                    # "string"
      | =                                          # assignment
      | [^\s,()={}'"]+(?:\{[^{}]*\}[^\s,()={}'"]*)*  # word (may hold {..} parts)
      | [{}'"]                                     # unbalanced delimiter
    """,
    re.VERBOSE,
)
_FAST = re.compile(r"[{}'\"(),=]")
# a card :meth:`ParseContext.plain_element` may read starts with one of these letters
# and holds none of the delimiters the tokenizer treats specially
_PLAIN_LETTERS = frozenset("rRcClLmM")
_NOT_PLAIN = re.compile(r"[{}'\"(),]")
# One line of the commonest card of an extracted netlist, ``R12 a b 326.1`` /
# ``C7 x 0 4.7f``: an R, C or L in column 1, two nodes and a number, blank-separated,
# holding nothing the reader or the tokenizer treats specially (no comment or
# continuation mark, no delimiter, no '=').  Every line it matches is a card that
# plain_element() reads as such an element, so the reader may hand runs of them over at
# once (ParseContext.take_run).  The number is a subset of what parse_number() reads:
# a mantissa of at most 15 digits each side of the point, an exponent of at most 2
# digits and letters only after it, so it never overflows and is always a number.
# (Possessive quantifiers: no field can give characters back to the next one, so they
# read the same lines as plain ones, without the backtracking that made a line cost
# three times as much.)
_FIELD = r"[^\s;$/\\{}'\"(),=]++"
_PLAIN_PASSIVE_LINE = (r"[rRcClL][^\s;$/\\{}'\"(),=]*+[ \t]++" + _FIELD + r"[ \t]++" + _FIELD
                       + r"[ \t]++[+-]?+(?:\d{1,15}+(?:\.\d{0,15}+)?+|\.\d{1,15}+)"
                       r"(?:[eE][+-]?+\d{1,2}+)?+[A-Za-z]*+[ \t]*+")
# A plain MOS card, ``M1 d g s b nch w=1u l=0.15u``: four nodes, a model and
# blank-free key=value pairs, nothing the reader treats specially.  The reader hands
# such lines over inside runs too, so that one MOS line in twenty does not cut the
# R/C runs short; take_run() reads each as the card it is.
_PLAIN_MOS_LINE = (r"[mM][^\s;$/\\{}'\"(),=]*+(?:[ \t]++" + _FIELD + r"){5}+"
                   r"(?:[ \t]++" + _FIELD + r"=" + _FIELD + r")*+[ \t]*+")
PLAIN_RUNS = run_pattern(r"(?:" + _PLAIN_PASSIVE_LINE + "|" + _PLAIN_MOS_LINE + ")")
# a literal of the run pattern (sign, digits and point, exponent, letters) with no
# nonzero digit: a value that may be zero
_ZERO_LITERAL = re.compile(r"[+-]?[0.]+(?:e[+-]?\d+)?[a-z]*")
# in a run: a stretch of R/C/L lines, or one other (MOS) line
_PASSIVES_OR_LINE = re.compile(r"(?:[rRcClL][^\n]*+\n)++|[^\n]*+\n")


@dataclass(slots=True)
class Token:
    text: str
    offset: int


def tokenize(text: str) -> list[Token]:
    """Split a card into tokens; blanks, commas and parentheses separate fields."""
    if not _FAST.search(text):
        return [Token(m.group(), m.start()) for m in re.finditer(r"\S+", text)]
    return [Token(m.group(), m.start()) for m in _TOKEN.finditer(text)]


def split_fields(tokens: list[Token]) -> tuple[list[Token], list[tuple[Token, Token]], list[Token]]:
    """Separate positional tokens from ``key=value`` pairs.

    Returns (positional, params, stray) where stray are '=' signs with nothing on
    one side.  A positional token after the first ``key=value`` is still returned
    in ``positional`` (callers decide whether that is allowed).
    """
    positional: list[Token] = []
    params: list[tuple[Token, Token]] = []
    stray: list[Token] = []
    i = 0
    n = len(tokens)
    while i < n:
        tok = tokens[i]
        if i + 2 <= n - 1 and tokens[i + 1].text == "=" and tok.text != "=":
            params.append((tok, tokens[i + 2]))
            i += 3
            continue
        if tok.text == "=":
            stray.append(tok)
            i += 1
            continue
        positional.append(tok)
        i += 1
    return positional, params, stray


_ASSIGN = re.compile(r"([A-Za-z_][\w.]*)\s*=(?!=)\s*")


def assignments(text: str, start: int = 0) -> tuple[list[tuple[str, int, str]], list[tuple[str, int]]]:
    """``NAME=VALUE`` pairs of a card, where a value may hold blanks, commas and
    parentheses (``x = agauss(1.0, 0.01, 1)``).

    Returns (pairs as (name, offset of name, value text), stray text with offset).
    A new pair starts at a ``NAME=`` outside parentheses, braces and quotes.
    """
    starts = []
    depth = 0
    quote = ""
    i = start
    n = len(text)
    while i < n:
        ch = text[i]
        if quote:
            if ch == quote:
                quote = ""
        elif ch in "'\"":
            quote = ch
        elif ch in "({":
            depth += 1
        elif ch in ")}":
            depth = max(0, depth - 1)
        elif depth == 0 and (ch.isalpha() or ch == "_") and (i == start or not (
                text[i - 1].isalnum() or text[i - 1] in "_.")):
            m = _ASSIGN.match(text, i)
            if m and (not starts or i > starts[-1][2]):
                starts.append((m.group(1), i, m.end()))
                i = m.end()
                continue
        i += 1
    pairs = []
    bad = []
    lead = text[start:starts[0][1] if starts else n].strip()
    if lead:
        bad.append((lead, start + text[start:].find(lead[0])))
    for k, (name, at, value_at) in enumerate(starts):
        end = starts[k + 1][1] if k + 1 < len(starts) else n
        value = text[value_at:end].strip().rstrip(",").strip()
        if not value:
            bad.append((name + "=", at))
            continue
        pairs.append((name, at, value))
    return pairs, bad


def _regroup_assignments(text: str, tokens: list[Token]) -> list[Token]:
    """Re-read the ``NAME=VALUE`` part of an element card whose values hold
    parentheses or blanks (``R = (time<1m ? 1k : 2k)``) as whole values."""
    first_name = next((t for t in tokens[1:] if t.text != "="), None)
    pairs, _ = assignments(text, first_name.offset if first_name else 0)
    if not pairs:
        return tokens
    first = pairs[0][1]
    out = [t for t in tokens if t.offset < first]
    for name, at, value in pairs:
        out += [Token(name, at), Token("=", at + len(name)), Token(value, text.find(value, at))]
    return out


def is_number(text: str) -> bool:
    return parse_number(text) is not None


def is_value_token(text: str) -> bool:
    """A number or an expression in braces or quotes."""
    return text[:1] in "{'\"" or is_number(text)


_LONE_EQUALS = re.compile(r"(?<![=!<>])=(?!=)")


class _NetNumbers(dict):
    """Net names to 0, 1, 2 ... in order of first lookup, listing each in ``names``, so
    that every use of a name shares one string object: ``names[numbers[name]]``."""

    __slots__ = ("names",)

    def __init__(self, names: list[str]):
        super().__init__()
        self.names = names

    def __missing__(self, name: str) -> int:
        number = self[name] = len(self.names)
        self.names.append(name)
        return number


class ParseContext:
    """Builds the :class:`Netlist` from cards, one card at a time."""

    def __init__(self, path: str, title: str):
        self.top = Cell(name="", ports=(), location=Location(path, 1, 1))
        self.netlist = Netlist(path=path, title=title, top=self.top)
        self.stack: list[Cell] = [self.top]
        self.element_cards: list = []  # every element, for the pragmas to find (a run as itself)
        self.title_card = False
        # every net name numbered in order of first use, each held as one string object
        # (net_numbers.names[number]); the runs of plain cards keep the numbers
        self._net_numbers = _NetNumbers(self.netlist.net_names)
        self.netlist.net_numbers = self._net_numbers
        # the shared place record of plain cards, one per (file, column); the last one used
        self._origins: dict[tuple[str, int], Origin] = {}
        self._origin = Origin("", 0)
        # device cards whose model could not be told from a node: parsed again at
        # the end, once every .model name is known
        self.deferred: list = []
        # open .if blocks, innermost last: [reading this branch, a branch was taken,
        # the .if card]; ``skipping`` while any of them is not read
        self.conditions: list[list] = []
        self.skipping = False
        self._error_counts: dict[tuple[str, str, str], int] = {}

    # -- .if / .elseif / .else / .endif ------------------------------------------
    def reading(self) -> bool:
        """Whether the cards now arriving are read (not inside a .if branch not taken)."""
        return not self.skipping

    def conditional_card(self, card: Card) -> None:
        """While skipping: follow a .if-family card, pass over every other one."""
        if card.text.lstrip()[:3].lower() not in (".if", ".el", ".en"):
            return
        tokens = tokenize(card.text)
        word = tokens[0].text.lower() if tokens else ""
        if word in (".if", ".elseif", ".else", ".endif"):
            self.conditional(card, word)

    def conditional(self, card: Card, word: str) -> None:
        """One branch of the deck is read, as a simulator reads it (ngspice-39 manual,
        section 2.12): the first whose condition holds, with the .param values
        defined so far.  A condition that cannot be evaluated here (a name only an
        instance gives) takes its branch if none before it was taken, with a note,
        so that alternative definitions of one element never both count."""
        # each level keeps whether the levels around it were read when it opened (they
        # cannot change while it is open): O(1) per card, not O(depth)
        outer_reading = not self.skipping
        if word == ".if":
            holds = self._condition(card, word) if outer_reading else False
            self.conditions.append([bool(holds), bool(holds) or not outer_reading, card, outer_reading])
        elif not self.conditions:
            self.error(card, 0, f"{word} without a .if before it", expected=".if (CONDITION)")
            return
        else:
            level = self.conditions[-1]
            if word == ".endif":
                self.conditions.pop()
            elif level[1]:  # a branch was taken (or the whole block is not read)
                level[0] = False
            elif word == ".elseif":
                level[0] = bool(self._condition(card, word))
                level[1] = level[0]
            else:  # .else
                level[0] = level[1] = True
        self.skipping = bool(self.conditions) and not (self.conditions[-1][3] and self.conditions[-1][0])

    def _condition(self, card: Card, word: str) -> bool:
        from lintamp.netlist.expr import ExprError, evaluate_params, evaluate_value

        text = card.text.lstrip()[len(word):].strip()
        # ngspice also takes a lone '=' as a comparison here: .if (sel = 2)
        text = _LONE_EQUALS.sub("==", text)
        cells = []
        c = self.cell
        while c is not None:
            cells.append(c)
            c = c.parent
        values: dict[str, float] = {}
        for c in reversed(cells):  # the top level first, inner scopes shadow it
            # a .subckt header default is per instance: it, and what depends on it, is
            # not known here
            outer = {k: v for k, v in values.items() if k not in c.defaults}
            found, _ = evaluate_params([(p.name, p.text) for p in c.params if p.name not in c.defaults],
                                       outer)
            values = {**outer, **found}
        try:
            return evaluate_value("{" + text + "}", values) != 0.0
        except (ExprError, ValueError, ArithmeticError):
            self.netlist.diagnostics.append(Diagnostic(
                "unsupported-syntax", card.location,
                f"{word} {excerpt(text)}: the condition cannot be evaluated from the .param "
                "values known here; lintamp reads this branch and skips the later ones",
                subject=word, severity="info"))
            return True

    # -- diagnostics ---------------------------------------------------------
    def error(self, card: Card, offset: int, message: str, expected: str = "", subject: str = "",
              rule: str = "parse-error", severity: str = "error") -> None:
        # past MAX_DIAGNOSTICS_PER_RULE of one rule in one file: counted, said once at the end
        key = (card.path, rule, severity)
        count = self._error_counts.get(key, 0) + 1
        self._error_counts[key] = count
        if count > MAX_DIAGNOSTICS_PER_RULE:
            return
        self.netlist.diagnostics.append(Diagnostic(
            rule, card.location_at(offset), message, subject=subject, severity=severity,
            expected=expected))

    @property
    def cell(self) -> Cell:
        return self.stack[-1]

    # -- dispatch --------------------------------------------------------------
    def card(self, card: Card) -> None:
        text = card.text
        if self.skipping:  # inside a .if branch not taken: only the .if family counts
            self.conditional_card(card)
            return
        if text[:1] in _PLAIN_LETTERS and _NOT_PLAIN.search(text) is None:
            element = self.plain_element(card, text)
            if element is not None:
                self.stack[-1].elements.append(element)
                self.element_cards.append(element)
                return
        stripped = text.lstrip()
        if not stripped:
            return
        tokens = tokenize(text)
        if not tokens:
            return
        head = tokens[0].text
        if "=" in text and "(" in text and head[0] != ".":
            tokens = _regroup_assignments(text, tokens)
        if head[0] == ".":
            self.dot_card(card, tokens, head.lower())
            return
        letter = head[0].lower()
        parse = ELEMENT_PARSERS.get(letter)
        if parse is None or not head[0].isalpha():
            self.error(card, tokens[0].offset,
                       f"'{excerpt(head)}' does not start with an element letter or a dot command",
                       expected="an element (R C L K V I E F G H B D Q J M X S W T ...) or a .card")
            return
        element = parse(self, card, tokens)
        if element is not None:
            self.cell.elements.append(element)
            self.element_cards.append(element)

    def plain_element(self, card: Card, text: str) -> Element | None:
        """The element of a plain R/C/L or MOS card, or None to take the general path.

        Plain: ``R1 a b 10.5``, ``C1 a b 1.2f``, ``M1 d g s b nch w=1u l=0.15u`` -- no
        braces, quotes, parentheses or commas (the caller checks), ``key=value``
        written without blanks and after every positional field.  The result is what the letter's parser
        would make of the card; anything else (a model on an R, a number for a MOS
        model, a stray field) returns None and the general parser decides.
        """
        fields = text.split()
        n_pos = len(fields)
        name = fields[0]  # the caller saw a letter first
        if "=" in text:
            if n_pos < 2 or "=" in name:
                return None
            params: dict[str, str] = {}
            for k in range(1, n_pos):
                if "=" in fields[k]:
                    for item in fields[k:]:
                        key, _, value = item.partition("=")
                        if not key or not value or "=" in value:
                            return None
                        params[key.lower()] = value
                    n_pos = k
                    break
        else:
            params = NO_PARAMS
        letter = name[0].lower()
        number = self._net_numbers.__getitem__  # one string object per distinct net name
        name_of = self._net_numbers.names.__getitem__
        if letter == "m":
            if not 5 <= n_pos <= 9:
                return None
            model = fields[n_pos - 1].lower()
            if model in DEVICE_FLAGS or is_value_token(model):
                return None
            raw = tuple(fields[1:n_pos - 1])
            nodes = tuple(map(name_of, map(number, map(str.lower, raw))))
            if nodes == raw:
                raw = nodes
            value = None
        else:  # r, c, l: two nodes and a number
            if n_pos != 4 or parse_number(fields[3]) is None:
                return None
            value = fields[3]
            a = fields[1]
            b = fields[2]
            low_a = a.lower()
            low_b = b.lower()
            nodes = (name_of(number(low_a)), name_of(number(low_b)))
            raw = nodes if a == low_a and b == low_b else (a, b)
            model = None
        _, line, col = card.segments[0]
        origin = self._origin
        if col != origin.column or card.path != origin.path:
            origin = self._origin = self._origins.setdefault((card.path, col), Origin(card.path, col))
        return new_plain_element(name, letter, nodes, line, model, value, params, raw, origin)

    runs = PLAIN_RUNS  # the lines take_run() is given in bulk (see lintamp.netlist.reader.BulkSink)

    def take_run(self, text: str, path: str, first_line: int, count: int) -> None:
        """``count`` lines that :data:`PLAIN_RUNS` matched, each one card: the elements
        :meth:`plain_element` makes of them, the R/C/L cards a stretch at a time (one
        split and one lower-casing of the stretch, no Card per line), the others
        (plain MOS cards) one by one, as cards of one line."""
        if self.skipping or text[:1] in "mM" or "\nm" in text or "\nM" in text:
            line = first_line
            for match in _PASSIVES_OR_LINE.finditer(text):
                piece = match.group()
                if self.skipping or piece[:1] in "mM":
                    for one in piece.split("\n")[:-1]:
                        self.card(Card(one, path, [(0, line, 1)], "", line))
                        line += 1
                else:
                    lines = piece.count("\n")
                    self._take_passives(piece, path, line, lines)
                    line += lines
            return
        self._take_passives(text, path, first_line, count)

    def _take_passives(self, text: str, path: str, first_line: int, count: int) -> None:
        """take_run() for ``count`` R/C/L lines: the whole stretch kept as one
        :class:`PlainRun` (its text and the numbers of its nets)."""
        lowered = text.lower()
        low = lowered.split()
        number = self._net_numbers.__getitem__
        a = array("i", map(number, low[1::4]))
        b = array("i", map(number, low[2::4]))
        origin = self._origins.get((path, 1))
        if origin is None:
            origin = self._origins[(path, 1)] = Origin(path, 1)
        self._origin = origin
        names = low[0::4]
        letters = "".join([name[0] for name in names])
        values = low[3::4]
        maybe_zero = tuple(i for i in [i for i, value in enumerate(values) if value[0] in "0.+-"]
                           if _ZERO_LITERAL.fullmatch(values[i]))
        run = PlainRun(text, first_line, count, origin, a, b, letters, self._net_numbers.names,
                       maybe_zero, array("q", map(hash, names)))
        cell = self.stack[-1]
        self.element_cards.append(run)
        cell.elements.add_run(run)

    # -- dot cards -------------------------------------------------------------
    def dot_card(self, card: Card, tokens: list[Token], word: str) -> None:
        nl = self.netlist
        if word in (".subckt", ".subcircuit", ".macro"):
            self.subckt(card, tokens)
        elif word in (".ends", ".eom"):
            self.ends(card, tokens)
        elif word == ".model":
            self.model(card, tokens)
        elif word in (".param", ".global_param", ".params"):
            self.params(card, tokens)
        elif word == ".func":
            self.func(card, tokens)
        elif word == ".global":
            nl.globals.update(t.text.lower() for t in tokens[1:])
        elif word in (".option", ".options", ".opt"):
            _, params, _ = split_fields(tokens[1:])
            for k, v in params:
                nl.options[k.text.lower()] = v.text
        elif word == ".temp":
            if len(tokens) > 1:
                nl.temperature_c = tokens[1].text
        elif word in (".print", ".plot", ".save", ".probe", ".meas", ".measure", ".four"):
            nl.observed.update(probed_nets(card.text))
        elif word in ANALYSES:
            nl.analyses.append(Analysis(word[1:], tuple(t.text for t in tokens[1:]), card.location))
        elif word == ".title":
            nl.title = card.text.strip()[6:].strip()
            self.title_card = True
        elif word == ".end":
            pass
        elif word == ".ic":
            if len(self.stack) == 1:  # a .ic inside a .subckt is not read by every simulator
                for net, value in _INITIAL_CONDITION.findall(card.text):
                    nl.initial_conditions[net.lower()] = value
        elif word in (".if", ".elseif", ".else", ".endif"):
            self.conditional(card, word)
        elif word in IGNORED_DOT:
            pass
        else:
            # simulators ignore unknown dot cards with a warning; so do we, quietly
            pass

    def subckt(self, card: Card, tokens: list[Token]) -> None:
        if len(tokens) < 2:
            self.error(card, tokens[0].offset, ".subckt without a name", expected=".subckt NAME PORT ...")
            return
        name_tok = tokens[1]
        rest = tokens[2:]
        optional: list[tuple[Token, Token]] = []
        words = [t.text.lower() for t in rest]
        if "optional:" in words:
            # PSPICE 'OPTIONAL: DPWR=$G_DPWR DGND=$G_DGND': ports an instance may leave
            # out, each with a default net (up to 'PARAMS:'); not parameters
            start = words.index("optional:")
            stop = next((k for k in range(start + 1, len(rest)) if words[k] in ("params:", "param:")),
                        len(rest))
            extra, optional, _ = split_fields(rest[start + 1:stop])
            rest = rest[:start] + extra + rest[stop:]
        rest = [t for t in rest if t.text.lower() not in ("params:", "param:")]
        positional, params, _ = split_fields(rest)
        positional += [k for k, _ in optional]
        # A port listed twice: ngspice-39 binds the body's net to the first listing; the
        # later one is a pin that connects to nothing inside.  It gets a name no card can
        # spell (a blank in it), so the body never reaches it.
        ports: list[str] = []
        repeated: dict[str, str] = {}
        for t in positional:
            key = t.text.lower()
            if key in ports or key in repeated:
                placeholder = f"{key} (listed again as pin {len(ports) + 1})"
                repeated[placeholder] = key
                key = placeholder
            ports.append(key)
        cell = Cell(name=name_tok.text.lower(), ports=tuple(ports), location=card.location,
                    display_name=name_tok.text, parent=self.cell,
                    optional_ports={k.text.lower(): v.text.lower() for k, v in optional},
                    repeated_ports=repeated)
        for k, v in params:
            cell.defaults[k.text.lower()] = v.text
            cell.params.append(ParamDef(k.text.lower(), v.text, card.location_at(k.offset)))
        parent = self.cell
        if cell.name in parent.cells:
            self.error(card, name_tok.offset, f"subcircuit '{excerpt(name_tok.text)}' defined twice "
                       f"in one scope; the later definition is used", rule="duplicate-name",
                       severity="warning", subject=cell.name)
        parent.cells[cell.name] = cell
        self.stack.append(cell)

    def ends(self, card: Card, tokens: list[Token]) -> None:
        if len(self.stack) == 1:
            self.error(card, tokens[0].offset, ".ends with no open .subckt",
                       expected=".subckt before .ends")
            return
        cell = self.stack.pop()
        cell.end_location = card.location
        if len(tokens) > 1 and tokens[1].text.lower() != cell.name:
            self.error(card, tokens[1].offset,
                       f".ends {excerpt(tokens[1].text)} closes .subckt {excerpt(cell.label)} "
                       f"(opened at line {cell.location.line})", severity="warning",
                       expected=f".ends {excerpt(cell.label)}", subject=cell.name, rule="mismatched-ends")

    def model(self, card: Card, tokens: list[Token]) -> None:
        if len(tokens) < 3:
            self.error(card, tokens[-1].offset, ".model needs a name and a type",
                       expected=".model NAME TYPE (PARAM=VALUE ...)")
            return
        name = tokens[1].text.lower()
        mtype = tokens[2].text.lower()
        _, params, _ = split_fields(tokens[3:])
        model = Model(name=name, type=mtype,
                      params={k.text.lower(): v.text for k, v in params}, location=card.location)
        self.cell.models[name] = model

    def params(self, card: Card, tokens: list[Token]) -> None:
        start = tokens[0].offset + len(tokens[0].text) if tokens else 0
        pairs, bad = assignments(card.text, start)
        for name, name_at, value in pairs:
            self.cell.params.append(ParamDef(name.lower(), value, card.location_at(name_at)))
        for text, at in bad:
            self.error(card, at, f"'{excerpt(text)}' in .param is not NAME=VALUE",
                       expected="NAME=VALUE")

    def func(self, card: Card, tokens: list[Token]) -> None:
        m = re.match(r"\s*\.func\s+([A-Za-z_][\w]*)\s*\(([^)]*)\)\s*=?\s*(.*)$", card.text, re.I | re.S)
        if not m:
            self.error(card, 0, "cannot read .func", expected=".func NAME(ARG, ...) {EXPRESSION}")
            return
        args = tuple(a.strip().lower() for a in m.group(2).split(",") if a.strip())
        body = m.group(3).strip()
        if body[:1] in "{'" and body[-1:] in "}'":
            body = body[1:-1]
        self.cell.funcs[m.group(1).lower()] = FuncDef(m.group(1).lower(), args, body, card.location)

    def finish(self) -> Netlist:
        for (path, rule, severity), count in self._error_counts.items():
            if count > MAX_DIAGNOSTICS_PER_RULE:
                more = count - MAX_DIAGNOSTICS_PER_RULE
                self.netlist.diagnostics.append(Diagnostic(
                    rule, Location(path, 1, 1), f"{more} more {rule} problems in {path} not listed "
                    f"(the first {MAX_DIAGNOSTICS_PER_RULE} are)", subject=f"{more} more",
                    severity=severity))
        for _, _, card, _ in self.conditions:
            self.netlist.diagnostics.append(Diagnostic(
                "parse-error", card.location, ".if is never closed", expected=".endif"))
        if self.deferred:
            models = frozenset(name for cell in self.netlist.all_cells() for name in cell.models)
            for parse, card, tokens, cell, index in reversed(self.deferred):
                element = parse(self, card, tokens, models)
                if element is not None:
                    cell.elements.insert(index, element)
                    self.element_cards.append(element)
        while len(self.stack) > 1:
            cell = self.stack.pop()
            self.netlist.diagnostics.append(Diagnostic(
                "parse-error", cell.location,
                f".subckt {excerpt(cell.label)} is never closed", expected=f".ends {excerpt(cell.label)}",
                subject=cell.name))
        return self.netlist


# -- element parsers ----------------------------------------------------------------
def _element(ctx: ParseContext, card: Card, tokens: list[Token], nodes: list[Token],
             **kw) -> Element:
    name = tokens[0].text
    numbers = ctx._net_numbers
    name_of = numbers.names.__getitem__
    _, line, column = card.segments[0]
    return Element(name=name, letter=name[0].lower(),
                   nodes=tuple(name_of(numbers[t.text.lower()]) for t in nodes),
                   raw_nodes=tuple(t.text for t in nodes), path=card.path, line=line, column=column,
                   **kw)


def _need(ctx, card, tokens, positional, count, what) -> bool:
    if len(positional) < count:
        last = tokens[-1]
        ctx.error(card, last.offset + len(last.text),
                  f"{tokens[0].text}: expected {what}, found {len(positional)} field(s)",
                  expected=what, subject=tokens[0].text.lower())
        return False
    return True


def _params(pairs) -> dict[str, str]:
    return {k.text.lower(): _inner_braces(v.text) for k, v in pairs}


def _inner_braces(text: str) -> str:
    """An expression with braces inside its quotes or braces (xschem writes
    ``ad='int(({nf} + 1)/2) * W'``) as the same expression with parentheses there:
    ngspice-39 evaluates both alike (checked: ``r='int(({n} + 1)/2) * 1k'``)."""
    if len(text) < 4 or text[0] not in "'{" or "{" not in text[1:-1]:
        return text
    inner = text[1:-1]
    if text[0] == "'":
        if text[-1] != "'" or "'" in inner:
            return text
    else:
        depth = 0
        for ch in inner:  # the outer braces must enclose all of it: '{a}*{b}' is two
            depth += (ch == "{") - (ch == "}")
            if depth < 0:
                return text
        if text[-1] != "}" or depth:
            return text
    return text[0] + inner.replace("{", "(").replace("}", ")") + text[-1]


def parse_passive(ctx: ParseContext, card: Card, tokens: list[Token]) -> Element | None:
    """R, C, L: ``n+ n- [value] [model] [key=value ...]``."""
    positional, pairs, _ = split_fields(tokens[1:])
    if not _need(ctx, card, tokens, positional, 2, "two nodes"):
        return None
    nodes, rest = positional[:2], positional[2:]
    params = _params(pairs)
    value = model = None
    extra = []
    for tok in rest:
        if value is None and is_value_token(tok.text):
            value = tok.text
        elif model is None and not is_value_token(tok.text):
            model = tok.text.lower()
        else:
            extra.append(tok)
    letter = tokens[0].text[0].lower()
    key = {"r": "r", "c": "c", "l": "l"}[letter]
    if value is None:
        for alias in ((key, "value", "res", "resistance") if key == "r" else (key, "value")):
            if alias in params:
                value = params.pop(alias)
                break
    for tok in extra:
        ctx.error(card, tok.offset, f"unexpected field '{excerpt(tok.text)}' after the value",
                  expected="KEY=VALUE parameters", subject=tokens[0].text.lower(), severity="warning")
    return _element(ctx, card, tokens, nodes, value=value, model=model, params=params)


def parse_coupling(ctx, card, tokens):
    """K: ``L1 L2 [...] k [model]`` (a nonlinear-core model may follow the factor)."""
    positional, pairs, _ = split_fields(tokens[1:])
    if not _need(ctx, card, tokens, positional, 3, "two inductor names and a coupling factor"):
        return None
    model = None
    if len(positional) >= 4 and not is_value_token(positional[-1].text) and is_value_token(
            positional[-2].text):
        model = positional[-1].text.lower()
        positional = positional[:-1]
    return _element(ctx, card, tokens, [], value=positional[-1].text, model=model,
                    controls=tuple(t.text.lower() for t in positional[:-1]), params=_params(pairs))


def parse_source(ctx, card, tokens):
    """V, I: ``n+ n- [[DC] value] [AC mag [phase]] [WAVEFORM args]``."""
    positional, pairs, _ = split_fields(tokens[1:])
    if not _need(ctx, card, tokens, positional, 2, "two nodes"):
        return None
    nodes, rest = positional[:2], positional[2:]
    src = Source()
    _read_source_fields(src, rest)
    params = _params(pairs)
    if src.dc is None and "dc" in params:
        src.dc = params.pop("dc")
        parts = src.dc.split(None, 1)
        word = _LEADING_WORD.match(parts[1]) if len(parts) == 2 else None
        if word and word.group(0).lower() in WAVEFORMS | {"ac"}:
            # 'dc=3.5 pulse(0 3.5 ...)' (ngspice reads it): the value re-read as one
            # field ends at the blank, and the waveform follows
            src.dc = parts[0]
            _read_source_fields(src, tokenize(parts[1]))
    return _element(ctx, card, tokens, nodes, source=src, value=src.dc, params=params)


def _read_source_fields(src: Source, rest: list[Token]) -> None:
    """Fill ``src`` from a source card's positional fields after its two nodes."""
    i = 0
    while i < len(rest):
        word = rest[i].text.lower()
        if word == "dc":
            if i + 1 < len(rest) and rest[i + 1].text.lower() not in SOURCE_WORDS:
                src.dc = rest[i + 1].text
                i += 2
            else:
                i += 1
        elif word == "ac":
            vals = []
            j = i + 1
            while j < len(rest) and len(vals) < 2 and is_value_token(rest[j].text):
                vals.append(rest[j].text)
                j += 1
            src.ac_mag = vals[0] if vals else "1"
            src.ac_phase = vals[1] if len(vals) > 1 else None
            i = j
        elif word in WAVEFORMS:
            j = i + 1
            args = []
            while j < len(rest) and (is_value_token(rest[j].text) or rest[j].text[:1].isalpha()
                                     and rest[j].text.lower() not in {"dc", "ac"} | WAVEFORMS):
                args.append(rest[j].text)
                j += 1
            src.waveform = word
            src.waveform_args = tuple(args)
            i = j
        elif word in SOURCE_KEYWORDS:
            if word == "portnum" and src.z0 is None:
                src.z0 = "50"  # ngspice's default port impedance
            elif word == "z0" and i + 1 < len(rest):
                src.z0 = rest[i + 1].text
            i += 1 + SOURCE_KEYWORDS[word]  # port number and impedance, distortion inputs
        elif src.dc is None and is_value_token(rest[i].text) or (
                src.dc is None and i == 0 and rest[i].text[:1].isalpha()):
            src.dc = rest[i].text
            i += 1
        else:
            i += 1  # distof1/distof2 and friends: not topology


def _controlled_nodes_from_expr(text: str) -> list[str]:
    names = []
    for m in re.finditer(r"\bv\s*\(\s*([^,()\s]+)\s*(?:,\s*([^,()\s]+)\s*)?\)", text, re.I):
        names.extend(n for n in m.groups() if n)
    return names


def parse_controlled(ctx, card, tokens):
    """E/G (voltage-controlled) and F/H (current-controlled) sources."""
    letter = tokens[0].text[0].lower()
    positional, pairs, _ = split_fields(tokens[1:])
    if not _need(ctx, card, tokens, positional, 2, "two output nodes"):
        return None
    out, rest = positional[:2], positional[2:]
    params = _params(pairs)
    for key in ("value", "vol", "cur"):
        if key in params:
            expr = params.pop(key)
            ctl = [t for t in _controlled_nodes_from_expr(expr)]
            el = _element(ctx, card, tokens, out, expression=expr, params=params)
            el.nodes += tuple(n.lower() for n in ctl)
            el.raw_nodes += tuple(ctl)
            el.model = "value"
            return el
    words = [t.text.lower() for t in rest]
    if words and words[0] in ("vcvs", "vccs", "cccs", "ccvs"):
        rest, words = rest[1:], words[1:]  # HSPICE names the kind: 'E1 o 0 VCVS a b 10'
    if words and words[0] in ("table", "laplace", "freq", "and", "or", "nand", "nor"):
        text = card.text
        ctl = _controlled_nodes_from_expr(text)
        el = _element(ctx, card, tokens, out, expression=text, params=params, model=words[0])
        el.nodes += tuple(n.lower() for n in ctl)
        return el
    if words and re.fullmatch(r"poly\d*", words[0]):
        dims_text = words[0][4:] or (rest[1].text if len(rest) > 1 else "")
        start = 1 if words[0][4:] else 2
        try:
            dims = int(dims_text)
        except ValueError:
            ctx.error(card, rest[0].offset, "POLY without a dimension", expected="POLY(N)")
            return None
        if letter in "eg":
            ctl_nodes = rest[start:start + 2 * dims]
            el = _element(ctx, card, tokens, out + ctl_nodes, model="poly",
                          expression=" ".join(t.text for t in rest[start + 2 * dims:]), params=params)
        else:
            ctl = rest[start:start + dims]
            el = _element(ctx, card, tokens, out, model="poly",
                          controls=tuple(t.text.lower() for t in ctl),
                          expression=" ".join(t.text for t in rest[start + dims:]), params=params)
        return el
    if letter in "eg":
        if len(rest) < 2:
            ctx.error(card, tokens[-1].offset + len(tokens[-1].text),
                      f"{tokens[0].text}: expected two control nodes and a gain",
                      expected="N+ N- NC+ NC- GAIN", subject=tokens[0].text.lower())
            return None
        gain = rest[2].text if len(rest) > 2 else params.pop("gain", None)
        return _element(ctx, card, tokens, out + rest[:2], value=gain, params=params)
    if not rest:
        ctx.error(card, tokens[-1].offset + len(tokens[-1].text),
                  f"{tokens[0].text}: expected a controlling voltage source and a gain",
                  expected="N+ N- VNAME GAIN", subject=tokens[0].text.lower())
        return None
    gain = rest[1].text if len(rest) > 1 else params.pop("gain", None)
    return _element(ctx, card, tokens, out, value=gain, controls=(rest[0].text.lower(),), params=params)


def parse_behavioral(ctx, card, tokens):
    positional, pairs, _ = split_fields(tokens[1:])
    if not _need(ctx, card, tokens, positional, 2, "two nodes"):
        return None
    params = _params(pairs)
    expr = params.pop("v", None)
    model = "v"
    if expr is None:
        expr = params.pop("i", None)
        model = "i"
    if expr is None:
        ctx.error(card, tokens[-1].offset, f"{tokens[0].text}: expected V=expression or I=expression",
                  expected="V={...} or I={...}", subject=tokens[0].text.lower())
        return None
    el = _element(ctx, card, tokens, positional[:2], expression=expr, model=model, params=params)
    ctl = _controlled_nodes_from_expr(expr)
    el.nodes += tuple(n.lower() for n in ctl)
    return el


def _model_split(positional: list[Token], min_nodes: int, max_nodes: int,
                 models: frozenset[str] = frozenset()):
    """Nodes then model: the model is the last positional token that is not a number.

    A model name that looks like a number (``1n4002``, ``2SJ74``) counts once a
    ``.model`` of that name is known.  Tokens after the model (HSPICE positional
    sizes, an area factor) are returned separately.
    """
    while positional and positional[-1].text.lower() in DEVICE_FLAGS:
        positional = positional[:-1]
    for idx in range(len(positional) - 1, -1, -1):
        tok = positional[idx].text
        if idx >= min_nodes and (not is_value_token(tok) or tok.lower() in models):
            nodes = positional[:idx]
            if len(nodes) > max_nodes:
                continue
            return nodes, positional[idx], positional[idx + 1:]
    return None


def make_device_parser(what: str, min_nodes: int, max_nodes: int, after: tuple[str, ...] = ()):
    def parse(ctx, card, tokens, models: frozenset[str] | None = None):
        positional, pairs, _ = split_fields(tokens[1:])
        split = _model_split(positional, min_nodes, max_nodes, models or frozenset())
        if split is None and models is None:
            ctx.deferred.append((parse, card, tokens, ctx.cell, len(ctx.cell.elements)))
            return None
        if split is None:
            n = f"{min_nodes}" if min_nodes == max_nodes else f"{min_nodes} to {max_nodes}"
            ctx.error(card, tokens[-1].offset + len(tokens[-1].text),
                      f"{tokens[0].text}: expected {n} nodes and a model name ({what})",
                      expected=f"{n} nodes, then a model name", subject=tokens[0].text.lower())
            return None
        nodes, model, extra = split
        params = _params(pairs)
        for name, tok in zip(after, extra):
            params.setdefault(name, tok.text)
        for tok in extra[len(after):]:
            if tok.text.lower() in DEVICE_FLAGS:
                continue
            ctx.error(card, tok.offset, f"unexpected field '{excerpt(tok.text)}' after the model",
                      expected="KEY=VALUE parameters", subject=tokens[0].text.lower(), severity="warning")
        return _element(ctx, card, tokens, nodes, model=model.text.lower(), params=params)
    return parse


def parse_instance(ctx, card, tokens):
    """X: ``n1 ... nk subname [params:] [key=value ...]``, or CDL's ``n1 ... nk / subname``."""
    toks = [t for t in tokens[1:] if t.text.lower() not in ("params:", "param:")]
    positional, pairs, _ = split_fields(toks)
    if not positional:
        ctx.error(card, tokens[0].offset + len(tokens[0].text),
                  f"{tokens[0].text}: expected nodes and a subcircuit name",
                  expected="N1 ... NK SUBCKT [PARAM=VALUE ...]", subject=tokens[0].text.lower())
        return None
    nodes, sub = positional[:-1], positional[-1]
    if nodes and nodes[-1].text == "/":
        nodes = nodes[:-1]  # CDL writes 'XI0 n1 n2 / cell': the slash only separates
    return _element(ctx, card, tokens, nodes, model=sub.text.lower(), params=_params(pairs))


def parse_switch_i(ctx, card, tokens):
    positional, pairs, _ = split_fields(tokens[1:])
    if not _need(ctx, card, tokens, positional, 4, "two nodes, a controlling source and a model"):
        return None
    return _element(ctx, card, tokens, positional[:2], controls=(positional[2].text.lower(),),
                    model=positional[3].text.lower(), params=_params(pairs))


def parse_line(ctx, card, tokens):
    positional, pairs, _ = split_fields(tokens[1:])
    if not _need(ctx, card, tokens, positional, 4, "four nodes"):
        return None
    return _element(ctx, card, tokens, positional[:4],
                    model=positional[4].text.lower() if len(positional) > 4 else None,
                    params=_params(pairs))


def parse_nodes_then_model(what: str, min_nodes: int):
    def parse(ctx, card, tokens):
        positional, pairs, _ = split_fields(tokens[1:])
        if not _need(ctx, card, tokens, positional, min_nodes + 1, f"{min_nodes}+ nodes and a model ({what})"):
            return None
        return _element(ctx, card, tokens, positional[:-1], model=positional[-1].text.lower(),
                        params=_params(pairs))
    return parse


def parse_xspice(ctx, card, tokens):
    """A: ``[in ...] out model`` with %v/%i/%d prefixes, [ ] vectors, ~ inversion, NULL."""
    positional, pairs, _ = split_fields(tokens[1:])
    if len(positional) < 2:
        ctx.error(card, tokens[-1].offset, f"{tokens[0].text}: expected connections and a model",
                  expected="CONNECTIONS ... MODEL", subject=tokens[0].text.lower())
        return None
    nodes = []
    for tok in positional[:-1]:
        for part in re.split(r"[\[\]\s]+", tok.text):
            part = part.lstrip("~")
            if not part or part.startswith("%") or part.lower() == "null":
                continue
            nodes.append(Token(part, tok.offset))
    return _element(ctx, card, tokens, nodes, model=positional[-1].text.lower(), params=_params(pairs))


def parse_y(ctx, card, tokens):
    """Y: ngspice lossy line ``n1 n2 n3 n4 model``; Xyce ``YTYPE name nodes ... model``."""
    positional, pairs, _ = split_fields(tokens[1:])
    name = tokens[0].text.lower()
    # Xyce writes 'YTYPE NAME NODES ...': the letters after Y name the device type
    if len(name) > 3 and name[1:].isalpha() and name[1:4] != "txl":
        if len(positional) < 2:
            ctx.error(card, tokens[-1].offset, f"{tokens[0].text}: expected an instance name and nodes",
                      expected="YTYPE NAME NODES ... [MODEL]", subject=name)
            return None
        # whether a model follows the nodes depends on the device type; keep every
        # positional as a node: the device is not simulated and its pins are not judged
        el = _element(ctx, card, tokens, positional[1:], params=_params(pairs))
        el.name = tokens[0].text + "!" + positional[0].text
        return el
    if len(positional) < 5:
        ctx.error(card, tokens[-1].offset, f"{tokens[0].text}: expected four nodes and a model",
                  expected="N1 N2 N3 N4 MODEL", subject=name)
        return None
    return _element(ctx, card, tokens, positional[:-1], model=positional[-1].text.lower(),
                    params=_params(pairs))


ELEMENT_PARSERS = {
    "r": parse_passive, "c": parse_passive, "l": parse_passive,
    "k": parse_coupling,
    "v": parse_source, "i": parse_source,
    "e": parse_controlled, "f": parse_controlled, "g": parse_controlled, "h": parse_controlled,
    "b": parse_behavioral,
    "d": make_device_parser("diode", 2, 3, after=("area",)),
    "q": make_device_parser("BJT", 3, 5, after=("area",)),
    "j": make_device_parser("JFET", 3, 3, after=("area",)),
    "z": make_device_parser("MESFET", 3, 3, after=("area",)),
    "m": make_device_parser("MOSFET", 3, 7, after=("l", "w")),
    "x": parse_instance,
    "s": make_device_parser("voltage-controlled switch", 4, 4),
    "w": parse_switch_i,
    "t": parse_line,
    "o": parse_nodes_then_model("lossy line", 4),
    "u": parse_nodes_then_model("RC line", 3),
    "p": parse_nodes_then_model("coupled lines", 2),
    "n": parse_nodes_then_model("numerical device", 1),
    "a": parse_xspice,
    "y": parse_y,
}


# -- pragmas and CDL comments ----------------------------------------------------
def attach_comments(netlist: Netlist, comments: list[CommentLine],
                    elements: list[Element]) -> None:
    """Turn ``lintamp:`` comments into pragmas in the cell that holds them; ``elements``
    lists every element in the order parsed (a run of plain cards as itself)."""
    if not comments:
        return
    by_line: dict[tuple[str, int], Element] = {}
    run_starts: dict[str, list[tuple[int, PlainRun]]] = {}  # per file, in line order
    for item in elements:  # an element's location is its card's first line
        if item.__class__ is PlainRun:
            run_starts.setdefault(item.origin.path, []).append((item.first_line, item))
        else:
            by_line[(item.path, item.line)] = item

    def element_at(path: str, line: int) -> Element | None:
        found = by_line.get((path, line))
        if found is None and path in run_starts:  # a card of a run: made only when asked
            starts = run_starts[path]
            k = bisect_right(starts, line, key=itemgetter(0)) - 1
            if k >= 0 and line < starts[k][0] + starts[k][1].count:
                found = starts[k][1].element(line - starts[k][0])
        return found

    for starts in run_starts.values():
        starts.sort(key=itemgetter(0))
    cells = list(netlist.all_cells())
    # which cell holds a line: the innermost .subckt whose span contains it
    spans = [(c, c.location, c.end_location) for c in cells if not c.is_top and c.end_location]

    def cell_of(loc: Location) -> Cell:
        best = netlist.top
        for cell, start, end in spans:
            if start.path == loc.path and start.line <= loc.line <= end.line:
                if best.is_top or best.location.line <= start.line:
                    best = cell
        return best

    for comment in comments:
        if comment.kind == "dropped-instance":
            # kept as a pragma of the cell that lost the instance (as the api keeps its
            # own "manifest-file" marks): rules read what the netlist lacks from it
            inst, _, rest = comment.text.partition(" - ")
            symbol = rest.split()[0] if rest.split() else ""
            cell = cell_of(comment.location)
            cell.pragmas.append(Pragma(verb="dropped-instance", args=(inst.strip().lower(), symbol),
                                       reason="", location=comment.location, cell=cell.name))
            continue
        if comment.kind == "cdl":
            word, _, rest = comment.text.partition(" ")
            netlist.cdl.setdefault(word.lower(), []).append(rest.strip())
            if word.lower() == ".global":
                netlist.globals.update(t.lower() for t in rest.split())
            elif word.lower() == ".pininfo":
                pins = cell_of(comment.location).pin_info
                for item in rest.split():
                    net, _, way = item.rpartition(":")
                    if net and way.lower() in ("i", "o", "b"):
                        for bit in _bus_bits(net.lower()):
                            pins.setdefault(bit, way.lower())
            elif word.lower() in (".ipin", ".opin", ".iopin"):
                # xschem's own pin lines ('*.ipin vin'), one net each, also at the top
                # level of a cell netlisted as a testbench: the same pin directions
                way = {".ipin": "i", ".opin": "o", ".iopin": "b"}[word.lower()]
                pins = cell_of(comment.location).pin_info
                for net in rest.split():
                    for bit in _bus_bits(net.lower()):
                        pins.setdefault(bit, way)
            continue
        text, _, reason = comment.text.partition("--")
        words = text.split()
        if not words:
            netlist.diagnostics.append(Diagnostic(
                "parse-error", comment.location, "empty lintamp: pragma",
                expected="lintamp: VERB ARGUMENTS", severity="warning"))
            continue
        cell = cell_of(comment.location)
        pragma = Pragma(verb=words[0].lower(), args=tuple(w.lower() for w in words[1:]),
                        reason=reason.strip(), location=comment.location,
                        inline=comment.kind == "pragma-inline", cell=cell.name)
        key = (comment.location.path, comment.location.line)
        element = element_at(key[0], key[1] + (0 if pragma.inline else 1))
        if element is not None:
            pragma.element = element.key
            pragma.element_nets = element.nodes
        cell.pragmas.append(pragma)


_BUS = re.compile(r"^(.*)\[(\d{1,4}):(\d{1,4})\]$")


def _bus_bits(name: str) -> list[str]:
    """``sw[2:0]`` -> ``sw<2> sw<1> sw<0>`` and the ``[k]`` spellings; a plain name as is."""
    m = _BUS.match(name)
    if not m:
        return [name]
    hi, lo = int(m.group(2)), int(m.group(3))
    step = -1 if hi >= lo else 1
    bits = range(hi, lo + step, step)
    return [name] + [f"{m.group(1)}<{k}>" for k in bits] + [f"{m.group(1)}[{k}]" for k in bits]


_FRAGMENT_FIRST = re.compile(r"\s*\.(subckt|subcircuit|model|lib|include|inc|param|global|option|options|func|macro)\b",
                             re.I)


def is_fragment(first_line: str) -> bool:
    """A file whose first line is a definition is a library fragment: it has no title."""
    return bool(_FRAGMENT_FIRST.match(first_line))


def parse_read(result: ReadResult, path: str, ctx: ParseContext | None = None) -> Netlist:
    """The netlist of a read result; ``ctx`` when its cards were already fed to it."""
    if ctx is None:
        ctx = ParseContext(path, result.title)
        for card in result.cards:
            ctx.card(card)
    elif not ctx.title_card:
        ctx.netlist.title = result.title
    netlist = ctx.finish()
    netlist.files = list(result.files)
    netlist.observed |= result.observed
    netlist.diagnostics[:0] = result.diagnostics
    attach_comments(netlist, result.comments, ctx.element_cards)
    return netlist


def parse_file(path: Path, opts: ReadOptions | None = None) -> Netlist:
    """Read and parse a netlist file and everything it includes."""
    with paused_gc():
        return _parse_file(path, opts or ReadOptions())


def _parse_file(path: Path, opts: ReadOptions) -> Netlist:
    shown = _display(path, opts)
    # The reader streams the file; only its first line is needed here.  A file that
    # cannot be read is reported by the reader.
    try:
        with open_regular(path, sandbox_roots(opts)) as handle:  # no peek through a link out
            head = handle.read(4096).removeprefix(b"\xef\xbb\xbf")
    except OSError:
        head = b""
    first = re.split(rb"[\r\n]", head, maxsplit=1)[0].decode("latin-1")
    ctx = ParseContext(shown, "")
    link = stored_link(head)
    if link:  # a symbolic link checked out as a text file: its one line is the target's path
        # ngspice-39 reads the line as the title of an empty deck: nothing to check
        ctx.netlist.diagnostics.append(Diagnostic(
            rule="unsupported-syntax", location=Location(shown, 1, 1), subject=link,
            severity="info",
            message=f"the file holds only the path '{link}': a symbolic link checked out as a "
                    "text file (git with core.symlinks off); ngspice-39 reads it as the title "
                    "of an empty deck, so nothing here is checked",
            expected="a working link (clone with symbolic links on), or check the target file"))
        netlist = ctx.finish()
        netlist.title = link
        return netlist
    result = read(path, opts, title=not is_fragment(first), sink=ctx.card, reading=ctx.reading,
                  bulk=ctx)
    netlist = parse_read(result, shown, ctx)
    if _SCHEMATIC_EXPORT in head[:2048]:
        # KiCad's schematic netlist as eSim writes it before its converter: U cards stand
        # for eSim's models and plots, and subcircuits come from .sub files beside it,
        # which the converter includes in <name>.cir.out (the deck ngspice runs)
        netlist.cdl["kicad-eeschema"] = sorted(
            p.stem.lower() for p in path.parent.glob("*.sub") if p.is_file())[:200]
        converted = path.with_name(path.name + ".out")
        if converted.is_file():
            netlist.cdl["converted-deck"] = [_display(converted, opts)]
    return netlist


_SCHEMATIC_EXPORT = b"EESchema Netlist"



def parse_text(text: str, path: str = "<text>", opts: ReadOptions | None = None) -> Netlist:
    """Parse netlist text held in memory (its first line is the title)."""
    ctx = ParseContext(path, "")
    with paused_gc():
        return parse_read(read_text(text, path, opts, sink=ctx.card, reading=ctx.reading, bulk=ctx),
                          path, ctx)


def _display(path: Path, opts: ReadOptions) -> str:
    import os
    if opts.display_root is not None:
        try:
            return os.path.relpath(path, opts.display_root).replace(os.sep, "/")
        except ValueError:
            pass
    return str(path).replace(os.sep, "/")
