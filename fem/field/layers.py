r"""Dielectric layers on the electrodes of the gap, and the equivalent bias of an electret layer.

Geometry
--------
The diaphragm electrode may carry an insulating layer of thickness t_d and relative permittivity
ε_d on its gap side, the backplate electrode one of thickness t_b and ε_b (perforated with the
backplate's holes). The gap g is always the AIR gap, between the two layer surfaces: the
electrodes are g + t_d + t_b apart and the diaphragm can travel at most g before the layers
touch.

Electrostatics
--------------
Laplace's equation with a piecewise permittivity, ∇·(ε0 ε_r ∇u) = 0 (ε_r = ε_d, ε_b in the layers,
1 in the air), u = 0 on the diaphragm electrode and u = 1 V on the backplate electrode; at a layer
surface u and the normal displacement ε0 ε_r ∂u/∂n are continuous (no free charge), which the weak
form ∫ ε_r ∇u·∇v w dV = 0 satisfies naturally. Side walls and the top of the cell are symmetry
or closed boundaries (∂u/∂n = 0), as in :mod:`diagap.fem.field.cell`. C = ε0 ∫ ε_r |∇u|² w dV.

For flat layers without holes the field is uniform in each layer and D = ε0 ε_r E is the same in
all of them (Gauss's law), so the stack is three capacitors in series:

.. math:: c = \frac{\varepsilon_0}{g + t_d/\varepsilon_d + t_b/\varepsilon_b}
          = \frac{\varepsilon_0}{g_e},

g_e the electrical gap, t_e = t_d/ε_d + t_b/ε_b the layers' electrical thickness. The capacitance
density table (:mod:`diagap.fem.field.cell_table`) is fitted in g_e, where the layered flat plate
is exactly ε0/g_e. The force on the diaphragm, pull-in and C(x) follow from c(g) as without
layers; for a rigid piston pull-in occurs at a travel g_e/3 (if g_e/3 < g) and
V_PI = √(8 k g_e³ / (27 ε0 A)).

Rim fringing
------------
The rim model (:mod:`diagap.fem.field.rim`) carries the layers as subdomains of the electrode
pair (the diaphragm's layer over the diaphragm electrode, the backplate's under the backplate
electrode) and subtracts the series stack ε0 A/g_e of the overlap, so C_rim is the edge
fringing of the layered pair.

Electret
--------
A fixed surface charge density σ (C/m², sign of the charge) on the gap-side surface of one
layer. Sign convention: the bias V is the potential of the backplate electrode relative to the
diaphragm electrode, z points from the diaphragm to the backplate. Charge on the backplate layer
(thickness t, ε_r), electrodes at the same potential through the bias resistor (V = 0): with E_a
the field in the air and E_l in the layer, Gauss's law at the sheet gives ε0 ε_r E_l − ε0 E_a = σ,
and the zero loop voltage E_a g + E_l t (+ E_a t_d/ε_d in a diaphragm layer) = 0, so

.. math:: E_a = -\frac{\sigma t/(\varepsilon_0\varepsilon_r)}{g_e} = -\frac{V_{eq}}{g_e},
          \qquad V_{eq} = \frac{\sigma t}{\varepsilon_0 \varepsilon_r},

the air field of an uncharged capsule biased at V_eq, whatever the gap. The charge therefore acts
as a bias source V_eq in series with the supply: the total effective bias is V + V_eq, and the
force (½ε0E_a² per area), the pull-in condition (V + V_eq against the pull-in voltage), the
sensitivity and the readout (open-circuit signal V_tot·δC/C, high-pass of the bias resistor
with C) are those of a capsule biased at V + V_eq. For charge on the DIAPHRAGM layer the same
argument (sheet at z = t_d) gives V_eq = −σ t_d/(ε0 ε_d). The sheet is taken as uniform over
the electrode: on a perforated backplate layer the holes carry no charge, which the equivalent
bias neglects (an error of the order of the holes' share of the capacitance). Electret charge
decays with temperature and humidity: V_eq is the value for the stated σ.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass

from skfem import ElementTriP2

from diagap.meshes.cell import MeshSizes
from diagap.meshes.layered_cell import LayeredCellGeometry, layered_cell_mesh

from diagap.fem.constants import EPSILON_0_F_PER_M
from diagap.fem.richardson import relative_error
from diagap.fem.validate import Checks

__all__ = ["GapLayers", "electret_equivalent_bias_v", "layered_cell_capacitance",
           "ELECTRET_SIDES"]

#: the layer that carries electret charge
ELECTRET_SIDES = ("backplate", "diaphragm")


def _error():
    from diagap.fem.field.cell import ElectrostaticsInputError

    return ElectrostaticsInputError


@dataclass(frozen=True)
class GapLayers:
    """Insulating layers on the gap side of the electrodes (SI; thickness 0: no layer).

    Attributes
    ----------
    backplate_thickness_m, backplate_permittivity : float
        Layer on the backplate electrode (perforated with the holes): t_b [m], ε_b.
    diaphragm_thickness_m, diaphragm_permittivity : float
        Layer on the diaphragm electrode: t_d [m], ε_d.
    """

    backplate_thickness_m: float = 0.0
    backplate_permittivity: float = 1.0
    diaphragm_thickness_m: float = 0.0
    diaphragm_permittivity: float = 1.0

    def __post_init__(self):
        c = Checks(_error())
        for side in ELECTRET_SIDES:
            c.positive(f"{side}_thickness_m", getattr(self, f"{side}_thickness_m"),
                       allow_zero=True)
            eps = c.positive(f"{side}_permittivity", getattr(self, f"{side}_permittivity"))
            c.require(eps >= 1.0, f"{side}_permittivity = {eps!r} must be >= 1")

    @property
    def electrical_thickness_m(self) -> float:
        """t_e = t_d/ε_d + t_b/ε_b [m]: the layers' share of the electrical gap."""
        return (self.backplate_thickness_m / self.backplate_permittivity
                + self.diaphragm_thickness_m / self.diaphragm_permittivity)

    @property
    def geometric_thickness_m(self) -> float:
        """t_d + t_b [m]."""
        return self.backplate_thickness_m + self.diaphragm_thickness_m

    @property
    def present(self) -> bool:
        return self.geometric_thickness_m > 0

    def to_summary(self) -> dict:
        """The layers as used (SI), with the electrical thickness."""
        return {"backplate_thickness_m": self.backplate_thickness_m,
                "backplate_permittivity": self.backplate_permittivity,
                "diaphragm_thickness_m": self.diaphragm_thickness_m,
                "diaphragm_permittivity": self.diaphragm_permittivity,
                "electrical_thickness_m": self.electrical_thickness_m}


