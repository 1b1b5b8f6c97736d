"""Comparison helpers for the tests: relative tolerances only, and references from raw inputs.

Every comparison of an SI-scale value is relative (``|actual/expected − 1| <= rel``): an absolute
tolerance such as the default of ``pytest.approx`` (1e-12) or ``np.allclose`` (1e-8) would accept
any capacitance (1e-12 F), noise PSD (1e-12 Pa²/Hz) or charge (1e-12 C) as "close" to any other.
Levels in dB are logarithms of ratios, so an absolute tolerance in dB is a relative one on the
quantity; use :func:`db_close` for those.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["rel_close", "rel_close_array", "db_close", "rel_error", "kirchhoff_plate"]


def rel_error(actual, expected) -> float:
    """|actual − expected| / |expected| (scalar; ``expected`` must be non-zero and finite)."""
    expected = complex(expected) if isinstance(expected, complex) else float(expected)
    if expected == 0 or not math.isfinite(abs(expected)):
        raise ValueError(f"relative comparison needs a finite non-zero reference, got {expected!r}")
    return abs(actual - expected) / abs(expected)


def rel_close(actual, expected, rel: float, what: str = "") -> float:
    """Assert ``|actual − expected| <= rel·|expected|`` for scalars; return the relative error.

    ``rel`` must be given (no default): choose it from the accuracy the reference states.
    """
    if not rel > 0:
        raise ValueError("rel must be positive")
    err = rel_error(actual, expected)
    assert err <= rel, (f"{what or 'value'}: {actual!r} vs reference {expected!r}: "
                        f"relative error {err:.3e} > {rel:.1e}")
    return err


def rel_close_array(actual, expected, rel: float, what: str = "", scale: str = "each") -> float:
    """Assert arrays agree relatively; return the largest relative error.

    scale="each": ``|a_i − e_i| <= rel·|e_i|`` element by element (no element of ``expected`` may
    be zero). scale="max": ``|a_i − e_i| <= rel·max|e|`` — for curves crossing zero (mode shapes,
    phases); still relative to the size of the reference, never an absolute number.
    """
    if not rel > 0:
        raise ValueError("rel must be positive")
    a = np.asarray(actual)
    e = np.asarray(expected)
    a, e = np.broadcast_arrays(a, e)
    if scale == "each":
        if np.any(e == 0) or not np.all(np.isfinite(e)):
            raise ValueError("scale='each' needs finite non-zero references; use scale='max'")
        err = np.abs(a - e) / np.abs(e)
    elif scale == "max":
        ref = float(np.max(np.abs(e)))
        if ref == 0 or not math.isfinite(ref):
            raise ValueError("reference array is all zero or not finite")
        err = np.abs(a - e) / ref
    else:
        raise ValueError(f"scale: got {scale!r}, allowed 'each', 'max'")
    worst = float(np.max(err)) if err.size else 0.0
    if not worst <= rel:
        i = int(np.argmax(err))
        raise AssertionError(f"{what or 'array'}: worst relative error {worst:.3e} > {rel:.1e} "
                             f"at index {i}: {a.ravel()[i]!r} vs {e.ravel()[i]!r}")
    return worst


def db_close(actual_db, expected_db, tol_db: float, what: str = "") -> float:
    """Assert two levels in dB differ by at most ``tol_db`` (a relative tolerance on the ratio)."""
    diff = float(np.max(np.abs(np.asarray(actual_db, float) - np.asarray(expected_db, float))))
    assert diff <= tol_db, f"{what or 'level'}: differs by {diff:.3g} dB > {tol_db} dB"
    return diff


def kirchhoff_plate(youngs_modulus_pa, thickness_m, poisson_ratio, density_kg_m3,
                    residual_stress_pa=0.0):
    """Plate constants from the raw material inputs, written out here (not the library's).

    D = E h³ / (12 (1 − ν²))  (flexural rigidity, Timoshenko & Woinowsky-Krieger, Theory of Plates
    and Shells, 1959, ch. 1), T = σ h (membrane force per length), ρ_s = ρ h (mass per area).
    Returns (D in N·m, T in N/m, ρ_s in kg/m²).
    """
    e, h, nu = youngs_modulus_pa, thickness_m, poisson_ratio
    return e * h**3 / (12.0 * (1.0 - nu**2)), residual_stress_pa * h, density_kg_m3 * h
