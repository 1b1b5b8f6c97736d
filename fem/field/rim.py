r"""Extra capacitance at the rim of the electrodes (edge fringing), from an FE of the pair.

Physics
-------
Laplace's equation ∇·(ε∇u) = 0 in the open space around two electrodes: the diaphragm, a thin
conducting disk of radius R_d on z = 0 at u = 0, and the backplate electrode, a conducting disk
of radius R_e and thickness t on g <= z <= g + t at u = 1 V. Optionally the backplate continues
beyond the electrode as a solid ring R_e < r < R_b of relative permittivity ε_r. The pair is
isolated: the far boundary (a sphere of radius 50× the largest electrode dimension) carries the
natural condition ∂u/∂n = 0, so the charges on the electrodes are equal and opposite and
C = ε0∫ε_r|∇u|² dV at 1 V is the two-terminal capacitance. Weak form as in
:mod:`diagap.fem.field.cell`, weight 2πr (axisymmetric, circular electrodes). The rim fringing is

    C_rim = C_pair − ε0 π min(R_d, R_e)² / g,

the pair capacitance above the parallel-plate value of the overlap. Holes are ignored here: the
perforated interior is the business of the cell model, and the two effects are assumed additive
(the holes next to the rim are treated as in the interior).

Dielectric layers (:mod:`diagap.fem.field.layers`): a layer of thickness t_d, ε_d on the
diaphragm electrode (0 <= z <= t_d, r <= R_d) and one of t_b, ε_b under the backplate electrode
(r <= R_e) are subdomains of relative permittivity ε_d, ε_b; the gap g is then the air gap
between the layers and the parallel-plate part of the overlap is ε0 π min(R_d, R_e)²/g_e with
g_e = g + t_d/ε_d + t_b/ε_b (the series stack), so C_rim = C_pair − ε0 π min(R_d, R_e)²/g_e.

Square electrodes (side 2·R_e on a diaphragm of side 2·R_d): the same section is solved as a
plane 2D problem per unit length (two strips of half-widths R_d and R_e), which gives the rim
fringing per length of straight edge f = C'_half − ε0 R_e/g, and C_rim = f × perimeter (8 R_e).
The four corners are not modelled (approximation, relative error of order g/R_e of C_rim).

Variation with the gap: C_rim is computed for five uniform gaps spanning g(1 ± span) and fitted by
α + β ln ĝ + γ ĝ (ĝ = g_local/g; the leading term of Kirchhoff's edge correction is ∝ ln g). The
device model evaluates it at the local gap under the electrode rim, g − x·φ(R_e).

Errors: two mesh levels at the rest gap (estimate |C_f − C_c|/(2^(4/3) − 1), as in the cell) plus
the truncation of the far field, estimated from a second coarse solve with half the outer radius
(far-field energy ∝ R^-3 axisymmetric, R^-2 plane), plus the fit residual.
"""
from __future__ import annotations

import math
import time
from dataclasses import replace, dataclass

import numpy as np
from skfem import ElementTriP2

from diagap.meshes.cell import MeshSizes
from diagap.meshes.rim import PairGeometry, electrode_pair_mesh

from diagap.fem.constants import EPSILON_0_F_PER_M
from diagap.fem.field.cell import CORNER_ORDER, ElectrostaticsInputError, solve_potential
from diagap.fem.richardson import relative_error, richardson_error
from diagap.fem.validate import Checks

__all__ = ["RimResult", "rim_fringing", "pair_capacitance"]

_check = Checks(ElectrostaticsInputError)
_LEVELS = {"draft": (4.0, 2.0), "normal": (2.0, 1.0), "fine": (1.0, 0.5)}
_OUTER = 50.0
_SAMPLES = 5


def _sizes(geo: PairGeometry, s: float) -> MeshSizes:
    feature = min(1.0, geo.thickness) if geo.thickness > 0 else 1.0
    return MeshSizes(h_rim=1e-3 * s * feature, grading=0.3 * s, h_max=0.1 * geo.outer_radius,
                     h_gap=0.5 * s)


