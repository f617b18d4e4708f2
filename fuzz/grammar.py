"""Random SPICE-like text for fuzzing: a small card grammar and byte/line mutators.

Everything here takes a :class:`random.Random` so that a run is reproducible from
its seed, and the hypothesis tests can drive the same generators through
``st.randoms()``.  The grammar is deliberately loose: it produces cards a
simulator would accept, cards it would reject, and everything in between.
"""

from __future__ import annotations

import random

# Include targets the fuzz sandbox provides (see run_fuzz.make_sandbox), plus
# hostile ones: absolute paths, '..' escapes, devices, directories, placeholders.
INCLUDE_TARGETS = ("a.inc", "b.inc", "self.inc", "models.lib", "escape_link.inc",
                   "dir.inc", "fifo.inc", "missing.inc", "/etc/passwd", "/dev/zero",
                   "../../../etc/passwd", "..", ".", "", "'a.inc'", '"b.inc"', "${PDK}/x.lib",
                   "sub/../a.inc", "dirlink/a.inc", "C:\\x\\y.lib")
LIB_SECTIONS = ("tt", "ff", "none", "TT", "")
LETTERS = "rclkvieghfbdqjzmxswtouynpa"
NET_NAMES = ("0", "gnd", "vdd", "vss", "in", "out", "a", "b", "n1", "n2", "x1/n", "%v", "[a b]",
             "~a", "null", "gnd!", "1", "-", "+", "=", "(", ")", "{", "}", "'", '"', "\\")
MODEL_NAMES = ("nch", "pch", "npn1", "d1", "sw", "nmos", "1n4148", "sub", "amp", "inv")
MODEL_TYPES = ("nmos", "pmos", "npn", "pnp", "d", "njf", "pjf", "sw", "r", "c", "vdmos", "lpnp", "x")
PARAM_KEYS = ("w", "l", "m", "nf", "r", "c", "dc", "ac", "value", "gain", "level", "vto", "is",
              "tc1", "area", "temp", "ic", "k", "v", "i")
NUMBERS = ("0", "1", "-1", "1k", "2.2u", "10meg", "1e3", "1e308", "1e309", "-1e999", "1e-400",
           "9" * 400, "0x1f", "1.2.3", "inf", "nan", ".5", "5.", "1mil", "1t", "1f", "3g",
           "1e", "e5", "1e+", "00000", "-0", "1_000", "１", "٣")
FUNCS = ("sqrt", "exp", "ln", "log", "log10", "sin", "abs", "min", "max", "pow", "pwr", "if",
         "limit", "atan2", "int", "floor", "ceil", "gauss", "agauss", "f", "g", "v", "i")
OPS = ("+", "-", "*", "/", "**", "^", "%", "\\", "==", "!=", "<>", "<", "<=", ">", ">=",
       "&&", "||")
PRAGMAS = ("lintamp: waive parse-error -- test", "lintamp: waive dangling-net out",
           "lintamp: bandwidth 20meg", "lintamp: current-input in", "lintamp: voltage-output out",
           "lintamp: load rl cl", "lintamp:", "LINTAMP: waive unknown-cell x1 -- r",
           "lintamp: waive", "lintamp: bandwidth {", "lintamp: waive x -- " + "y" * 300)
DOT_WORDS = (".subckt", ".ends", ".param", ".func", ".model", ".include", ".inc", ".lib",
             ".endl", ".global", ".option", ".temp", ".end", ".control", ".endc", ".data",
             ".enddata", ".op", ".ac", ".tran", ".title", ".macro", ".eom", ".if", ".else",
             ".endif", ".params", ".global_param", ".subckt params:")
UNICODE = ("µ", "Ω", "\u00a0", "\u200b", "\u2028", "\u2029", "\u0085", "\ufeff", "\ud7ff",
           "\U0001f600", "é", "\u0301", "\x0b", "\x0c", "\x1c", "\x1d", "\x1e", "\x7f",
           "\u202e", "ß", "İ", "ﬁ")


def number(r: random.Random) -> str:
    return r.choice(NUMBERS)


