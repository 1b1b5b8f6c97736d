"""The evaluations of a C–V fit: model curves for batches of parameter sets, in parallel and
resumable.

A fit (:mod:`diagap.studies.fit`) needs the model residuals at parameter sets θ: the curve
C_t(V_j; θ) of :class:`diagap.studies.cvmodel.CVModel` at the measured biases and, in a joint
fit, the sensitivity level L(f_k; θ) (:mod:`diagap.studies.response_model`). Each step asks for
a batch of them — the start together with its 2n central-difference neighbours, a Jacobian's
2n neighbours, one trial point — and the parameter sets of a batch are independent, so they run
like the points of any study (:class:`diagap.studies.runner.StudyRunner`): in this process,
on local worker processes or on a Dask cluster, each finished one stored in
``OUT/evaluations.jsonl``. A fit run again into the same folder replays the stored evaluations
instead of computing them; since the steps of the fit depend only on those values, it retraces
the same path and ends at the same result.

A point is the nominal design with the free values replaced; its id hashes them with the
measured biases (and frequencies), the mesh level and the response model, so stored curves are
only reused for the same data and model. Worker processes build the model once (the mesh,
the plate parts, the cell capacitance table) and keep it for the fit's further points.
"""
from __future__ import annotations

import hashlib
import json
import threading

import numpy as np

__all__ = ["CVPoint", "FitEvaluations", "model_for", "set_key"]

_MODELS: dict = {}       # (design key, mesh) -> CVModel, per process
_RESPONSES: dict = {}    # design key -> PipelineResponse, per process
_LOCK = threading.Lock()  # threads of one Dask worker share the models
_KEEP = 4


def _design_key(design) -> str:
    from diagap.sweep.store import design_hash

    return design_hash(design) + design.analysis.accuracy


def _remember(cache: dict, key, value) -> None:
    cache[key] = value
    while len(cache) > _KEEP:
        cache.pop(next(iter(cache)))


def set_key(values) -> tuple:
    """A parameter set's SI values rounded as in the ids of the study's log (12 significant
    digits): sets with the same key are one evaluation."""
    from diagap.sweep.spec import si_round

    return tuple(si_round(float(v)) for v in values)


def model_for(design, mesh: str, model=None):
    """The process's :class:`CVModel` of ``design`` on ``mesh`` (``model``: one to keep)."""
    key = (_design_key(design), mesh)
    if model is not None:
        _remember(_MODELS, key, model)
    if key not in _MODELS:
        from diagap.studies.cvmodel import CVModel

        _remember(_MODELS, key, CVModel(design, mesh=mesh))
    return _MODELS[key]


class CVPoint:
    """Picklable ``f(design) -> {"fit": {...}}``: the model curve (and level) of one parameter
    set, read from the free values of ``design``.

    Outputs: ``c1 .. cm`` (F) at the biases, ``pull_in_v`` (V, the model's pull-in voltage),
    ``ok`` (False when the model cannot be evaluated there, e.g. beyond its gap range or
    collapsed), and with frequencies ``db1 .. dbk`` and ``response_ok``.
    """

    def __init__(self, base, mesh: str, paths, biases_v, freqs_hz=None, response_model=None):
        self.base, self.mesh, self.paths = base, mesh, tuple(paths)
        self.biases_v = tuple(float(v) for v in biases_v)
        self.freqs_hz = None if freqs_hz is None else tuple(float(f) for f in freqs_hz)
        self.response_model = response_model

    def tag(self) -> str:
        """Names the evaluator in the point ids (data, mesh and response model)."""
        from diagap.studies.runner import evaluator_tag

        resp = None
        if self.freqs_hz is not None:
            resp = evaluator_tag(self.response_model) if self.response_model else "pipeline"
        text = json.dumps([self.mesh, self.biases_v, self.freqs_hz, resp, "pull-in"])
        return "fit-cv-" + hashlib.sha256(text.encode()).hexdigest()[:16]

    def compute(self, values: dict) -> dict:
        """The outputs (class docstring) for the free ``values`` (path → SI)."""
        from diagap.design import DesignError
        from diagap.fem.coupling.branch import CoupledError

        model = model_for(self.base, self.mesh)
        out: dict = {"ok": True}
        try:
            with _LOCK:
                c, v_pi = model.curve_and_pull_in(values, np.array(self.biases_v))
            out.update({f"c{j + 1}": float(x) for j, x in enumerate(c)})
            out["pull_in_v"] = float(v_pi)
        except (CoupledError, DesignError, ValueError):
            out["ok"] = False
        if self.freqs_hz is not None:
            out["response_ok"] = True
            try:
                db = self._response()(values, np.array(self.freqs_hz))
                out.update({f"db{k + 1}": float(x) for k, x in enumerate(db)})
            except (DesignError, ValueError, RuntimeError):
                out["response_ok"] = False
        return {"fit": out}

    def _response(self):
        if self.response_model is not None:
            return self.response_model
        key = _design_key(self.base)
        if key not in _RESPONSES:
            from diagap.studies.response_model import PipelineResponse

            _remember(_RESPONSES, key, PipelineResponse(self.base))
        return _RESPONSES[key]

    def __call__(self, design) -> dict:
        from diagap.studies.spec import design_value

        return self.compute({p: design_value(design, p) for p in self.paths})


