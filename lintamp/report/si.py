"""Numbers as engineers write them: kept here for the reporters' and front ends'
imports; the functions live in the leaf module :mod:`lintamp.text`."""

from lintamp.text import UNIT_SUFFIXES, si, si_for_key

__all__ = ["UNIT_SUFFIXES", "si", "si_for_key"]
