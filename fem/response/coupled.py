r"""Distributed frequency response of the capsule: plate, electrostatic spring, film, back volume,
radiation and the electrical node solved together (no modal reduction).

Unknowns (phasors e^{jωt}, SI): the plate deflection w (Argyris DOFs q, m, positive towards the
backplate), the film pressure Π over the electrode relative to the back volume (P2 DOFs, Pa,
:mod:`fem.response.film`), the back-volume pressure p_b (Pa), the diaphragm volume velocity U
(m³/s), the output-node voltage v (V) and the mean deflection at the electrode rim z (m).

Equations, for an incident (front) pressure p:

* plate, for every test function N (weak form of ρ_s ẅ + D∇⁴w − T∇²w = load, clamped or
  simply supported edge as in :mod:`fem.plate.system`):

      −ω²∫ρ_s w N + a(w, N) − ∫_e k_e w N − k_r z N̄_r
          = ∫_Ω (p − Z_rad U − p_b) N − ∫_e Π N + ∫_e γ v N + Γ_r v N̄_r,

  with the distributed electrostatic spring at the bias point k_e(x) = ½V_b²|π'(g − w_b)| (Pa/m)
  and the force per volt γ(x) = V_b π(g − w_b) (Pa/V), π(ĝ) = −dc/dĝ from the cell capacitance
  density c(ĝ) (F/m²) and w_b the FE bias deflection (:mod:`fem.coupling`); the rim fringing
  C_r(ĝ) acts through the rim-mean deflection N̄_r (Γ_r = −V_b C_r'(g − z_b),
  k_r = ½V_b² C_r''(g − z_b));
* film (:mod:`fem.response.film`): Y∫∇Π·∇ψ + (s + jωg/p0)∫Πψ + jω(g/p0)p_b∫ψ − jω∫wψ = 0;
* back volume (adiabatic compliance C_bv = V/(γp0), vent R_v from the front to the back volume):
  jωC_bv p_b = U − jω(g/p0)∫_e(Π + p_b) dA + (p − p_b)/R_v — the flow into the back volume is
  the displaced volume less what the film gas stores;
* volume velocity and front radiation: U = jω∫_Ω w dA, front load p − Z_rad U with Z_rad the
  baffled-piston impedance of the equal-area disk of radius a (Rayleigh):
  Z_rad = (ρc/πa²)[1 − J1(2ka)/(ka) + j H1(2ka)/(ka)] → jω·8ρ/(3π²a) at ka ≪ 1;
* electrical node (bias resistor R to the AC-grounded supply, C_node = C0 + C_p + C_in with C0
  the capacitance at the bias point): (1/R + jωC_node) v + jω(∫_e γ w dA + Γ_r z) = 0 — the
  charge feedback: the motional charge changes v, and v changes the electrostatic force;
* rim: z = mean of w over the electrode rim.

The output is v/p (V/Pa), open circuit apart from C_p and C_in, and w(0)/p. Switches:
``film=None`` (the gap pressure is p_b), ``back_volume_m3=None`` (open back, p_b = 0),
``radiation=False``, ``electrical=False`` (v = 0: node held, no charge feedback).

Package (optional callables of ω, from the lumped package model): ``back_admittance`` replaces
jωC_bv by a lossy Y_bv(ω); ``vent_impedance`` replaces R_v by Z_v(ω); ``front_load`` → (T, Z_th)
puts a front node p_f between the sound field and the diaphragm (Thévenin source of a sound port
and front chamber): p_f + Z_th·(U + (p_f − p_b)/Z_v) = T·p, the plate and the vent see p_f, and
the diaphragm's own radiation load is dropped.

Discretisation and error: the plate on the coupling mesh family (electrode edge embedded), the
film on the squeeze-film meshes; two levels each (``PLATE_FAMILY``, ``FILM_LEVELS``). The
electrode integrals use the film mesh's quadrature with the Argyris plate evaluated there. The
plate unknowns are expanded in a Ritz basis of the FE plate itself: its lowest ``N_MODES`` modes
plus the static responses K⁻¹f to the uniform pressure and to the electrostatic force per volt
and their Krylov successors (K⁻¹M)ⁱK⁻¹f, i < ``KRYLOV`` (M-orthogonalised; the static limit is
therefore exact and the truncation small: ≤ 1e-6 against the full FE plate up to 100 kHz). The film is expanded in the complete
eigenbasis of its own P2 matrices (∫∇ψ·∇ψ, ∫ψψ), so that the film inverse
(Y Lap + a Mass)⁻¹ = V(YΛ + a)⁻¹Vᵀ is exact at every frequency at the cost of one dense
eigendecomposition (films beyond ``EIG_MAX_DOFS`` DOFs: a sparse LU per frequency instead); each frequency is then one small dense complex solve (row and column
equilibrated) of the Schur complement on (plate basis, p_b, v, U). Error estimate: Richardson
between the two levels with order 2 and the plate's size ratio, |Q_f − Q_c|/(1.5² − 1), plus the
plate's noise floor, plus the change when the plate basis keeps only half of its modes (the
truncation check). Checked against the full sparse system at every DOF (same answer to 1e-7).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from diagap.fem.response.film import FilmCoefficients, FilmOperator, film_layer, film_operator

__all__ = ["ResponseInputs", "DistributedResponse", "distributed_response", "piston_radiation",
           "ResponseInputError"]


class ResponseInputError(ValueError):
    """An input of the distributed response outside its allowed range."""


#: below this argument the Struve function H₁ is summed from its power series (the largest
#: term, ≈ 4e3 at x = 12, leaves ≤ 1e-12 of round-off); above it ``scipy.special.struve``
_STRUVE_SERIES_MAX = 12.0


def _struve_h1(x: np.ndarray) -> np.ndarray:
    """H₁(x) for x ≥ 0: the power series H₁(x) = Σ_k (−1)^k (x/2)^(2k+2) / (Γ(k+3/2)Γ(k+5/2))
    (Abramowitz & Stegun 1964, eq. 12.1.3) up to :data:`_STRUVE_SERIES_MAX`, ~17× faster than
    ``scipy.special.struve`` on arrays (5 µs a point there), else (and for fewer than 32
    points) scipy's."""
    x = np.asarray(x, float)
    if x.size < 32:  # a few points: scipy's per-point cost is below the loop's overhead
        return special.struve(1, x)
    out = np.empty_like(x)
    low = x <= _STRUVE_SERIES_MAX
    if np.any(low):
        xl = x[low]
        q = 0.25 * xl * xl
        term = 2.0 * xl * xl / (3.0 * math.pi)  # k = 0: (x/2)²/(Γ(3/2)Γ(5/2))
        total = term.copy()
        for k in range(60):
            term = term * (-q / ((k + 1.5) * (k + 2.5)))
            total += term
            if np.all(np.abs(term) <= 1e-17 * np.abs(total)):
                break
        out[low] = total
    if not np.all(low):
        out[~low] = special.struve(1, x[~low])
    return out


