r"""The ``electrostatics`` summary section from the scaled cell and rim tables.

What the section reports and where it comes from (:func:`diagap.stages.electrostatics_stage`):

=================================  ===========================================================
output                             FE pieces
=================================  ===========================================================
``rest_capacitance_f``             C(0) = Σ_q w_q c(g) + C_rim(g): the cell density times the
                                   electrode area plus the rim fringing
``capacitance_slope_f_per_m``      dC/dx = −c'(g) Σ_q w_q φ_q − φ_rim C_rim'(g): the slope of the
                                   fitted c(g) and of the rim fit, weighted by the diaphragm's
                                   static shape φ (1 at the centre) over the electrode
``perforation_factor``             P(g) = c(g)·g/ε0 of the fitted c(g)
``rim_fringing_capacitance_f``     C_rim(g) of the rim FE (large pairs: the modelled small pair
                                   and the thin-plate size law)
``parallel_plate_capacitance_f``   ε0 A_el/g (no FE)
``open_area_fraction``             πa²/A_cell (no FE)
``electrode_area_m2``              Σ_q w_q = πR_e² (no FE)
``rest_gap_m``                     g (no FE)
=================================  ===========================================================

c(g) is the stage's four-term fit (:mod:`diagap.fem.field.cell_table`) through cell FE samples
at Chebyshev gaps of [0.25 g, 1.45 g]; here the same fit goes through the same gaps, with P at
each gap read from the scaled cell table (:mod:`diagap.fastpath.cells`: c = ε0 P(a/p, t/p, g/p)/g).
The rim fit and its size-law extension are redone from the scaled rim table
(:mod:`diagap.fastpath.fringe`). The static shape of a clamped disk with tension T under uniform
pressure (D∇⁴w − T∇²w = p, w = w' = 0 at r = a) is the closed form (Timoshenko &
Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed. 1959, §21 and §94 [from memory]),
with τ = T a²/D, k = √|τ| and ρ = r/a:

.. math:: w \propto \frac{1-\rho^2}{4\tau} - \frac{I_0(k) - I_0(k\rho)}{2\tau k I_1(k)}
          \quad(\tau > 0), \qquad
          w \propto -\frac{1-\rho^2}{4k^2} + \frac{J_0(k\rho) - J_0(k)}{2k^3 J_1(k)}
          \quad(\tau < 0),

and for |τ| < 1e-3, where these cancel, the first two terms of the expansion in τ,
(1 − ρ²)²/64 + τ(ρ⁶/2304 − ρ⁴/512 + ρ²/384 − 5/4608) (∇⁴w₁ = ∇²w₀, clamped);
φ = w(ρ)/w(0). The FE shape of the stage converges to it.

Not covered (:class:`~diagap.fastpath.FastPathUnavailable`): dielectric layers and electrets
(the layered cell and rim are other problems), compliant backplates (their mechanics changes the
shape), square or simply-supported diaphragms, tension ratios outside the plate model
(−0.9 τ_b ≤ τ ≤ 1e4), hole patterns outside :data:`~diagap.fastpath.cells.CELL_RANGE` and
pairs outside :data:`~diagap.fastpath.fringe.RIM_RANGE` (diaphragm radius ≤ 100 gaps). The error
estimates of the FE run (``capacitance_fit_error``, ``rest_capacitance_rel_error``,
``capacitance_slope_rel_error``) describe that run's meshes and are not reported; the tables'
own error is within their tolerance (1e-3 relative) of the FE.

Measured ("draft", tests/bench/bench_fastpath_field.py, two busy cores): the cell tables take
869 cell solves per lattice (held-out error ≤ 3.8e-4; 100 random points: ≤ 2.7e-4 against a
cell FE whose own Richardson estimate reaches 4.8e-4), the rim table 249 pair solves (held-out
≤ 6.4e-4); over 50 random designs every output is within 6.7e-4 of the stage (the largest, the
slope, holds the draft diaphragm FE's own shape error of about 3e-4), in a few milliseconds per
design against seconds for the stage.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["electrostatics_outputs", "field_objects", "static_shape", "density_from_table", "OUTPUTS"]

#: the section's outputs this module gives (flat summary paths without the section prefix)
OUTPUTS = ("rest_capacitance_f", "parallel_plate_capacitance_f", "capacitance_slope_f_per_m",
           "perforation_factor", "open_area_fraction", "rim_fringing_capacitance_f",
           "electrode_area_m2", "rest_gap_m")
#: outputs that need the cell table / the rim table (left out where a table is uncertified)
_NEEDS_CELL = ("rest_capacitance_f", "capacitance_slope_f_per_m", "perforation_factor")
_NEEDS_RIM = ("rest_capacitance_f", "capacitance_slope_f_per_m", "rim_fringing_capacitance_f")


def static_shape(rho, tau: float) -> np.ndarray:
    """φ(ρ) = w(ρ)/w(0) of the clamped disk under uniform pressure at tension ratio τ
    (module docstring); ρ = r/a in [0, 1] (0 outside)."""
    from scipy.special import i0e, i1e, j0, j1

    r = np.clip(np.asarray(rho, dtype=float), 0.0, 1.0)

    def w(x):
        if abs(tau) < 1e-3:  # the closed forms cancel: w0 + τ·w1, error ~ 5e-3 τ² relative
            x2 = x * x
            return (1.0 - x2) ** 2 / 64.0 + tau * (
                x2**3 / 2304.0 - x2**2 / 512.0 + x2 / 384.0 - 5.0 / 4608.0)
        k = math.sqrt(abs(tau))
        if tau > 0:  # I0(kx)/I1(k) = i0e(kx)/i1e(k)·e^{k(x−1)}, finite for every k
            return (1.0 - x * x) / (4 * tau) - (i0e(k) - i0e(k * x) * np.exp(k * (x - 1.0))) / (
                2 * tau * k * i1e(k))
        return -(1.0 - x * x) / (4 * k * k) + (j0(k * x) - j0(k)) / (2 * k**3 * j1(k))

    out = w(r) / w(np.zeros(1))[0]
    return np.where(np.asarray(rho, dtype=float) <= 1.0, out, 0.0)


def sample_gaps(gap_m: float, accuracy: str) -> np.ndarray:
    """The local gaps (m) at which the stage samples c(g) for a design of gap ``gap_m``:
    Chebyshev nodes of [GAP_TABLE[0]·g, GAP_TABLE[1]·g] (:data:`diagap.stages.GAP_TABLE`)."""
    from diagap.fem.field.cell_table import _SAMPLES

    from diagap.fastpath.grid import chebyshev_nodes
    from diagap.stages import GAP_TABLE

    return chebyshev_nodes(GAP_TABLE[0] * gap_m, GAP_TABLE[1] * gap_m, _SAMPLES[accuracy])


def density_from_table(table, lattice: str, hole_radius_m: float, pitch_m: float,
                       thickness_m: float, gap_m: float, accuracy: str):
    """The stage's c(g) (:class:`~diagap.fem.field.cell_table.CapacitanceDensity`), its FE
    samples replaced by the scaled table (``table`` None: the solid plate, P = 1)."""
    from diagap.fem.constants import EPSILON_0_F_PER_M
    from diagap.fem.field.cell import open_area_fraction
    from diagap.fem.field.cell_table import CapacitanceDensity, _basis

    from diagap.fastpath.cells import table_point
    from diagap.stages import GAP_TABLE

    g0, g1 = GAP_TABLE[0] * gap_m, GAP_TABLE[1] * gap_m
    gaps = sample_gaps(gap_m, accuracy)
    if table is None:
        P = np.ones_like(gaps)
    else:
        P = np.array([table(table_point(hole_radius_m, pitch_m, thickness_m, g))[0]
                      for g in gaps])
    g_mid = math.sqrt(g0 * g1)
    M = _basis(gaps / g_mid)
    coef, *_ = np.linalg.lstsq(M / P[:, None], np.ones_like(P), rcond=None)
    return CapacitanceDensity(
        gap_min_m=g0, gap_max_m=g1, gaps_m=gaps, density_f_per_m2=EPSILON_0_F_PER_M * P / gaps,
        sample_rel_errors=np.zeros_like(gaps), coefficients=coef, gap_mid_m=g_mid,
        fit_error=float(np.max(np.abs(M @ coef - P) / P)), rel_error=0.0,
        open_area_fraction=open_area_fraction(hole_radius_m, pitch_m, lattice),
        lattice=lattice, runtime_s=0.0)


def _refuse(text: str):
    from diagap.fastpath import FastPathUnavailable

    raise FastPathUnavailable(text)


def _inside(path: str, value: float, bounds: tuple, what: str) -> None:
    lo, hi = bounds
    pad = 1e-9 * max(abs(lo), abs(hi))
    if not (lo - pad <= value <= hi + pad):
        _refuse(f"{path}: {what} = {value:.6g} is outside the electrostatics table's range "
                f"[{lo:g}, {hi:g}]")


def check_covered(design) -> float:
    """Raise :class:`~diagap.fastpath.FastPathUnavailable` (one line: field, value, allowed)
    unless the tables cover ``design``; return the tension ratio τ."""
    from diagap.fastpath.cells import CELL_RANGE
    from diagap.fastpath.fringe import MODEL_GAPS, RIM_RANGE
    from diagap.fastpath.plate_range import COMPRESSION, buckling_tau
    from diagap.fem.plate.solver import MEMBRANE_TAU

    d, b = design.diaphragm, design.backplate
    if getattr(design, "layers", None) is not None:
        _refuse("layers: dielectric layers are not covered by the electrostatics tables "
                "(allowed: none)")
    if getattr(design, "electret", None) is not None:
        _refuse("electret: an electret is not covered by the electrostatics tables "
                "(allowed: none)")
    if b.plate is not None:
        _refuse("backplate: a compliant backplate is not covered by the electrostatics tables "
                "(allowed: rigid)")
    if d.shape != "circle" or d.edge != "clamped":
        _refuse(f"diaphragm: shape {d.shape!r}, edge {d.edge!r}; the electrostatics tables "
                "cover clamped circles")
    nu = d.poisson_ratio
    bend = d.youngs_modulus_pa * d.thickness_m**3 / (12.0 * (1.0 - nu * nu))
    tau = d.residual_stress_pa * d.thickness_m * d.size_m**2 / bend
    tau_min = -COMPRESSION * buckling_tau("circle", "clamped", nu)
    _inside("diaphragm.residual_stress", tau, (tau_min, MEMBRANE_TAU),
            "tension ratio sigma*h*a^2/D")
    g = b.gap_m
    if b.hole_lattice != "none":
        p = b.hole_pitch_m
        _inside("backplate.hole_radius", b.hole_radius_m / p,
                CELL_RANGE["hole_radius_over_pitch"], "hole_radius/hole_pitch")
        _inside("backplate.thickness", b.thickness_m / p, CELL_RANGE["thickness_over_pitch"],
                "thickness/hole_pitch")
        _inside("backplate.gap", g / p, CELL_RANGE["gap_over_pitch"], "gap/hole_pitch")
    if not d.size_m / g > MODEL_GAPS:
        _refuse(f"backplate.gap: diaphragm radius/gap = {d.size_m / g:.6g} is outside the "
                f"electrostatics table's range (> {MODEL_GAPS:g})")
    _inside("backplate.thickness", b.thickness_m / g, RIM_RANGE["thickness_over_gap"],
            "thickness/gap")
    return tau


def electrostatics_outputs(design, mapper=None) -> dict[str, float]:
    """The ``electrostatics`` outputs of ``design`` from the scaled tables (built on first use).

    Parameters
    ----------
    design : Design
        Its ``analysis.accuracy`` selects the FE the tables reproduce.
    mapper : callable, optional
        How table points are computed when a table is built
        (:func:`diagap.fastpath.refine.mapper_for`).

    Returns
    -------
    dict
        Flat summary path (``"electrostatics.rest_capacitance_f"``) → SI value, for
        :data:`OUTPUTS` (outputs of an uncertified table left out).

    Raises
    ------
    FastPathUnavailable
        The design lies outside the tables (module docstring).
    """
    _, dev, skip = field_objects(design, mapper)
    summary = dev.to_summary()
    return {f"electrostatics.{n}": float(summary[n]) for n in OUTPUTS if n not in skip}


def field_objects(design, mapper=None):
    """(density, device, skipped outputs) of ``design`` from the scaled tables: the stage's
    c(g) fit (:func:`density_from_table`, the coupled solve's load), its C(x) on the static
    shape (:class:`~diagap.fem.field.device.DeviceCapacitance`, called with centre
    displacements in m) and the outputs an uncertified table leaves out. Raises :class:`~diagap.fastpath.FastPathUnavailable` as
    :func:`electrostatics_outputs`. The last design's objects are kept: the electrostatics,
    coupled and response pieces of one summary share them."""
    from diagap.fastpath.patches import active

    patches = active()
    last = _LAST_FIELD.get("entry")
    if last is not None and last[0] is design and last[1] is mapper and last[3] == patches:
        return last[2]
    out = _field_objects(design, mapper)
    _LAST_FIELD["entry"] = (design, mapper, out, patches)
    return out


#: (design, mapper, objects, active patch set) of the last :func:`field_objects` call
_LAST_FIELD: dict = {}


def _field_objects(design, mapper):
    from diagap.fem.field.device import device_capacitance

    from diagap.fastpath.cells import cell_table
    from diagap.fastpath.fringe import OVERHANG_CAP, rim_from_samples, rim_table
    from diagap.fastpath.patches import active_table
    from diagap.stages import _rim_points, electrode_quadrature

    tau = check_covered(design)
    d, b, acc = design.diaphragm, design.backplate, design.analysis.accuracy
    g, a = b.gap_m, d.size_m
    skip: set = set()
    table = None
    if b.hole_lattice != "none":
        table, facts = (active_table(f"cell-{b.hole_lattice}", acc, mapper)
                        or cell_table(b.hole_lattice, acc, mapper=mapper))
        if facts.get("uncertified"):
            skip.update(_NEEDS_CELL)
    density = density_from_table(table, b.hole_lattice, b.hole_radius_m, b.hole_pitch_m,
                                 b.thickness_m, g, acc)
    rtab, rfacts = active_table("rim", acc, mapper) or rim_table(acc, mapper=mapper)
    if rfacts.get("uncertified"):
        skip.update(_NEEDS_RIM)
    k = min(a - b.electrode_size_m, OVERHANG_CAP * g) / g
    rim = rim_from_samples(rtab((1.0 + k, b.thickness_m / g)), b.electrode_size_m, a, g)
    x, y, w = electrode_quadrature(design)
    phi = static_shape(np.hypot(x, y) / a, tau)
    xr, yr = _rim_points(design)
    phi_rim = float(np.mean(static_shape(np.hypot(xr, yr) / a, tau)))
    dev = device_capacitance(w, phi, density, g, rim=rim,
                             x_values_m=np.linspace(-g / 3, g / 3, 41), phi_rim=phi_rim)
    return density, dev, skip