def electret_equivalent_bias_v(charge_density_c_per_m2: float, layers: GapLayers,
                               side: str = "backplate") -> float:
    """Equivalent bias V_eq [V] of a charge sheet σ on the gap-side surface of a layer.

    V_eq = σ t_b/(ε0 ε_b) for the backplate layer and −σ t_d/(ε0 ε_d) for the diaphragm layer
    (module docstring; V is the backplate's potential relative to the diaphragm).

    Parameters
    ----------
    charge_density_c_per_m2 : float
        σ [C/m²] (sign of the charge).
    layers : GapLayers
        The layers; the charged one must have a thickness > 0.
    side : {"backplate", "diaphragm"}
        The layer carrying the charge.
    """
    c = Checks(_error())
    c.choice("side", side, ELECTRET_SIDES)
    sigma = c.number("charge_density_c_per_m2", charge_density_c_per_m2)
    t = getattr(layers, f"{side}_thickness_m")
    c.require(t > 0, f"side = {side!r}: the {side} has no layer to carry the charge")
    v = sigma * t / (EPSILON_0_F_PER_M * getattr(layers, f"{side}_permittivity"))
    return v if side == "backplate" else -v


_LEVELS = {"draft": (4.0, 2.0), "normal": (2.0, 1.0), "fine": (1.0, 0.5)}


