"""Elaboration: cells, devices, nets, the connectivity graph, flattening."""
