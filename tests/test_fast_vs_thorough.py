"""The fast solution paths give the results of the thorough ones, within a small fraction of the
stated error estimates.

- Large deflection: the default chord (modified Newton) iteration, started from polynomial
  extrapolations of the traced states and reusing the factorised tangent, against full Newton with
  a fresh tangent at every iterate started from the last state (Newton–Raphson; C. T. Kelley,
  Iterative Methods for Linear and Nonlinear Equations, SIAM 1995, ch. 5: the chord method
  converges to the same root, q-linearly [from memory]). Both solve the same discrete equations,
  so they must agree to the solver tolerance; the check asks for 1 % of the reported relative
  error estimate (``uncertainty``), far below what a wrong branch or an early stop would give.
- The fixed assembly map of the tangent against scipy's own sparse products Pᵀ(Σ A_eᵀ k_e A_e)P + C.
"""
from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from diagap.fem.plate.gather import Gather

#: fraction of the reported relative error estimate allowed between fast and thorough results
SHARE = 0.01


@pytest.fixture(scope="module")
def demo_draft():
    from diagap.design import demo_design
    from diagap.pipeline import plate_problem, run_design

    design = demo_design().with_accuracy("draft")
    result = run_design(design)
    return design, plate_problem(design), result


def _close(fast, ref, rel_unc, what):
    assert fast is not None and ref is not None, what
    tol = SHARE * rel_unc * abs(ref)
    assert abs(fast - ref) <= tol, f"{what}: {fast!r} vs {ref!r} (allowed {tol:.3g})"


def test_large_deflection_fast_path_matches_full_newton(demo_draft):
    from diagap.overload import large_deflection_section

    design, problem, result = demo_draft
    es = result.sections["electrostatics"]
    resp = result.sections["response"].to_summary()
    fast = large_deflection_section(design, problem, es, resp)
    ref = large_deflection_section(design, problem, es, resp, reference=True)
    f, r, unc = fast.to_summary(), ref.to_summary(), ref.uncertainty
    for key in ("contact_pressure_pa", "contact_pressure_at_bias_pa"):
        _close(f[key], r[key], unc[key], key)
    u_w = unc["center_deflection_m"]
    _close(f["audit_center_deflection_m"], r["audit_center_deflection_m"], u_w, "audit w0")
    # the traced curve under bias: same sampled deflections, pressures and capacitances
    cf, cr = np.array(f["curve_at_bias"]), np.array(r["curve_at_bias"])
    assert cf.shape == cr.shape
    for j, what in enumerate(("pressure", "deflection", "capacitance")):
        scale = np.max(np.abs(cr[:, j]))
        err = np.max(np.abs(cf[:, j] - cr[:, j]))
        assert err <= SHARE * u_w * scale, f"curve {what}: {err:.3g} of {scale:.3g}"
    # the overload point follows from that curve
    assert f["thd_10pct_spl_db_quasistatic"] == pytest.approx(
        r["thd_10pct_spl_db_quasistatic"], rel=1e-6, abs=0)
    for key, value in fast.uncertainty.items():  # the estimates themselves are unchanged
        assert value == pytest.approx(unc[key], rel=SHARE, abs=0), key


def test_assembly_map_equals_sparse_products():
    rng = np.random.default_rng(7)
    n_glob, n_red, nel = 40, 31, 25
    P = sp.random(n_glob, n_red, density=0.05, random_state=3, format="csr")
    P = (P + sp.eye(n_glob, n_red, format="csr")).tocsr()
    C = sp.random(n_red, n_red, density=0.1, random_state=4, format="csr")
    rows = rng.integers(0, n_glob, size=(nel, 4))
    cols = rng.integers(0, n_glob, size=(nel, 3))
    k = rng.standard_normal((nel, 4, 3))
    k2 = rng.standard_normal((nel, 4, 4))
    K = sp.coo_matrix((k.ravel(), (np.repeat(rows[:, :, None], 3, 2).ravel(),
                                   np.repeat(cols[:, None, :], 4, 1).ravel())),
                      shape=(n_glob, n_glob)).tocsr()
    K = K + sp.coo_matrix((k2.ravel(), (np.repeat(rows[:, :, None], 4, 2).ravel(),
                                        np.repeat(rows[:, None, :], 4, 1).ravel())),
                          shape=(n_glob, n_glob)).tocsr()
    expected = (P.T @ K @ P + C).toarray()
    got = Gather(P, [(rows, cols), (rows, rows)], C).matrix([k, k2]).toarray()
    scale = np.max(np.abs(expected))
    assert scale > 0
    assert np.max(np.abs(got - expected)) <= 1e-12 * scale