def _sizes(geo: LayeredCellGeometry, s: float) -> MeshSizes:
    """The size law of the axisymmetric cell (:mod:`diagap.fem.field.cell`) at scale s."""
    a, t = geo.hole_radius, geo.thickness
    feature = min(1.0, t, a) if a > 0 else 1.0
    far = max(1.0, geo.cell_radius, geo.air_height)
    return MeshSizes(h_rim=0.01 * s * feature, grading=0.3 * s, h_max=0.2 * s * far,
                     h_gap=0.3 * s)


def layered_cell_capacitance(gap_m: float, hole_radius_m: float, pitch_m: float, lattice: str,
                             backplate_thickness_m: float, layers: GapLayers,
                             accuracy: str = "normal", air_height_m: float | None = None,
                             mesh_scale: float | None = None):
    """Capacitance density of one lattice cell with dielectric layers (axisymmetric cell).

    Parameters as for :func:`diagap.fem.field.cell.cell_capacitance`; ``gap_m`` is the air gap
    between the layer surfaces and ``backplate_thickness_m`` the conducting electrode's
    thickness (the backplate layer lies below it). The discretisation error comes from two mesh
    levels (all sizes halved) with the corner-limited order 4/3, as for the plain cell.

    Returns
    -------
    CellResult
        ``perforation_factor`` is c·g_e/ε0, relative to the layered flat plate.
    """
    from diagap.fem.field.cell import (CORNER_ORDER, CellResult, _check, cell_area_m2,
                                       check_cell_inputs, open_area_fraction, solve_potential)

    check_cell_inputs(gap_m, hole_radius_m, pitch_m, lattice, backplate_thickness_m, accuracy)
    if air_height_m is not None:
        _check.positive("air_height_m", air_height_m)
    if mesh_scale is not None:
        _check.positive("mesh_scale", mesh_scale)
    start = time.perf_counter()
    g = gap_m
    if lattice == "none":
        radius, a, height = 1.0, 0.0, 1.0
    else:
        radius = math.sqrt(cell_area_m2(pitch_m, lattice) / math.pi) / g
        a = hole_radius_m / g
        height = (pitch_m if air_height_m is None else air_height_m) / g
    geo = LayeredCellGeometry(radius, a, backplate_thickness_m / g, height,
                              layers.diaphragm_thickness_m / g, layers.backplate_thickness_m / g)
    eps = {"lower_film": layers.diaphragm_permittivity,
           "upper_film": layers.backplate_permittivity}
    area = math.pi * radius**2
    g_e = g + layers.electrical_thickness_m
    scales = _LEVELS[accuracy] if mesh_scale is None else (2 * mesh_scale, mesh_scale)
    levels, solution = [], None
    for s in scales:
        mesh = layered_cell_mesh(geo, _sizes(geo, s))
        basis, u, energy = solve_potential(mesh, ElementTriP2(), {"bottom": 0.0, "backplate": 1.0},
                                           "axisymmetric", permittivities=eps)
        levels.append((int(basis.N), energy / area * g_e / g))
        solution = (basis, u)
    pf = levels[-1][1]
    return CellResult(
        capacitance_density_f_per_m2=EPSILON_0_F_PER_M / g_e * pf,
        rel_error=relative_error(levels[0][1], pf, CORNER_ORDER), perforation_factor=pf,
        open_area_fraction=open_area_fraction(hole_radius_m, pitch_m, lattice),
        dofs=levels[-1][0], gap_m=g,
        cell_area_m2=float("nan") if lattice == "none" else cell_area_m2(pitch_m, lattice),
        model="axisymmetric", lattice=lattice, levels=tuple(levels),
        runtime_s=time.perf_counter() - start, _solution=solution)
