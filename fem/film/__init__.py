"""Squeeze film: the Reynolds equation with perforation sinks (squeeze, result) and the hole and
cell flow resistances with rarefaction (perforation)."""
