"""Size of a run before any mesh is made: element and unknown counts of the solvers' meshes and
the peak memory they imply, with a refusal above a limit.

The diaphragm meshes are graded from ``h_edge`` at the edge to ``h_center`` inside with
h(d) = min(h_center, h_edge + grading·d), d the distance to the edge (scaled units: radius or
half-side, :mod:`diagap.meshes.diaphragm`). A mesh of nearly equilateral triangles of size h has
4/(√3 h²) triangles per unit area, so the count is

    N ≈ ∫ 4/(√3 h(d)²) dA,   dA = 2π(1 − d) dd (unit disk),  8(1 − d) dd ([−1, 1]²),

integrated in closed form piecewise (the linear part and the plateau). The sizes are those the
solvers use: :func:`diagap.fem.levels.mesh_sizes` (Argyris plate, capped by the tension boundary
layer ℓ = √(D/T)), the membrane levels (:mod:`diagap.fem.plate.membrane`), the coupling family
(:data:`diagap.fem.coupling.plate.COUPLING_MESHES`) and the squeeze-film levels (a base mesh
resolving the film's decay length, refined twice; :mod:`diagap.fem.film.squeeze`). Unknowns: the
Argyris quintic has 6 per vertex and 1 per edge (≈ 4.5 per triangle), quadratic Lagrange 1 per
vertex and edge (≈ 2 per triangle). The unit-cell and rim meshes are scaled by the gap and hole
size and bounded by their own size limits; they add a fixed allowance.

The peak memory is modelled as BASE + bytes-per-unknown × unknowns of the largest single solve,
calibrated on measured runs (``tests/bench/bench_budget.py``, mesh cache off; peak resident set
of the whole run against the estimate):

    demo (1 um film, normal)    7.0k unknowns    286 MB measured    estimate  596 MB
    0.1 um film                 8.7k             377 MB                       644 MB
    50 nm film                 19.2k             725 MB                       937 MB
    30 nm film                 33.5k            1069 MB                      1338 MB
    20 nm film                 51.6k            1538 MB                      1845 MB
    demo, accuracy fine        15.7k             515 MB                       839 MB
    3 mm radius (film mesh)     136k (P2)        852 MB                      1081 MB

(Argyris: 23–24 kB per unknown above the base, growing slowly with size, as sparse factors do;
28 kB keeps the estimate above the measured peaks with room for larger meshes. Quadratic film
mesh: 4.1 kB measured, 5 kB used.)
"""
from __future__ import annotations

import math
from dataclasses import dataclass

__all__ = ["RunSize", "estimate_run", "check_run_size", "DEFAULT_MAX_MEMORY_B",
           "graded_triangles"]

#: default memory limit of a run (bytes); ``--max-memory`` or ``analysis.max_memory`` raise it
DEFAULT_MAX_MEMORY_B = 2e9
#: interpreter, libraries, the unit-cell and rim solves and the report (measured, demo design)
BASE_B = 400e6
#: bytes per unknown of the largest solve (sparse factorisation and eigen-solver work space)
BYTES_PER_DOF = {"argyris": 28e3, "p2": 5e3}
_DOFS_PER_TRIANGLE = {"argyris": 4.5, "p2": 2.0}
#: triangles per unit area times h²: 4/√3 for equilateral triangles; gmsh meshes of these
#: size fields hold 1.27 times more (measured on disk and square meshes, h_edge 0.005-0.08)
_TRI_PER_AREA = 1.27 * 4.0 / math.sqrt(3.0)


def graded_triangles(shape: str, h_center: float, h_edge: float, grading: float) -> float:
    """Estimated triangle count of a graded diaphragm mesh (scaled units, see the docstring)."""
    hc, he, gr = max(h_center, h_edge), h_edge, grading
    d_star = min(1.0, (hc - he) / gr) if gr > 0 else 1.0  # where the size reaches h_center
    perimeter, shrink = (2 * math.pi, 2 * math.pi) if shape == "circle" else (8.0, 8.0)
    # ∫0^d* (P − S·d) / (he + gr·d)² dd, in closed form
    if d_star > 0:
        u0, u1 = he, he + gr * d_star
        # with d = (u − he)/gr: (P − S(u − he)/gr)/u² du/gr
        a = perimeter + shrink * he / gr
        part = (a * (1 / u0 - 1 / u1) - (shrink / gr) * math.log(u1 / u0)) / gr
    else:
        part = 0.0
    rest = 0.5 * shrink * (1.0 - d_star) ** 2 / hc**2  # ∫d*^1 (P − S·d) dd / hc², P = S here
    return _TRI_PER_AREA * (part + rest)


@dataclass(frozen=True)
class RunSize:
    """Estimated size of a run: the largest solve and the peak memory it implies."""

    unknowns: int  # of the largest single solve
    stage: str  # where it happens
    driver: str  # the design value that sets its size
    memory_b: float

    def to_summary(self) -> dict:
        return {"largest_solve_unknowns": self.unknowns, "largest_solve": self.stage,
                "estimated_peak_memory_b": self.memory_b}


