r"""The ``coupled`` section of a clamped circular diaphragm in milliseconds: a 1-D radial solve.

What the coupled stage reports (:func:`diagap.stages.coupled_stage`) and where it comes from:

==========================================  ==================================================
flat output (``coupled.``…)                 source
==========================================  ==================================================
``pull_in_voltage_v``,                      the fold of the equilibrium branch of the disk
``pull_in_center_deflection_m``             under p_e = ½V²π(g − w) on the electrode
``bias_voltage_v``, ``bias_margin``,        the design's bias; bias / pull-in; bias ≥ pull-in
``collapsed``                               (1.0, else 0.0)
``bias_center_deflection_m``,               the stable equilibrium at the bias, the softened
``resonance_at_bias_hz``,                   axisymmetric mode 1 (vacuum, plate mass ρh) and the
``center_compliance_at_bias_m_per_pa``,     centre deflection per pascal of uniform pressure
``softening_factor``                        about it; the same without bias over that at bias
``softened_stiffness_n_per_m``,             static-shape stiffness (mechanics) minus ½V²C''(x_b)
``electrostatic_stiffness_n_per_m``         of the device C(x) (:func:`diagap.stages.electrostatic_spring`)
``mode_1_electrostatic_stiffness_n_per_m``  k_eff (mechanics) × (1 − (f_b/f_0)²)
==========================================  ==================================================

Physics. The stage solves the Argyris plate FE (:mod:`diagap.fem.coupling.plate`); the load,
the operator and the edge conditions are axisymmetric for a circular clamped diaphragm under a
circular electrode, so the equilibria, the mode 1 and the uniform-pressure compliance are those
of the radial problem D∇⁴w − T∇²w = p(r), w(a) = w'(a) = 0, w'(0) = 0, solved in scaled form
(ρ = r/a, ŵ = w/g, τ = Ta²/D, β = ε0V²a⁴/(2Dg³)) by the cubic-Hermite FE of
:mod:`diagap.fastpath.axisym` (equation, weak form, scaling and method there). The load π(ĝ) is
that of the stage: :func:`diagap.fem.coupling.plate.load_from_density` of the c(ĝ) fit, here from
the scaled cell table (:func:`diagap.fastpath.field.field_objects`), which also gives the device
C(x) for the electrostatic spring. The FE always uses the plate model (also above the solver's
``MEMBRANE_TAU``); the tables cover τ ≤ MEMBRANE_TAU only (:func:`~diagap.fastpath.field.check_covered`).

The stage's FE on its meshes. The converged radial answer differs from the stage's "draft" FE
(the coupled solve runs on the "draft" family also at "normal") by the FE's own discretisation
error: measured 1e-4 … 2e-3 with a full electrode (up to 5e-3 near buckling, where the
compliance amplifies it) and up to 4e-3 with a partial one — more than the fast path's 1e-3
target. Two geometric facts of the FE explain it, and the fast solve reproduces both
(``fe_accuracy``): (1) the loaded area is the polygon of N_e element edges along the embedded
electrode circle, (N_e/2)sin(2π/N_e)R_e² (:func:`electrode_polygon`); (2) the clamped edge
acts as a circle of radius a(1 − κπ²/(3N²)), N the boundary's element edges, κ = 0.633
(:data:`EDGE_KAPPA`, one number fitted to the FE's compliance, mode-1 frequency and pull-in
voltage over τ ∈ [−0.9τ_b, 1e4] at "draft" and "normal": 0.626 … 0.642). N and N_e follow
from the mesh sizes of :func:`diagap.fem.levels.mesh_sizes` (gmsh puts ⌊L/h⌋ + 1 edges on a
circle of length L and element size h). With both, every output is within 1.3e-4 of the
stage's FE on the same c(ĝ) (18 designs, τ ∈ [−0.9τ_b, 1e4], R_e/a ∈ {0.5, 0.75, 1}, bias
0.8 V_PI; the largest on the bias deflection and compliance near buckling, ≤ 1e-4 elsewhere;
tests/test_fastpath_coupled.py checks 1e-3 on four designs); through ``fast_summary`` (cell and rim tables, the
mechanics tables for k_s and k_eff) within 5e-4 of the full pipeline (5 random designs, the
largest on the stiffness outputs, which carry the tables' own error). The radial solve's own
discretisation error (finer of a graded mesh and its bisection; |fine − coarse|/15, fourth
order) is ≤ 3e-6 (``CoupledDisk.rel_error``). The stage's FE error estimates are not
reproduced. Time: about 20 ms of CPU per design (tests/bench/bench_fastpath_coupled.py),
of which 5 ms are the density and device C(x) (:func:`~diagap.fastpath.field.field_objects`).

Not covered (:class:`~diagap.fastpath.FastPathUnavailable`): what
:func:`~diagap.fastpath.field.check_covered` refuses — squares, simply supported edges,
compliant backplates, dielectric layers, electrets, τ outside the plate model's range, hole
patterns and pairs outside the cell and rim tables.

CAUTION: bias voltages can be hazardous; results are design estimates, as for the full run.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

__all__ = ["CoupledDisk", "disk_coupled", "coupled_outputs", "covered_coupled_outputs"]

#: the mesh levels (bisections of the graded mesh): the value from the last, the error from both
LEVELS = (0, 1)
#: order of the 1-D discretisation error (measured in the tests)
ORDER = 4.0


@dataclass(frozen=True)
class CoupledDisk:
    """The stage's :class:`~diagap.fem.coupling.plate.CoupledResult` quantities from the radial
    solve (SI), with ``rel_error``: the 1-D discretisation error per quantity (relative)."""

    pull_in_voltage_v: float
    pull_in_center_deflection_m: float
    bias_voltage_v: float
    collapsed: bool
    resonance_no_bias_hz: float
    center_compliance_no_bias_m_per_pa: float
    bias_center_deflection_m: float | None = None
    resonance_at_bias_hz: float | None = None
    center_compliance_at_bias_m_per_pa: float | None = None
    rel_error: dict = field(default_factory=dict)

    def to_summary(self) -> dict:
        """The stage's numeric summary entries: :meth:`CoupledResult.to_summary` of the same
        values, without the branch list and with ``collapsed`` as 0.0 / 1.0."""
        from diagap.fem.coupling.plate import CoupledResult

        out = CoupledResult(
            pull_in_voltage_v=self.pull_in_voltage_v,
            pull_in_center_deflection_m=self.pull_in_center_deflection_m,
            bias_voltage_v=self.bias_voltage_v, collapsed=self.collapsed,
            bias_center_deflection_m=self.bias_center_deflection_m,
            resonance_at_bias_hz=self.resonance_at_bias_hz,
            resonance_no_bias_hz=self.resonance_no_bias_hz,
            center_compliance_at_bias_m_per_pa=self.center_compliance_at_bias_m_per_pa,
            center_compliance_no_bias_m_per_pa=self.center_compliance_no_bias_m_per_pa,
        ).to_summary()
        out.pop("branch", None)
        out["collapsed"] = float(self.collapsed)
        return out


def _scaled_load(density, gap_m: float):
    """π̂(s) = π(gs)g²/ε0 and dπ̂/ds of the stage's load (parallel plates for None)."""
    from diagap.fem.constants import EPSILON_0_F_PER_M as eps0
    from diagap.fem.coupling.plate import load_from_density

    if density is None:
        return (lambda s: 1.0 / s**2), (lambda s: -2.0 / s**3)
    load = load_from_density(density, gap_m)
    g = gap_m
    return (lambda s: load.pressure_per_v2(g * s) * (g * g / eps0),
            lambda s: load.pressure_slope_per_v2(g * s) * (g**3 / eps0))