def pair_capacitance(geo: PairGeometry, s: float, axisymmetric: bool = True,
                     ring_permittivity: float = 1.0,
                     film_permittivities: tuple = (1.0, 1.0)) -> tuple[float, int]:
    """Scaled capacitance (energy at 1 V) of an electrode pair at mesh scale s, and the DOFs.

    Axisymmetric: C = ε0·g·Ĉ; plane: C' = ε0·Ĉ per unit length (full pair: 2Ĉ). Solutions are
    cached on disk (:mod:`diagap.meshes.cache`, keyed by the inputs and a hash of the
    solver source) so that sweeps reuse them. ``film_permittivities`` are the relative
    permittivities of the lower and upper films of ``geo`` (if it has them).
    """
    from diagap.meshes.cache import cached_arrays

    params = {"geo": geo.as_dict(), "s": s, "axi": axisymmetric, "eps": ring_permittivity}
    films = tuple(float(e) for e in film_permittivities)
    if films != (1.0, 1.0):
        params["films"] = films
    arr = cached_arrays("electrode-pair-solution", params, lambda: dict(zip(
        ("e", "n"), map(np.atleast_1d, _pair_capacitance(geo, s, axisymmetric,
                                                        ring_permittivity, films)))))
    return float(arr["e"][0]), int(arr["n"][0])


def _pair_capacitance(geo: PairGeometry, s: float, axisymmetric: bool = True,
                     ring_permittivity: float = 1.0,
                     films: tuple = (1.0, 1.0)) -> tuple[float, int]:
    """The uncached solve behind :func:`pair_capacitance`."""
    mesh = electrode_pair_mesh(geo, _sizes(geo, s))
    weight = "axisymmetric" if axisymmetric else "plane"
    basis, u, energy = solve_potential(mesh, ElementTriP2(), {"lower": 0.0, "upper": 1.0},
                                       weight, ring_permittivity=ring_permittivity,
                                       permittivities={"lower_film": films[0],
                                                       "upper_film": films[1]})
    return energy, int(basis.N)


@dataclass(frozen=True)
class RimResult:
    """Rim (edge) fringing capacitance of the electrode pair.

    Attributes
    ----------
    capacitance_f : float
        C_rim at the rest gap [F].
    abs_error_f : float
        Error estimate of C_rim (mesh + far-field truncation + fit) [F].
    pair_capacitance_f, parallel_plate_capacitance_f : float
        Whole pair (solid electrodes) and ε0·A_overlap/g at the rest gap [F].
    gap_m : float
        Rest gap [m].
    gaps_m, samples_f : ndarray
        Uniform gaps and C_rim there [F].
    coefficients : ndarray
        (α, β, γ) [F] of C_rim(ĝ) = α + β ln ĝ + γ ĝ, ĝ = g_local/gap_m.
    fit_error : float
        Largest residual of the fit relative to C_rim at the rest gap.
    shape : str
    perimeter_m : float
    per_length_f_per_m : float
        C_rim / perimeter [F/m].
    dofs : int
    runtime_s : float
    """

    capacitance_f: float
    abs_error_f: float
    pair_capacitance_f: float
    parallel_plate_capacitance_f: float
    gap_m: float
    gaps_m: np.ndarray
    samples_f: np.ndarray
    coefficients: np.ndarray
    fit_error: float
    shape: str
    perimeter_m: float
    per_length_f_per_m: float
    dofs: int
    runtime_s: float

    @property
    def rel_error(self) -> float:
        """Error estimate relative to C_rim."""
        return self.abs_error_f / abs(self.capacitance_f)

    @property
    def derivative_abs_error_f_per_m(self) -> float:
        """Uncertainty of dC_rim/dg at the rest gap [F/m]: fitted slope against the central
        difference of the neighbouring samples, plus the relative error of C_rim."""
        k = len(self.gaps_m) // 2
        fd = (self.samples_f[k + 1] - self.samples_f[k - 1]) / (
            self.gaps_m[k + 1] - self.gaps_m[k - 1])
        slope = self.derivative(self.gap_m)
        return float(abs(slope - fd) + self.rel_error * abs(slope))

    def _check(self, g: np.ndarray) -> None:
        lo, hi = self.gaps_m[0] * (1 - 1e-9), self.gaps_m[-1] * (1 + 1e-9)
        if np.any(g < lo) or np.any(g > hi):
            raise ElectrostaticsInputError(
                f"rim gap_m = {g.ravel()[np.argmax((g < lo) | (g > hi))]!r} is outside the "
                f"rim fringing range [{self.gaps_m[0]!r}, {self.gaps_m[-1]!r}] m")

    def __call__(self, gap_m):
        """C_rim [F] at the local rim gap [m] (scalar or array)."""
        g = np.asarray(gap_m, dtype=float)
        self._check(g)
        gh = g / self.gap_m
        a, b, c = self.coefficients
        return a + b * np.log(gh) + c * gh

    def derivative(self, gap_m):
        """dC_rim/dg [F/m]."""
        g = np.asarray(gap_m, dtype=float)
        self._check(g)
        _, b, c = self.coefficients
        return (b / (g / self.gap_m) + c) / self.gap_m


