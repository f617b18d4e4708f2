"""The decks that include a file: what ``check --dependents`` adds to the files named.

A pre-commit hook passes the staged files.  When one of them is a model library or
an include file, the decks that read it (directly or through other includes) are
checked too.  The decks looked at are the project's netlists: the files under the
config root that the ``netlists`` and ``exclude`` globs select.

Includes are found by a plain scan for ``.include`` / ``.inc`` / ``.lib`` cards,
resolved the way the reader resolves them (beside the including file, then the
include paths) and only inside the project root and the include paths; nothing is
parsed or elaborated.  A named file that is no netlist by the globs (``models.lib``)
is not checked on its own, only through the decks that include it.
"""

from __future__ import annotations

import re
from collections import deque
from pathlib import Path
from typing import Iterable, Sequence

# ``.include FILE``, ``.inc FILE``, ``.lib FILE [SECTION]``, with the file name bare or quoted.
_INCLUDE = re.compile(rb"""^[ \t]*\.(?:include|includes|incl|inc|lib)[ \t]+("[^"\n]*"|'[^'\n]*'|[^\s]+)""",
                      re.IGNORECASE | re.MULTILINE)
MAX_SCAN_BYTES = 256 << 20  # a file larger than this is not scanned for includes


class IncludeScanner:
    """Which files each file includes, resolved and kept inside the allowed folders."""

    def __init__(self, root: Path, include_paths: Iterable[Path] = ()):
        self.root = Path(root).resolve()
        self.include_paths = tuple(Path(p).resolve() for p in include_paths)
        self.allowed = (self.root, *self.include_paths)
        self._includes: dict[Path, tuple[Path, ...]] = {}

    def inside(self, real: Path) -> bool:
        return any(real == folder or folder in real.parents for folder in self.allowed)

    def includes(self, path: Path) -> tuple[Path, ...]:
        """The existing files that ``path``'s include cards name (resolved paths)."""
        path = Path(path).resolve()
        known = self._includes.get(path)
        if known is not None:
            return known
        found: list[Path] = []
        try:
            if path.is_file() and path.stat().st_size <= MAX_SCAN_BYTES:
                data = path.read_bytes()
                for match in _INCLUDE.finditer(data):
                    target = match.group(1).strip(b"'\"").decode("utf-8", "replace")
                    real = self._resolve(target, path)
                    if real is not None and real not in found:
                        found.append(real)
        except OSError:
            pass
        self._includes[path] = tuple(found)
        return self._includes[path]

    def _resolve(self, target: str, including: Path) -> Path | None:
        if not target or "\0" in target:
            return None
        target_path = Path(target.replace("\\", "/"))
        candidates = ([target_path] if target_path.is_absolute() else
                      [including.parent / target_path, *(p / target_path for p in self.include_paths)])
        for candidate in candidates:
            try:
                real = candidate.resolve()
                if self.inside(real) and real.is_file():
                    return real
            except (OSError, ValueError, RuntimeError):
                continue
        return None

    def reached_from(self, deck: Path) -> set[Path]:
        """Every file ``deck`` reads through includes, transitively (not the deck itself)."""
        seen: set[Path] = set()
        queue = deque(self.includes(deck))
        while queue:
            current = queue.popleft()
            if current in seen:
                continue
            seen.add(current)
            queue.extend(self.includes(current))
        return seen


def dependents(changed: Iterable[Path], config, include_paths: Iterable[Path] = ()) -> list[Path]:
    """The project's netlists that include one of ``changed``, directly or not, in the
    order folder discovery lists them (see :func:`lintamp.api.collect_paths`)."""
    from lintamp.api import collect_paths
    wanted = {Path(p).resolve() for p in changed}
    if not wanted:
        return []
    scanner = IncludeScanner(config.root, include_paths)
    out = []
    for deck in collect_paths([config.root], config):
        if scanner.reached_from(deck) & wanted:
            out.append(deck)
    return out


def with_dependents(files: Sequence[Path], config, include_paths: Iterable[Path] = ()) -> list[Path]:
    """``files`` that are netlists by the globs, then their dependents not already there."""
    checked = [f for f in files if config.wants_file(f)]
    have = {f.resolve() for f in checked}
    for deck in dependents(files, config, include_paths):
        if deck.resolve() not in have:
            have.add(deck.resolve())
            checked.append(_as_given(deck))
    return checked


def _as_given(path: Path) -> Path:
    """A path under the current folder as a relative one, as a user would have named it."""
    try:
        return path.resolve().relative_to(Path.cwd().resolve())
    except ValueError:
        return path
