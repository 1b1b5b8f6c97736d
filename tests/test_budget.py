"""The run-size estimate: triangle counts of the graded diaphragm meshes against the meshes gmsh
actually makes, and the refusal above the memory limit (peak memories: tests/bench/bench_budget.py)."""
import pytest

from diagap.budget import DEFAULT_MAX_MEMORY_B, check_run_size, estimate_run, graded_triangles
from diagap.design import DesignError, demo_design, with_override
from diagap.meshes.diaphragm import disk_mesh, square_mesh


@pytest.mark.parametrize("shape, make", [("circle", disk_mesh), ("square", square_mesh)])
@pytest.mark.parametrize("sizes", [(0.3, 0.03, 0.3), (0.4, 0.06, 0.3), (0.08, 0.08, 0.3),
                                   (0.5, 0.01, 0.3)])
def test_triangle_count_matches_gmsh(shape, make, sizes):
    n = make(*sizes).t.shape[1]  # gmsh's own mesh of the size field
    assert graded_triangles(shape, *sizes) == pytest.approx(n, rel=0.15, abs=0)


def test_uniform_disk_count_is_area_over_triangle_area():
    # a uniform size h: N = 1.27 · π / (√3/4 · h²) (equilateral triangles, gmsh factor 1.27)
    h = 0.05
    assert graded_triangles("circle", h, h, 0.3) == pytest.approx(
        1.27 * 3.141592653589793 / (3**0.5 / 4 * h * h), rel=1e-9, abs=0)


def test_demo_fits_and_thin_films_are_refused():
    d = demo_design()
    assert estimate_run(d).memory_b < DEFAULT_MAX_MEMORY_B
    thin = with_override(d, "diaphragm.thickness", "10 nm")
    with pytest.raises(DesignError, match=r"^diaphragm\.thickness = 1e-08 m: the coupled mesh "
                                          r"would need about [\d,]+ unknowns"):
        check_run_size(thin)
    assert check_run_size(thin, 8e9).memory_b > DEFAULT_MAX_MEMORY_B  # a raised limit passes
    with pytest.raises(DesignError, match="above the limit 100 MB"):
        check_run_size(d.with_max_memory(100e6))
