"""Diaphragm mechanics: Argyris Kirchhoff plate with tension (solver, system, argyris, bc) and
the P2 membrane limit (membrane)."""
