"""Netlist reading and parsing."""
