"""Summary outputs of a design in milliseconds, from tables certified against the full FE.

Two kinds of table (:mod:`diagap.fastpath.grid`, built by :mod:`diagap.fastpath.refine`, cached
on disk by :mod:`diagap.fastpath.store`):

- the scaled diaphragm (:mod:`diagap.fastpath.plate`): the clamped disk depends on the tension
  ratio τ = σ·h·a²/D alone, so one table over τ gives the ``mechanics`` outputs of every
  clamped circular diaphragm in the plate model's range (−0.9·τ_b ≤ τ ≤ 1e4);
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

__all__ = ["FastPathUnavailable", "fast_summary", "StudyBox", "study_table", "plate_table",
           "mapper_for"]


class FastPathUnavailable(ValueError):
    """A design outside the tabulated range (shape, edge, model or box)."""


def __getattr__(name):
    from importlib import import_module

    where = {"StudyBox": "study", "study_table": "study", "plate_table": "plate",
             "mapper_for": "refine"}
    if name in where:
        return getattr(import_module(f"diagap.fastpath.{where[name]}"), name)
    raise AttributeError(name)


def _plate_outputs(design, mapper=None) -> dict:
    from diagap.fastpath.plate import PlateScaling, covers, plate_summary, plate_table

    d = design.diaphragm
    if d.shape != "circle" or d.edge != "clamped":
        raise FastPathUnavailable(
            f"diaphragm: shape {d.shape!r}, edge {d.edge!r}; the scaled diaphragm table covers "
            "clamped circles (give a StudyBox for other designs)")
    nu = d.poisson_ratio
    bend = d.youngs_modulus_pa * d.thickness_m**3 / (12.0 * (1.0 - nu * nu))
    s = PlateScaling(d.size_m, bend, d.density_kg_m3 * d.thickness_m,
                     d.residual_stress_pa * d.thickness_m)
    if not covers(s):
        raise FastPathUnavailable(
            f"diaphragm: tension ratio sigma*h*a^2/D = {s.tau:.6g} is outside the table's "
            "range [-13.2, 1e4] (the plate model of the solver)")
    table, facts = plate_table(design.analysis.accuracy, mapper=mapper)
    return plate_summary(table, s, set(facts.get("uncertified", ())))


def fast_summary(design, box=None, *, mapper=None, **table_options) -> dict[str, float]:
    """Certified summary outputs of ``design`` from tables (built and cached on first use).

    Parameters
    ----------
    design : Design
        The design (its ``analysis.accuracy`` selects the FE the tables reproduce).
    box : StudyBox, optional
        A design and bounds of varied values containing ``design``: all numeric outputs of the
        mechanics, electrostatics, coupled, damping and response sections. Without a box: the
        ``mechanics`` outputs of a clamped circular diaphragm from the scaled table, and its
        ``damping`` outputs where covered (:mod:`diagap.fastpath.film`; their tables are
        built with an explicit ``mapper`` or
        :func:`diagap.fastpath.film.prepare_damping_tables`, else only read).
    mapper : callable, optional
        How table points are computed when a table is built
        (:func:`diagap.fastpath.refine.mapper_for`: local processes or a Dask client).
    **table_options
        ``tol``, ``nodes``, ``max_splits``, ``validate`` of :func:`study_table`.

    Returns
    -------
    dict
        Flat summary path → SI value (dB for levels).

    Raises
    ------
    FastPathUnavailable
        The design lies outside the tables: another shape or edge, a tension ratio beyond the
        plate model, values outside the box, or a design that differs from the box's design in
        a value the box does not vary.
    """
    if box is None:
        out = _plate_outputs(design, mapper)
        from diagap.fastpath.film import covered_damping_outputs
        out.update(covered_damping_outputs(design, out, mapper))
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
