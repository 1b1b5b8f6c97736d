"""Summary outputs of a design in milliseconds, from tables certified against the full FE.

Two kinds of table (global ones, listed by :mod:`diagap.fastpath.catalog` and built by
``diagap tables``, and study boxes; :mod:`diagap.fastpath.grid`, built by :mod:`diagap.fastpath.refine`, cached
on disk by :mod:`diagap.fastpath.store`):

- the scaled diaphragm (:mod:`diagap.fastpath.plate`): a disk or square, clamped or simply
  supported, depends on the tension ratio τ = σ·h·L²/D alone (and on ν for the simply
  supported disk), so a few tables over τ (and ν) give the ``mechanics`` outputs of every
  diaphragm in the validated range :data:`diagap.fastpath.plate_range.VALIDATED_RANGE`
  (−0.9·τ_b ≤ τ ≤ 1e10, plate and membrane models);
- the scaled backplate cell and electrode rim (:mod:`diagap.fastpath.cells`,
  :mod:`diagap.fastpath.fringe`, assembled by :mod:`diagap.fastpath.field`): the perforation
  factor depends on (a/p, t/p, g/p) per lattice and the rim of a large pair on its overhang and
  thickness in gaps, so two tables per accuracy give the ``electrostatics`` outputs of clamped
  circular diaphragms over a validated range of hole patterns, gaps and electrodes;
- the Stokes flow cell of the perforation and the film's static-shape correction
  (:mod:`diagap.fastpath.flowcell`, :mod:`diagap.fastpath.shape`, used by the radial film of
  :mod:`diagap.fastpath.film`): the ``damping`` outputs of the same diaphragms;
- on top of these, reduced solves without tables of their own: the ``coupled`` section by a
  radial Hermite FE of the axisymmetric diaphragm under the electrostatic load of the tabulated
  c(g) (:mod:`diagap.fastpath.coupled`), and the ``response`` section by the stage's own lumped
  model built of the fast pieces (:mod:`diagap.fastpath.response`); their reduction error
  against the 2-D FE is measured and stated in those modules;
- patches (:mod:`diagap.fastpath.patches`): the cell, rim and flow-cell tables over only the
  range of their groups that one study's box reaches, built for that study (an optimisation
  whose global tables are missing) and read in their place (``fast_summary(patches=...)``);
- the summary over a study box (:mod:`diagap.fastpath.study`): every numeric output of the
  mechanics, electrostatics, coupled, damping and response sections of one design, over bounds
  of a few of its design values; each table point is a full FE analysis.

Both are refined until held-out points agree with the FE within ``tol`` (1e-3 relative; 0.01 dB
for levels in dB). Outputs that do not reach it are left out of the answer, never guessed.

Output names are the flat summary paths of sweeps (:func:`diagap.sweep.point.flatten_summary`):
``"response.sensitivity_db_v_per_pa"``, ``"coupled.pull_in_voltage_v"``,
``"mechanics.natural_frequencies_hz_1"`` (list entries numbered from 1).

CAUTION: bias voltages can be hazardous; results are design estimates, as for the full run.
"""
from __future__ import annotations

__all__ = ["FastPathUnavailable", "fast_summary", "StudyBox", "study_table", "plate_tables",
           "mapper_for", "electrostatics_outputs", "prepare_tables", "read_only"]


class FastPathUnavailable(ValueError):
    """A design outside the tabulated range (shape, edge, model or box)."""


def __getattr__(name):
    from importlib import import_module

    where = {"StudyBox": "study", "study_table": "study", "plate_tables": "plate",
             "mapper_for": "refine", "electrostatics_outputs": "field"}
    if name in where:
        return getattr(import_module(f"diagap.fastpath.{where[name]}"), name)
    raise AttributeError(name)


def _plate_outputs(design, mapper=None) -> dict:
    from diagap.fastpath.plate import plate_outputs

    return plate_outputs(design.diaphragm, design.analysis.accuracy, mapper)


def read_only(func, points):
    """A table mapper that computes nothing: a missing table means the outputs are left out."""
    raise FastPathUnavailable("the table has not been built (diagap.fastpath.prepare_tables)")


