"""Two thin coaxial disks in open space against Kirchhoff's formula, and the rim model.

Reference: G. Kirchhoff, "Zur Theorie des Condensators", Monatsber. Akad. Wiss. Berlin, 1877:
for two equal thin coaxial disks of radius a at distance d ≪ a, the capacitance between them
(charges ±Q, potential difference 1 V) is

    C = ε0 [π a²/d + a (ln(16π a/d) − 1)] + o(a).

The formula is asymptotic: its error is about −0.8% at d/a = 0.1 and −0.06% at d/a = 0.02
(formula below the exact value) [from memory; see the project's reference table].
ε0 from CODATA 2018 via scipy.constants.
"""
import math

import numpy as np
import pytest
from scipy.constants import epsilon_0

from diagap.fem.field.rim import pair_capacitance, rim_fringing
from diagap.meshes.rim import PairGeometry


def kirchhoff(a_over_d):
    """Kirchhoff 1877, in units of ε0·d."""
    a = a_over_d
    return math.pi * a**2 + a * (math.log(16 * math.pi * a) - 1)


def fe_disks(a_over_d, scale=1.0, outer=50.0):
    geo = PairGeometry(a_over_d, a_over_d, 0.0, outer * a_over_d)
    return pair_capacitance(geo, scale)[0]


@pytest.fixture(scope="module")
def deviations():
    return {a: (fe_disks(a) - kirchhoff(a)) / kirchhoff(a) for a in (10, 25, 50, 100)}


def test_matches_kirchhoff_for_wide_disks(deviations):
    # Kirchhoff 1877: better than 0.1% for a/d >= 50
    assert abs(deviations[50]) < 1e-3
    assert abs(deviations[100]) < 1e-3


def test_gap_to_kirchhoff_shrinks_with_aspect_ratio(deviations):
    # the formula is the leading part of an expansion in d/a: the deviation falls as a/d grows
    d = [deviations[a] for a in (10, 25, 50, 100)]
    assert all(x > 0 for x in d)  # formula below the exact value [from memory]
    assert d[0] > d[1] > d[2] > d[3]
    assert d[0] == pytest.approx(8e-3, rel=0.15, abs=0)  # −0.8% at d/a = 0.1 [from memory]


def test_disk_pair_mesh_and_far_field_converge():
    # two mesh levels and two outer radii: the FE value is settled far below the 0.1% check
    a = 50
    coarse, fine = fe_disks(a, 2.0), fe_disks(a, 1.0)
    assert abs(coarse - fine) / fine < 1e-4
    small_box = fe_disks(a, 1.0, outer=25.0)
    assert 0 < fine - small_box < 1e-5 * fine  # truncated far field: lower bound, ∝ R^-3


A_RIM, D_RIM = 0.4e-3, 4e-6  # a/d = 100


@pytest.fixture(scope="module")
def thin_rim():
    return rim_fringing(A_RIM, A_RIM, D_RIM, 0.0)


def test_rim_fringing_of_equal_thin_disks_is_kirchhoffs_edge_term(thin_rim):
    # Kirchhoff 1877: the rim part of C is ε0·a·(ln(16πa/d) − 1) to leading order
    a, d, rim = A_RIM, D_RIM, thin_rim
    edge = epsilon_0 * a * (math.log(16 * math.pi * a / d) - 1)
    total = epsilon_0 * math.pi * a**2 / d + edge
    assert abs(rim.capacitance_f - edge) < 1e-3 * total
    assert rim.capacitance_f == pytest.approx(edge, rel=0.02, abs=0)
    assert rim.pair_capacitance_f == pytest.approx(total, rel=1e-3, abs=0)
    # its error estimate is small next to the comparison and positive
    assert 0 < rim.rel_error < 2e-3


def test_rim_fringing_falls_with_gap_like_kirchhoff():
    # d/dd of ε0·a·(ln(16πa/d) − 1) is −ε0·a/d
    a, d = 0.4e-3, 4e-6
    rim = rim_fringing(a, a, d, 0.0, accuracy="draft")
    assert rim.derivative(d) == pytest.approx(-epsilon_0 * a / d, rel=0.05, abs=0)
    assert np.all(np.diff(rim.samples_f) < 0)


def test_rim_error_estimate_is_honest(thin_rim):
    # reference: finer mesh and a twice larger outer boundary
    a = A_RIM / D_RIM
    ref = fe_disks(a, scale=0.5, outer=100.0)
    ref_rim = epsilon_0 * D_RIM * (ref - math.pi * a**2)
    assert abs(thin_rim.capacitance_f - ref_rim) <= 3 * thin_rim.abs_error_f