def piston_radiation(omega, radius_m: float, density_kg_m3: float, sound_speed_m_s: float):
    """Radiation impedance of a baffled rigid piston (Pa·s/m³), Rayleigh's closed form."""
    w = np.asarray(omega, float)
    ka = w * radius_m / sound_speed_m_s
    x = np.maximum(2.0 * ka, 1e-300)
    small = ka < 1e-3
    r = np.where(small, ka**2 / 2.0, 1.0 - special.j1(x) / np.maximum(ka, 1e-300))
    xi = np.where(small, 8.0 * ka / (3.0 * math.pi), _struve_h1(x) / np.maximum(ka, 1e-300))
    return density_kg_m3 * sound_speed_m_s / (math.pi * radius_m**2) * (r + 1j * xi)


@dataclass(frozen=True)
class ResponseInputs:
    """Everything the distributed solve needs (SI).

    problem : :class:`fem.plate.solver.PlateProblem`;  electrode_size_m : radius or side
    gap_m : rest gap;  density : c(ĝ) object (``slope``, ``curvature``, callable) or None (solid)
    rim : rim fringing C_r(ĝ) (callable with ``derivative``) or None
    film : :class:`FilmCoefficients` or None;  back_volume_m3 : V or None (open back)
    vent_resistance_pa_s_per_m3 : R_v (inf: no vent);  gamma, static_pressure_pa : γ, p0
    radiation : baffled-piston front load;  air_density_kg_m3, sound_speed_m_s : ρ, c
    bias_voltage_v, bias_resistance_ohm, shunt_capacitance_f (C_p + C_in);  electrical : feedback
    """

    problem: object
    electrode_size_m: float
    gap_m: float
    density: object = None
    rim: object = None
    film: FilmCoefficients | None = None
    back_volume_m3: float | None = None
    vent_resistance_pa_s_per_m3: float = math.inf
    gamma: float = 1.4
    static_pressure_pa: float = 101325.0
    radiation: bool = False
    air_density_kg_m3: float = 1.204
    sound_speed_m_s: float = 343.2
    bias_voltage_v: float = 0.0
    bias_resistance_ohm: float = math.inf
    shunt_capacitance_f: float = 0.0
    electrical: bool = True
    front_load: object = None
    back_admittance: object = None
    vent_impedance: object = None

    @property
    def diaphragm_area_m2(self) -> float:
        s = self.problem.size_m
        return math.pi * s * s if self.problem.shape == "circle" else s * s