#: the clamped edge of the stage's FE acts as a circle of radius a(1 − κπ²/(3N²)), N the
#: boundary's element edges (a regular N-gon inscribed in the circle has 1 − π²/(3N²) of its
#: radius in area): κ fitted to the FE's centre compliance, mode-1 frequency and pull-in
#: voltage at "draft" and "normal", full electrode, τ from −0.9τ_b to 1e4 — all three give
#: 0.626 … 0.642 (tests/bench/bench_fastpath_coupled.py)
EDGE_KAPPA = 0.633


def fe_radius(problem, accuracy: str) -> float:
    """The radius (m) at which the stage's FE clamps the disk (:data:`EDGE_KAPPA`): its finest
    coupling mesh has N = ⌊2π/h_edge⌋ + 1 edges on the boundary."""
    from diagap.fem.coupling.plate import COUPLING_MESHES
    from diagap.fem.levels import mesh_sizes
    from diagap.fem.plate.solver import _layer_width

    s = mesh_sizes("circle", COUPLING_MESHES.get(accuracy, accuracy), _layer_width(problem))[-1]
    n = math.floor(2 * math.pi / s.h_edge) + 1
    return problem.size_m * (1.0 - EDGE_KAPPA * math.pi**2 / (3 * n * n))


def electrode_polygon(problem, electrode_size_m: float, accuracy: str | None) -> float:
    """Radius (m) of the disk of the same area as the polygon the stage's FE loads: the coupled
    FE embeds the electrode edge in its finest mesh of ``COUPLING_MESHES[accuracy]`` as N
    straight element edges (gmsh: N = ⌊2πρ_e/h(ρ_e)⌋ + 1 with the mesh's size law
    h = min(h_center, h_edge + grading·(1 − ρ_e)), :mod:`diagap.meshes.diaphragm`) and loads the
    elements inside, area (N/2)sin(2π/N)R_e². ``accuracy`` None: the circle itself."""
    from diagap.fem.coupling.plate import COUPLING_MESHES
    from diagap.fem.levels import mesh_sizes
    from diagap.fem.plate.solver import _layer_width

    rho_e = electrode_size_m / problem.size_m
    if accuracy is None or rho_e >= 1.0 - 1e-9:
        return electrode_size_m
    s = mesh_sizes("circle", COUPLING_MESHES.get(accuracy, accuracy), _layer_width(problem))[-1]
    h = min(s.h_center, s.h_edge + s.grading * (1.0 - rho_e))
    n = math.floor(2 * math.pi * rho_e / h) + 1
    return electrode_size_m * math.sqrt(n * math.sin(2 * math.pi / n) / (2 * math.pi))


