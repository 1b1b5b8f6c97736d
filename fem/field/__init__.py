"""Air-gap electrostatics: unit cells of the hole lattice (cell), the c(g) table (cell_table),
rim fringing of the electrode pair (rim) and the device capacitance C(x) (device)."""
