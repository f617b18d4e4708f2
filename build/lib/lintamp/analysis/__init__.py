"""Analyses of an elaborated circuit: DC paths, stages, operating point, small-signal impedance."""