_CONTROLLER: list = []


def _one_thread():
    """A context limiting BLAS to one thread (the threadpool controller made once: ~20 ms)."""
    from threadpoolctl import ThreadpoolController

    if not _CONTROLLER:
        _CONTROLLER.append(ThreadpoolController())
    return _CONTROLLER[0].limit(limits=1)


def disk_coupled(problem, electrode_size_m: float, gap_m: float, bias_voltage_v: float,
                 density=None, levels=LEVELS, fe_accuracy: str | None = None) -> CoupledDisk:
    """Pull-in and the bias point of a clamped circular ``problem``
    (:class:`~diagap.fem.plate.solver.PlateProblem`) by the radial solve — the arguments of
    :func:`diagap.fem.coupling.plate.solve_coupled`; ``density`` None: solid parallel plates.

    Raises
    ------
    ValueError
        Not a clamped circle, or a non-positive gap.
    """
    from diagap.fastpath.axisym import DiskSystem, disk_nodes, solve_branch
    from diagap.fem.constants import EPSILON_0_F_PER_M as eps0

    if problem.shape != "circle" or problem.edge != "clamped":
        raise ValueError(f"diaphragm: shape {problem.shape!r}, edge {problem.edge!r}; the radial "
                         "solve covers clamped circles")
    if not gap_m > 0:
        raise ValueError(f"backplate.gap: got {gap_m!r} m; allowed: > 0")
    r_e = electrode_polygon(problem, electrode_size_m, fe_accuracy)
    if fe_accuracy is not None:
        from dataclasses import replace

        problem = replace(problem, size_m=fe_radius(problem, fe_accuracy))
        r_e = min(r_e, problem.size_m) if electrode_size_m < problem.size_m else problem.size_m
    a, D, tau = problem.size_m, problem.bending_stiffness, problem.tension_ratio
    rho_e = min(r_e / a, 1.0)
    volt2 = 2.0 * D * gap_m**3 / (eps0 * a**4)  # V² per unit β
    beta_b = bias_voltage_v**2 / volt2
    pi_hat, dpi_hat = _scaled_load(density, gap_m)
    res: list = []
    with _one_thread():  # small dense kernels: BLAS threads only add contention
        for k in levels:  # each finer level starts from the coarser one's fold and bias point
            res.append(solve_branch(DiskSystem.build(disk_nodes(rho_e, tau, k), tau, rho_e),
                                    pi_hat, dpi_hat, beta_b, res[-1] if res else None))
    omega = D / (problem.areal_density * a**4)  # ω² per unit μ

    def si(r):
        out = {"pull_in_voltage_v": math.sqrt(r.beta_pi * volt2),
               "pull_in_center_deflection_m": r.w_pi * gap_m,
               "resonance_no_bias_hz": math.sqrt(r.mu0 * omega) / (2 * math.pi),
               "center_compliance_no_bias_m_per_pa": r.c0 * a**4 / D}
        if r.w_b is not None:
            out.update({"bias_center_deflection_m": r.w_b * gap_m,
                        "resonance_at_bias_hz": math.sqrt(max(r.mu_b, 0.0) * omega) / (2 * math.pi),
                        "center_compliance_at_bias_m_per_pa": r.c_b * a**4 / D})
        return out

    vals = [si(r) for r in res]
    fine = vals[-1]
    err = {}
    if len(vals) > 1:
        for k, v in fine.items():
            c = vals[-2].get(k)
            if c is not None and v != 0:
                err[k] = abs(v - c) / abs(v) / (2**ORDER - 1)
    return CoupledDisk(bias_voltage_v=bias_voltage_v, collapsed=res[-1].w_b is None,
                       rel_error=err, **fine)