def name(r: random.Random) -> str:
    if r.random() < 0.85:
        return r.choice(("a", "b", "w", "l", "x", "y", "vdd", "rgain", "p1", "temper", "pi", "f"))
    return r.choice(("", "_", "a" * r.randint(1, 300), "a.b", "1a", "é", "a b", "{a}"))


def expression(r: random.Random, depth: int = 0) -> str:
    """A random expression; depth-limited but sometimes deep on purpose."""
    roll = r.random()
    if depth > 6 or roll < 0.3:
        return number(r) if r.random() < 0.5 else name(r)
    if roll < 0.55:
        return f"{expression(r, depth + 1)} {r.choice(OPS)} {expression(r, depth + 1)}"
    if roll < 0.7:
        args = ", ".join(expression(r, depth + 1) for _ in range(r.randint(0, 3)))
        return f"{r.choice(FUNCS)}({args})"
    if roll < 0.8:
        return f"({expression(r, depth + 1)})"
    if roll < 0.88:
        return f"{expression(r, depth + 1)} ? {expression(r, depth + 1)} : {expression(r, depth + 1)}"
    if roll < 0.99:
        return r.choice(("-", "+", "!", "--", "!!")) + expression(r, depth + 1)
    return deep_expression(r, (30, 33, 64, 200))


def deep_expression(r: random.Random, sizes=(30, 33, 64, 200, 1000, 5000)) -> str:
    n = r.choice(sizes)
    kind = r.randint(0, 4)
    if kind == 0:
        return "(" * n + "1" + ")" * n
    if kind == 1:
        return "+".join("1" for _ in range(n))
    if kind == 2:
        return "-" * n + "1"
    if kind == 3:
        return "1?" * n + "2" + ":3" * n
    return "f(" * n + "1" + ")" * n


def braced(r: random.Random) -> str:
    text = expression(r)
    return r.choice(("{%s}", "'%s'", "%s", "{%s", "%s}", "\"%s\"", "{{%s}}"))  % text


def value(r: random.Random) -> str:
    return number(r) if r.random() < 0.5 else braced(r)


def params(r: random.Random) -> str:
    return " ".join(f"{r.choice(PARAM_KEYS)}={value(r)}" for _ in range(r.randint(0, 4)))


def nets(r: random.Random, n: int) -> str:
    return " ".join(r.choice(NET_NAMES) for _ in range(n))


def element_card(r: random.Random) -> str:
    letter = r.choice(LETTERS)
    if r.random() < 0.5:
        letter = letter.upper()
    ident = letter + r.choice(("1", "2", "x", "out", "$1", "", "1" * 50))
    n = r.randint(0, 7)
    tail = r.choice((value(r), r.choice(MODEL_NAMES), "", f"{r.choice(MODEL_NAMES)} {value(r)}",
                     "dc " + value(r), "ac 1 0", "pulse(0 1 1n 1n 1n 5n 10n)", "pwl(0 0 1 1)",
                     "poly(2) a b c d 1 2 3", "value={v(a)*2}", "table {v(a)} (0,0) (1,1)",
                     "params: " + params(r), "off", "sin(0 1 1k)", "poly(", "vsense 2"))
    return f"{ident} {nets(r, n)} {tail} {params(r)}".rstrip()


def dot_card(r: random.Random) -> str:
    word = r.choice(DOT_WORDS)
    if word in (".subckt", ".macro", ".subckt params:"):
        return f"{word} {r.choice(MODEL_NAMES)} {nets(r, r.randint(0, 5))} {params(r)}"
    if word in (".ends", ".eom"):
        return f"{word} {r.choice(MODEL_NAMES + ('',))}"
    if word in (".param", ".params", ".global_param"):
        return f"{word} " + " ".join(f"{name(r)}={braced(r)}" for _ in range(r.randint(0, 4)))
    if word == ".func":
        return f".func {name(r)}({', '.join(name(r) for _ in range(r.randint(0, 3)))}) {braced(r)}"
    if word == ".model":
        return f".model {r.choice(MODEL_NAMES)} {r.choice(MODEL_TYPES)} ({params(r)})"
    if word in (".include", ".inc"):
        return f"{word} {r.choice(INCLUDE_TARGETS)}"
    if word == ".lib":
        return f".lib {r.choice(INCLUDE_TARGETS)} {r.choice(LIB_SECTIONS)}".rstrip()
    return f"{word} {r.choice(('', value(r), nets(r, 2), params(r)))}".rstrip()


