"""Squeeze film: the Reynolds equation with perforation sinks (squeeze, result), the hole and
cell flow resistances with rarefaction (perforation: closed forms) and the axisymmetric Stokes
solve of one perforation cell with slip walls (stokes)."""
