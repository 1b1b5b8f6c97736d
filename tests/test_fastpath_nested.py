"""Study-box tables by nested Chebyshev–Lobatto levels (:mod:`diagap.fastpath.nested`).

References: raw closed-form functions evaluated in the test; the nesting of Chebyshev–Lobatto
points (the n = 2^l + 1 points cos(πj/(n−1)) of level l are the even-numbered points of level
l + 1) and the polynomial reproduction of barycentric interpolation (Berrut & Trefethen,
"Barycentric Lagrange Interpolation", SIAM Review 46, 2004, §5); the interpolation error of a
smooth function falling geometrically with the degree (Trefethen, Approximation Theory and
Approximation Practice, 2013, Theorem 8.2).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from diagap.fastpath.grid import Axis, chebyshev_nodes
from diagap.fastpath.nested import build_nested_table, next_level


def test_levels_nest():
    for n in (3, 5, 9):
        coarse = chebyshev_nodes(-2.0, 5.0, n)
        fine = chebyshev_nodes(-2.0, 5.0, 2 * n - 1)
        assert np.allclose(fine[::2], coarse, rtol=0, atol=1e-14)
    assert next_level(Axis("u", False, (0.0, 1.0), 3)).n == 5


def test_quadratic_needs_no_level_above_three():
    """A quadratic in each variable is reproduced by 3 nodes (Berrut & Trefethen 2004, §5): the
    held-out points pass, nothing is refined, and the reference is asked only for the 3×3
    tensor, 2 held-out nodes × 3 probes per axis and the validation points."""
    calls = []

    def f(x):
        calls.append(x)
        a, b = x
        return {"q": -(5.0 + a * a - 0.5 * a * b + b * b)}  # negative: interpolated as is

    axes = [Axis("a", False, (0.0, 1.0), 3), Axis("b", False, (-1.0, 1.0), 3)]
    table, facts = build_nested_table(f, axes, tol=1e-10, validate=3)
    assert facts["nodes"] == [3, 3] and facts["uncertified"] == []
    assert facts["reference_points"] == len(calls) == 9 + 2 * 6 + 3
    for x in [(0.2, 0.9), (0.77, -0.31)]:
        assert table(x)[0] == pytest.approx(f(x)["q"], rel=1e-12, abs=0)


def test_levels_rise_where_needed_and_failed_checks_become_nodes():
    """−exp(3a)·(2 + b) needs more nodes along a than along b (linear in b; negative values
    are interpolated as they are); every failing held-out point is reused as a node, and
    random points agree within the tolerance."""
    seen = []

    def f(x):
        seen.append(tuple(round(v, 12) for v in x))
        a, b = x
        return {"y": -math.exp(3.0 * a) * (2.0 + b), "z": -(1.0 + 0.1 * b)}

    axes = [Axis("a", False, (0.0, 1.0), 3), Axis("b", False, (0.0, 1.0), 3)]
    tol = 1e-4
    table, facts = build_nested_table(f, axes, tol=tol, max_nodes=17, validate=5)
    na, nb = facts["nodes"]
    assert na > 5 and nb == 3
    assert facts["uncertified"] == []
    assert len(set(seen)) == len(seen) == facts["reference_points"]
    # the a-axis held-out points of level 3 became nodes; the b-axis ones (2 new nodes × a's
    # first, middle and last node) and the validation points are the only reference points
    # that are not table nodes; the higher levels of a are judged by their coefficient tail
    assert facts["reference_points"] == na * nb + 2 * 3 + 5
    assert facts["axis_errors"][0] <= tol and facts["validation_error"] <= tol
    rng = np.random.default_rng(4)
    for a, b in rng.random((40, 2)):
        got = table((a, b))
        assert got[0] == pytest.approx(f((a, b))["y"], rel=2 * tol, abs=0)


def test_a_driving_output_beyond_the_last_level_is_uncertified():
    """|a − 0.3|^1.5 has a kink that no single polynomial follows to 1e-6: it ends uncertified
    (its estimated error kept), while the smooth output is certified."""
    def f(x):
        return {"kink": 2.0 + abs(x[0] - 0.3) ** 1.5, "smooth": -(1.0 + x[0] ** 2)}

    table, facts = build_nested_table(f, [Axis("a", False, (0.0, 1.0), 3)], tol=1e-6,
                                      max_nodes=9)
    assert facts["nodes"] == [9]
    assert facts["uncertified"] == ["kink"]
    held = dict(zip(table.names, table.held_out_error))
    assert held["kink"] > 1e-6 and held["smooth"] <= 1e-6


def test_nodes_that_do_not_nest_are_refused():
    with pytest.raises(ValueError, match="do not nest"):
        build_nested_table(lambda x: {"y": 1.0}, [Axis("a", False, (0.0, 1.0), 4)])


def test_coefficient_tail_is_a_generous_estimate_of_the_error():
    """For −1/(1.5 + a) on [0, 1] (analytic, poles outside the interval: geometric decay of
    the Chebyshev coefficients, Trefethen 2013, Theorem 8.2), the last coefficient's magnitude
    at 5 and 9 nodes is at least the interpolation error measured on a fine grid."""
    from diagap.fastpath.nested import _tail
    from diagap.fastpath.grid import TensorTable

    for n in (5, 9):
        axis = Axis("a", False, (0.0, 1.0), n)
        vals = -1.0 / (1.5 + axis.nodes)
        table = TensorTable((axis,), ("y",), vals[:, None], np.array([False]), np.zeros(1))
        est = _tail(table, 0)[0]
        grid = np.linspace(0.0, 1.0, 401)
        true = max(abs(table((a,))[0] + 1.0 / (1.5 + a)) / (1.0 / 1.5) for a in grid)
        assert true <= est <= 30 * true, (n, true, est)


def _pid(_point):
    import os

    return os.getpid()


def test_local_mapper_keeps_its_workers_between_batches():
    """A table is built in several batches: the local mapper starts its processes once and
    hands every later batch to the same ones, until it is closed."""
    import os

    from diagap.fastpath.refine import LocalMapper

    mapper = LocalMapper(2)
    try:
        first = set(mapper(_pid, list(range(6))))
        second = set(mapper(_pid, list(range(6))))
        assert os.getpid() not in first and 1 <= len(first) <= 2
        assert second <= first
    finally:
        mapper.close()
    assert mapper._pool is None
    assert mapper(_pid, [0]) == [os.getpid()]  # a single point runs here


def test_an_output_missing_at_a_node_raises_no_level():
    """An output without a number at some node (as the response of a design collapsing at its
    bias) cannot be tabulated: once a failed held-out point has become such a node, no further
    level is tried and the output is left uncertified."""
    def f(x):
        a = x[0]
        return {"y": -(1.0 + a * a), "r": (math.nan if 0.8 < a < 0.9 else -(2.0 + a))}

    table, facts = build_nested_table(f, [Axis("a", False, (0.0, 1.0), 3)], tol=1e-9,
                                      validate=0)
    # level 3 (nodes 0, 0.5, 1), its held-out points 0.146 and 0.854 (r missing there) become
    # the nodes of level 5, and nothing more is computed
    assert facts["nodes"] == [5] and facts["reference_points"] == 5
    assert facts["uncertified"] == ["r"]
    assert dict(zip(table.names, table((0.3,))))["y"] == pytest.approx(-1.09, rel=1e-12, abs=0)