def comment_card(r: random.Random) -> str:
    head = r.choice(("*", "$ ", "; ", "//", "*.", "*.PININFO a:I b:O", "*.GLOBAL vdd"))
    return head + r.choice(PRAGMAS + ("", "just words", "+", "é" * 5))


def card(r: random.Random) -> str:
    """One random card (sometimes continued over '+' or '\\' lines)."""
    roll = r.random()
    if roll < 0.55:
        text = element_card(r)
    elif roll < 0.85:
        text = dot_card(r)
    elif roll < 0.95:
        text = comment_card(r)
    else:
        text = r.choice(("+ " + params(r), "simulator lang=spectre", "simulator lang=spice",
                         "+", "\\", "x1 a b \\", "end", "*" * 500))
    if r.random() < 0.1:
        text += "\n+ " + params(r)
    if r.random() < 0.05:
        text += " \\\n" + params(r)
    if r.random() < 0.1:
        text += r.choice((" ; ", " $ ", " // ")) + r.choice(PRAGMAS)
    return text


def deck(r: random.Random, cards: int | None = None) -> str:
    """A random netlist: a title line then random cards."""
    n = cards if cards is not None else r.randint(0, 30)
    return "\n".join(["* fuzz deck"] + [card(r) for _ in range(n)]) + "\n"


# ------------------------------------------------------------------------ mutators
def _lines(data: bytes) -> list[bytes]:
    return data.split(b"\n")


def truncate(r: random.Random, data: bytes) -> bytes:
    return data[: r.randint(0, len(data))] if data else data


def flip_bytes(r: random.Random, data: bytes) -> bytes:
    if not data:
        return data
    buf = bytearray(data)
    for _ in range(r.randint(1, 8)):
        i = r.randrange(len(buf))
        buf[i] = r.choice((buf[i] ^ (1 << r.randrange(8)), r.randrange(256), 0, 10, 13, 43,
                           123, 125, 39, 34, 61, 40, 41, 42, 46, 36, 59, 92))
    return bytes(buf)


def shuffle_lines(r: random.Random, data: bytes) -> bytes:
    lines = _lines(data)
    if r.random() < 0.5:
        r.shuffle(lines)
    elif len(lines) > 1:
        i, j = r.randrange(len(lines)), r.randrange(len(lines))
        lines[i], lines[j] = lines[j], lines[i]
    return b"\n".join(lines)


def delete_lines(r: random.Random, data: bytes) -> bytes:
    lines = _lines(data)
    if len(lines) < 2:
        return data
    i = r.randrange(len(lines))
    del lines[i: i + r.randint(1, 5)]
    return b"\n".join(lines)


def duplicate_lines(r: random.Random, data: bytes) -> bytes:
    lines = _lines(data)
    i = r.randrange(len(lines))
    block = lines[i: i + r.randint(1, 5)]
    j = r.randrange(len(lines) + 1)
    return b"\n".join(lines[:j] + block * r.randint(1, 3) + lines[j:])


def insert_cards(r: random.Random, data: bytes) -> bytes:
    lines = _lines(data)
    for _ in range(r.randint(1, 4)):
        lines.insert(r.randrange(len(lines) + 1), card(r).encode("utf-8", "surrogatepass"))
    return b"\n".join(lines)


def unbalance(r: random.Random, data: bytes) -> bytes:
    lines = _lines(data)
    piece = r.choice((b".subckt amp a b", b".ends", b".ends other", b".subckt", b".endl",
                      b".lib tt", b".control", b".endc", b".end", b".subckt amp a b\nxa a b amp",
                      b".subckt inv a\nx1 a sub\n.ends\n.subckt sub a\nx2 a inv\n.ends\nx0 n inv"))
    lines.insert(r.randrange(len(lines) + 1), piece)
    return b"\n".join(lines)


