"""Squeeze-film damping and film stiffness of the air gap, with the perforation as a sink.

Physics
-------
Isothermal compressible Reynolds equation for the film between the moving diaphragm and the
backplate, linearised about the static pressure p0 and the rest gap g (small motion, rigid
backplate). The diaphragm moves towards the backplate with velocity v0·φ(x, y) (φ the mode shape,
φ = 1 at the centre, v0 the centre velocity, m/s); the film pressure is p0 + P(x, y)·e^{jωt}.
Mass balance per unit area (volume flow, m/s):

    −∇·((g³/12μ_eff) ∇P) + (n_h/Z) P + jω (g/p0) P = v0 φ        on the electrode Ω,
    P = 0                                                         on ∂Ω (vented rim),

with μ_eff the rarefied-gas viscosity (Veijola et al. 1995), n_h the holes per unit area and
Z the flow resistance per hole from the cell-averaged film pressure to the open side, including
the flow from the cell into the hole (:mod:`diagap.fem.film.perforation`): by default the axisymmetric
Stokes solve of the cell with Maxwell slip walls (:mod:`diagap.fem.film.stokes`), the closed forms
(Škvor/Bao cell + Poiseuille + Sampson) on request (``hole_model="closed-form"``). P is the
cell-averaged pressure, so the Laplacian carries the flow between cells only and Z the flow
within a cell (no part counted twice). The three left-hand terms are the lateral film flow,
the flow out through the holes and the isothermal gas compression. The film pushes back on the
diaphragm with the generalised force −∫ P φ dA; the mechanical impedance referred to the centre velocity is

    Z_m(ω) = ∫ P φ dA / v0 = b(ω) + k_film(ω)/(jω),

giving the damping b = Re Z_m (N·s/m) and the film stiffness k_film = −ω Im Z_m (N/m).

Scaling and weak form
---------------------
With ξ = x/L (L = electrode radius, or half the side of a square electrode) and
P = (12 μ_eff v0 L²/g³) Π, find Π ∈ H¹₀(Ω̂) with

    ∫ ∇Π·∇w dξ + (α + jσ̂) ∫ Π w dξ = ∫ φ w dξ      for all w ∈ H¹₀(Ω̂),

α = 12 μ_eff L² n_h / (g³ Z) (perforation), σ̂ = 12 μ_eff ω L² / (p0 g²) (squeeze number on L),
and Z_m = (12 μ_eff L⁴/g³) ∫ Π φ dξ. Limits: σ̂ → 0 gives the incompressible damping (rigid
disk, no holes: 3πμa⁴/(2g³)); σ̂ → ∞ gives the isothermal gas spring k → p0 ∫φ² dA / g, b → 0.
The reported squeeze number σ = 12 μ_eff ω L_σ²/(p0 g²) uses L_σ = electrode radius (circle) or
side (square).

Discretisation
--------------
Quadratic Lagrange triangles (``ElementTriP2``) on the rim-graded electrode mesh of
:mod:`diagap.meshes.diaphragm` (the disk mesh made isoparametric: edge nodes on the circle), refined
uniformly twice. Every reported number comes from the finest of the three nested levels; the
error estimate is Richardson's |J₁ − J₂| / (2^p − 1) with the order p observed from the three
levels (clamped to [1, 4]). Frequencies below half the lowest film eigenvalue are evaluated from
the moments of one real factorisation (a convergent series with a rigorous remainder bound);
the others by complex sparse LU. The cut-off frequency is where the spring and damping forces
are equal, k_film = ω b. The relative error of the Stokes resistance Z is added to the relative
damping error (a bound: |d ln b / d ln Z| <= 1, since b grows with Z towards the unperforated
film and never faster than the perforated limit b ∝ Z).
"""
from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import scipy.sparse.linalg as spla
from threadpoolctl import threadpool_limits
from skfem import Basis, ElementTriP2, MeshTri, MeshTri2

from diagap.meshes.diaphragm import disk_mesh, square_mesh

from diagap.fem.air import AirProperties
from diagap.fem.film.perforation import HOLE_MODELS, film_viscosity, perforation
from diagap.fem.film.result import SqueezeResult
from diagap.fem.forms import laplace, mass, source, squared
from diagap.fem.richardson import observed_estimate
from diagap.fem.validate import Checks

__all__ = ["SqueezeError", "SqueezeResult", "film_impedance", "squeeze_film"]

# coarsest-level mesh: (size inside, size at the rim, largest rim size per boundary layer)
_ACCURACY = {"draft": (0.8, 0.4, 8.0), "normal": (0.5, 0.2, 4.0), "fine": (0.3, 0.1, 2.0)}
_GRADING = 0.3
_SERIES_RATIO = 0.5   # moment series used for |σ̂| <= 0.5 λ₁
_N_MOMENTS = 56
_DISK_EIGENVALUE = 5.783185962946784  # j₀₁², lowest Dirichlet eigenvalue of the unit disk


