"""lintamp: topology and impedance checks for analog SPICE netlists."""

__version__ = "0.1.0"