def replace_token(r: random.Random, data: bytes) -> bytes:
    tokens = data.split(b" ")
    if not tokens:
        return data
    i = r.randrange(len(tokens))
    tokens[i] = r.choice((number(r), braced(r), r.choice(NET_NAMES), r.choice(DOT_WORDS),
                          r.choice(INCLUDE_TARGETS), r.choice(UNICODE), "=", "params:")).encode(
        "utf-8", "surrogatepass")
    return b" ".join(tokens)


def huge_numbers(r: random.Random, data: bytes) -> bytes:
    big = r.choice((b"9" * 5000, b"1e99999", b"-1e308", b"1" + b"0" * 400 + b"meg",
                    b"{" + b"9" * 400 + b"**9}", b"1e-99999", b"0." + b"0" * 3000 + b"1"))
    lines = _lines(data)
    lines.insert(r.randrange(len(lines) + 1), b"r9 a b " + big)
    lines.insert(r.randrange(len(lines) + 1), b".param big=" + big)
    return b"\n".join(lines)


def deep_exprs(r: random.Random, data: bytes) -> bytes:
    lines = _lines(data)
    text = deep_expression(r)
    line = r.choice((".param d={%s}", "r1 a b {%s}", ".func f(x) {%s}", "m1 d g s b nch w={%s}",
                     "x1 a b sub p={%s}", ".model nch nmos vto={%s}")) % text
    lines.insert(r.randrange(len(lines) + 1), line.encode())
    return b"\n".join(lines)


def random_unicode(r: random.Random, data: bytes) -> bytes:
    text = data.decode("utf-8", "replace")
    for _ in range(r.randint(1, 6)):
        i = r.randint(0, len(text))
        ch = r.choice(UNICODE) if r.random() < 0.7 else chr(r.randrange(0x20, 0x2FFFF))
        text = text[:i] + ch + text[i:]
    return text.encode("utf-8", "surrogatepass")


def nul_bytes(r: random.Random, data: bytes) -> bytes:
    i = r.randint(0, len(data))
    return data[:i] + b"\x00" * r.randint(1, 3) + data[i:]


def line_ends(r: random.Random, data: bytes) -> bytes:
    choice = r.randint(0, 3)
    if choice == 0:
        return data.replace(b"\n", b"\r")
    if choice == 1:
        return data.replace(b"\n", b"\r\n")
    if choice == 2:
        return data.replace(b"\n", b"\r\r\n")
    return data.replace(b"\n", r.choice((b"\x0b", b"\x0c", b"\xe2\x80\xa8", b"\x85")))


def encodings(r: random.Random, data: bytes) -> bytes:
    text = data.decode("utf-8", "replace")
    enc = r.choice(("latin-1", "utf-16", "utf-16-le", "utf-32", "cp1252", "utf-8-sig"))
    return text.encode(enc, "replace")


def splice(r: random.Random, data: bytes, other: bytes) -> bytes:
    a = _lines(data)
    b = _lines(other)
    i = r.randint(0, len(a))
    j = r.randint(0, len(b))
    return b"\n".join(a[:i] + b[j: j + r.randint(1, 20)] + a[i:])


MUTATORS = (truncate, flip_bytes, shuffle_lines, delete_lines, duplicate_lines, insert_cards,
            insert_cards, unbalance, replace_token, replace_token, huge_numbers, deep_exprs,
            random_unicode, nul_bytes, line_ends, encodings)


def mutate(r: random.Random, data: bytes, pool: list[bytes] | None = None) -> bytes:
    """One to four stacked mutations of ``data``; ``pool`` gives splice partners."""
    for _ in range(r.randint(1, 4)):
        if pool and r.random() < 0.1:
            data = splice(r, data, r.choice(pool))
        else:
            data = r.choice(MUTATORS)(r, data)
    return data