class SqueezeError(ValueError):
    """Invalid input to the squeeze-film solver."""


_check = Checks(SqueezeError)


# ----------------------------------------------------------------------------------- meshes
def _curve_disk(mesh: MeshTri) -> MeshTri2:
    """Quadratic mesh of the unit disk with boundary edge nodes on the circle."""
    m2 = MeshTri2.from_mesh(mesh)
    dofs = m2.dofs.get_facet_dofs(m2.boundary_facets()).flatten()
    loc = m2.doflocs.copy()
    loc[:, dofs] /= np.linalg.norm(loc[:, dofs], axis=0)
    return replace(m2, doflocs=loc)


def _snap_rim(mesh: MeshTri) -> MeshTri:
    p = mesh.p.copy()
    nodes = mesh.boundary_nodes()
    p[:, nodes] /= np.linalg.norm(p[:, nodes], axis=0)
    return replace(mesh, doflocs=p)


def _mesh_levels(shape: str, accuracy: str, layer: float) -> list:
    """Three nested meshes, coarse to fine; ``layer`` is the thinnest boundary layer (scaled)."""
    h_center, h_edge, per_layer = _ACCURACY[accuracy]
    while h_edge > per_layer * layer and h_edge > 2e-3:  # finest level resolves the layer
        h_edge /= 2.0
    h_center = max(h_center, h_edge)
    base = (disk_mesh if shape == "circle" else square_mesh)(h_center, h_edge, _GRADING)
    linear = [base, base.refined()]
    linear.append(linear[-1].refined())
    if shape == "circle":
        return [_curve_disk(_snap_rim(m)) for m in linear]
    return [MeshTri2.from_mesh(m) for m in linear]


# ------------------------------------------------------------------------------ one level
def _lu(matrix):
    """Sparse LU of a symmetric matrix (symmetric ordering, no off-diagonal pivoting)."""
    return spla.splu(matrix.tocsc(), permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0,
                     options={"SymmetricMode": True})


class _ShiftedSolver:
    """Solves (K + αM + jσ̂M) x = b by a complex sparse LU (symmetric mode, no pivoting: the
    matrix is complex symmetric with a positive definite real part, so every leading principal
    minor is regular)."""

    def __init__(self, level: "_FilmLevel", sigma: float):
        self.lu = _lu((level.k + 1j * sigma * level.m).astype(complex))

    def solve(self, b: np.ndarray) -> np.ndarray:
        return self.lu.solve(np.asarray(b, dtype=complex))


class _FilmLevel:
    """Assembled, factorised scaled problem on one mesh.

    ``lam_low`` is a lower bound of the lowest eigenvalue of (K + αM, M): conforming Galerkin
    eigenvalues lie above the continuous ones, which are α + j₀₁² (unit disk) or α + π²/2
    (square [-1, 1]²); a 0.9 safety factor covers the isoparametric rim.
    """

    def __init__(self, mesh, alpha: float, phi, domain_eigenvalue: float):
        basis = Basis(mesh, ElementTriP2(), intorder=6)
        x = basis.mapping.F(basis.X)
        phi_q = np.broadcast_to(np.asarray(phi(x[0], x[1]), dtype=float), x[0].shape)
        stiff = laplace.assemble(basis)  # lateral film flow
        capacity = mass.assemble(basis)  # gas compression
        load = source.assemble(basis, f=phi_q)  # wall motion
        free = basis.complement_dofs(basis.get_dofs())
        self.n_dofs = free.size
        self.k = (stiff + alpha * capacity)[free][:, free].tocsc()
        self.m = capacity[free][:, free].tocsr()
        self.f = load[free]
        self.phi_sq = float(squared.assemble(basis, f=phi_q))
        self.lam_low = alpha + 0.9 * domain_eigenvalue
        self.lu = _lu(self.k)
        self._moments = None

    def moments(self) -> np.ndarray:
        """Scaled moments μ_n = Λⁿ f·(K⁻¹M)ⁿK⁻¹f (Λ = ``lam_low``): J(s) = Σ (−s/Λ)ⁿ μ_n."""
        if self._moments is None:
            t = self.lu.solve(self.f)
            out = [self.f @ t]
            for _ in range(_N_MOMENTS - 1):
                t = self.lam_low * self.lu.solve(self.m @ t)
                out.append(self.f @ t)
            self._moments = np.array(out)
        return self._moments

    def response(self, s: np.ndarray) -> np.ndarray:
        """J(s) = f·(K + αM + sM)⁻¹ f for scaled Laplace variables s = jσ̂.

        For |s| <= Λ/2 the moment series is used; its remainder after N terms is below
        μ_0 (1/2)^N / (1 − 1/2) since J is a Stieltjes function Σ c_i/(λ_i + s), c_i >= 0.
        """
        out = np.empty(s.shape, dtype=complex)
        series = np.abs(s) <= _SERIES_RATIO * self.lam_low
        if series.any():
            out[series] = np.polynomial.polynomial.polyval(-s[series] / self.lam_low,
                                                           self.moments())
        for i in np.flatnonzero(~series):
            out[i] = self.f @ _ShiftedSolver(self, s[i].imag).solve(self.f)
        return out

    def cutoff(self, start: float | None = None) -> float:
        """Scaled squeeze number where Re J = −Im J (spring force = damping force), by Newton's
        method in ln σ̂ from ``start`` (e.g. a coarser level's cut-off) or the power-iteration
        estimate of λ₁."""
        if start is not None and start > 0:
            u = math.log(start)
        else:
            mu = self.moments()
            u = math.log(self.lam_low * mu[-2] / mu[-1])  # power-iteration estimate of λ₁
        for _ in range(40):
            sig = math.exp(u)
            solver = _ShiftedSolver(self, sig)
            x = solver.solve(self.f)
            j = self.f @ x
            dj = -1j * (self.f @ solver.solve(self.m @ x))  # dJ/dσ̂
            h, dh = j.real + j.imag, sig * (dj.real + dj.imag)
            step = -h / dh if dh < 0 else 1.0
            u += max(-1.0, min(1.0, step))
            if abs(step) < 1e-9:
                return math.exp(u)
        raise RuntimeError("film cut-off iteration did not converge")


