"""Flow resistances of a perforated backplate and the rarefied-gas film viscosity.

The squeeze film (:mod:`diagap.fem.film.squeeze`) sees the perforation as a distributed sink: per unit area
there are n_h holes, and the mean film pressure P̄ of a lattice cell drives a volume flow
Q = P̄ / Z through each hole, Z = R_cell + R_hole (Pa·s/m³). The pieces:

* **Hole resistance** (a straight circular hole of radius r through a backplate of thickness t):
  Hagen–Poiseuille R_P = 8μt/(πr⁴) plus Sampson's orifice resistance R_S = 3μ/r³
  (R. A. Sampson, Phil. Trans. R. Soc. A 182 (1891), creeping flow through a circular hole in
  a plane wall of zero thickness) as the end correction: R_hole = R_P + R_S. R_S → the whole
  resistance when t → 0, R_P dominates for long holes. The hole is treated as continuum flow
  (its Knudsen number λ/r is reported, not corrected).
* **Cell resistance**: the film of one lattice cell, replaced by the circle of equal area
  (radius r_c, open fraction A = r²/r_c²), draining into the hole rim at zero pressure. The
  axisymmetric Reynolds equation −(1/r)(r P')' = 12 μ_eff v / g³ on r < r < r_c with P(r) = 0,
  P'(r_c) = 0 gives the per-cell damping (Škvor 1969; Bao et al., J. Micromech. Microeng. 13
  (2003) 795)

      b_cell = (3π μ_eff r_c⁴ / (2 g³)) · (4A − A² − 2 ln A − 3)        (N·s/m),

  and, since the cell's volume flow is Q = π r_c² v and its force is π r_c² P̄, the same
  dissipation as a resistance on the mean pressure: R_cell = b_cell / (π r_c²)².
* **Rarefied film** (Veijola et al., Sensors and Actuators A 48 (1995) 239):
  μ_eff = μ / (1 + 9.638 Kn^1.159), Kn = λ/g (fit to the Poiseuille flow-rate coefficient of
  the linearised Boltzmann equation, stated for 0 ≤ Kn ≤ 880).

Lattices: hexagonal (cell area √3/2·p²) or square (p²) of pitch p.

Which resistance the film uses (``hole_model``): ``"stokes"`` (default) takes the whole
per-cell resistance Z = p̄/Q from the axisymmetric Stokes solve of the cell with Maxwell slip
walls (:mod:`fem.film.stokes`: film, hole entrance, hole and exit in one field, with its
discretisation-error estimate); ``"closed-form"`` takes the sum R_cell + R_P + R_S above. The
closed forms are always computed and reported beside the FE value (they neglect the turning of
the flow from the film into the hole: 4–7 % low at g = r, 20–30 % low at g = r/4 … r/8). The
closed forms themselves have no discretisation error; their modelling limits (uniform lattice,
equal-area circle) are checked in the tests against an FE solution of the actual hexagonal cell.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    from diagap.fem.film.stokes import HoleFlow

from diagap.fem.validate import Checks

__all__ = [
    "HOLE_MODELS",
    "LATTICES",
    "Perforation",
    "PerforationError",
    "cell_damping",
    "cell_resistance",
    "film_viscosity",
    "hole_resistance",
    "lattice_cell_area",
    "perforation",
    "poiseuille_resistance",
    "rarefaction_factor",
    "sampson_resistance",
]

LATTICES = ("hex", "square")
HOLE_MODELS = ("stokes", "closed-form")


class PerforationError(ValueError):
    """Invalid perforation or film parameters."""


_check = Checks(PerforationError)
_positive = _check.positive


def rarefaction_factor(knudsen: float) -> float:
    """Veijola's flow-rate factor Q = μ/μ_eff = 1 + 9.638 Kn^1.159 (1).

    Veijola, Kuisma, Lahdenperä, Ryhänen, Sensors and Actuators A 48 (1995), fit valid for
    0 <= Kn <= 880.
    """
    kn = _positive("knudsen", knudsen, allow_zero=True)
    if kn > 880.0:
        raise PerforationError(f"knudsen = {kn:g} is beyond the fitted range [0, 880]")
    return 1.0 + 9.638 * kn**1.159


def film_viscosity(viscosity_pa_s: float, mean_free_path_m: float, gap_m: float) -> float:
    """Effective viscosity of a rarefied film, μ/(1 + 9.638 (λ/g)^1.159) (Pa·s)."""
    mu = _positive("viscosity_pa_s", viscosity_pa_s)
    lam = _positive("mean_free_path_m", mean_free_path_m, allow_zero=True)
    g = _positive("gap_m", gap_m)
    return mu / rarefaction_factor(lam / g)


def poiseuille_resistance(viscosity_pa_s: float, radius_m: float, length_m: float) -> float:
    """Hagen–Poiseuille resistance 8μl/(πr⁴) of a circular tube (Pa·s/m³)."""
    mu = _positive("viscosity_pa_s", viscosity_pa_s)
    r = _positive("radius_m", radius_m)
    ell = _positive("length_m", length_m, allow_zero=True)
    return 8.0 * mu * ell / (math.pi * r**4)


def sampson_resistance(viscosity_pa_s: float, radius_m: float) -> float:
    """Sampson's (1891) creeping-flow resistance 3μ/r³ of a hole in a thin wall (Pa·s/m³)."""
    mu = _positive("viscosity_pa_s", viscosity_pa_s)
    r = _positive("radius_m", radius_m)
    return 3.0 * mu / r**3


