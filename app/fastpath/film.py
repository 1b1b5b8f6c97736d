r"""The ``damping`` section of a clamped circular diaphragm in milliseconds, from scaled forms.

What the damping stage reports (:func:`diagap.stages.damping_stage`) and where it comes from:

====================================================  =========================================
flat output (``damping.``…)                           source in the full analysis
====================================================  =========================================
``film_viscosity_pa_s``, ``knudsen_number``           air (:mod:`diagap.fem.air`, Sutherland, λ
                                                      from T and p₀), Veijola's rarefied film
``perforation.holes_per_m2``, ``cell_radius_m``,      lattice geometry; closed forms Škvor/Bao,
``open_area_fraction``, ``hole_poiseuille…``,         Hagen–Poiseuille, Sampson
``hole_end…``, ``cell_resistance…``, ``…closed_form…``,
``hole_knudsen_number``
``perforation.resistance_per_hole_pa_s_per_m3``,      the axisymmetric Stokes cell with Maxwell
``hole_resistance_pa_s_per_m3``                       slip (:mod:`diagap.fem.film.stokes`)
``damping_n_s_per_m``, ``cutoff_frequency_hz``,       the Reynolds film FE on the electrode with
``gas_spring_stiffness_n_per_m``, ``decay_length_m``  the hole sink n_h/Z and the plate's static
                                                      shape (:mod:`diagap.fem.film.squeeze`)
``squeeze_number_at_resonance``,                      the film and the resonance (mode 1, or the
``resonance_to_cutoff_ratio``                         coupled resonance at bias)
``mechanical_noise_dba_spl``, ``force_noise…``        4kT·b(f) of the film spectrum over the
                                                      static-shape area (:mod:`diagap.lumped.noise`)
====================================================  =========================================

Dimensionless form. The cell: R_cell = (μ/g³)·Ẑ(r/p, g/p, t/p, Kn = λ/g; lattice), tabulated as
a factor over a closed form (:mod:`diagap.fastpath.flowcell`). The film: with L the electrode
radius, ε = L/a, τ = σha²/D and α = 12 μ_eff L² n_h/(g³ Z),

    b = (12 μ_eff L⁴/g³) · Re J(jσ̂; α, ε, τ),   σ̂ = 12 μ_eff ω L²/(p₀ g²),
    f_c = σ̂_c(α, ε, τ) · p₀ g² / (24π μ_eff L²),   k_gas = p₀ L² Φ₂(ε, τ)/g,

J the film functional and Φ₂ = ∫φ² dA on the unit electrode; the static shape of the clamped
disk is known in closed form in τ, so J, σ̂_c and Φ₂ are computed from the radial problem of
:mod:`diagap.fastpath.radial` (a one-dimensional solve, exact to the damping stage's own
discretisation error) rather than tabulated on three axes; the plate FE's small departure from
the closed-form shape is tabulated on τ (:mod:`diagap.fastpath.shape`). Everything else is a
closed form.

Cost: the b(f) spectrum is solved only at the points of :data:`SPECTRUM_HZ` that the
A-weighted noise level reads (it interpolates b(f) on 20 Hz … 20 kHz, so the points from 19.95 Hz
to 25.1 kHz; the level is the one of the whole spectrum, bit for bit), points below the flat
limit are the static value, and the radial film solves each frequency with one tridiagonal
LAPACK call on meshes built once per design (:mod:`diagap.fastpath.radial`). One evaluation of
the demo at "draft" with the tables in memory: 4.7 ms of CPU for the film (13.8 ms before these
changes, values equal to 2e-14) and ≈ 0.5 ms for the cell-table lookup; 25–35 ms wall (before:
90–120 ms) on the shared two-core machine at a load of 10 (tests/bench/bench_fastpath_film.py).

Not given by the fast path: the error estimates of the stage (``*_relative_uncertainty``), the
b(f), k(f) curve (a nested list, not a flat output), texts; the resonance outputs of a design
with a bias when no coupled resonance is known. Covered: circular clamped diaphragms in the
plate table's τ range, electrode radius ≤ diaphragm radius, lattices ``hex``, ``square``
(inside :data:`diagap.fastpath.flowcell.CELL_RANGE`) and ``none``.
"""
from __future__ import annotations