def _geometry(re, rd, g, t, rb, outer_scale=1.0, layers=None) -> PairGeometry:
    ring = rb / g if rb > re else 0.0
    size = max(rd, re, rb) / g
    fl = fu = 0.0
    if layers is not None:
        fl, fu = layers.diaphragm_thickness_m / g, layers.backplate_thickness_m / g
    return PairGeometry(rd / g, re / g, t / g,
                        _OUTER * outer_scale * max(size, 1 + fl + fu + t / g), ring, fl, fu)


def _films(layers) -> tuple:
    """(ε_d, ε_b) of the lower (diaphragm) and upper (backplate) films."""
    if layers is None:
        return (1.0, 1.0)
    return (layers.diaphragm_permittivity, layers.backplate_permittivity)


def _extra(energy: float, geo: PairGeometry, g: float, circle: bool, layers=None) -> float:
    """C_rim [F] (circle) or per unit length [F/m] (square) from the scaled energy; the
    parallel-plate part of the overlap is that of the series stack, ε0 A/(g + t_e)."""
    overlap = min(geo.lower_radius, geo.upper_radius)
    stack = 1.0 + (layers.electrical_thickness_m / g if layers is not None else 0.0)
    if circle:
        return EPSILON_0_F_PER_M * g * (energy - math.pi * overlap**2 / stack)
    return EPSILON_0_F_PER_M * (energy - overlap / stack)


def _check_inputs(re, rd, g, t, shape, rb, eps_r, accuracy, span) -> None:
    _check.choice("shape", shape, ("circle", "square"))
    _check.choice("accuracy", accuracy, tuple(_LEVELS))
    for name, value in (("electrode_radius_m", re), ("diaphragm_radius_m", rd), ("gap_m", g),
                        ("backplate_relative_permittivity", eps_r)):
        _check.positive(name, value)
    _check.positive("backplate_thickness_m", t, allow_zero=True)
    _check.require(rb >= re, f"backplate_radius_m = {rb!r} must be >= electrode_radius_m = {re!r}")
    _check.require(rb == re or t > 0, "backplate_radius_m beyond the electrode needs a backplate "
                   "thickness > 0")
    _check.require(0 < span < 0.9, f"gap_span = {span!r} must lie in (0, 0.9)")
    _check.require(min(re, rd) > 2 * g,
                   f"electrode_radius_m = {re!r} and diaphragm_radius_m = {rd!r} must exceed "
                   f"twice the gap ({2 * g!r} m) for a rim model")


#: largest electrode size / gap modelled directly; larger pairs are modelled at this ratio and
#: the per-length edge capacitance is extended by the logarithmic law below.
MAX_SIZE_RATIO = 200.0


