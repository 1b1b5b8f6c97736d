"""The compliant backplate: its homogenised plate, its resonances, and the two-plate coupling.

A backplate with a material (``[backplate] material`` or ``youngs_modulus``/``poisson_ratio``/
``density``, with ``residual_stress`` and ``edge``) is a perforated plate of the backplate's
thickness spanning the diaphragm's outline (same shape, radius or side; its own edge condition).
Its holes are replaced by the homogenised plate (:mod:`diagap.fem.plate.homogenise`): isotropic
equivalent bending stiffness D_eq and ν_eq, residual tension σ₀h scaled by the biaxial stiffness
ratio, areal density ρh(1 − φ). That plate is solved with the diaphragm's plate solver
(:mod:`diagap.fem.plate.solver`), and with the diaphragm in the two-plate electrostatic coupling
(:mod:`diagap.fem.coupling.twoplate`).

Lumped model. The backplate's dynamics are taken as quasi-static in the lumped model (valid
below its first resonance, which is reported): it follows the diaphragm through the change of the
electrostatic force. On the diaphragm coordinate x this multiplies both the capacitance slope
and the electrostatic spring by the slope factor s = ∫π(δw_d + δw_b)dA / ∫π δw_d dA of the FE
response to a pressure at bias (for two springs in series s = k_b/(k_b − k_e)), and the bias
point is taken at the centre gap closure x_b = w_d(0) + w_b(0) on the diaphragm's static shape.
With a rigid backplate s = 1 and w_b = 0, and everything is as without this module.

Not covered: the distributed frequency-response reference assumes a rigid backplate and is left
out for a compliant one; the large-deflection analysis and the distortion model's C(x) curve
keep the rigid backplate (the backplate's static deflection at bias is reported beside them).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

__all__ = ["backplate_plate", "backplate_problem", "MechanicsWithBackplate",
           "solve_backplate_mechanics", "coupled_pair", "lumped_bias"]


def backplate_plate(design, accuracy: str | None = None):
    """:class:`~diagap.fem.plate.homogenise.HomogenisedPlate` of the compliant backplate."""
    from diagap.fem.plate.homogenise import homogenise

    b = design.backplate
    m = b.plate
    lattice = b.hole_lattice if b.perforated else "hex"
    return homogenise(lattice, b.hole_radius_m if b.perforated else 0.0,
                      b.hole_pitch_m if b.perforated else 1.0, b.thickness_m,
                      m.youngs_modulus_pa, m.poisson_ratio, m.density_kg_m3,
                      accuracy or design.analysis.accuracy)


def backplate_problem(design, homog):
    """The backplate as a :class:`~diagap.fem.plate.solver.PlateProblem` with the homogenised
    properties at the backplate's thickness (E_eq from D_eq, σ_eq = N/h, ρ_eq = ρ(1 − φ))."""
    from diagap.fem.plate.solver import PlateProblem

    d, b = design.diaphragm, design.backplate
    h = b.thickness_m
    return PlateProblem(shape=d.shape, size_m=d.size_m,
                        youngs_modulus_pa=homog.equivalent_youngs_modulus_pa,
                        poisson_ratio=homog.bending_poisson_ratio, thickness_m=h,
                        density_kg_m3=homog.areal_density_kg_m2 / h,
                        residual_stress_pa=b.plate.residual_stress_pa * homog.tension_ratio,
                        edge=b.plate.edge)


