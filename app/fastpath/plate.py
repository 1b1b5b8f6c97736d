r"""The diaphragm in scaled form: a few tables in (τ, ν) serve every disk and square.

Kirchhoff plate with tension, D∇⁴w − T∇²w = p and D∇⁴w − T∇²w = ρ_s ω² w (SI: D in N·m, T = σh in
N/m, ρ_s = ρh in kg/m², p in Pa) on a disk of radius L or a square of side 2L, clamped (w = ∂w/∂n =
0) or simply supported (w = 0 and zero edge moment: −D(w_rr + ν w_r/r) = 0 on the disk's edge, −D
w_nn = 0 on the square's straight edges), as solved by :mod:`diagap.fem.plate.solver` (plate model;
membrane model above its ``MEMBRANE_TAU``). With ξ = x/L, ŵ = wD/(pL⁴) and ω̂ = ω√(ρ_s L⁴/D) the
problem becomes ∇̂⁴ŵ − τ∇̂²ŵ = 1, ∇̂⁴φ − τ∇̂²φ = ω̂²φ on the unit disk or [−1, 1]², with the same
edge conditions: what is left is the tension ratio τ = T L²/D and, for the simply supported disk
only, Poisson's ratio ν (:mod:`diagap.fastpath.plate_range`). L is the solver's length unit: the
radius, or *half* the side of a square (the solver's τ). The solver's meshes are made in these
scaled coordinates and depend on τ alone (edge size capped by the layer width 1/√τ; the membrane
mesh is fixed, its edge shrunk by 1/√τ when clamped), so the solver's answer for any diaphragm is
the scaled answer times powers of (L, D, ρ_s), for every shape and edge alike:

=================================  ==================  =========================
quantity                           scaled value        SI factor
=================================  ==================  =========================
centre compliance c0               ĉ(τ, ν)             L⁴/D
volume compliance                  v̂(τ, ν)             L⁶/D
mode-1 / static-shape mass         m̂(τ, ν)             ρ_s L²
mode-1 / static-shape stiffness    k̂(τ, ν)             D/L²
mode-1 / static-shape area         Â(τ, ν)             L²
natural frequency i                f̂_i(τ, ν)           √(D/(ρ_s L⁴))
=================================  ==================  =========================

(c0 = w/p ∝ L⁴/D; volume = ∫w dA adds L²; m = ∫ρ_s φ² dA with φ(0) = 1; k = ω²m = (ρ_s L⁴/D)⁻¹·ρ_s
L²·ω̂²; A = ∫φ dA. The random-design tests check these factors against the full FE.)

Three tables per shape and edge (pieces of the τ range, each refined against the FE with
:func:`diagap.fastpath.refine.build_table`):

- ``"bending"``, −0.9 τ_b ≤ τ ≤ ``TAU_SPLIT``: axis 1 + τ/τ_b(ν) on a log scale, τ_b the
  buckling value, so that ĉ ∝ 1/(τ + τ_b) near buckling is linear; segment ends at τ = 0;
- ``"tension"``, ``TAU_SPLIT`` < τ ≤ MEMBRANE_TAU: axis τ (log); a segment end where the
  solver's finest edge mesh starts to follow the tension layer;
- ``"membrane"``, MEMBRANE_TAU < τ ≤ 1e10: axis τ (log), the solver's membrane model.

The simply supported disk adds an axis 1 + ν (log: its outputs vary like powers of 1 + ν near
ν = −1) to the first two. The model switch at MEMBRANE_TAU (a step of up to the membrane model
error, 3/τ) lies between two tables, never inside one: each table's reference points are
computed with the model the full run uses on its side of the switch.

Natural frequencies are reported as the solver sorts them (degenerate pairs such as the (1,1)
modes of a disk or the (1,2)/(2,1) modes of a square count twice). Each f̂_i and each ratio
f̂_{i+1}/f̂_i is tabulated; ``distinct_frequencies_hz`` merges neighbours closer than 1e-4 as the
solver does, and stops where the interpolated ratio is too close to that threshold to tell
(within 3× its held-out error) rather than guess a merge.
"""
from __future__ import annotations

import hashlib
import math
from functools import partial
from pathlib import Path

import numpy as np