def _check_mode_shape(mode_shape, scale_m: float):
    if not callable(mode_shape):
        raise SqueezeError(f"mode_shape = {mode_shape!r} must be a callable phi(x_m, y_m)")
    centre = float(np.asarray(mode_shape(np.zeros(1), np.zeros(1)), dtype=float).ravel()[0])
    if not abs(centre - 1.0) <= 1e-3:
        raise SqueezeError(f"mode_shape at the centre = {centre:g}, must be normalised to 1")
    return lambda xi, eta: mode_shape(scale_m * xi, scale_m * eta)


def film_impedance(shape: str, electrode_size_m: float, gap_m: float,
                   film_viscosity_pa_s: float, static_pressure_pa: float,
                   sink_m_per_pa_s: float, mode_shape, frequencies_hz,
                   accuracy: str = "normal") -> SqueezeResult:
    """Solve the linearised Reynolds equation for given film coefficients.

    Parameters
    ----------
    shape : {"circle", "square"}
        Electrode outline; ``electrode_size_m`` is its radius or its side (m).
    gap_m : float
        Rest gap g (m).
    film_viscosity_pa_s : float
        Effective (rarefied) film viscosity μ_eff (Pa·s).
    static_pressure_pa : float
        Static pressure p0 (Pa).
    sink_m_per_pa_s : float
        n_h / Z, flow out through the holes per unit area and pascal (m/(Pa·s)); 0: no holes.
    mode_shape : callable
        φ(x_m, y_m) → array, 1 at the centre (coordinates in metres from the centre).
    frequencies_hz : array_like
        Frequencies (Hz, >= 0) of the returned spectra.
    accuracy : {"draft", "normal", "fine"}
    """
    _check.choice("shape", shape, ("circle", "square"))
    _check.choice("accuracy", accuracy, tuple(_ACCURACY))
    size = _check.positive("electrode_size_m", electrode_size_m)
    g = _check.positive("gap_m", gap_m)
    mu = _check.positive("film_viscosity_pa_s", film_viscosity_pa_s)
    p0 = _check.positive("static_pressure_pa", static_pressure_pa)
    sink = _check.positive("sink_m_per_pa_s", sink_m_per_pa_s, allow_zero=True)
    freq = np.atleast_1d(np.asarray(frequencies_hz, dtype=float))
    _check.require(freq.ndim == 1 and np.all(np.isfinite(freq)) and not np.any(freq < 0),
                   f"frequencies_hz = {np.ravel(freq)[:4].tolist()} (first values) must be a "
                   "1-D array of finite values >= 0 Hz")

    scale = size if shape == "circle" else 0.5 * size
    phi = _check_mode_shape(mode_shape, scale)
    alpha = 12.0 * mu * scale**2 * sink / g**3
    sigma_per_omega = 12.0 * mu * scale**2 / (p0 * g**2)
    s = 1j * sigma_per_omega * 2.0 * np.pi * freq
    layer = 1.0 / math.sqrt(max(alpha + float(np.abs(s).max(initial=0.0)), 1.0))
    eig = _DISK_EIGENVALUE if shape == "circle" else 0.5 * math.pi**2
    with threadpool_limits(limits=1):  # small dense kernels: threads only add contention
        levels = [_FilmLevel(m, alpha, phi, eig) for m in _mesh_levels(shape, accuracy, layer)]
        static = np.array([lv.response(np.zeros(1))[0].real for lv in levels])
        spectra = np.array([lv.response(s) for lv in levels])
        cut = []
        for lv in levels:  # nested levels: each starts from the coarser one's cut-off
            cut.append(lv.cutoff(cut[-1] if cut else None))
        cut = np.array(cut)
    order, err = observed_estimate(static)
    _, err_f = observed_estimate(spectra)
    _, err_c = observed_estimate(cut)
    z0 = 12.0 * mu * scale**4 / g**3
    omega = 2.0 * np.pi * freq
    hz_per_sigma = 1.0 / (2.0 * np.pi * sigma_per_omega)
    return SqueezeResult(
        shape=shape,
        squeeze_length_m=size,
        gap_m=g,
        film_viscosity_pa_s=mu,
        static_pressure_pa=p0,
        damping_n_s_per_m=z0 * static[2],
        damping_uncertainty_n_s_per_m=z0 * float(err),
        frequencies_hz=freq,
        damping_spectrum_n_s_per_m=z0 * spectra[2].real,
        damping_spectrum_uncertainty_n_s_per_m=z0 * err_f,
        film_stiffness_n_per_m=-omega * z0 * spectra[2].imag,
        film_stiffness_uncertainty_n_per_m=omega * z0 * err_f,
        cutoff_frequency_hz=cut[2] * hz_per_sigma,
        cutoff_uncertainty_hz=float(err_c) * hz_per_sigma,
        gas_spring_stiffness_n_per_m=p0 * scale**2 * levels[2].phi_sq / g,
        decay_length_m=scale / math.sqrt(alpha) if alpha > 0 else math.inf,
        convergence_order=float(order),
        dofs=tuple(lv.n_dofs for lv in levels),
        damping_levels_n_s_per_m=tuple(z0 * static),
    )