class MechanicsWithBackplate:
    """The diaphragm's :class:`~diagap.fem.plate.solver.PlateResult` with the backplate's
    resonances added to its summary; every other attribute is the diaphragm's."""

    def __init__(self, diaphragm, backplate, homog, problem):
        self._d, self.backplate, self.homogenised, self.backplate_problem = \
            diaphragm, backplate, homog, problem

    def __getattr__(self, name):
        return getattr(self._d, name)

    @property
    def uncertainty(self) -> dict:
        u = dict(self._d.uncertainty)
        u["backplate_natural_frequencies_hz"] = self.backplate.uncertainty[
            "natural_frequencies_hz"] + 0.5 * self.homogenised.uncertainty["bending_stiffness_nm"]
        u["backplate_center_compliance_m_per_pa"] = \
            self.backplate.uncertainty["center_compliance_m_per_pa"] + \
            self.homogenised.uncertainty["bending_stiffness_nm"]
        return u

    def to_summary(self) -> dict:
        out = self._d.to_summary()
        out["backplate_natural_frequencies_hz"] = [float(f) for f in
                                                   self.backplate.natural_frequencies_hz]
        out["backplate_center_compliance_m_per_pa"] = \
            float(self.backplate.center_compliance_m_per_pa)
        out["backplate_plate"] = {k: (float(v) if not isinstance(v, str) else v)
                                  for k, v in self.homogenised.to_summary().items()}
        return out


def solve_backplate_mechanics(design, mech):
    """Wrap the diaphragm's result ``mech`` with the compliant backplate's plate solution."""
    from diagap.design import DesignError
    from diagap.fem.plate.solver import BucklingError, solve_plate

    homog = backplate_plate(design)
    problem = backplate_problem(design, homog)
    try:
        res = solve_plate(problem, accuracy=design.analysis.accuracy)
    except BucklingError:
        sigma = design.backplate.plate.residual_stress_pa
        raise DesignError(f"backplate.residual_stress = {sigma:g} Pa: compressive stress at or beyond the buckling load of the "
                          "perforated backplate; must be less compressive") from None
    return MechanicsWithBackplate(mech, res, homog, problem)


@dataclass(frozen=True)
class PairResult:
    """The backplate's part of the coupled section (SI) and the values of the diaphragm's."""

    coupled: object  # CoupledResult with the pair's pull-in, bias point and resonance
    data: dict
    uncertainty: dict = field(default_factory=dict)
    slope_factor: float = 1.0
    closure_m: float = 0.0


def _pair_level(dplate, bplate, shape, electrode_size_m, gap_m, load, bias_v):
    """(pair level, diaphragm coupling system, diaphragm f0 (Hz) and c0 (m/Pa) on this mesh)."""
    from diagap.fem.coupling.branch import EquilibriumPoint, center_compliance, softened_modes
    from diagap.fem.coupling.plate import coupling_system
    from diagap.fem.coupling.twoplate import solve_pair

    cd = coupling_system(dplate, shape, electrode_size_m)
    cb = coupling_system(bplate, shape, electrode_size_m)
    f_p = dplate.load_vector(1.0)
    zero = EquilibriumPoint(0.0, 0.0, np.zeros(cd.K.shape[0]), 1.0)
    f0 = float(softened_modes(cd, load, gap_m, zero)[0])
    c0 = center_compliance(cd, load, gap_m, zero, f_p)
    return solve_pair(cd, cb, load, gap_m, bias_v, f_p), cd, f0, c0