from diagap.fastpath.grid import Axis, TensorTable
from diagap.fastpath.plate_range import (VALIDATED_RANGE, buckling_tau, length_scale_m,
                                          out_of_range)

__all__ = ["PlateScaling", "plate_tables", "plate_summary", "plate_outputs", "scaled_plate",
           "piece_of", "PIECES", "TAU_SPLIT", "SCALE_EXPONENTS", "FREQUENCY_EXPONENTS",
           "TAU_BUCKLING"]

#: j₁,₁²: the buckling tension ratio of a clamped disk (τ = −TAU_BUCKLING)
TAU_BUCKLING = 14.681970642123893
#: upper end of the "bending" table (its axis is scaled by τ_b, the others are not)
TAU_SPLIT = 100.0
PIECES = ("bending", "tension", "membrane")
#: ν of the reference points where ν does not enter
NU_FIXED = 0.3
#: exponents (L, D, ρ_s) of the SI factor of each scaled output
SCALE_EXPONENTS = {
    "center_compliance_m_per_pa": (4, -1, 0), "volume_compliance_m3_per_pa": (6, -1, 0),
    "effective_mass_kg": (2, 0, 1), "effective_stiffness_n_per_m": (-2, 1, 0),
    "effective_area_m2": (2, 0, 0), "static_shape_mass_kg": (2, 0, 1),
    "static_shape_stiffness_n_per_m": (-2, 1, 0), "static_shape_area_m2": (2, 0, 0),
}
FREQUENCY_EXPONENTS = (-2, 0.5, -0.5)
N_MODES = 6
#: Chebyshev nodes per segment of the τ axis at the start of the refinement. The refinement
#: certifies 1e-3, but the fast path's differences of outputs (the mode-1 electrostatic
#: stiffness k_eff·(1 − (f_b/f_0)²), the distortion) amplify the tables' error: with 5 nodes
#: the "tension" table of the clamped disk at "normal" (first segment τ = 100 … 4444) was up
#: to 5.2e-4 off the FE between its nodes (a smooth error, not the FE's scatter); on that
#: segment, 12 points between the nodes: 5 nodes 5.2e-4, 7 nodes 1.5e-5, 9 nodes 1.0e-6
#: (stiffnesses, compliance, mode-1 frequency).
TAU_NODES = 7
#: relative spacing below which the solver merges frequencies (PlateResult)
MERGE = 1e-4
#: margin on the held-out error of a frequency ratio before a merge is decided
HONESTY = 3.0


def _membrane_tau() -> float:
    from diagap.fem.plate.solver import MEMBRANE_TAU

    return MEMBRANE_TAU


def piece_of(tau: float) -> str:
    """The table holding tension ratio ``tau``."""
    if tau <= TAU_SPLIT:
        return "bending"
    return "tension" if tau <= _membrane_tau() else "membrane"


def _nu_axis(shape: str, edge: str, piece: str) -> list:
    rng = VALIDATED_RANGE[(shape, edge)]
    if not rng.nu_enters or piece == "membrane":
        return []
    return [Axis("one_plus_poisson_ratio", True,
                 (math.log(1 + rng.nu_min), math.log(1 + rng.nu_max)), 5)]


def _smallest_buckling(shape: str, edge: str) -> float:
    rng = VALIDATED_RANGE[(shape, edge)]
    if not rng.nu_enters:
        return buckling_tau(shape, edge, NU_FIXED)
    return min(buckling_tau(shape, edge, nu) for nu in np.linspace(rng.nu_min, rng.nu_max, 41))


def _layer_tau(shape: str, accuracy: str) -> float:
    """τ above which the solver's finest edge size follows the tension layer."""
    from diagap.fem.levels import _FINEST

    finest, _, cells = _FINEST[shape][accuracy]
    return 1.0 / (cells * finest.h_edge) ** 2