def squeeze_film(shape: str, electrode_size_m: float, gap_m: float, hole_radius_m: float,
                 hole_pitch_m: float, lattice: str, backplate_thickness_m: float,
                 air: AirProperties, mode_shape, frequencies_hz,
                 accuracy: str = "normal", *, hole_model: str = "stokes",
                 accommodation: float = 1.0) -> SqueezeResult:
    """Squeeze-film damping and film stiffness of a capsule's air gap.

    Parameters
    ----------
    shape : {"circle", "square"}
        Electrode outline; ``electrode_size_m`` is its radius (circle) or side (square), m.
    gap_m : float
        Rest gap (m).
    hole_radius_m, hole_pitch_m : float
        Hole radius and lattice pitch (m); ignored for ``lattice="none"``.
    lattice : {"hex", "square", "none"}
    backplate_thickness_m : float
        Hole length (m).
    air : AirProperties
        From :func:`diagap.fem.air.air_properties`.
    mode_shape : callable
        φ(x_m, y_m), 1 at the centre.
    frequencies_hz : array_like
        Frequencies of the returned spectra (Hz).
    accuracy : {"draft", "normal", "fine"}
    hole_model : {"stokes", "closed-form"}
        Resistance per hole from the Stokes cell (default) or the closed forms.
    accommodation : float
        Tangential momentum accommodation coefficient of the slip walls (Stokes cell).

    Returns
    -------
    SqueezeResult
        Damping and film stiffness referred to the centre velocity, with error estimates.
    """
    g = _check.positive("gap_m", gap_m)
    _check.choice("accuracy", accuracy, tuple(_ACCURACY))
    _check.choice("hole_model", hole_model, HOLE_MODELS)
    mu_film = film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, g)
    if lattice == "none":
        perf, sink = None, 0.0
    elif lattice in ("hex", "square"):
        perf = perforation(lattice, hole_radius_m, hole_pitch_m, backplate_thickness_m, g,
                           air.viscosity_pa_s, air.mean_free_path_m, hole_model=hole_model,
                           accommodation=accommodation, accuracy=accuracy)
        sink = perf.sink_m_per_pa_s
    else:
        _check.choice("lattice", lattice, ("hex", "square", "none"))
    result = film_impedance(shape, electrode_size_m, g, mu_film, air.static_pressure_pa, sink,
                            mode_shape, frequencies_hz, accuracy)
    extra = 0.0 if perf is None else perf.resistance_rel_error
    return replace(
        result, perforation=perf, knudsen_number=air.mean_free_path_m / g,
        damping_uncertainty_n_s_per_m=(result.damping_uncertainty_n_s_per_m
                                       + extra * abs(result.damping_n_s_per_m)),
        damping_spectrum_uncertainty_n_s_per_m=(
            result.damping_spectrum_uncertainty_n_s_per_m
            + extra * np.abs(result.damping_spectrum_n_s_per_m)))