def rim_fringing(electrode_radius_m: float, diaphragm_radius_m: float, gap_m: float,
                 backplate_thickness_m: float, shape: str = "circle",
                 backplate_radius_m: float | None = None,
                 backplate_relative_permittivity: float = 1.0, accuracy: str = "normal",
                 gap_span: float = 1.0 / 3.0, layers=None) -> RimResult:
    """Rim fringing capacitance of the electrode pair (see :func:`rim_fringing_direct`).

    Pairs larger than ``MAX_SIZE_RATIO`` times the smallest sampled gap are modelled at that size
    (gap, thickness and the overhang of diaphragm and backplate beyond the electrode kept, up to
    30 % of the modelled pair; the electrode scaled down) and the edge capacitance per length is
    extended with the logarithmic size law of thin plates in free space,
    ΔC/ℓ = (ε0/2π)·ln(s), s the size ratio — the ln(a/d) term of Kirchhoff's disk formula
    (Kirchhoff 1877) and of Palmer's strip formula (Palmer 1937). The law's own uncertainty is
    taken as 10 % of the correction.
    """
    rb = electrode_radius_m if backplate_radius_m is None else backplate_radius_m
    size = max(electrode_radius_m, diaphragm_radius_m, rb)
    kw = dict(shape=shape, backplate_relative_permittivity=backplate_relative_permittivity,
              accuracy=accuracy, gap_span=gap_span, layers=layers)
    g_small = gap_m * (1.0 - gap_span) if 0 < gap_span < 1 else gap_m  # smallest sampled gap
    if not (size > MAX_SIZE_RATIO * g_small > 0):
        return rim_fringing_direct(electrode_radius_m, diaphragm_radius_m, gap_m,
                                   backplate_thickness_m, backplate_radius_m=backplate_radius_m,
                                   **kw)
    # model a pair of MAX_SIZE_RATIO smallest gaps in all: the overhangs of diaphragm and
    # backplate beyond the electrode (they shape the edge field) keep their absolute size, up to
    # 30 % of the modelled pair; the electrode takes the rest
    span = MAX_SIZE_RATIO * g_small
    over_d = diaphragm_radius_m - electrode_radius_m
    over_b = rb - electrode_radius_m
    keep = min(max(over_d, over_b, 0.0), 0.3 * span)
    re_s = span - keep
    f = re_s / electrode_radius_m

    def overhang(o):
        return min(o, keep) if o > 0 else o * f

    ring = None if backplate_radius_m is None else re_s + overhang(over_b)
    small = rim_fringing_direct(re_s, re_s + overhang(over_d), gap_m, backplate_thickness_m,
                                backplate_radius_m=ring, **kw)
    perimeter = small.perimeter_m / f
    extra = EPSILON_0_F_PER_M / (2 * math.pi) * math.log(1.0 / f) * perimeter
    coef = np.array(small.coefficients, dtype=float) / f
    coef[0] += extra
    c_rest = small.capacitance_f / f + extra
    parallel = small.parallel_plate_capacitance_f / f**2
    return replace(small, capacitance_f=c_rest,
                   abs_error_f=small.abs_error_f / f + 0.1 * extra,
                   pair_capacitance_f=parallel + c_rest, parallel_plate_capacitance_f=parallel,
                   samples_f=np.asarray(small.samples_f) / f + extra, coefficients=coef,
                   perimeter_m=perimeter, per_length_f_per_m=c_rest / perimeter)