import math

import numpy as np

from diagap.fastpath import FastPathUnavailable

__all__ = ["damping_outputs", "covered_damping_outputs", "prepare_damping_tables",
           "SPECTRUM_HZ", "CELL_TOL"]

#: the frequencies of the damping stage's b(f) spectrum (Hz)
SPECTRUM_HZ = np.logspace(0, 5, 51)
_CELL = "cell radius (sqrt(cell area/pi), from backplate.hole_pitch and hole_lattice)"
_GROUP_FIELDS = {
    "hole_radius_over_cell_radius": f"backplate.hole_radius / {_CELL}",
    "gap_over_cell_radius": f"backplate.gap / {_CELL}",
    "thickness_over_cell_radius": f"backplate.thickness / {_CELL}",
    "knudsen": "Knudsen number mean free path / backplate.gap (air temperature, pressure)",
}
#: largest held-out error of the cell table's resistance (relative) for which it is used. The
#: table is refined to 1e-3 (:mod:`diagap.fastpath.flowcell`); at "draft" (Stokes cell level
#: 0.35, the FE scattering by ≤ 1.7e-4 from one geometry's mesh to the next) the table with one
#: segment on the hole-radius axis ended at 8.4e-4 at its worst held-out point, and 20 random
#: designs against the full stage: 18 within 1e-3, worst 1.24e-3 (cut-off), 1.22e-3 (hole
#: resistance), 1.15e-3 (damping), from that axis, which now starts with two segments
CELL_TOL = 1e-3
# below this |σ̂|/λ₁ the spectrum equals b(0) to ~(|σ̂|/λ₁)² < 1e-8
_FLAT = 1e-4


def _noise_band() -> slice:
    """The points of SPECTRUM_HZ that the A-weighted noise level reads: it interpolates b(f)
    (log–log, :func:`diagap.lumped.noise.a_weighted_level_db`) on the audio band, so only the
    points from the last one at or below its lower end to the first one at or above its upper
    end enter; the level from this slice is the level from the whole spectrum, bit for bit."""
    from diagap.lumped.weighting import AUDIO_BAND_HZ

    lo = int(np.searchsorted(SPECTRUM_HZ, AUDIO_BAND_HZ[0], side="right")) - 1
    hi = int(np.searchsorted(SPECTRUM_HZ, AUDIO_BAND_HZ[1], side="left"))
    return slice(max(lo, 0), min(hi, SPECTRUM_HZ.size - 1) + 1)


_NOISE_BAND = _noise_band()


def _tension_ratio(design) -> float:
    from diagap.fastpath.plate_range import COMPRESSION, buckling_tau
    from diagap.fem.plate.solver import MEMBRANE_TAU

    d = design.diaphragm
    if d.shape != "circle" or d.edge != "clamped":
        raise FastPathUnavailable(
            f"diaphragm: shape {d.shape!r}, edge {d.edge!r}; the scaled film covers clamped "
            "circles")
    nu = d.poisson_ratio
    bend = d.youngs_modulus_pa * d.thickness_m**3 / (12.0 * (1.0 - nu * nu))
    tau = d.residual_stress_pa * d.thickness_m * d.size_m**2 / bend
    lo = -COMPRESSION * buckling_tau("circle", "clamped", nu)
    if not (lo <= tau <= MEMBRANE_TAU):
        raise FastPathUnavailable(
            f"diaphragm.residual_stress: tension ratio sigma*h*a^2/D = {tau:.6g} is outside "
            f"[{lo:.4g}, {MEMBRANE_TAU:g}] (the plate model of the solver)")
    return tau