def hole_resistance(viscosity_pa_s: float, radius_m: float, length_m: float) -> float:
    """Hole resistance with end correction, 8μt/(πr⁴) + 3μ/r³ (Pa·s/m³)."""
    return (poiseuille_resistance(viscosity_pa_s, radius_m, length_m)
            + sampson_resistance(viscosity_pa_s, radius_m))


def lattice_cell_area(pitch_m: float, lattice: str) -> float:
    """Area of one lattice cell (m²): √3/2·p² (hex) or p² (square)."""
    p = _positive("hole_pitch_m", pitch_m)
    if lattice == "hex":
        return 0.5 * math.sqrt(3.0) * p * p
    if lattice == "square":
        return p * p
    raise PerforationError(f"lattice = {lattice!r} must be one of {LATTICES}")


def _open_fraction(hole_radius_m: float, cell_radius_m: float) -> float:
    r = _positive("hole_radius_m", hole_radius_m)
    rc = _positive("cell_radius_m", cell_radius_m)
    if r >= rc:
        raise PerforationError(f"hole_radius_m = {r:g} must be smaller than the equal-area "
                               f"cell radius {rc:g} m")
    return (r / rc) ** 2


def cell_damping(film_viscosity_pa_s: float, gap_m: float, hole_radius_m: float,
                 cell_radius_m: float) -> float:
    """Per-cell film damping with the hole at zero pressure (N·s/m).

    b_cell = (3π μ r_c⁴ / 2g³)(4A − A² − 2 ln A − 3), A = r²/r_c² (Škvor; Bao et al. 2003).
    """
    mu = _positive("film_viscosity_pa_s", film_viscosity_pa_s)
    g = _positive("gap_m", gap_m)
    a = _open_fraction(hole_radius_m, cell_radius_m)
    rc = float(cell_radius_m)
    return 3.0 * math.pi * mu * rc**4 / (2.0 * g**3) * (4 * a - a * a - 2 * math.log(a) - 3)


def cell_resistance(film_viscosity_pa_s: float, gap_m: float, hole_radius_m: float,
                    cell_radius_m: float) -> float:
    """Cell damping as a resistance on the mean cell pressure, b_cell/(π r_c²)² (Pa·s/m³)."""
    area = math.pi * float(cell_radius_m) ** 2
    return cell_damping(film_viscosity_pa_s, gap_m, hole_radius_m, cell_radius_m) / area**2


@dataclass(frozen=True)
class Perforation:
    """Lattice of holes seen by the film as a distributed sink (SI).

    Attributes
    ----------
    lattice : str
        ``"hex"`` or ``"square"``.
    holes_per_m2 : float
        n_h = 1 / cell area (1/m²).
    cell_radius_m : float
        Radius of the circle of equal area (m).
    open_area_fraction : float
        Hole area / cell area (1).
    poiseuille_resistance_pa_s_per_m3, sampson_resistance_pa_s_per_m3,
    cell_resistance_pa_s_per_m3 : float
        The three parts of the resistance per hole (Pa·s/m³).
    hole_knudsen_number : float
        λ / r of the hole (1), reported to judge the continuum hole model.
    hole_flow : HoleFlow or None
        The Stokes solve of the cell (``hole_model="stokes"``); None for the closed forms.
    """

    lattice: str
    holes_per_m2: float
    cell_radius_m: float
    open_area_fraction: float
    poiseuille_resistance_pa_s_per_m3: float
    sampson_resistance_pa_s_per_m3: float
    cell_resistance_pa_s_per_m3: float
    hole_knudsen_number: float
    hole_flow: "HoleFlow | None" = None

    @property
    def closed_form_resistance_pa_s_per_m3(self) -> float:
        """Sum of the closed forms Z = R_cell + R_P + R_S (Pa·s/m³)."""
        return (self.poiseuille_resistance_pa_s_per_m3 + self.sampson_resistance_pa_s_per_m3
                + self.cell_resistance_pa_s_per_m3)

    @property
    def hole_model(self) -> str:
        return "closed-form" if self.hole_flow is None else "stokes"

    @property
    def resistance_pa_s_per_m3(self) -> float:
        """Resistance per hole the film uses (Pa·s/m³): the Stokes cell, else the closed forms."""
        if self.hole_flow is not None:
            return self.hole_flow.resistance_pa_s_per_m3
        return self.closed_form_resistance_pa_s_per_m3

    @property
    def resistance_rel_error(self) -> float:
        """Estimated relative discretisation error of Z (0 for the closed forms)."""
        return 0.0 if self.hole_flow is None else self.hole_flow.rel_error

    @property
    def sink_m_per_pa_s(self) -> float:
        """Sink coefficient n_h / Z of the Reynolds equation (m/(Pa·s))."""
        return self.holes_per_m2 / self.resistance_pa_s_per_m3

    def to_summary(self) -> dict:
        return {
            "lattice": self.lattice,
            "holes_per_m2": self.holes_per_m2,
            "cell_radius_m": self.cell_radius_m,
            "open_area_fraction": self.open_area_fraction,
            "hole_poiseuille_resistance_pa_s_per_m3": self.poiseuille_resistance_pa_s_per_m3,
            "hole_end_resistance_pa_s_per_m3": self.sampson_resistance_pa_s_per_m3,
            "cell_resistance_pa_s_per_m3": self.cell_resistance_pa_s_per_m3,
            "resistance_per_hole_pa_s_per_m3": self.resistance_pa_s_per_m3,
            "resistance_per_hole_closed_form_pa_s_per_m3":
                self.closed_form_resistance_pa_s_per_m3,
            "resistance_per_hole_relative_uncertainty": self.resistance_rel_error,
            "hole_model": self.hole_model,
            "hole_knudsen_number": self.hole_knudsen_number,
        }


