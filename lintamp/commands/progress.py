"""A progress line on stderr for long checks, and only where a person watches it.

Shown when stderr is a terminal, the ``CI`` environment variable is unset (or empty,
or ``false``/``0``), and the run is long: more than :data:`FEW_FILES` files, or a
file of more than :data:`BIG_DECK_LINES` lines (about 100k elements).  The line is
transient (rich clears it when the run ends), it goes to stderr only, and it stops
before the report is written, so nothing of it reaches a report on stdout or in a
file.  rich is imported only when the line is shown.
"""

from __future__ import annotations

import contextlib
import os
from pathlib import Path
from typing import Callable, Iterator, Sequence, TextIO

FEW_FILES = 4
BIG_DECK_LINES = 100_000
# A SPICE element card is at least ~8 bytes ("r1 a b 1\n"); a smaller file cannot hold
# BIG_DECK_LINES cards, so only files above this size have their lines counted.
_SMALLEST_BIG_DECK_BYTES = 8 * BIG_DECK_LINES

Progress = Callable[[int, int, str], None]  # (files done, files in all, the file just done)


def in_ci(environ=os.environ) -> bool:
    """Whether the ``CI`` variable (set by GitHub Actions, GitLab CI and most others) is on."""
    return environ.get("CI", "").strip().lower() not in ("", "0", "false", "no")


def _is_terminal(stream) -> bool:
    try:
        return stream.isatty()
    except (AttributeError, ValueError, OSError):
        return False


def has_big_deck(files: Sequence[Path]) -> bool:
    """Whether one of ``files`` has more than :data:`BIG_DECK_LINES` lines."""
    for path in files:
        try:
            if os.stat(path).st_size <= _SMALLEST_BIG_DECK_BYTES:
                continue
            lines = 0
            with open(path, "rb") as handle:
                while chunk := handle.read(1 << 20):
                    lines += chunk.count(b"\n")
                    if lines > BIG_DECK_LINES:
                        return True
        except OSError:
            continue
    return False


def wants_progress(files: Sequence[Path], stream, environ=os.environ) -> bool:
    """The rule of the module docstring."""
    if in_ci(environ) or not _is_terminal(stream):
        return False
    return len(files) > FEW_FILES or has_big_deck(files)


@contextlib.contextmanager
def progress_for(files: Sequence[Path], stream: TextIO, *, machine_stdout: bool = False,
                 environ=os.environ) -> Iterator[Progress | None]:
    """A callback for :func:`lintamp.api.check_paths`, or None when no line is shown.

    ``machine_stdout``: the report goes to stdout in a machine-readable format.  The
    line still goes to stderr only; it is cleared before the report is written.
    """
    del machine_stdout  # stderr only, cleared before the report: nothing to do differently
    if not files or not wants_progress(files, stream, environ):
        yield None
        return
    from rich.console import Console
    from rich.progress import (BarColumn, MofNCompleteColumn, Progress as RichProgress,
                               SpinnerColumn, TextColumn, TimeElapsedColumn)

    console = Console(file=stream, stderr=True, highlight=False, markup=False, emoji=False)
    total = len(files)
    bar = RichProgress(SpinnerColumn(), TextColumn("checking"), BarColumn(), MofNCompleteColumn(),
                       TextColumn("files"), TimeElapsedColumn(), TextColumn("{task.fields[now]}", markup=False),
                       console=console, transient=True, refresh_per_second=4)
    task = bar.add_task("check", total=total, now=_shown(files[0]))
    names = [_shown(f) for f in files]

    def advance(done: int, all_files: int, just_done: str) -> None:
        following = names[done] if done < len(names) else ""
        bar.update(task, completed=done, total=all_files, now=following)

    with bar:
        yield advance


def _shown(path: Path) -> str:
    from lintamp.report.base import printable
    text = printable(str(path))
    return text if len(text) <= 60 else "…" + text[-59:]