def coupled_outputs(design, outputs: dict, mapper=None) -> dict[str, float]:
    """The ``coupled`` outputs of ``design`` from the radial solve and the scaled tables.

    Parameters
    ----------
    design : Design
        A rigid-backplate clamped circular diaphragm inside the tables' range.
    outputs : dict
        Flat outputs already computed (:func:`diagap.fastpath.fast_summary`):
        ``"mechanics.static_shape_stiffness_n_per_m"`` and
        ``"mechanics.effective_stiffness_n_per_m"`` for the stiffness outputs (left out without).
    mapper : callable, optional
        How table points are computed when a table is built
        (:func:`diagap.fastpath.refine.mapper_for`).

    Returns
    -------
    dict
        Flat summary path (``"coupled.pull_in_voltage_v"``) → SI value; without an
        ``[electrical]`` section only the pull-in outputs (as the stage). Outputs that need an
        uncertified table are left out.

    Raises
    ------
    FastPathUnavailable
        The design lies outside the tables (one line: field, value, allowed).
    """
    from diagap.dielectrics import effective_bias_v
    from diagap.extract import plate_problem
    from diagap.fastpath import FastPathUnavailable
    from diagap.fastpath.field import check_covered, field_objects

    check_covered(design)
    density, device, skip = field_objects(design, mapper)
    if "perforation_factor" in skip:  # the load itself is uncertified
        return {}
    b = design.backplate
    try:
        res = disk_coupled(plate_problem(design), b.electrode_size_m, b.gap_m,
                           abs(effective_bias_v(design)), density,
                           fe_accuracy=design.analysis.accuracy)
    except RuntimeError as exc:  # as the stage's CoupledError: no answer, never a guess
        raise FastPathUnavailable(f"coupled: the radial solve failed ({exc})") from exc
    data = res.to_summary()
    if design.electrical is None:
        data = {k: data[k] for k in ("pull_in_voltage_v", "pull_in_center_deflection_m")}
    elif not res.collapsed:
        k_s = outputs.get("mechanics.static_shape_stiffness_n_per_m")
        k_eff = outputs.get("mechanics.effective_stiffness_n_per_m")
        if k_s is not None and "capacitance_slope_f_per_m" not in skip:
            k_e = _electrostatic_spring(design, device, res.bias_center_deflection_m)
            data["softened_stiffness_n_per_m"] = k_s - k_e
            data["electrostatic_stiffness_n_per_m"] = k_e
        if k_eff is not None:
            data["mode_1_electrostatic_stiffness_n_per_m"] = k_eff * (
                1.0 - (res.resonance_at_bias_hz / res.resonance_no_bias_hz) ** 2)
    return {f"coupled.{k}": float(v) for k, v in data.items()}


def _electrostatic_spring(design, device, x_b_m: float) -> float:
    """½V_b²C''(x_b) of the device curve, as the stage (:func:`diagap.stages.electrostatic_spring`
    on the electrostatics section's objects, here from the closed-form static shape)."""
    from diagap.fastpath.field import check_covered, static_shape
    from diagap.stages import Section, _rim_points, electrode_quadrature, electrostatic_spring

    a = design.diaphragm.size_m
    tau = check_covered(design)
    x, y, _ = electrode_quadrature(design)
    phi_max = float(np.max(static_shape(np.hypot(x, y) / a, tau)))
    xr, yr = _rim_points(design)
    phi_rim = float(np.mean(static_shape(np.hypot(xr, yr) / a, tau)))
    es = Section({}, {}, {"device": device, "phi_max": phi_max, "phi_rim": phi_rim})
    return electrostatic_spring(design, es, x_b_m)


def covered_coupled_outputs(design, outputs: dict, mapper=None) -> dict[str, float]:
    """:func:`coupled_outputs`, or nothing where the design is not covered or the cell and rim
    tables are not built (without a ``mapper`` they are only read, never built here)."""
    from diagap.fastpath import FastPathUnavailable, read_only

    try:
        return coupled_outputs(design, outputs, mapper or read_only)
    except FastPathUnavailable:
        return {}
