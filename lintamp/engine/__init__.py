"""Numbers on a ``FlatCircuit``: the DC operating point, small-signal MNA, stage
recognition and the looking-into forms of textbook analysis.  Facts with units."""