def rim_fringing_direct(electrode_radius_m: float, diaphragm_radius_m: float, gap_m: float,
                 backplate_thickness_m: float, shape: str = "circle",
                 backplate_radius_m: float | None = None,
                 backplate_relative_permittivity: float = 1.0, accuracy: str = "normal",
                 gap_span: float = 1.0 / 3.0, layers=None) -> RimResult:
    """Rim fringing capacitance of the diaphragm/backplate electrode pair.

    Parameters
    ----------
    electrode_radius_m : float
        Backplate electrode radius R_e [m] (half side for ``shape="square"``).
    diaphragm_radius_m : float
        Conducting diaphragm radius R_d [m] (half side for a square).
    gap_m : float
        Rest gap g [m].
    backplate_thickness_m : float
        Electrode (backplate) thickness t [m]; 0 for a thin electrode.
    shape : {"circle", "square"}
        Circle: axisymmetric FE. Square: plane FE per length × perimeter (corners neglected).
    backplate_radius_m : float, optional
        Outer radius of the backplate when it continues beyond the electrode as a
        non-conducting solid [m]; default R_e (the backplate stops at the electrode).
    backplate_relative_permittivity : float
        ε_r of that solid ring (1 makes it electrically invisible).
    accuracy : {"draft", "normal", "fine"}
    gap_span : float
        C_rim is sampled over uniform gaps g(1 ± gap_span).
    layers : GapLayers, optional
        Dielectric layers on the electrodes (module docstring); ``gap_m`` is the air gap.

    Returns
    -------
    RimResult
    """
    rb = electrode_radius_m if backplate_radius_m is None else backplate_radius_m
    _check_inputs(electrode_radius_m, diaphragm_radius_m, gap_m, backplate_thickness_m, shape,
                  rb, backplate_relative_permittivity, accuracy, gap_span)
    start = time.perf_counter()
    circle = shape == "circle"
    args = (electrode_radius_m, diaphragm_radius_m)
    geo = _geometry(*args, gap_m, backplate_thickness_m, rb, layers=layers)
    coarse, fine = _LEVELS[accuracy]
    eps, films = backplate_relative_permittivity, _films(layers)
    e_c, _ = pair_capacitance(geo, coarse, circle, eps, films)
    e_f, dofs = pair_capacitance(geo, fine, circle, eps, films)
    half = _geometry(*args, gap_m, backplate_thickness_m, rb, outer_scale=0.5, layers=layers)
    e_h, _ = pair_capacitance(half, coarse, circle, eps, films)
    order = 3.0 if circle else 2.0
    perimeter = 2 * math.pi * electrode_radius_m if circle else 8 * electrode_radius_m
    to_total = 1.0 if circle else perimeter
    mesh_err = relative_error(e_c, e_f, CORNER_ORDER) * e_f
    trunc_err = richardson_error(e_h, e_c, order)  # outer radius halved: ratio 2
    scale = EPSILON_0_F_PER_M * (gap_m if circle else 1.0) * to_total
    gaps = gap_m * np.linspace(1 - gap_span, 1 + gap_span, _SAMPLES)
    samples = []
    for g in gaps:
        if math.isclose(g, gap_m, rel_tol=1e-12):
            samples.append(_extra(e_f, geo, gap_m, circle, layers) * to_total)
            continue
        geo_g = _geometry(*args, g, backplate_thickness_m, rb, layers=layers)
        samples.append(_extra(pair_capacitance(geo_g, fine, circle, eps, films)[0], geo_g, g,
                              circle, layers) * to_total)
    samples = np.array(samples)
    gh = gaps / gap_m
    M = np.column_stack([np.ones_like(gh), np.log(gh), gh])
    coef, *_ = np.linalg.lstsq(M, samples, rcond=None)
    c_rest = float(_extra(e_f, geo, gap_m, circle, layers) * to_total)
    fit_abs = float(np.max(np.abs(M @ coef - samples)))
    g_e = gap_m + (layers.electrical_thickness_m if layers is not None else 0.0)
    parallel = EPSILON_0_F_PER_M * (math.pi if circle else 4.0) * min(args) ** 2 / g_e
    return RimResult(
        capacitance_f=c_rest, abs_error_f=scale * (mesh_err + trunc_err) + fit_abs,
        pair_capacitance_f=parallel + c_rest, parallel_plate_capacitance_f=parallel,
        gap_m=gap_m, gaps_m=gaps, samples_f=samples, coefficients=coef,
        fit_error=fit_abs / abs(c_rest), shape=shape, perimeter_m=perimeter,
        per_length_f_per_m=c_rest / perimeter, dofs=dofs, runtime_s=time.perf_counter() - start)