def piece_axes(shape: str, edge: str, piece: str, accuracy: str) -> list:
    """Starting axes of one table (segment ends in mapped coordinates)."""
    rng = VALIDATED_RANGE[(shape, edge)]
    if piece == "bending":
        top = 1.0 + TAU_SPLIT / _smallest_buckling(shape, edge)
        cuts = (1.0 - rng.compression, 1.0, top)
        first = Axis("one_plus_tension_over_buckling", True, tuple(map(math.log, cuts)),
                     TAU_NODES)
    elif piece == "tension":
        layer = _layer_tau(shape, accuracy)
        cuts = sorted({TAU_SPLIT, _membrane_tau()}
                      | ({layer} if 2 * TAU_SPLIT < layer < 0.5 * _membrane_tau() else set()))
        first = Axis("tension_ratio", True, tuple(map(math.log, cuts)), TAU_NODES)
    else:
        cuts = (_membrane_tau(), 1e6, 1e8, rng.tau_max)
        first = Axis("tension_ratio", True, tuple(map(math.log, cuts)), TAU_NODES)
    return [first] + _nu_axis(shape, edge, piece)


def coordinates(shape: str, edge: str, piece: str, tau: float, nu: float) -> tuple:
    """Physical axis values of (τ, ν) in the table ``piece``."""
    x = 1.0 + tau / buckling_tau(shape, edge, nu) if piece == "bending" else tau
    return (x, 1.0 + nu) if _nu_axis(shape, edge, piece) else (x,)


def scaled_plate(accuracy: str, shape: str, edge: str, piece: str, x) -> dict:
    """The solver's result for the unit diaphragm (L = 1 m, D = 1 N·m, ρ_s = 1 kg/m²) at the
    table point ``x`` of ``piece``: every tabulated output, in the scaled units of the module
    docstring. On the edge of the membrane switch the point is taken on the table's own side
    (1e-12 relative), so that a table holds one model only."""
    from diagap.fem.plate.solver import PlateProblem, solve_plate

    nu = float(x[1]) - 1.0 if len(x) > 1 else NU_FIXED
    tau = (float(x[0]) - 1.0) * buckling_tau(shape, edge, nu) if piece == "bending" \
        else float(x[0])
    switch = _membrane_tau()
    tau = max(tau, switch * (1 + 1e-12)) if piece == "membrane" \
        else min(tau, switch * (1 - 1e-12))
    h = 0.01
    problem = PlateProblem(shape, 1.0 if shape == "circle" else 2.0,
                           12.0 * (1.0 - nu * nu) / h**3, nu, h, 1.0 / h, tau / h, edge)
    res = solve_plate(problem, accuracy, N_MODES)
    want = "membrane" if piece == "membrane" else "plate"
    if res.model != want:
        raise RuntimeError(f"table {piece!r} at tau = {tau:g}: the solver used the {res.model} "
                           "model")
    out = {k: float(getattr(res, k)) for k in SCALE_EXPONENTS}
    f = [float(v) for v in res.natural_frequencies_hz]
    for i, v in enumerate(f, start=1):
        out[f"natural_frequencies_hz_{i}"] = v
    for i in range(1, len(f)):
        out[f"frequency_ratio_{i}"] = f[i] / f[i - 1]
    return out


def _code_hash() -> str:
    """Source of the modules that lay out the tables (part of each table's cache key, beside
    the solver and application sources that :mod:`diagap.fastpath.store` hashes)."""
    here = Path(__file__).parent
    return hashlib.sha256(b"".join((here / n).read_bytes()
                                   for n in ("plate.py", "plate_range.py"))).hexdigest()[:16]


def plate_tables(accuracy: str = "normal", shape: str = "circle", edge: str = "clamped", *,
                 pieces=PIECES, tol: float = 1e-3, mapper=None, validate: int = 4) -> dict:
    """The scaled tables of one shape, edge and accuracy (cached on disk, built on demand).

    Parameters
    ----------
    accuracy : {"draft", "normal", "fine"}
        The solver's accuracy setting the tables reproduce.
    shape, edge : str
        ``"circle"``/``"square"``, ``"clamped"``/``"simply-supported"``.
    pieces : iterable of str
        Which of :data:`PIECES` to return (each is built on first use).
    tol : float
        Allowed interpolation error against the solver (relative).
    mapper : callable, optional
        How reference points are computed (:func:`diagap.fastpath.refine.mapper_for`);
        default: local processes on every core.
    validate : int
        Random held-out points checked after the refinement, per table.

    Returns
    -------
    dict
        piece → (TensorTable, build facts: reference points, uncertified outputs).
    """
    from diagap.fastpath.refine import build_table, mapper_for
    from diagap.fastpath.store import held_table

    out = {}
    for piece in pieces:
        def build(piece=piece):
            return build_table(partial(scaled_plate, accuracy, shape, edge, piece),
                               piece_axes(shape, edge, piece, accuracy), tol=tol,
                               mapper=mapper or mapper_for(), validate=validate)

        out[piece] = held_table("fastpath-plate", {
            "accuracy": accuracy, "shape": shape, "edge": edge, "piece": piece, "tol": tol,
            "validate": validate, "layout": _code_hash()}, build)
    return out