@dataclass(frozen=True)
class DistributedResponse:
    """v/p and w(0)/p on the fine level, with the coarse level and error estimates."""

    frequency_hz: np.ndarray
    voltage_per_pa: np.ndarray
    displacement_per_pa: np.ndarray
    voltage_per_pa_coarse: np.ndarray
    displacement_per_pa_coarse: np.ndarray
    dofs: tuple
    bias_center_deflection_m: float
    rest_capacitance_f: float
    voltage_per_pa_truncated: np.ndarray
    displacement_per_pa_truncated: np.ndarray
    details: dict = field(default_factory=dict, repr=False)

    def evaluate(self, frequencies_hz) -> np.ndarray:
        """v/p (V/Pa) of the fine level at other frequencies (no new assembly)."""
        from threadpoolctl import threadpool_limits

        lv = self.details["level"]
        with threadpool_limits(limits=1):  # small dense solves: threads only add contention
            return np.array([lv.solve(2 * math.pi * f)[0] for f in np.atleast_1d(frequencies_hz)])

    @staticmethod
    def _est(fine, coarse):
        from diagap.fem.levels import NOISE_FLOOR, RATIO

        with np.errstate(divide="ignore", invalid="ignore"):
            e = np.abs(np.abs(fine) - np.abs(coarse)) / (RATIO**2 - 1.0) / np.abs(fine)
        return np.nan_to_num(e, nan=0.0) + NOISE_FLOOR

    @property
    def voltage_rel_error(self) -> np.ndarray:
        """Discretisation (two levels) plus plate-basis truncation (all vs half the modes)."""
        trunc = np.abs(np.abs(self.voltage_per_pa_truncated) / np.abs(self.voltage_per_pa) - 1)
        return self._est(self.voltage_per_pa, self.voltage_per_pa_coarse) + \
            np.nan_to_num(trunc, nan=0.0)

    @property
    def displacement_rel_error(self) -> np.ndarray:
        trunc = np.abs(np.abs(self.displacement_per_pa_truncated)
                       / np.abs(self.displacement_per_pa) - 1)
        return self._est(self.displacement_per_pa, self.displacement_per_pa_coarse) + \
            np.nan_to_num(trunc, nan=0.0)


