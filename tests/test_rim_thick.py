"""Rim fringing next to a thick backplate: thickness up to 1000 gaps.

The pair's far boundary is a half circle whose radius grows with the backplate thickness
(50 × the largest dimension); from about 1.2e4 gaps (a thickness of ~300 gaps) drawing it as
the intersection of a disk with a rectangle returned nothing and the mesh had no far boundary.

References outside the code:

* Dirichlet's principle: the capacitance of two conductors is the minimum of the field energy
  over potentials equal to 0 and 1 on them, so enlarging a conductor (a thicker backplate)
  cannot lower it (Jackson, Classical Electrodynamics, 3rd ed., 1999, sec. 1.12; Pólya & Szegő,
  Isoperimetric Inequalities in Mathematical Physics, 1951 [from memory]).
* The thick-plate limit: the field of a plate of thickness t ≫ g near its edge is that of a
  semi-infinite plate, so C_rim stops depending on t — but the outer faces of the backplate
  also couple to the diaphragm's far side over the scale of the electrode radius a, so the
  value settles only once t ≫ a as well. Measured (draft): electrode 100 gaps, C_rim = 1.779,
  1.841, 1.880, 1.896, 1.903 × 1e-14 F at t/g = 100, 300, 1000, 3000, 10000 (±0.25 %);
  electrode 5 gaps, 4.631, 4.685, 4.707, 4.714 × 1e-16 F at t/g = 100, 300, 1000, 3000 (±0.4 %).
"""
import math

import numpy as np
import pytest

from diagap.fem.field.rim import rim_fringing

G = 1e-6


def test_pair_mesh_of_a_thick_backplate_keeps_its_far_boundary():
    from diagap.fem.field.rim import _sizes
    from diagap.meshes.rim import PairGeometry, electrode_pair_mesh

    t = 1000.0
    geo = PairGeometry(110.0, 100.0, t, 50.0 * (1.0 + t))
    mesh = electrode_pair_mesh(geo, _sizes(geo, 4.0))
    nodes = mesh.p[:, np.unique(mesh.facets[:, mesh.boundaries["outer"]])]
    centre = 0.5 * (geo.upper_bottom + t)
    radius = np.hypot(nodes[0], nodes[1] - centre)
    np.testing.assert_allclose(radius, geo.outer_radius, rtol=1e-9, atol=0)
    assert mesh.p[0].min() > -1e-9 * geo.outer_radius  # the half plane x >= 0
    assert nodes[0].max() == pytest.approx(geo.outer_radius, rel=1e-9, abs=0)


def _rims(radius_gaps, thicknesses):
    return {t: rim_fringing(radius_gaps * G, 1.1 * radius_gaps * G, G, t * G, accuracy="draft")
            for t in thicknesses}


def test_narrow_electrode_reaches_its_thick_plate_limit():
    """Electrode of 5 gaps: t/g = 300 and 1000 are both ≫ g and ≫ a, and agree within the FE's
    own error estimates; at t/g = 30 the value is still clearly lower (the check can fail)."""
    rims = _rims(5.0, (30.0, 300.0, 1000.0))
    for r in rims.values():
        assert math.isfinite(r.capacitance_f) and r.capacitance_f > 0 and r.rel_error < 0.01
    c30, c300, c1000 = (rims[t].capacitance_f for t in (30.0, 300.0, 1000.0))
    assert abs(c1000 - c300) <= rims[300.0].abs_error_f + rims[1000.0].abs_error_f
    assert c1000 - c30 > 3 * (rims[30.0].abs_error_f + rims[1000.0].abs_error_f)


def test_wide_electrode_rim_grows_with_thickness_and_saturates():
    """Electrode of 100 gaps: finite with a small error estimate up to t/g = 1000; C_rim rises
    with t (Dirichlet's principle) by steps that shrink as t grows by equal factors (measured
    step ratio 0.62; approaching the limit over the electrode's scale, module docstring)."""
    rims = _rims(100.0, (100.0, 300.0, 1000.0))
    for r in rims.values():
        assert math.isfinite(r.capacitance_f) and r.rel_error < 0.01
        assert np.all(np.isfinite(r.coefficients)) and r.fit_error < 0.01
    c = [rims[t].capacitance_f for t in (100.0, 300.0, 1000.0)]
    e = [rims[t].abs_error_f for t in (100.0, 300.0, 1000.0)]
    assert c[1] - c[0] > e[0] + e[1] and c[2] - c[1] > e[1] + e[2]
    assert c[2] - c[1] < 0.8 * (c[1] - c[0])


def test_design_with_a_200_um_backplate_over_a_1_um_gap():
    """The capsule-sized pair of a design that failed before (gap 1 µm, backplate 200 µm,
    electrode 0.45 mm, diaphragm 0.5 mm), with the stage's gap span 0.5 (local t/g up to 400)."""
    r = rim_fringing(0.45e-3, 0.5e-3, G, 200 * G, accuracy="draft", gap_span=0.5)
    assert math.isfinite(r.capacitance_f) and r.capacitance_f > 0 and r.rel_error < 0.05
    assert np.all(np.isfinite(r.samples_f)) and np.all(np.diff(r.samples_f) < 0)