def _plate_solves(design):
    """(stage, element, triangles, driver) of the diaphragm and coupling meshes."""
    from diagap.extract import plate_problem
    from diagap.fem.coupling.plate import COUPLING_MESHES
    from diagap.fem.levels import mesh_sizes
    from diagap.fem.plate import membrane
    from diagap.fem.plate.solver import _layer_width

    problem = plate_problem(design)
    acc, shape = design.analysis.accuracy, problem.shape
    layer = _layer_width(problem)
    driver = ("diaphragm.thickness" if layer is not None else "analysis.accuracy")
    if problem.model == "membrane":
        finest, _ = membrane._FINEST.get(acc, membrane._FINEST["normal"])
        yield "mechanics", "p2", graded_triangles(shape, finest.h_center, finest.h_edge,
                                                  finest.grading), "analysis.accuracy"
    else:
        s = mesh_sizes(shape, acc, layer)[-1]
        yield "mechanics", "argyris", graded_triangles(shape, s.h_center, s.h_edge,
                                                       s.grading), driver
    s = mesh_sizes(shape, COUPLING_MESHES.get(acc, acc), layer)[-1]
    yield "coupled", "argyris", graded_triangles(shape, s.h_center, s.h_edge, s.grading), driver


def _film_solve(design):
    """(stage, element, triangles, driver) of the finest squeeze-film mesh."""
    from diagap.fem.air import air_properties
    from diagap.fem.film import squeeze
    from diagap.fem.film.perforation import perforation

    d, b = design.diaphragm, design.backplate
    air = air_properties(*design.air_conditions)
    g = b.gap_m
    mu = squeeze.film_viscosity(air.viscosity_pa_s, air.mean_free_path_m, g)
    sink = 0.0
    if b.perforated:
        sink = perforation(b.hole_lattice, b.hole_radius_m, b.hole_pitch_m, b.thickness_m, g,
                           air.viscosity_pa_s, air.mean_free_path_m).sink_m_per_pa_s
    scale = b.electrode_size_m if d.shape == "circle" else 0.5 * b.electrode_size_m
    alpha = 12.0 * mu * scale**2 * sink / g**3
    s_max = 12.0 * mu * scale**2 / (air.static_pressure_pa * g**2) * 2 * math.pi * 1e5
    layer = 1.0 / math.sqrt(max(alpha + s_max, 1.0))
    hc, he, per_layer = squeeze._ACCURACY[design.analysis.accuracy]
    while he > per_layer * layer and he > 2e-3:
        he /= 2.0
    n = graded_triangles(d.shape, max(hc, he), he, squeeze._GRADING) * 16  # refined twice
    driver = "backplate.hole_pitch" if b.perforated else "backplate.gap"
    return "damping", "p2", n, driver


def estimate_run(design) -> RunSize:
    """The estimated size of ``run_design(design)`` (no mesh is made)."""
    solves = list(_plate_solves(design)) + [_film_solve(design)]
    best = None
    for stage, element, tri, driver in solves:
        dofs = _DOFS_PER_TRIANGLE[element] * tri
        mem = BASE_B + BYTES_PER_DOF[element] * dofs
        if best is None or mem > best.memory_b:
            best = RunSize(int(dofs), stage, driver, mem)
    return best


def _fmt_bytes(b: float) -> str:
    return f"{b / 1e9:.3g} GB" if b >= 1e9 else f"{b / 1e6:.3g} MB"


def check_run_size(design, max_memory_b: float | None = None) -> RunSize:
    """Raise :class:`~diagap.quantities.DesignError` if the estimated peak memory of the run is
    above ``max_memory_b`` (default: the design's ``analysis.max_memory``, else
    :data:`DEFAULT_MAX_MEMORY_B`), naming the design value that drives the size."""
    from diagap.quantities import DesignError

    limit = max_memory_b or design.analysis.max_memory_b or DEFAULT_MAX_MEMORY_B
    size = estimate_run(design)
    if size.memory_b > limit:
        value = _driver_value(design, size.driver)
        raise DesignError(
            f"{size.driver} = {value}: the {size.stage} mesh would need about "
            f"{size.unknowns:,} unknowns and {_fmt_bytes(size.memory_b)} of memory, above the "
            f"limit {_fmt_bytes(limit)}; change {size.driver} or raise the limit with "
            f"--max-memory (or analysis.max_memory)")
    return size


def _driver_value(design, driver: str) -> str:
    section, key = driver.split(".")
    attr = {"thickness": "thickness_m", "gap": "gap_m", "hole_pitch": "hole_pitch_m",
            "accuracy": "accuracy"}[key]
    v = getattr(getattr(design, section), attr)
    return repr(v) if isinstance(v, str) else f"{v:g} m"
