"""Geometry to meshes (gmsh), mesh files (meshio) and the on-disk mesh cache.

This package knows nothing of physics; every mesh is in scaled (dimensionless) coordinates.
"""
from diagap.meshes.cache import cache_dir, cache_key, cached_arrays, set_enabled

__all__ = ["cache_dir", "cache_key", "cached_arrays", "set_enabled"]
