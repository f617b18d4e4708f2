"""Reader: physical lines of netlist files -> logical cards.

The reader owns everything about text layout: decoding, the title line,
continuation lines, comments (with ``lintamp:`` pragmas and CDL ``*.`` directives
kept), ``.control`` blocks, ``.end``, dialect switches, and ``.include`` /
``.lib`` resolution inside a sandbox.  It knows nothing of element syntax.

A :class:`Card` is one logical statement with a map from character offsets back
to physical ``(line, column)`` so that a token on a ``+`` line is reported where
it was written.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from itertools import chain
from typing import BinaryIO, Callable, Iterable, Iterator, Protocol

from lintamp import safe_paths
from lintamp.location import Location
from lintamp.netlist.statements import Diagnostic
from lintamp.text import EXCERPT_CHARS, excerpt  # noqa: F401 - the parser imports them from here

MAX_INCLUDE_DEPTH = 40
MAX_FILE_BYTES = safe_paths.MAX_NETLIST_BYTES  # 256 MB
# All the bytes one check reads, its includes and their re-reads counted: a file that
# includes the next one twice, forty deep, would otherwise read 2**40 files.
MAX_TOTAL_BYTES = 512 * 1024 * 1024
# How often one file (one .lib section of it) is read in one check: a models file that
# every cell file includes is read once per cell file (tens of times); 2,000 reads of
# it, or 2**40 through a fan-out of includes, are an attack, not a design.
MAX_READS_PER_FILE = 64
# Diagnostics of one rule in one file beyond this are counted, not kept: a million
# stray '+' lines give one message per line up to here, then one that counts the rest.
MAX_DIAGNOSTICS_PER_RULE = 1000
MAX_CARD_CHARS = 4 * 1024 * 1024  # a logical card longer than this is refused, not parsed
# A physical line longer than this is skipped unread: it is never held in memory whole,
# so a 100 MB one-line file costs one read buffer, not 100 MB (real lines are < 10 KB).
MAX_LINE_BYTES = 1024 * 1024
_READ_CHUNK_BYTES = 256 * 1024
_HEAD_BYTES = 8192
# Byte-order marks of encodings simulators do not read (UTF-8's own BOM is skipped).
_FOREIGN_BOMS = ((b"\x00\x00\xfe\xff", "UTF-32"), (b"\xff\xfe\x00\x00", "UTF-32"),
                 (b"\xfe\xff", "UTF-16"), (b"\xff\xfe", "UTF-16"))

_PLACEHOLDER = re.compile(r"\$\{|\$[A-Za-z_]|@@|@[A-Za-z_]|\{[A-Za-z_]\w*\}")


@dataclass(slots=True)
class Card:
    """One logical statement: text with comments removed and continuations joined.

    ``segments`` maps offsets in ``text`` to physical places:
    ``(offset, line, column)`` triples in increasing offset order.
    """

    text: str
    path: str
    segments: list[tuple[int, int, int]]
    comment: str = ""  # the inline comment of the card's first line, if any
    last_line: int = 0

    @property
    def location(self) -> Location:
        _, line, col = self.segments[0]
        return Location(self.path, line, col)

    def location_at(self, offset: int) -> Location:
        """Physical place of character ``offset`` of ``text``."""
        seg = self.segments[0]
        for candidate in self.segments:
            if candidate[0] > offset:
                break
            seg = candidate
        start, line, col = seg
        return Location(self.path, line, col + (offset - start))


@dataclass(slots=True)
class CommentLine:
    """A whole-line comment worth keeping: a pragma or a CDL directive."""

    text: str  # after the comment marker, stripped
    location: Location
    kind: str  # "pragma" | "cdl"


@dataclass(slots=True)
class ReadOptions:
    """Where includes may come from, and the comment dialect."""

    root: Path | None = None  # project root: includes must stay inside it ...
    include_paths: tuple[Path, ...] = ()  # ... or inside one of these
    dollar_comments: bool = True  # ' $ ' starts an inline comment (HSPICE, ngspice)
    slash_comments: bool = True  # '//' starts an inline comment (ngspice)
    display_root: Path | None = None  # paths in locations are relative to this


@dataclass(slots=True)
class ReadResult:
    cards: list[Card] = field(default_factory=list)
    comments: list[CommentLine] = field(default_factory=list)
    diagnostics: list[Diagnostic] = field(default_factory=list)
    files: list[str] = field(default_factory=list)
    title: str = ""
    observed: set[str] = field(default_factory=set)  # nets a .control script probes
    # cards of each included file are spliced in order; which file each came from is in card.path


_PROBE = re.compile(r"\b[vi]\w*\s*\(\s*([^,()\s]+)\s*(?:,\s*([^,()\s]+)\s*)?\)", re.I)
_PROBE_COMMANDS = {"plot", "print", "save", "wrdata", "write", "meas", "measure", "probe",
                   ".print", ".plot", ".save", ".probe", ".meas", ".measure", ".four"}


def probed_nets(line: str) -> set[str]:
    """Net names a simulation command looks at: ``v(out)``, ``v(a,b)``, and the bare
    names after ``plot``/``print``/``save`` (a net used only there is observed, not
    forgotten)."""
    names = {n.lower() for m in _PROBE.finditer(line[:4096]) for n in m.groups() if n}
    words = line[:4096].split()
    if words and words[0].lower() in _PROBE_COMMANDS:
        names.update(w.lower() for w in words[1:] if w.replace("_", "").replace("!", "").isalnum())
    return names


def decode(data: bytes) -> str:
    """UTF-8 when it is valid, latin-1 otherwise: never fails, never loses a byte."""
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1")


def foreign_encoding(head: bytes) -> str | None:
    """The name of a UTF-16/32 encoding announced by a byte-order mark, else None."""
    for bom, name in _FOREIGN_BOMS:
        if head.startswith(bom):
            return name
    return None


# Line ends as Python's universal newlines: LF, CR LF, and a lone CR (old Mac files;
# editors show it as a break too).
_BREAK_BYTES = re.compile(rb"\r\n|\r|\n")
_BREAK_TEXT = re.compile("\r\n|\r|\n")


def physical_lines(chunks: Iterable[bytes], runs: re.Pattern | None = None
                   ) -> Iterator[tuple[int, str | None, int]]:
    """``(line number, text, length in bytes)`` for each line of a byte stream.

    Each line is decoded on its own (UTF-8 when valid, else latin-1), so the whole
    file is never held in memory.  A line longer than :data:`MAX_LINE_BYTES` is
    skipped without being kept: its text is None.

    With ``runs`` (a pattern from :func:`run_pattern`), consecutive lines that it
    matches come as one item instead: ``(first line number, the lines with their
    line ends, -number of lines)``; see :func:`split_runs`.

    Notes
    -----
    O(bytes) time; memory O(MAX_LINE_BYTES + chunk size), whatever the file size.
    A chunk whose whole lines are ASCII (the common case) is decoded and split in
    one step rather than line by line.
    """
    lineno = 0
    pending = bytearray()
    skipping = 0  # > 0: inside an over-long line, this many bytes so far
    carry = b""  # a CR at a chunk's end may be the first half of CR LF

    def take(piece: bytes) -> None:
        nonlocal pending, skipping
        if skipping:
            skipping += len(piece)
        elif len(pending) + len(piece) > MAX_LINE_BYTES:
            skipping = len(pending) + len(piece)
            pending = bytearray()
        else:
            pending += piece

    def line() -> tuple[int, str | None, int]:
        nonlocal pending, skipping, lineno
        lineno += 1
        if skipping:
            out = (lineno, None, skipping)
        else:
            out = (lineno, decode(bytes(pending)), len(pending))
        pending, skipping = bytearray(), 0
        return out

    for chunk in _bounded(chunks):
        chunk = carry + chunk
        carry = b""
        if chunk.endswith(b"\r"):
            carry, chunk = b"\r", chunk[:-1]
        if not skipping:
            # The common case, a chunk of ASCII lines: decode the chunk's whole lines at
            # once and hand them out without a step per line (ASCII is valid UTF-8, so
            # each line decodes to the same text alone, and its length in bytes is its
            # length in characters).
            cut = max(chunk.rfind(b"\n"), chunk.rfind(b"\r")) + 1
            if cut:
                block = bytes(pending) + chunk[:cut] if pending else chunk[:cut]
                if block.isascii():
                    text = block.decode("ascii")
                    lf_text = _lf_only(text) if runs is not None else text
                    if runs is not None and len(block) <= MAX_LINE_BYTES and "\r" not in lf_text:
                        text = lf_text
                        yield from split_runs(text, lineno, runs)
                        lineno += text.count("\n")
                        pending = bytearray()
                        take(chunk[cut:])
                        continue
                    found = _BREAK_TEXT.split(text) if "\r" in text else text.split("\n")
                    found.pop()  # the '' after the block's last line end
                    if len(block) <= MAX_LINE_BYTES or max(map(len, found)) <= MAX_LINE_BYTES:
                        yield from zip(range(lineno + 1, lineno + 1 + len(found)), found,
                                       map(len, found))
                        lineno += len(found)
                        pending = bytearray()
                        take(chunk[cut:])
                        continue
        start = 0
        for match in _BREAK_BYTES.finditer(chunk):
            take(chunk[start:match.start()])
            yield line()
            start = match.end()
        take(chunk[start:])
    if carry or pending or skipping or lineno == 0:
        yield line()


def _lf_only(text: str) -> str:
    """``text`` with its CR LF line ends as LF (the same lines where no CR is left:
    the callers use it only then)."""
    return text.replace("\r\n", "\n") if "\r" in text else text


def run_pattern(line: str) -> re.Pattern:
    """The pattern :func:`split_runs` takes: three or more consecutive whole lines, each
    matching the regular expression ``line`` (written without anchors or line end).

    ``line`` must match only lines that are one whole statement each, as the
    consumer would read it from a card of that one line: starting with an element
    letter in column 1, with no comment, no continuation and no dialect directive
    (none of ``; $ / \\ *`` at the start, ``+``).  The reader hands a run over only where
    it would hand each of its lines over as a card.
    """
    return re.compile(r"^(?:" + line + r"\n){3,}", re.M)


def split_runs(text: str, lineno: int, runs: re.Pattern) -> Iterator[tuple[int, str, int]]:
    """The lines of ``text`` (whole lines, each ending in ``\\n``), numbered from
    ``lineno + 1``: runs that ``runs`` matches as ``(first line, text of the run,
    -number of lines)``, the other lines as ``(line, text, length)``.

    A run's last line is handed out as a line of its own, since a ``+`` line after
    it (even past blank and comment lines) would continue it, unless the next line
    starts with a letter or a dot (a statement of its own); so no line of a run is
    continued.  Nor does a run start on line 1 (the title line of a top-level file).
    """
    pos = 0
    for match in runs.finditer(text):
        start, end = match.span()
        after = text[end:end + 1]
        if after.isalpha() or after == ".":
            last = end  # the next line starts a statement of its own: nothing continues the run
        else:
            last = text.rfind("\n", start, end - 1) + 1  # where the run's last line starts
        if start > pos:
            gap = text[pos:start].split("\n")
            gap.pop()
            yield from zip(range(lineno + 1, lineno + 1 + len(gap)), gap, map(len, gap))
            lineno += len(gap)
        count = text.count("\n", start, last)
        if lineno == 0:  # the title line stays a line
            first = text[start:text.index("\n", start)]
            yield 1, first, len(first)
            lineno, start, count = 1, start + len(first) + 1, count - 1
        if count >= 2:
            yield lineno + 1, text[start:last], -count
            lineno += count
            pos = last
        else:
            pos = start
    if pos < len(text):
        rest = text[pos:].split("\n")
        rest.pop()
        yield from zip(range(lineno + 1, lineno + 1 + len(rest)), rest, map(len, rest))


def _bounded(chunks: Iterable[bytes]) -> Iterator[bytes]:
    """``chunks`` without a UTF-8 byte-order mark at the start, and cut to at most
    :data:`_READ_CHUNK_BYTES` each (bytes already in memory are handed in as one
    chunk; no step of :func:`physical_lines` copies more than this)."""
    first = True
    for chunk in chunks:
        if first:
            first = False
            if chunk.startswith(b"\xef\xbb\xbf"):
                chunk = chunk[3:]
        if len(chunk) <= _READ_CHUNK_BYTES:
            yield chunk
        else:
            for start in range(0, len(chunk), _READ_CHUNK_BYTES):
                yield chunk[start:start + _READ_CHUNK_BYTES]


def _chunks(handle: BinaryIO, head: bytes) -> Iterator[bytes]:
    if head:
        yield head
    while True:
        chunk = handle.read(_READ_CHUNK_BYTES)
        if not chunk:
            return
        yield chunk


def sandbox_roots(opts: ReadOptions) -> list[Path]:
    """The real folders a read may come from: the project root and the include paths."""
    return [p.resolve() for p in ((opts.root,) if opts.root else ()) + tuple(opts.include_paths)]


def open_regular(path: Path, roots: Iterable[Path] = ()) -> BinaryIO:
    """Open ``path`` for reading only if it is a regular file (see
    :func:`lintamp.safe_paths.open_regular`: non-blocking open, then the open file,
    not the name, must be a regular file).

    Raises
    ------
    OSError
        The file cannot be opened; or it is a folder, device, pipe or socket
        (``strerror`` says which); or, given ``roots``, a symbolic link leads it
        out of them.
    """
    return safe_paths.open_regular(path, roots=roots)


def looks_binary(data: bytes) -> bool:
    head = data[:8192]
    if b"\x00" in head:
        return True
    if not head:
        return False
    control = sum(1 for b in head if b < 32 and b not in (9, 10, 12, 13))
    return control > len(head) // 10


def _strip_inline_comment(line: str, opts: ReadOptions) -> tuple[str, str]:
    """Split ``line`` into code and inline comment, respecting quotes and braces.

    ``;`` always starts a comment; ``$`` only at the line start or after a blank,
    and not when a brace follows it (``${dir}``, a generator's placeholder) or a name
    on an include card (``.include $PDK_ROOT/...``, shown as a placeholder);
    ``M$1`` is a name; ``$1.68`` and `` $d g s b`` are comments, as ngspice-39 reads
    them, but PSpice's net names (``$N_0001``, ``$G_DPWR``, ``$D_HI``) are names, as
    PSpice and Xyce read them; ``//`` after a blank when enabled.
    """
    if ";" not in line and "$" not in line and "/" not in line:
        return line, ""
    depth = 0
    quote = ""
    n = len(line)
    i = 0
    while i < n:
        ch = line[i]
        if quote:
            if ch == quote:
                quote = ""
        elif ch in "'\"":
            quote = ch
        elif ch == "{":
            depth += 1
        elif ch == "}":
            depth = max(0, depth - 1)
        elif depth == 0:
            if ch == ";":
                return line[:i], line[i + 1:]
            if ch == "$" and opts.dollar_comments and (i == 0 or line[i - 1] in " \t") and (
                    i + 1 == n or line[i + 1] != "{" and not (
                        (line[i + 1].isalpha() or line[i + 1] == "_") and _names_a_path(line))
                    and not _PSPICE_NET.match(line, i)):
                return line[:i], line[i + 1:]
            if ch == "/" and opts.slash_comments and i + 1 < n and line[i + 1] == "/" and (
                    i == 0 or line[i - 1] in " \t"):
                return line[:i], line[i + 2:]
        i += 1
    return line, ""


# PSpice's own net names ($N_0001 for unnamed nets, $G_DPWR for globals, $D_HI for digital
# levels), which its schematics write into every netlist and which Xyce reads as nets:
# a comment does not start that way
_PSPICE_NET = re.compile(r"\$(?:N_\d+|G_\w+|D_\w+)(?=[\s,()=]|$)")


def _names_a_path(line: str) -> bool:
    """An include-like card, whose ``$NAME`` stays in view as a placeholder (ngspice-39
    would take it as a comment and then miss the file name; the placeholder says why)."""
    return line[:4].lower() in (".inc", ".lib")


def _pragma_text(comment: str) -> str | None:
    text = comment.strip()
    if text[:8].lower() == "lintamp:":
        return text[8:].strip()
    return None


class _Reader:
    def __init__(self, opts: ReadOptions, sink: Callable[[Card], None] | None = None,
                 reading: Callable[[], bool] | None = None, bulk: "BulkSink | None" = None):
        self.opts = opts
        self.result = ReadResult()
        # where finished cards go: the result's list, or a consumer that handles each
        # card as it is read (the parser), so that a big file never holds all its cards
        self.sink = sink or self.result.cards.append
        # a consumer that also takes runs of its simplest lines in one call (see BulkSink)
        self.bulk = bulk
        # whether the consumer reads the statements here (False inside a .if branch
        # it does not take): an include there is not opened, as a simulator does not
        self.reading = reading or (lambda: True)
        self.n_cards = 0
        self.stack: list[tuple[str, str]] = []  # (realpath, section) being read
        self.allowed = sandbox_roots(opts)
        self.bytes_read = 0  # every file and re-read counted (MAX_TOTAL_BYTES)
        self.reads: dict[tuple[str, str], int] = {}  # (realpath, section) -> times read
        self.diag_counts: dict[tuple[str, str, str], int] = {}  # (file, rule, severity) -> count
        self.over_budget = False

    # -- paths ---------------------------------------------------------------
    def display(self, path: Path) -> str:
        base = self.opts.display_root
        if base is not None:
            try:
                return os.path.relpath(path, base).replace(os.sep, "/")
            except ValueError:
                pass
        return str(path).replace(os.sep, "/")

    def inside_sandbox(self, real: Path) -> bool:
        if not self.allowed:
            return True
        return any(real == a or a in real.parents for a in self.allowed)

    # -- files ---------------------------------------------------------------
    def read_top(self, path: Path, data: bytes | None = None, title: bool = True) -> ReadResult:
        try:
            self.stack.append((str(path.resolve()), ""))
        except OSError:
            pass
        if data is None and safe_paths.escapes_by_symlink(path, self.allowed):
            # a committed link out of the project: refused unopened, nothing of it quoted
            shown = self.display(path)
            self._diag("parse-error", Location(shown, 1, 1),
                       f"{shown} is a symbolic link to a file outside the project root and the "
                       "include paths; not read", expected="a netlist file inside the project")
            return self.result
        self._read_file(path, top_level=title, section=None, data=data, at=None)
        self._count_dropped()
        return self.result

    def _diag(self, rule: str, loc: Location, message: str, *, severity="error",
              subject="", expected="") -> None:
        key = (loc.path, rule, severity)
        count = self.diag_counts.get(key, 0) + 1
        self.diag_counts[key] = count
        if count > MAX_DIAGNOSTICS_PER_RULE:
            return  # counted; one message says how many at the end (_count_dropped)
        self.result.diagnostics.append(
            Diagnostic(rule, loc, message, subject=subject, severity=severity, expected=expected))

    def _count_dropped(self) -> None:
        """One diagnostic per file and rule that had more than MAX_DIAGNOSTICS_PER_RULE,
        saying how many more there were."""
        for (shown, rule, severity), count in self.diag_counts.items():
            if count > MAX_DIAGNOSTICS_PER_RULE:
                more = count - MAX_DIAGNOSTICS_PER_RULE
                self.result.diagnostics.append(Diagnostic(
                    rule, Location(shown, 1, 1),
                    f"{more} more {rule} problems in {shown} not listed (the first "
                    f"{MAX_DIAGNOSTICS_PER_RULE} are)", subject=f"{more} more", severity=severity))

    def _budget(self, real: Path, section: str | None, size: int, loc: Location) -> bool:
        """Whether one more read of ``real`` (``size`` bytes) fits the check's budget:
        at most MAX_READS_PER_FILE reads of one file and section, MAX_TOTAL_BYTES in all."""
        if self.over_budget:
            return False
        key = (str(real), section or "")
        times = self.reads.get(key, 0)
        if times >= MAX_READS_PER_FILE:
            self._diag("bad-include", loc, f"{self.display(real)} already read {times} times in "
                       "this check; not read again", subject=self.display(real))
            return False
        if self.bytes_read + size > MAX_TOTAL_BYTES:
            self.over_budget = True
            self._diag("bad-include", loc, f"the includes add up to more than {MAX_TOTAL_BYTES} "
                       f"bytes; {self.display(real)} and the includes after it are not read",
                       subject=self.display(real))
            return False
        self.reads[key] = times + 1
        self.bytes_read += size
        return True

    def _read_file(self, path: Path, *, top_level: bool, section: str | None,
                   data: bytes | None, at: Location | None) -> None:
        shown = self.display(path)
        if data is not None:
            if self._refuse(data[:_HEAD_BYTES], shown, at):
                return
            self._note_file(shown)
            self._read_lines(physical_lines((data,), self._runs()), shown, path,
                             top_level=top_level, section=section,
                             script=section is None and is_control_script(data[:_HEAD_BYTES]))
            return
        try:
            handle = open_regular(path)
        except OSError as exc:
            self._diag("missing-include" if at else "parse-error", at or Location(shown, 1, 1),
                       f"cannot read {shown}: {exc.strerror or exc}", severity="warning" if at else "error")
            return
        with handle:
            size = os.fstat(handle.fileno()).st_size
            if size > MAX_FILE_BYTES:
                self._diag("bad-include" if at else "parse-error", at or Location(shown, 1, 1),
                           f"{shown}: file is {size} bytes, over the {MAX_FILE_BYTES}-byte limit; not read")
                return
            if not self._budget(path, section, size, at or Location(shown, 1, 1)):
                return
            head = handle.read(_HEAD_BYTES)
            if self._refuse(head, shown, at):
                return
            self._note_file(shown)
            self._read_lines(physical_lines(_chunks(handle, head), self._runs()), shown, path,
                             top_level=top_level, section=section,
                             script=section is None and is_control_script(head))

    def _runs(self) -> re.Pattern | None:
        return self.bulk.runs if self.bulk is not None else None

    def _note_file(self, shown: str) -> None:
        if shown not in self.result.files:
            self.result.files.append(shown)

    def _refuse(self, head: bytes, shown: str, at: Location | None) -> bool:
        """Say why a file is not netlist text (judged by its first bytes), or return False."""
        link = stored_link(head) if at is not None else None
        if link:  # (a top-level file like this is the parser's: ngspice reads it as a title)
            self._diag("missing-include", at,
                       f"{shown} holds only the path '{link}': a symbolic link checked out as "
                       "a text file (git with core.symlinks off), so its target is not read",
                       severity="warning", subject=link,
                       expected="a working link (clone with symbolic links on), or include "
                                "the target file")
            return True
        encoding = foreign_encoding(head)
        if encoding is not None:
            self._diag("parse-error", at or Location(shown, 1, 1),
                       f"{shown} is {encoding} text (byte-order mark); lintamp, like SPICE "
                       "simulators, reads UTF-8 or latin-1 netlists: save it as UTF-8; not read",
                       expected="UTF-8 or latin-1 text")
            return True
        if looks_binary(head):
            self._diag("parse-error", at or Location(shown, 1, 1),
                       f"{shown} looks like a binary file, not netlist text; not read",
                       expected="SPICE netlist text")
            return True
        return False

    def _read_lines(self, source: Iterable[tuple[int, str | None, int]], shown: str, path: Path, *,
                    top_level: bool, section: str | None, script: bool = False) -> None:
        opts = self.opts
        sink = self.sink
        lines = iter(source)
        # the statement being read: a Card when it is one plain line (the commonest by
        # far), else [pieces, segments, first_comment, last_line, size] as it grows
        current: Card | list | None = None
        cdl_open: CommentLine | None = None  # a CDL '*.' directive that '+' lines may continue
        # a file of simulator commands (the kind a .control block sources) is read as
        # the inside of a .control block: the nets it looks at, no elements, no errors
        in_control = script
        in_data = False
        spectre = False
        in_section = section is None
        section_depth = 0
        if top_level:
            _, first, length = next(lines, (1, "", 0))
            if first is None:
                self._too_long(shown, 1, length)
                first = ""
            self.result.title = excerpt(first.strip(), 200)
            pragma = _pragma_text(first.lstrip("*$ \t"))
            if pragma is not None and first.lstrip()[:1] in "*$":
                self.result.comments.append(CommentLine(pragma, Location(shown, 1, 1), "pragma"))

        def flush():
            nonlocal current
            if current.__class__ is Card:
                self.n_cards += 1
                sink(current)
                current = None
            elif current is not None:
                pieces, segs, comment, last, size = current
                if size > MAX_CARD_CHARS:
                    self._diag("parse-error", Location(shown, segs[0][1], segs[0][2]),
                               f"statement is over the {MAX_CARD_CHARS}-character limit "
                               f"(lines {segs[0][1]} to {last}); skipped")
                else:
                    self.n_cards += 1
                    sink(Card("".join(pieces), shown, segs, comment, last))
                current = None

        pushed_back: tuple[int, str | None, int] | None = None
        next_line = lines.__next__
        while True:
            if pushed_back is not None:
                lineno, raw, length = pushed_back
                pushed_back = None
            else:
                try:
                    lineno, raw, length = next_line()
                except StopIteration:
                    break
            if raw is None:
                flush()
                cdl_open = None
                self._too_long(shown, lineno, length)
                continue
            if length < 0:  # a run of lines the consumer takes in bulk (see split_runs)
                if in_section and not (in_control or in_data or spectre):
                    flush()
                    cdl_open = None
                    self.n_cards -= length
                    self.bulk.take_run(raw, shown, lineno, -length)
                    continue
                # not read as statements here: line by line, as any other lines
                pieces = raw.split("\n")
                pieces.pop()
                lines = chain(zip(range(lineno, lineno + len(pieces)), pieces, map(len, pieces)),
                              lines)
                next_line = lines.__next__
                continue
            stripped = raw.lstrip()
            if not stripped:
                continue
            indent = len(raw) - len(stripped)
            head = stripped[0]
            if head.isalpha() and in_section and not (in_control or in_data or spectre) and not (
                    ";" in stripped or "$" in stripped or "/" in stripped or "\\" in stripped) and not (
                    head in "sS" and stripped[:9].lower() == "simulator"):
                # the commonest line by far, an element card with no comment, no
                # continuation marker and no directive: what the general path below
                # would do with it, without its checks (one line is under MAX_LINE_BYTES,
                # so never over MAX_CARD_CHARS): a Card at once, handed on at the next
                # statement unless a '+' line continues it
                cdl_open = None
                if current.__class__ is Card:
                    self.n_cards += 1
                    sink(current)
                elif current is not None:
                    flush()
                current = Card(stripped, shown, [(0, lineno, indent + 1)], "", lineno)
                continue
            # whole-line comments: keep pragmas and CDL directives
            if head == "*" or (head == "$" and (len(stripped) == 1 or stripped[1] in " \t$")) \
                    or stripped.startswith("//"):
                body = stripped[2:] if stripped.startswith("//") else stripped[1:]
                pragma = _pragma_text(body)
                if pragma is not None:
                    self.result.comments.append(
                        CommentLine(pragma, Location(shown, lineno, indent + 1), "pragma"))
                elif head == "*" and in_section and not in_control and "IS MISSING" in body \
                        and _DROPPED_INSTANCE.match(body):
                    # a schematic exporter's note that it left an instance out (its
                    # symbol was not found): the netlist lacks that instance
                    self.result.comments.append(
                        CommentLine(body.strip(), Location(shown, lineno, indent + 1), "dropped-instance"))
                elif head == "*" and body[:1] == "." and in_section and not in_control:
                    flush()  # a '+' after a CDL directive continues the directive, not a card
                    cdl_open = CommentLine(body.strip(), Location(shown, lineno, indent + 1), "cdl")
                    self.result.comments.append(cdl_open)
                    continue
                continue
            lowered = stripped[:10].lower()
            if in_control:
                if lowered.startswith(".endc"):
                    in_control = False
                else:
                    self.result.observed.update(probed_nets(stripped))
                continue
            if in_data:
                if lowered.startswith(".enddata"):
                    in_data = False
                continue
            if lowered.startswith("simulator"):
                low = stripped.lower().replace(" ", "")
                if "lang=spectre" in low:
                    flush()
                    spectre = True
                    self._diag("unsupported-syntax", Location(shown, lineno, indent + 1),
                               "Spectre-language section: lintamp reads SPICE syntax only, so "
                               "the lines up to the next 'simulator lang=spice' are not checked",
                               severity="info")
                elif "lang=spice" in low:
                    spectre = False
                continue
            if spectre:
                continue
            code, comment = _strip_inline_comment(stripped, opts)
            # trailing backslash continues onto the next line (HSPICE / Spectre style);
            # the pieces are joined once at the end: O(length), not O(length x lines)
            if code.rstrip().endswith("\\") and not code.rstrip().endswith("\\\\\\"):
                joined, size, last = [], 0, code
                while last.rstrip().endswith("\\") and not last.rstrip().endswith("\\\\\\"):
                    got = next(lines, None)
                    if got is None:
                        break
                    if got[1] is None:  # an over-long line ends the statement; said below
                        pushed_back = got
                        break
                    piece = last.rstrip()[:-1] + " "
                    joined.append(piece)
                    size += len(piece)
                    last = ""
                    if size > MAX_CARD_CHARS:  # a statement that never ends: stop joining
                        break
                    last, _ = _strip_inline_comment(got[1].lstrip(), opts)
                joined.append(last)
                code = "".join(joined)
            if head == "+" and cdl_open is not None:
                cdl_open.text += " " + code[1:].strip()
                continue
            cdl_open = None
            if head == "+":
                if current.__class__ is Card:  # a plain line is continued after all
                    current = [[current.text], current.segments, current.comment, current.last_line,
                               len(current.text)]
                if current is None:
                    if in_section:
                        self._diag("parse-error", Location(shown, lineno, indent + 1),
                                   "continuation line '+' with no statement before it",
                                   expected="a statement before the '+' line")
                    continue
                if current[4] > MAX_CARD_CHARS:
                    continue  # already refused when flushed; stop growing it
                offset = current[4] + 1
                current[0].append(" ")
                current[0].append(code[1:])
                current[4] = offset + len(code) - 1
                current[1].append((offset, lineno, indent + 2))
                current[3] = lineno
                if comment and _pragma_text(comment) is not None:
                    self.result.comments.append(
                        CommentLine(_pragma_text(comment), Location(shown, lineno, indent + 1), "pragma"))
                continue
            flush()
            word = lowered.split(None, 1)[0] if lowered.split() else ""
            if word.startswith(".control"):
                in_control = True
                continue
            if word.startswith(".data") and not word.startswith(".database"):
                in_data = True
                continue
            if section is not None or word in (".lib", ".endl"):
                handled, in_section, section_depth = self._section_card(
                    stripped, code, shown, path, lineno, indent, section, in_section, section_depth)
                if handled:
                    continue
            if not in_section:
                continue
            if word == ".end":
                # ngspice-39 reads on past .end (checked: an R card, a .subckt and an
                # .include after it all take part in the circuit), so lintamp does too
                continue
            if word in (".include", ".inc", ".incl", ".includes"):
                self._include(code, shown, path, lineno, indent)
                continue
            current = [[code], [(0, lineno, indent + 1)], comment, lineno, len(code)]
            if comment:
                pragma = _pragma_text(comment)
                if pragma is not None:
                    self.result.comments.append(
                        CommentLine(pragma, Location(shown, lineno, indent + 1), "pragma-inline"))
        flush()

    def _too_long(self, shown: str, lineno: int, length: int) -> None:
        self._diag("parse-error", Location(shown, lineno, 1),
                   f"line is {length} bytes long, over the {MAX_LINE_BYTES}-byte limit; skipped "
                   "unread", expected=f"lines under {MAX_LINE_BYTES} bytes ('+' continues a statement)")

    # -- .lib sections ---------------------------------------------------------
    def _section_card(self, stripped, code, shown, path, lineno, indent, section,
                      in_section, depth):
        """Handle ``.lib``/``.endl``; returns (handled, in_section, depth)."""
        tokens = _split_path_tokens(code)
        word = tokens[0].lower() if tokens else ""
        loc = Location(shown, lineno, indent + 1)
        if word == ".endl":
            if section is not None and in_section and depth == 0:
                return True, False, 0
            return True, in_section, max(0, depth - 1)
        if word != ".lib":
            return False, in_section, depth
        if len(tokens) >= 3:  # .lib FILE SECTION: use a section
            if in_section:
                self._include_section(tokens[1], tokens[2], shown, path, loc)
            return True, in_section, depth
        if len(tokens) == 2:
            if section is not None:  # inside a library file: .lib NAME opens a section
                if in_section:
                    return True, in_section, depth + 1  # nested definition inside ours
                return True, tokens[1].lower() == section, 0
            # top-level file: a .lib NAME block defines a section nobody selected; skip it
            # unless NAME is a file (PSPICE style '.lib file' behaves like .include)
            target = self._resolve(tokens[1], path, loc, quiet=True)
            if target is not None and target.is_file():
                if in_section:
                    self._include(code, shown, path, lineno, indent, tokens=tokens)
                return True, in_section, depth
            return True, False, 0
        self._diag("parse-error", loc, ".lib without a file or section name",
                   expected=".lib FILE SECTION or .lib SECTION")
        return True, in_section, depth

    # -- includes ------------------------------------------------------------
    def _resolve(self, target: str, including: Path, loc: Location, *, quiet=False) -> Path | None:
        if _PLACEHOLDER.search(target):
            if not quiet:
                self._diag("missing-include", loc,
                           f"include path '{excerpt(target)}' holds an unexpanded placeholder; "
                           "the file it names is not read", severity="warning", subject=target)
            return None
        written = target
        target = expand_home(target)
        target_path = Path(target.replace("\\", "/"))
        candidates = []
        if target_path.is_absolute():
            candidates.append(target_path)
        else:
            candidates.append(including.parent / target_path)
            candidates.extend(p / target_path for p in self.opts.include_paths)
        # A candidate is judged by where it really is (symlinks followed) before
        # anything about it is looked at, so nothing outside the sandbox is read,
        # nor even told apart as present or absent.
        outside = False
        not_files = []  # inside, existing, but folders, devices or pipes
        for number, cand in enumerate(candidates):
            try:
                real = cand.resolve()
                if not self.inside_sandbox(real):
                    # judged by where the path as written points (beside the including
                    # file, or absolute): a missing file there is missing, even where an
                    # include path joined to the same text would climb out
                    outside = outside or number == 0
                    continue
                if real.is_file():
                    return real
                if real.exists():
                    not_files.append(real)
            except (OSError, ValueError, RuntimeError):  # NUL in the name, symlink loop
                continue
        if not_files or outside:
            if quiet:
                return None
            if not_files:
                self._diag("bad-include", loc, f"'{excerpt(target)}' is a folder, device or pipe, "
                           "not a netlist file; not read", subject=target)
            else:
                self._outside(written, loc)
            return None
        if not quiet:
            bare = "/" not in written and "\\" not in written
            self._diag("missing-include", loc,
                       f"include file '{excerpt(written)}' not found (looked beside "
                       f"{self.display(including)}" + (" and in the include paths" if self.opts.include_paths else "")
                       + "); checking goes on without it", severity="warning", subject=written,
                       # a bare library name is found through the simulator's search path
                       # (ngspice-39, checked: the folders of 'set sourcepath', which a PDK's
                       # .spiceinit sets)
                       expected="the folder that holds it, given with --include-path "
                                "(include-paths in the config)" + (
                                    "; ngspice finds such a name through the folders of its "
                                    "sourcepath, which a PDK's .spiceinit sets" if bare else ""))
        return None

    def _outside(self, target: str, loc: Location) -> None:
        # A library named by an absolute or home path (a PDK installed on the author's
        # machine) is one the reviewer may not have: a warning, as a missing file is.
        # A relative path that climbs out of the project is an error.
        machine_path = is_machine_path(target)
        self._diag("bad-include", loc,
                   f"'{excerpt(target)}' resolves outside the project root and the "
                   "include paths; not read (add its folder with --include-path "
                   "if it is trusted)", subject=target,
                   severity="warning" if machine_path else "error",
                   expected=OUTSIDE_EXPECTED)

    def _enter(self, real: Path, section: str | None, loc: Location) -> bool:
        key = (str(real), section or "")
        if key in self.stack:
            chain = " -> ".join(self.display(Path(p)) + (f"[{s}]" if s else "") for p, s in self.stack)
            self._diag("bad-include", loc, f"include cycle: {excerpt(chain, 200)} -> "
                       f"{excerpt(self.display(real))}; not read again", subject=self.display(real))
            return False
        if len(self.stack) >= MAX_INCLUDE_DEPTH:
            self._diag("bad-include", loc, f"includes nested more than {MAX_INCLUDE_DEPTH} deep; "
                       "not read further", subject=self.display(real))
            return False
        return True

    def _include(self, code, shown, path, lineno, indent, tokens=None):
        if not self.reading():
            return
        tokens = tokens or _split_path_tokens(code)
        loc = Location(shown, lineno, indent + 1)
        if len(tokens) < 2:
            self._diag("parse-error", loc, f"{tokens[0]} without a file name", expected="a file name")
            return
        real = self._resolve(tokens[1], path, loc)
        if real is None or not self._enter(real, None, loc):
            return
        self.stack.append((str(real), ""))
        try:
            self._read_file(real, top_level=False, section=None, data=None, at=loc)
        finally:
            self.stack.pop()

    def _include_section(self, target, section, shown, path, loc):
        if not self.reading():
            return
        real = self._resolve(target, path, loc)
        if real is None:
            return
        section = section.lower()
        if not self._enter(real, section, loc):
            return
        self.stack.append((str(real), section))
        before = self.n_cards
        try:
            self._read_file(real, top_level=False, section=section, data=None, at=loc)
        finally:
            self.stack.pop()
        if self.n_cards == before and not self._has_section(real, section):
            self._diag("missing-include", loc, f"library {self.display(real)} has no section "
                       f"'{excerpt(section)}'", severity="warning", subject=section)

    def _has_section(self, real: Path, section: str) -> bool:
        pattern = re.compile(r"\s*\.lib\s+" + re.escape(section) + r"\s*", re.I)
        try:
            with open_regular(real) as handle:
                return any(text is not None and pattern.fullmatch(text)
                           for _, text, _ in physical_lines(_chunks(handle, b"")))
        except OSError:
            return False


OUTSIDE_EXPECTED = "a file inside the project root or the include paths"
# xschem's note for an instance whose symbol it could not find: '*  x1 -  inv  IS MISSING !!!!'
_DROPPED_INSTANCE = re.compile(r"\s*(\S+)\s+-\s+(\S+)\s+IS MISSING\b")

# ngspice's interactive commands (the ngspice-39 manual, chapter 17): the words a
# control script's lines begin with
CONTROL_COMMANDS = frozenset("""
let alter alterparam altermod set unset setplot setcs run tran ac dc op noise pz sens disto
meas measure plot print wrdata write wrs2p echo foreach while repeat dowhile if else end
break continue destroy linearize reset shell quit exit display listing define undefine
compose rusage remcirc source load snload snsave save fourier spec hardcopy asciiplot iplot
gnuplot resume stop step status delete trace rehash cd version option options setseed
""".split())
_CONTROL_HEAD = re.compile(r"\s*([A-Za-z_]+)")


def is_control_script(head: bytes) -> bool:
    """Whether a file's first bytes read as ngspice commands rather than a circuit:
    no .control block, no .subckt, no .end, and most statements begin with a command
    word (``let``, ``alter``, ``meas``, ``plot`` ...), three at least."""
    text = head.decode("latin-1", errors="replace")
    commands = statements = 0
    for line in text.splitlines()[1:200]:  # the first line is a title when checked alone
        stripped = line.strip()
        if not stripped or stripped[0] in "*$;+" or stripped.startswith("//"):
            continue
        low = stripped.lower()
        if low.startswith((".control", ".subckt", ".end", ".ends")):
            return False
        statements += 1
        m = _CONTROL_HEAD.match(low)
        if m and m.group(1) in CONTROL_COMMANDS:
            commands += 1
    return commands >= 3 and commands * 10 >= statements * 8


def expand_home(target: str) -> str:
    """``~`` and ``~/...`` as ngspice-39 expands them in include paths (HOME from the
    environment); ``$NAME`` and ``${NAME}`` it does not expand, and neither does this."""
    if target == "~" or target.startswith(("~/", "~\\")):
        home = os.environ.get("HOME")
        if home:
            return home.rstrip("/\\") + target[1:]
    return target

_STORED_LINK = re.compile(rb"(?:\.{1,2}/|[\w.-]+/)*[\w.-]+\.(?:cir|sp|spi|spice|net|ckt|cdl|lib|inc|sub|mod)")


def stored_link(head: bytes) -> str | None:
    """The target path when a file's whole text is one relative path with a folder and a
    netlist ending and no line break (how git writes a symbolic link where links are off).

    >>> stored_link(b"xspice/brownout_dig.out.spice"), stored_link(b"* title\\nR1 a 0 1k\\n")
    ('xspice/brownout_dig.out.spice', None)
    """
    if len(head) > 1024 or b"/" not in head or not _STORED_LINK.fullmatch(head):
        return None
    return head.decode("latin-1")


_TEMPLATE_PATH = re.compile(r"\$\{|@|\{[A-Za-z_]")


def is_template_path(diag) -> bool:
    """An include path with a generator's placeholder ('{DUT_path}', '${model_file}',
    '@@PEX_PATH'): the deck is a template the flow fills in, not a deck to run."""
    return "placeholder" in diag.message and _TEMPLATE_PATH.search(diag.subject) is not None


def is_machine_path(target: str) -> bool:
    """Whether an include names a place on the author's machine: an absolute path, a
    home path or a Windows drive path (not a relative path climbing out)."""
    t = target.replace("\\", "/")
    return t.startswith(("/", "~")) or (len(t) > 2 and t[1] == ":" and t[2] == "/")


def _split_path_tokens(code: str) -> list[str]:
    """Tokens of an include-like card; quoted paths keep their spaces."""
    out = []
    for m in re.finditer(r"'([^']*)'|\"([^\"]*)\"|(\S+)", code):
        out.append(m.group(1) if m.group(1) is not None else
                   m.group(2) if m.group(2) is not None else m.group(3))
    return out


class BulkSink(Protocol):
    """A consumer that takes runs of its simplest lines in one call.

    ``runs`` is a :func:`run_pattern`; ``take_run(text, path, first_line, count)`` gets
    ``count`` whole lines (each ending in ``\\n``, the first on ``first_line``, all at
    column 1), each of which is one whole statement: what ``sink`` would otherwise get
    as ``count`` one-line cards, in the same order with nothing between them.
    """

    runs: re.Pattern

    def take_run(self, text: str, path: str, first_line: int, count: int) -> None: ...


def read(path: Path, opts: ReadOptions | None = None, *, data: bytes | None = None,
         title: bool = True, sink: Callable[[Card], None] | None = None,
         reading: Callable[[], bool] | None = None, bulk: BulkSink | None = None) -> ReadResult:
    """Read a netlist file and its includes; with ``title`` its first line is the title.

    With ``sink`` each card goes to ``sink(card)`` as soon as it is complete, in file
    order, instead of into ``ReadResult.cards`` (which then stays empty): a consumer
    that handles cards one by one never holds a whole big file's cards at once.
    ``reading()``, asked at each include, says whether the sink reads the statements
    there (a parser inside a .if branch it skips says False: the file is not opened).
    With ``bulk`` (a :class:`BulkSink`), runs of the lines it asks for go to it.
    """
    return _Reader(opts or ReadOptions(), sink, reading, bulk).read_top(path, data, title)


def read_text(text: str, path: str = "<text>", opts: ReadOptions | None = None,
              sink: Callable[[Card], None] | None = None,
              reading: Callable[[], bool] | None = None,
              bulk: BulkSink | None = None) -> ReadResult:
    """Read netlist text held in memory (first line is the title); ``sink``,
    ``reading`` and ``bulk`` as in :func:`read`."""
    opts = opts or ReadOptions()
    reader = _Reader(opts, sink, reading, bulk)
    reader.result.files.append(path)
    reader._read_lines(_text_lines(text, reader._runs()), path, Path(path), top_level=True,
                       section=None,
                       script=is_control_script(text[:_HEAD_BYTES].encode("latin-1", "replace")))
    reader._count_dropped()
    return reader.result


def _text_lines(text: str, runs: re.Pattern | None = None) -> Iterator[tuple[int, str | None, int]]:
    """:func:`physical_lines` for text already in memory (same line ends and limit)."""
    lf_text = _lf_only(text) if runs is not None else text
    if runs is not None and "\r" not in lf_text and (
            len(text) <= MAX_LINE_BYTES or max(map(len, text.split("\n"))) <= MAX_LINE_BYTES):
        text = lf_text
        cut = text.rfind("\n") + 1
        yield from split_runs(text[:cut], 0, runs)
        rest = text[cut:]  # the text after the last line end: one more line, maybe empty
        yield text.count("\n", 0, cut) + 1, rest, len(rest)
        return
    for lineno, line in enumerate(_BREAK_TEXT.split(text), 1):
        yield (lineno, None, len(line)) if len(line) > MAX_LINE_BYTES else (lineno, line, len(line))


def iter_cards(result: ReadResult) -> Iterator[Card]:
    return iter(result.cards)