def coupled_pair(design, problem, bp_problem, density, mech) -> PairResult:
    """Two-plate pull-in and bias point on the coupling meshes of the accuracy setting (two
    levels, Richardson order 2 with the noise floor, as the one-plate coupling)."""
    from diagap.fem.coupling.plate import (COUPLING_MESHES, CoupledResult, load_from_density,
                                           plate_levels)
    from diagap.fem.levels import NOISE_FLOOR
    from diagap.fem.plate.solver import assemble_plate
    from diagap.fem.richardson import relative_error

    b = design.backplate
    from diagap.dielectrics import effective_bias_v

    bias = abs(effective_bias_v(design))  # supply + electret equivalent; force ∝ its square
    acc = COUPLING_MESHES.get(design.analysis.accuracy, design.analysis.accuracy)
    plates, ratio = plate_levels(problem, acc, b.electrode_size_m)
    load = load_from_density(density, b.gap_m)
    levels = []
    for p in plates[-2:]:
        bp = assemble_plate(bp_problem, p.mesh)
        levels.append(_pair_level(p, bp, problem.shape, b.electrode_size_m, b.gap_m, load, bias))
    (coarse, *_), (fine, cd, f0, c0) = levels
    n_d = cd.K.shape[0]
    collapsed = fine.bias is None

    def est(a, c):
        return relative_error(c, a, 2.0, ratio, floor=NOISE_FLOOR)

    def mode(lv):
        i = next((k for k, s in enumerate(lv.diaphragm_share) if s >= 0.5), 0)
        j = next((k for k, s in enumerate(lv.diaphragm_share) if s < 0.5), None)
        return lv.frequencies_hz[i], (lv.frequencies_hz[j] if j is not None else None)

    unc = {"pull_in_voltage_v": est(fine.branch.pull_in_voltage_v,
                                    coarse.branch.pull_in_voltage_v),
           "pull_in_center_deflection_m": est(fine.pull_in.diaphragm_center_m,
                                              coarse.pull_in.diaphragm_center_m)}
    data = {"backplate_pull_in_center_deflection_m": fine.pull_in.backplate_center_m}
    kw = {}
    if not collapsed:
        f_d, f_b = mode(fine)
        c_d, c_b, s = fine.compliance_m_per_pa
        kw = dict(bias_center_deflection_m=fine.bias.diaphragm_center_m,
                  resonance_at_bias_hz=float(f_d), center_compliance_at_bias_m_per_pa=c_d)
        data.update({"backplate_center_deflection_m": fine.bias.backplate_center_m,
                     "backplate_compliance_at_bias_m_per_pa": c_b,
                     "backplate_slope_factor": s})
        if f_b is not None:
            data["backplate_resonance_at_bias_hz"] = float(f_b)
        if coarse.bias is not None:
            cf_d, cf_b = mode(coarse)
            unc.update({
                "bias_center_deflection_m": est(fine.bias.diaphragm_center_m,
                                                coarse.bias.diaphragm_center_m),
                "resonance_at_bias_hz": est(f_d, cf_d),
                "center_compliance_at_bias_m_per_pa": est(c_d, coarse.compliance_m_per_pa[0]),
                "backplate_center_deflection_m": est(fine.bias.backplate_center_m,
                                                     coarse.bias.backplate_center_m),
                "backplate_slope_factor": est(s, coarse.compliance_m_per_pa[2])})
            if f_b is not None and cf_b is not None:
                unc["backplate_resonance_at_bias_hz"] = est(f_b, cf_b)
    br = fine.branch
    wd_branch = np.array([float(cd.center @ p.u[:n_d]) for p in br.points])
    branch = tuple(zip(wd_branch.tolist(), br.voltages().tolist()))
    if not collapsed:
        branch = tuple(sorted(branch + ((fine.bias.diaphragm_center_m, bias),)))
    res = CoupledResult(
        pull_in_voltage_v=br.pull_in_voltage_v,
        pull_in_center_deflection_m=fine.pull_in.diaphragm_center_m,
        bias_voltage_v=bias, collapsed=collapsed,
        bias_center_deflection_m=kw.get("bias_center_deflection_m"),
        resonance_at_bias_hz=kw.get("resonance_at_bias_hz"),
        resonance_no_bias_hz=f0,
        center_compliance_at_bias_m_per_pa=kw.get("center_compliance_at_bias_m_per_pa"),
        center_compliance_no_bias_m_per_pa=c0,
        branch=branch, uncertainty=unc)
    closure = 0.0 if collapsed else fine.bias.diaphragm_center_m + fine.bias.backplate_center_m
    return PairResult(res, data, unc, 1.0 if collapsed else fine.compliance_m_per_pa[2], closure)


def lumped_bias(pair: PairResult | None, x_b_m: float) -> tuple[float, float]:
    """(bias centre position on the C(x) curve, slope factor) for the lumped model: the centre
    closure and s with a compliant backplate (``pair``), (x_b, 1) without (None)."""
    if pair is None:
        return x_b_m, 1.0
    return pair.closure_m, pair.slope_factor
