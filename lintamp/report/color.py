"""Whether to colour terminal output (INTERFACE.md: --color, then NO_COLOR / FORCE_COLOR, then a tty)."""

from __future__ import annotations

import os

COLOR_CHOICES = ("auto", "always", "never")


def want_color(flag: str, stream) -> bool:
    """Decide colour for ``stream``.

    ``--color always|never`` decides alone.  With ``auto``: a non-empty ``NO_COLOR``
    turns colour off (no-color.org); else a non-empty ``FORCE_COLOR`` other than
    ``0``/``false`` turns it on; else colour only on a terminal whose ``TERM`` is not
    ``dumb``.

    >>> import io
    >>> want_color("always", io.StringIO()), want_color("never", io.StringIO())
    (True, False)
    """
    flag = (flag or "auto").strip().lower()
    if flag not in COLOR_CHOICES:
        raise ValueError(f"--color: unknown value {flag!r}; expected auto, always or never")
    if flag != "auto":
        return flag == "always"
    if os.environ.get("NO_COLOR", ""):
        return False
    force = os.environ.get("FORCE_COLOR", "")
    if force and force.strip().lower() not in ("0", "false"):
        return True
    isatty = getattr(stream, "isatty", None)
    try:
        on_terminal = bool(isatty and isatty())
    except (ValueError, OSError):  # a closed or odd stream
        on_terminal = False
    return on_terminal and os.environ.get("TERM", "") != "dumb"