def _arrays(outputs: dict, m: int, k: int | None):
    """(curve or None, level or None) of flattened outputs."""
    cv = None
    if outputs.get("fit.ok") and all(outputs.get(f"fit.c{j + 1}") is not None for j in range(m)):
        cv = np.array([outputs[f"fit.c{j + 1}"] for j in range(m)], float)
    resp = None
    if k is not None and outputs.get("fit.response_ok") and \
            all(outputs.get(f"fit.db{i + 1}") is not None for i in range(k)):
        resp = np.array([outputs[f"fit.db{i + 1}"] for i in range(k)], float)
    return cv, resp


class FitEvaluations:
    """Curves of the fit's parameter sets, here or through a :class:`StudyRunner` (a context
    manager).

    Parameters
    ----------
    model : CVModel
        The nominal model (kept for the evaluations in this process).
    biases_v : array_like
        The measured biases (V).
    paths : sequence of str
        The free values.
    out_dir : path, optional
        The study folder: evaluations are stored there and replayed by a rerun. None: evaluated
        in this process without a record.
    workers, scheduler, progress
        As for :class:`diagap.studies.runner.StudyRunner`.
    """

    def __init__(self, model, biases_v, paths, *, out_dir=None, workers: int | None = 1,
                 scheduler=None, progress=None):
        self.model, self.paths = model, tuple(paths)
        self.biases_v = np.asarray(biases_v, float)
        self.mesh = getattr(model, "mesh", "fine")
        self.out_dir, self.workers, self.scheduler = out_dir, workers, scheduler
        self.progress = progress
        self.runner = None
        self.computed = 0
        self.pull_in_v: dict = {}  # set_key of a parameter set -> the model's pull-in (V)
        self.point = CVPoint(model.design, self.mesh, self.paths, self.biases_v)

    def __enter__(self):
        model_for(self.model.design, self.mesh, self.model)
        if self.out_dir is not None:
            from diagap.studies.runner import StudyRunner

            self.runner = StudyRunner(self.model.design, self.point, self.out_dir,
                                      tag=self.point.tag(), workers=self.workers,
                                      scheduler=self.scheduler, progress=self.progress,
                                      label="fit").__enter__()
        return self

    def __exit__(self, *exc):
        if self.runner is not None:
            self.runner.__exit__(*exc)
            self.runner = None

    def with_response(self, freqs_hz, response_model=None) -> None:
        """Evaluate the sensitivity level at ``freqs_hz`` too from now on."""
        self.point = CVPoint(self.model.design, self.mesh, self.paths, self.biases_v, freqs_hz,
                             response_model)
        if self.runner is not None:
            self.runner.evaluate, self.runner.tag = self.point, self.point.tag()

    def run(self, value_sets) -> list:
        """``[(curve or None, level or None), ...]`` for the parameter sets ``value_sets``
        (each a sequence of SI values in the order of ``paths``)."""
        sets = [tuple(float(v) for v in vs) for vs in value_sets]
        m = self.biases_v.size
        k = None if self.point.freqs_hz is None else len(self.point.freqs_hz)
        if self.runner is None:  # the same outputs as a stored record, without the record
            from diagap.sweep.point import flatten_summary
            from diagap.writer import json_ready

            self.computed += len(sets)
            outputs = [flatten_summary(json_ready(self.point.compute(dict(zip(self.paths, vs)))))[0]
                       for vs in sets]
            self._note_pull_in(sets, outputs)
            return [_arrays(o, m, k) for o in outputs]
        from diagap.sweep.spec import SweepError

        records = self.runner.run([tuple(zip(self.paths, vs)) for vs in sets])
        self.computed = self.runner.computed
        out = []
        for rec in records:
            if rec.get("status") != "ok":
                raise SweepError(f"fit: the model could not be evaluated at "
                                 f"{rec.get('overrides')}: {rec.get('error')}")
            out.append(_arrays(rec.get("outputs", {}), m, k))
        self._note_pull_in(sets, [rec.get("outputs", {}) for rec in records])
        return out

    def _note_pull_in(self, sets, outputs) -> None:
        for vs, o in zip(sets, outputs):
            v = o.get("fit.pull_in_v") if o.get("fit.ok") else None
            self.pull_in_v[set_key(vs)] = None if v is None else float(v)