class _Level:
    """The system on one (plate mesh, film mesh) pair: frequency-independent parts."""

    def __init__(self, inp: ResponseInputs, plate, film, n_modes: int):
        from diagap.fem.coupling.plate import coupling_system, load_from_density

        self.inp = inp
        pb = inp.problem
        L_e = inp.electrode_size_m if pb.shape == "circle" else 0.5 * inp.electrode_size_m
        fo = film if isinstance(film, FilmOperator) else FilmOperator(film, L_e)
        self.fo, self.plate = fo, plate
        L = plate.length_m
        Bq = (plate.evaluator.matrix(fo.xq_m / L, fo.yq_m / L) @ plate.B).tocsr()
        W = fo.wq_m2
        g = inp.gap_m
        load = load_from_density(inp.density, g)
        V = float(inp.bias_voltage_v)
        u_b = np.zeros(plate.n_free)
        if V != 0.0:
            u_b = _bias_deflection(coupling_system(plate, pb.shape, inp.electrode_size_m),
                                   load, g, V)
        self.w0_b = plate.center_deflection(u_b)
        gq = g - Bq @ u_b
        k_e = 0.5 * V * V * np.abs(load.pressure_slope_per_v2(gq))
        gam = V * load.pressure_per_v2(gq)
        r = _rim_functional(inp, plate)
        z_b = float(r @ u_b)
        c_area = inp.density(gq) if inp.density is not None else 8.8541878128e-12 / gq
        self.C0 = float(W @ c_area)
        k_r, gam_r = 0.0, 0.0
        if inp.rim is not None:
            gr, d = g - z_b, 1e-4 * g
            self.C0 += float(inp.rim(gr))
            # d²C_r/dz² = d²C_r/dĝ² (ĝ = g − z)
            k_r = 0.5 * V * V * float((inp.rim.derivative(gr + d) - inp.rim.derivative(gr - d))
                                      / (2 * d))
            gam_r = -V * float(inp.rim.derivative(gr))
        f_all = plate.load_vector(1.0)
        gam_full = Bq.T @ (W * gam) + gam_r * r
        # Ritz basis of the plate: the lowest modes, then the static responses to the uniform
        # pressure and to the electrostatic force per volt, M-orthogonalised
        omega2, modes = plate.modes(n_modes)
        modes = modes / np.sqrt(np.einsum("ij,ij->j", modes, plate.M @ modes))
        basis = [modes]
        for load_vec in (f_all, gam_full):
            if not np.any(load_vec):
                continue
            v = plate.solve(load_vec)
            for _ in range(KRYLOV):
                ref = math.sqrt(v @ (plate.M @ v))
                nxt = plate.solve(plate.M @ v)
                for _ in range(2):
                    cur = np.column_stack(basis)
                    v = v - cur @ (cur.T @ (plate.M @ v))
                nv = math.sqrt(max(v @ (plate.M @ v), 0.0))
                if nv > 1e-8 * ref:
                    basis.append((v / nv)[:, None])
                v = nxt
        Phi = np.column_stack(basis)
        self.n_modes = modes.shape[1]
        self.Kr = Phi.T @ (plate.K @ Phi)
        self.Mr = Phi.T @ (plate.M @ Phi)
        BqPhi = Bq @ Phi
        self.Gr = BqPhi.T @ ((W * k_e)[:, None] * BqPhi) + k_r * np.outer(Phi.T @ r, Phi.T @ r)
        self.Cr = (fo.interp.T @ (W[:, None] * BqPhi)).T          # (N, n_f): ∫ Π φ_i dA
        self.fr = Phi.T @ f_all
        self.gr = Phi.T @ gam_full
        self.cr = Phi.T @ plate.point_functional(0.0, 0.0)
        # film in its own eigenbasis: Lap V = Mass V Λ, VᵀMass V = I, so that
        # (Y Lap + a Mass)⁻¹ = V (YΛ + a)⁻¹ Vᵀ exactly
        if inp.film is not None and fo.use_eig:
            lam, vec = fo.eig()
            self.lam = lam
            self.VtC = vec.T @ self.Cr.T                              # (n_f, N)
            self.Vt1 = vec.T @ fo.ones                                # (n_f,)
        else:
            self.VtC = None
        self.area_e = fo.area_m2
        self.dofs = plate.n_free + fo.n + 4
        self.ritz = Phi.shape[1]

    def solve(self, omega: float, n_use: int | None = None) -> tuple[complex, complex]:
        """(v/p, w(0)/p) at ω; ``n_use`` keeps only that many modes (truncation check)."""
        inp = self.inp
        keep = np.arange(self.ritz)
        if n_use is not None:
            keep = np.concatenate([np.arange(n_use), np.arange(self.n_modes, self.ritz)])
        Kr, Mr, Gr = (a[np.ix_(keep, keep)] for a in (self.Kr, self.Mr, self.Gr))
        fr, gr, cr = self.fr[keep], self.gr[keep], self.cr[keep]
        n = keep.size
        jw = 1j * omega
        coef = inp.film
        plate = (Kr - omega**2 * Mr - Gr).astype(complex)
        pb_col = fr.astype(complex)
        back = [np.zeros(n, complex), 0j]
        cmp = 0j
        if coef is not None:
            cmp = coef.compression(omega)
            if self.VtC is not None:
                VtC = self.VtC[:, keep]
                d = 1.0 / (coef.conductance(omega) * self.lam + coef.sink(omega) + cmp)
                X1 = VtC.T @ (d[:, None] * VtC)          # C F⁻¹ Cᵀ  (N, N)
                x2 = VtC.T @ (d * self.Vt1)              # C F⁻¹ 1   (N,)
                s2 = self.Vt1 @ (d * self.Vt1)           # 1ᵀF⁻¹ 1
            else:  # large film: sparse LU at this frequency
                Ct = self.Cr[keep].T
                Y = self.fo.solve(coef, omega, np.column_stack([Ct, self.fo.ones]))
                X1, x2 = Ct.T @ Y[:, :-1], Ct.T @ Y[:, -1]
                s2 = self.fo.ones @ Y[:, -1]
            plate += jw * X1
            pb_col = pb_col - cmp * x2
            back = [cmp * jw * x2, -cmp * cmp * s2 + cmp * self.area_e]
        front = inp.front_load is not None
        A = np.zeros((n + 3 + front, n + 3 + front), complex)
        b = np.zeros(n + 3 + front, complex)
        iP, iV, iU = n, n + 1, n + 2
        A[:n, :n] = plate
        b[:n] = fr
        gv = 0.0 if not math.isfinite(inp.vent_resistance_pa_s_per_m3) else \
            1.0 / inp.vent_resistance_pa_s_per_m3
        if inp.vent_impedance is not None:
            gv = 1.0 / complex(inp.vent_impedance(omega))
        if inp.back_volume_m3 is None:
            A[iP, iP] = 1.0
        else:
            A[:n, iP] = pb_col
            c_bv = inp.back_volume_m3 / (inp.gamma * inp.static_pressure_pa)
            y_bv = jw * c_bv if inp.back_admittance is None else \
                complex(inp.back_admittance(omega))
            A[iP, :n] = back[0]
            A[iP, iP] = y_bv + gv + back[1]
            A[iP, iU] = -1.0
            b[iP] = gv
        if front:  # front node: plate and vent driven by p_f
            iF = n + 3
            t, z_th = (complex(v) for v in inp.front_load(omega))
            A[:n, iF], b[:n] = -fr, 0.0
            if inp.back_volume_m3 is not None:
                A[iP, iF], b[iP] = -gv, 0.0
            A[iF, iF] = 1.0 + z_th * gv
            A[iF, iP] = -z_th * gv
            A[iF, iU] = z_th
            b[iF] = t
        if inp.electrical and inp.bias_voltage_v != 0.0:
            g_e = 0.0 if not math.isfinite(inp.bias_resistance_ohm) else \
                1.0 / inp.bias_resistance_ohm
            A[:n, iV] = -gr
            A[iV, :n] = jw * gr
            A[iV, iV] = g_e + jw * (self.C0 + inp.shunt_capacitance_f)
        else:
            A[iV, iV] = 1.0
        if inp.radiation and not front:
            a_eq = math.sqrt(inp.diaphragm_area_m2 / math.pi)
            A[:n, iU] += piston_radiation(omega, a_eq, inp.air_density_kg_m3,
                                          inp.sound_speed_m_s) * fr
        A[iU, :n] = -jw * fr
        A[iU, iU] = 1.0
        # equilibrate rows and columns before the dense solve
        rs = 1.0 / np.max(np.abs(A), axis=1)
        A1 = rs[:, None] * A
        cs = 1.0 / np.max(np.abs(A1), axis=0)
        x = cs * np.linalg.solve(A1 * cs[None, :], rs * b)
        return complex(x[iV]), complex(cr @ x[:n])


