"""Mesh levels for the accuracy settings and the two-level (Richardson) error estimate.

Every accuracy setting solves the diaphragm on a sequence of meshes of one family, sizes
h_center, h_edge (scaled units: radius or half-side) multiplied by ``RATIO`` from one level to the
next (coarsest first). The error of the finest level is estimated by Richardson's formula
(:mod:`diagap.fem.richardson`)

    e_fine ≈ |Q_fine − Q_coarse| / (r^p − 1),

r the size ratio and p the convergence order. The order is the *lowest* one present: p = 2 for the
disk, whose polygonal boundary (vertices on the circle) shortens the radius by O(h_edge²) — the
error then falls as 1/n_b², n_b the number of boundary edges; the square has no geometric error
and its Argyris error falls faster, so p = 2 overestimates there (a safe side). A mesh-noise
floor (gmsh meshes of a family are not nested) is added: ``NOISE_FLOOR`` × |Q|.

With tension the plate has an edge boundary layer of width ℓ = √(D/T) (Bessel I0(r/ℓ) decay);
the finest edge size is capped at ℓ/c (c = ``layer_cells``, per setting). The quintic resolves
the exponential layer with edge elements of 2–3 ℓ to ~1e-4 (measured against the exact Bessel
solution at τ = 9000), hence c = 0.3 … 1.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from diagap.fem.richardson import relative_error
from diagap.fem.validate import Checks

__all__ = ["MeshSize", "ACCURACIES", "AccuracyError", "mesh_sizes", "richardson", "RATIO",
           "ORDER", "NOISE_FLOOR"]

RATIO = 1.5  # size ratio between consecutive levels
ORDER = {"circle": 2.0, "square": 2.0}
NOISE_FLOOR = 2e-5


class AccuracyError(ValueError):
    """An unknown accuracy setting."""


@dataclass(frozen=True)
class MeshSize:
    """Parameters of one diaphragm mesh (scaled units)."""

    h_center: float
    h_edge: float
    grading: float

    def scaled(self, factor: float) -> "MeshSize":
        return MeshSize(min(1.0, self.h_center * factor), min(1.0, self.h_edge * factor),
                        self.grading)


# finest level per shape and setting: (sizes, number of levels ≥ 2, layer_cells)
_FINEST = {
    "circle": {
        "draft": (MeshSize(0.4, 0.06, 0.3), 2, 0.3),
        "normal": (MeshSize(0.3, 0.03, 0.3), 2, 0.5),
        "fine": (MeshSize(0.2, 0.015, 0.3), 3, 1.0),
    },
    "square": {
        "draft": (MeshSize(0.6, 0.2, 0.3), 2, 0.3),
        "normal": (MeshSize(0.4, 0.12, 0.3), 2, 0.5),
        "fine": (MeshSize(0.25, 0.06, 0.3), 3, 1.0),
    },
}
ACCURACIES = tuple(_FINEST["circle"])


def mesh_sizes(shape: str, accuracy: str, layer_width: float | None = None) -> list[MeshSize]:
    """Mesh sizes of the levels of an accuracy setting, coarsest first.

    Parameters
    ----------
    shape : "circle" | "square"
    accuracy : "draft" | "normal" | "fine"
    layer_width : ℓ/L, the tension boundary-layer width in scaled units (None: no layer)
    """
    Checks(AccuracyError).choice("accuracy", accuracy, ACCURACIES)
    finest, count, cells = _FINEST[shape][accuracy]
    if layer_width is not None and layer_width / cells < finest.h_edge:
        h_edge = layer_width / cells
        finest = MeshSize(max(finest.h_center, h_edge), h_edge, finest.grading)
    return [finest.scaled(RATIO ** k) for k in range(count - 1, -1, -1)]


def richardson(coarse: np.ndarray, fine: np.ndarray, order: float,
               ratio: float = RATIO) -> np.ndarray:
    """Relative error estimate of the fine-level values (elementwise), with the diaphragm mesh
    family's ratio and noise floor: :func:`diagap.fem.richardson.relative_error`."""
    return np.asarray(relative_error(coarse, fine, order, ratio, floor=NOISE_FLOOR))