def _cell(design, air, mapper) -> dict:
    """The perforation numbers of the summary, with the Stokes resistance from the table."""
    from diagap.fastpath.flowcell import (CELL_RANGE, cell_coordinates, cell_resistance_scaled,
                                          cell_table, outside)
    from diagap.fastpath.patches import active_table
    from diagap.fem.film import perforation as cf

    b = design.backplate
    g, r, p, t = b.gap_m, b.hole_radius_m, b.hole_pitch_m, b.thickness_m
    x = cell_coordinates(b.hole_lattice, r, p, t, g, air.mean_free_path_m)
    note = outside(x)
    if note is not None:
        name = note.split(" = ", 1)[0]
        raise FastPathUnavailable(note.replace(name, _GROUP_FIELDS[name], 1))
    acc = design.analysis.accuracy
    table, facts = active_table("flowcell", acc, mapper) or cell_table(acc, mapper=mapper)
    held = float(table.held_out_error[list(table.names).index("resistance_factor")])
    if not held <= CELL_TOL:
        raise FastPathUnavailable(
            f"analysis.accuracy = {design.analysis.accuracy!r}: the cell table's held-out "
            f"error {held:.3g} exceeds {CELL_TOL:g} over {CELL_RANGE}")
    z_hat = cell_resistance_scaled(table, x)
    mu = air.viscosity_pa_s
    area = cf.lattice_cell_area(p, b.hole_lattice)
    rc = math.sqrt(area / math.pi)
    mu_film = cf.film_viscosity(mu, air.mean_free_path_m, g)
    closed = {
        "hole_poiseuille_resistance_pa_s_per_m3": cf.poiseuille_resistance(mu, r, t),
        "hole_end_resistance_pa_s_per_m3": cf.sampson_resistance(mu, r),
        "cell_resistance_pa_s_per_m3": cf.cell_resistance(mu_film, g, r, rc),
    }
    return {"holes_per_m2": 1.0 / area, "cell_radius_m": rc,
            "open_area_fraction": math.pi * r * r / area, **closed,
            "resistance_per_hole_pa_s_per_m3": mu * z_hat / g**3,
            "resistance_per_hole_closed_form_pa_s_per_m3": sum(closed.values()),
            "hole_knudsen_number": air.mean_free_path_m / r}


def _correction(design, tau: float, mapper):
    """The plate FE's departure from the closed-form static shape at τ (a callable of u)."""
    from diagap.fastpath.shape import shape_correction, shape_table

    table, _ = shape_table(design.analysis.accuracy, mapper=mapper)
    return shape_correction(table, tau)


def _resonance(design, mechanics_outputs, resonance_hz):
    if resonance_hz is not None:
        return float(resonance_hz)
    if design.electrical is not None:
        return mechanics_outputs.get("coupled.resonance_at_bias_hz")
    return mechanics_outputs.get("mechanics.natural_frequencies_hz_1")


