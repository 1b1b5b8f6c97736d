"""Distributed frequency response: the reference for the lumped model (no modal reduction)."""