def perforation(lattice: str, hole_radius_m: float, hole_pitch_m: float,
                backplate_thickness_m: float, gap_m: float, viscosity_pa_s: float,
                mean_free_path_m: float, *, hole_model: str = "stokes",
                accommodation: float = 1.0, accuracy: str = "normal") -> Perforation:
    """Resistances of a hole lattice for the squeeze film.

    Parameters
    ----------
    lattice : {"hex", "square"}
    hole_radius_m, hole_pitch_m : float
        Hole radius r and centre-to-centre pitch p (m); needs 2r < p.
    backplate_thickness_m : float
        Hole length t (m), >= 0.
    gap_m : float
        Film thickness g (m).
    viscosity_pa_s : float
        Continuum viscosity μ (Pa·s); the film part uses the rarefied μ_eff.
    mean_free_path_m : float
        Mean free path λ (m).
    hole_model : {"stokes", "closed-form"}
        Where the resistance per hole comes from (module docstring); the Stokes cell needs
        a backplate thickness > 0.
    accommodation : float
        Tangential momentum accommodation coefficient of the Maxwell slip walls (Stokes).
    accuracy : {"draft", "normal", "fine"}
        Mesh levels of the Stokes cell.
    """
    r = _positive("hole_radius_m", hole_radius_m)
    p = _positive("hole_pitch_m", hole_pitch_m)
    if not 2 * r < p:
        raise PerforationError(f"hole_radius_m = {r:g} must be below half the pitch "
                               f"({p / 2:g} m) so that holes do not overlap")
    if hole_model not in HOLE_MODELS:
        raise PerforationError(f"hole_model = {hole_model!r} must be one of {HOLE_MODELS}")
    area = lattice_cell_area(p, lattice)
    rc = math.sqrt(area / math.pi)
    mu_film = film_viscosity(viscosity_pa_s, mean_free_path_m, gap_m)
    closed = dict(
        poiseuille_resistance_pa_s_per_m3=poiseuille_resistance(
            viscosity_pa_s, r, backplate_thickness_m),
        sampson_resistance_pa_s_per_m3=sampson_resistance(viscosity_pa_s, r),
        cell_resistance_pa_s_per_m3=cell_resistance(mu_film, gap_m, r, rc))
    flow = None
    if hole_model == "stokes":
        if not float(backplate_thickness_m) > 0:
            raise PerforationError(f"backplate_thickness_m = {backplate_thickness_m!r} must be "
                                   f"> 0 for hole_model = 'stokes'")
        from diagap.fem.film.stokes import StokesCellError, cell_flow_resistance

        try:
            flow = cell_flow_resistance(gap_m, r, p, lattice, backplate_thickness_m,
                                        viscosity_pa_s, mean_free_path_m,
                                        accommodation=accommodation, accuracy=accuracy)
        except StokesCellError as exc:
            raise PerforationError(str(exc)) from None
    return Perforation(
        lattice=lattice,
        holes_per_m2=1.0 / area,
        cell_radius_m=rc,
        open_area_fraction=math.pi * r * r / area,
        **closed,
        hole_knudsen_number=float(mean_free_path_m) / r,
        hole_flow=flow,
    )