def _rim_functional(inp: ResponseInputs, plate) -> np.ndarray:
    """Row r with r·q the mean deflection over the electrode rim."""
    n_r = 64
    if inp.problem.shape == "circle":
        th = np.linspace(0, 2 * np.pi, n_r, endpoint=False)
        xr, yr = inp.electrode_size_m * np.cos(th), inp.electrode_size_m * np.sin(th)
    else:
        h = 0.5 * inp.electrode_size_m
        s = np.linspace(-h, h, n_r // 4)
        xr = np.concatenate([s, s, np.full(s.size, h), np.full(s.size, -h)])
        yr = np.concatenate([np.full(s.size, h), np.full(s.size, -h), s, s])
    L = plate.length_m
    return np.asarray((plate.evaluator.matrix(xr / L, yr / L) @ plate.B).mean(axis=0)).ravel()


def _bias_deflection(cs, load, gap_m: float, volts: float) -> np.ndarray:
    """Plate DOFs of the stable equilibrium at ``volts`` (Newton in V², branch as fallback); the
    one already found for this plate, load and gap (e.g. by the coupled solve) if there is one."""
    from diagap.fem.coupling.branch import (CoupledError, equilibrium_at_voltage, solver_for,
                                            trace_branch)

    s = solver_for(cs, load, gap_m)
    lam = volts * volts
    if lam in s.equilibria:
        return s.equilibria[lam]
    try:
        return s.voltage_control(lam, lam * s.lu.solve(s.force(np.zeros(s.n))))
    except CoupledError:
        br = trace_branch(cs, load, gap_m)
        return equilibrium_at_voltage(cs, load, gap_m, volts, br).u


def _film_layer(inp: ResponseInputs, f_max_hz: float) -> float:
    """Thinnest film boundary layer (scaled by the electrode size) up to ``f_max_hz``."""
    if inp.film is None:
        return 1.0
    L = inp.electrode_size_m if inp.problem.shape == "circle" else 0.5 * inp.electrode_size_m
    return film_layer(inp.film, L, f_max_hz)


#: mesh families: the plate on the coupling family, the film on the squeeze-film levels
PLATE_FAMILY = {"draft": "draft", "normal": "draft", "fine": "normal"}
FILM_FAMILY = {"draft": "draft", "normal": "draft", "fine": "normal"}
#: film mesh levels used (of the three nested squeeze-film levels): coarse, fine
FILM_LEVELS = (0, 1)
#: the film meshes resolve the film's boundary layer up to this frequency (Hz)
F_MAX_HZ = 1.0e5
#: plate modes in the Ritz basis (the truncation is checked with half of them)
N_MODES = 40
#: Krylov vectors K⁻¹f, (K⁻¹M)K⁻¹f, ... per load added to the plate basis (mode acceleration)
KRYLOV = 3


def distributed_response(inp: ResponseInputs, frequencies_hz, accuracy: str = "normal",
                         levels=None, n_modes: int = N_MODES) -> DistributedResponse:
    """v/p and w(0)/p of the distributed model at ``frequencies_hz`` (see the module docstring).

    ``levels`` (optional) is a pair of (plate system, film mesh or :class:`FilmOperator`) for
    coarse and fine; by default
    the two finest plate meshes of ``PLATE_FAMILY[accuracy]`` (electrode edge embedded) and the
    two finest film meshes of ``FILM_FAMILY[accuracy]``.
    """
    from threadpoolctl import threadpool_limits

    from diagap.fem.coupling.plate import plate_levels

    f = np.atleast_1d(np.asarray(frequencies_hz, float))
    if f.ndim != 1 or not np.all(np.isfinite(f)) or np.any(f <= 0):
        raise ResponseInputError(f"frequencies_hz = {f.tolist()[:4]}: must be finite and > 0")
    if accuracy not in PLATE_FAMILY:
        raise ResponseInputError(f"accuracy = {accuracy!r}: allowed {tuple(PLATE_FAMILY)}")
    if levels is None:
        plates, _ = plate_levels(inp.problem, PLATE_FAMILY[accuracy], inp.electrode_size_m)
        L_e = inp.electrode_size_m if inp.problem.shape == "circle" else 0.5 * inp.electrode_size_m
        layer = _film_layer(inp, F_MAX_HZ)
        films = [film_operator(inp.problem.shape, FILM_FAMILY[accuracy], layer, i, L_e)
                 for i in FILM_LEVELS]
        levels = list(zip(plates[-2:], films))
    out = []
    with threadpool_limits(limits=1):
        for plate, fm in levels:
            lv = _Level(inp, plate, fm, n_modes)
            res = np.array([lv.solve(2 * math.pi * fk) for fk in f])
            out.append((lv, res[:, 0], res[:, 1]))
        lf = out[-1][0]
        half = np.array([lf.solve(2 * math.pi * fk, lf.n_modes // 2) for fk in f])
    (lc, vc, wc), (lf, vf, wf) = out[0], out[-1]
    return DistributedResponse(f, vf, wf, vc, wc, (lc.dofs, lf.dofs), lf.w0_b, lf.C0,
                               half[:, 0], half[:, 1], {"level": lf})
