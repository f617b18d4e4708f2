"""Commands beyond check: impedance, audit."""