def _field_outputs(design, mapper=None) -> dict:
    """The ``electrostatics`` outputs where the scaled cell and rim tables cover the design (and
    exist, without a ``mapper``), else none."""
    from diagap.fastpath.field import electrostatics_outputs

    try:
        return electrostatics_outputs(design, mapper or read_only)
    except FastPathUnavailable:
        return {}


def prepare_tables(accuracy: str = "normal", mapper=None) -> dict:
    """Build (or read) the scaled cell, rim and film tables of an accuracy setting (minutes on
    two cores, once; cached on disk); their build facts by table."""
    from diagap.fastpath.cells import cell_table
    from diagap.fastpath.film import prepare_damping_tables
    from diagap.fastpath.fringe import rim_table
    from diagap.fastpath.refine import mapper_for

    mapper = mapper or mapper_for()
    facts = {f"cell_{lattice}": cell_table(lattice, accuracy, mapper=mapper)[1]
             for lattice in ("hex", "square")}
    facts["rim"] = rim_table(accuracy, mapper=mapper)[1]
    facts.update({f"film_{k}": v for k, v in prepare_damping_tables(accuracy, mapper).items()})
    return facts


def fast_summary(design, box=None, *, mapper=None, patches=None,
                 **table_options) -> dict[str, float]:
    """Certified summary outputs of ``design`` from tables (built and cached on first use).

    Parameters
    ----------
    design : Design
        The design (its ``analysis.accuracy`` selects the FE the tables reproduce).
    box : StudyBox, optional
        A design and bounds of varied values containing ``design``: all numeric outputs of the
        mechanics, electrostatics, coupled, damping and response sections. Without a box: the
        ``mechanics`` outputs of the diaphragm from the scaled tables (built on first use), and
        its ``electrostatics``, ``coupled`` and ``damping`` outputs where the scaled cell, rim
        and film tables cover the design (:mod:`diagap.fastpath.field`,
        :mod:`diagap.fastpath.coupled`, :mod:`diagap.fastpath.film`; left out otherwise). Those tables take minutes to build: they are built with an
        explicit ``mapper`` (or :func:`prepare_tables`), else only read.
    mapper : callable, optional
        How table points are computed when a table is built
        (:func:`diagap.fastpath.refine.mapper_for`: local processes or a Dask client).
    patches : diagap.fastpath.patches.PatchSet, optional
        Without a box: read the cell, rim and flow-cell tables from the study's patches
        (:mod:`diagap.fastpath.patches`) instead of the global tables.
    **table_options
        ``tol``, ``nodes``, ``max_nodes``, ``validate``, ``distributed`` of :func:`study_table`.

    Returns
    -------
    dict
        Flat summary path → SI value (dB for levels).

    Raises
    ------
    FastPathUnavailable
        The design lies outside the tables: a tension ratio or Poisson ratio outside
        :data:`diagap.fastpath.plate_range.VALIDATED_RANGE`, values outside the box, or a
        design that differs from the box's design in a value the box does not vary.
    """
    if box is None:
        from diagap.fastpath.coupled import _one_thread, covered_coupled_outputs
        from diagap.fastpath.film import covered_damping_outputs
        from diagap.fastpath.patches import using
        from diagap.fastpath.response import covered_response_outputs

        with _one_thread(), using(patches):  # small dense kernels (harmonic balance): BLAS threads only add
            out = _plate_outputs(design, mapper)  # contention
            out.update(_field_outputs(design, mapper))
            out.update(covered_coupled_outputs(design, out, mapper))
            out.update(covered_damping_outputs(design, out, mapper))
            out.update(covered_response_outputs(design, out, mapper))
        return out
    from diagap.fastpath.study import box_coordinates, study_table

    x = box_coordinates(box, design)
    if design.analysis.accuracy != box.design.analysis.accuracy:
        raise FastPathUnavailable("analysis.accuracy differs from the box's design")
    table, facts = study_table(box, mapper=mapper, **table_options)
    if not table.covers(x):
        out = [f"{p} = {v:.6g}" for (p, lo, hi), v in zip(box.ranges, x)
               if not (lo * (1 - 1e-9) <= v <= hi * (1 + 1e-9))]
        raise FastPathUnavailable(f"outside the tabulated box: {', '.join(out)}")
    skip = set(facts.get("uncertified", ()))
    return {n: float(v) for n, v in zip(table.names, table(x)) if n not in skip}