def damping_outputs(design, mechanics_outputs: dict, *, resonance_hz: float | None = None,
                    mapper=None) -> dict[str, float]:
    """Numeric outputs of the ``damping`` section from the scaled cell table and radial film.

    Parameters
    ----------
    design : Design
        A clamped circular diaphragm (its ``analysis.accuracy`` selects the Stokes cell table).
    mechanics_outputs : dict
        Flat outputs with ``"mechanics.static_shape_area_m2"`` (the noise's area) and, for the
        resonance outputs, ``"mechanics.natural_frequencies_hz_1"`` (no bias) or
        ``"coupled.resonance_at_bias_hz"`` (with a bias).
    resonance_hz : float, optional
        The resonance the stage is given (overrides the above).
    mapper : callable, optional
        How cell-table points are computed if the table is built
        (:func:`diagap.fastpath.refine.mapper_for`).

    Returns
    -------
    dict
        Flat summary path (``"damping.damping_n_s_per_m"``) → SI value (dB for levels).

    Raises
    ------
    FastPathUnavailable
        Another shape or edge, τ beyond the plate model, an electrode larger than the
        diaphragm, a perforation outside the cell table's range (one line: field, value,
        allowed range).
    """
    from diagap.fastpath.radial import DISK_EIGENVALUE, RadialFilm
    from diagap.fem.air import air_properties
    from diagap.fem.constants import BOLTZMANN_J_PER_K
    from diagap.fem.film.perforation import film_viscosity
    from diagap.lumped.noise import mechanical_thermal_noise

    tau = _tension_ratio(design)
    d, b = design.diaphragm, design.backplate
    L = b.electrode_size_m
    if not L <= d.size_m * (1 + 1e-12):
        raise FastPathUnavailable(
            f"backplate.electrode_radius = {L:g} m: the scaled film covers electrodes up to the "
            f"diaphragm radius ({d.size_m:g} m)")
    if b.hole_lattice not in ("hex", "square", "none"):
        raise FastPathUnavailable(f"backplate.hole_lattice = {b.hole_lattice!r}: not covered")
    area_key = "mechanics.static_shape_area_m2"
    if area_key not in mechanics_outputs:
        raise FastPathUnavailable(f"{area_key}: needed from the mechanics outputs")
    temperature_k, p0 = design.air_conditions
    air = air_properties(temperature_k, p0)
    g = b.gap_m
    mu_eff = film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, g)
    perf = _cell(design, air, mapper) if b.hole_lattice != "none" else None
    sink = 0.0 if perf is None else perf["holes_per_m2"] / perf["resistance_per_hole_pa_s_per_m3"]
    alpha = 12.0 * mu_eff * L**2 * sink / g**3
    film = RadialFilm(alpha, L / d.size_m, tau, _correction(design, tau, mapper))
    z0 = 12.0 * mu_eff * L**4 / g**3
    sigma_per_omega = 12.0 * mu_eff * L**2 / (p0 * g**2)
    j0 = film.response(0j).real
    lam = alpha + DISK_EIGENVALUE
    band = _NOISE_BAND
    sig = sigma_per_omega * 2.0 * math.pi * SPECTRUM_HZ[band]
    flat = sig < _FLAT * lam
    spectrum = np.full(sig.size, z0 * j0)
    spectrum[~flat] = z0 * film.responses(1j * sig[~flat]).real
    b_first = z0 * (j0 if sigma_per_omega * 2.0 * math.pi * SPECTRUM_HZ[0] < _FLAT * lam
                    else film.response(2j * math.pi * sigma_per_omega * SPECTRUM_HZ[0]).real)
    cutoff_hz = film.cutoff() / (2.0 * math.pi * sigma_per_omega)
    out = {
        "damping_n_s_per_m": z0 * j0,
        "cutoff_frequency_hz": cutoff_hz,
        "gas_spring_stiffness_n_per_m": p0 * L**2 * film.shape_square_integral() / g,
        "film_viscosity_pa_s": mu_eff,
        "knudsen_number": air.mean_free_path_m / g,
    }
    if alpha > 0:
        out["decay_length_m"] = L / math.sqrt(alpha)
    f_res = _resonance(design, mechanics_outputs, resonance_hz)
    if f_res is not None:
        out["squeeze_number_at_resonance"] = sigma_per_omega * 2.0 * math.pi * f_res
        out["resonance_to_cutoff_ratio"] = f_res / cutoff_hz
    if perf is not None:
        out.update({f"perforation.{k}": v for k, v in perf.items()})
        out["hole_resistance_pa_s_per_m3"] = perf["resistance_per_hole_pa_s_per_m3"]
        out["hole_resistance_closed_form_pa_s_per_m3"] = \
            perf["resistance_per_hole_closed_form_pa_s_per_m3"]
    noise = mechanical_thermal_noise(SPECTRUM_HZ[band], spectrum, temperature_k,
                                     mechanics_outputs[area_key])
    out["mechanical_noise_dba_spl"] = noise.a_weighted_spl_db()
    out["force_noise_n_per_rthz"] = math.sqrt(4.0 * BOLTZMANN_J_PER_K * temperature_k
                                              * b_first)
    return {f"damping.{k}": float(v) for k, v in out.items()}


def _no_building(func, points):
    raise FastPathUnavailable("the damping tables have not been built "
                              "(diagap.fastpath.film.prepare_damping_tables)")


def prepare_damping_tables(accuracy: str = "normal", mapper=None) -> dict:
    """Build (or read) the cell and shape tables of an accuracy setting; their build facts."""
    from diagap.fastpath.flowcell import cell_table
    from diagap.fastpath.shape import shape_table

    return {"cell": cell_table(accuracy, mapper=mapper)[1],
            "shape": shape_table(accuracy, mapper=mapper)[1]}


def covered_damping_outputs(design, outputs: dict, mapper=None) -> dict[str, float]:
    """:func:`damping_outputs`, or nothing where the design is not covered. Without a
    ``mapper`` the tables are only read (from memory or the cache), never built here: a
    summary call does not turn into a table build of minutes."""
    try:
        return damping_outputs(design, outputs, mapper=mapper or _no_building)
    except FastPathUnavailable:
        return {}
