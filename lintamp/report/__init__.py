"""Reporters: one small module per output format, loaded only when chosen.

A pre-commit hook starts the tool for every commit, so importing this package
imports no reporter; :func:`get_reporter` imports the one asked for.
"""

from __future__ import annotations

import importlib

from lintamp.report.color import want_color

__all__ = ["REPORTERS", "FORMATS", "get_reporter", "want_color"]

REPORTERS: dict[str, str] = {
    "text": "lintamp.report.text:TextReporter",
    "json": "lintamp.report.json_report:JsonReporter",
    "sarif": "lintamp.report.sarif:SarifReporter",
    "github": "lintamp.report.github:GithubReporter",
    "junit": "lintamp.report.junit:JunitReporter",
}
FORMATS = tuple(REPORTERS)


def get_reporter(name: str):
    """The reporter class for a ``--format`` name; ``KeyError`` names the choices."""
    try:
        target = REPORTERS[name]
    except KeyError:
        raise KeyError(f"unknown format {name!r}; expected one of {', '.join(FORMATS)}") from None
    module_name, class_name = target.split(":")
    return getattr(importlib.import_module(module_name), class_name)
