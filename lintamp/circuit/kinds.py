"""Device kinds by name, in one place: every layer compares a device's ``kind`` with these.

A recognised device (``circuit.design.Device``) has one of the kinds of
``design.PINS`` (``"mos"`` and ``"bjt"`` where the polarity is unknown); a device of
the flat circuit the engine simulates (``circuit.flat``) has a resolved polarity.
Tuples, not sets: they read in the order engineers list them, and ``in`` on four
short strings is as fast as a set lookup.
"""

from __future__ import annotations

MOS = ("nmos", "pmos")
BJT = ("npn", "pnp")
TRANSISTORS = MOS + BJT                 # the devices a stage is built around
NONLINEAR = TRANSISTORS + ("diode",)    # the devices the DC solve needs a model for
# a recognised device whose polarity is unknown (no model found, no guess) is "mos" or "bjt"
MOS_KINDS = frozenset(MOS + ("mos",))
BJT_KINDS = frozenset(BJT + ("bjt",))
JFET_KINDS = frozenset({"njf", "pjf", "jfet", "mesfet"})