class PlateScaling:
    """The SI factors of one diaphragm: length L (radius or half side), bending stiffness D,
    areal density ρ_s; and its tension ratio τ = T L²/D."""

    def __init__(self, length_m: float, bending_stiffness_n_m: float, areal_density_kg_m2: float,
                 tension_n_per_m: float):
        self.a, self.d, self.rho = length_m, bending_stiffness_n_m, areal_density_kg_m2
        self.tau = tension_n_per_m * length_m**2 / bending_stiffness_n_m

    def factor(self, exponents) -> float:
        ea, ed, er = exponents
        return self.a**ea * self.d**ed * self.rho**er


def plate_summary(table: TensorTable, x, scaling: PlateScaling, uncertified=()) -> dict:
    """Flat ``mechanics.*`` outputs in SI from one scaled table at its axis values ``x``
    (uncertified outputs left out; distinct frequencies up to the first undecidable merge)."""
    vals = dict(zip(table.names, table(x)))
    held = dict(zip(table.names, table.held_out_error))
    out = {}
    for name, exps in SCALE_EXPONENTS.items():
        if name in vals and name not in uncertified:
            out[f"mechanics.{name}"] = vals[name] * scaling.factor(exps)
    freq = []
    for i in range(1, N_MODES + 1):
        name = f"natural_frequencies_hz_{i}"
        if name not in vals or name in uncertified:
            break
        freq.append(vals[name] * scaling.factor(FREQUENCY_EXPONENTS))
        out[f"mechanics.{name}"] = freq[-1]
    distinct, ratio, err = [], 1.0, 0.0  # ratio and its error since the last distinct value
    for i, f in enumerate(freq):
        if i:
            name = f"frequency_ratio_{i}"
            if name not in vals or name in uncertified:
                break
            ratio *= vals[name]
            err += held[name]
            if abs(ratio - 1.0 - MERGE) <= HONESTY * err:
                break  # too close to the merge threshold to decide
        if not distinct or ratio > 1.0 + MERGE:
            distinct.append(f)
            ratio, err = 1.0, 0.0
    for i, f in enumerate(distinct, start=1):
        out[f"mechanics.distinct_frequencies_hz_{i}"] = f
    return out


def plate_outputs(diaphragm, accuracy: str, mapper=None) -> dict:
    """``mechanics.*`` outputs of one diaphragm from the tables.

    Parameters
    ----------
    diaphragm : object
        With the SI attributes of :class:`diagap.fem.plate.solver.PlateProblem` (a design's
        ``diaphragm`` has the same names): shape, edge, size_m (radius or side), thickness_m,
        youngs_modulus_pa, poisson_ratio, density_kg_m3, residual_stress_pa.
    accuracy : str
        The solver accuracy the tables reproduce.

    Raises
    ------
    FastPathUnavailable
        The diaphragm is outside :data:`~diagap.fastpath.plate_range.VALIDATED_RANGE` (one line
        naming the field, its value and the allowed range).
    """
    from diagap.fastpath import FastPathUnavailable

    d = diaphragm
    nu, h = d.poisson_ratio, d.thickness_m
    bend = d.youngs_modulus_pa * h**3 / (12.0 * (1.0 - nu * nu))
    s = PlateScaling(length_scale_m(d.shape, d.size_m), bend, d.density_kg_m3 * h,
                     d.residual_stress_pa * h)
    why = out_of_range(d.shape, d.edge, s.tau, nu, bend / (h * s.a**2))
    if why:
        raise FastPathUnavailable(why)
    piece = piece_of(s.tau)
    table, facts = plate_tables(accuracy, d.shape, d.edge, pieces=(piece,), mapper=mapper)[piece]
    x = coordinates(d.shape, d.edge, piece, s.tau, nu)
    return plate_summary(table, x, s, set(facts.get("uncertified", ())))
