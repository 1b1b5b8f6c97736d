"""Sensitivity level versus frequency of a design with changed free values, for fitting.

L(f; θ) = 20 log10 |H(f; θ)| (dB re 1 V/Pa), H the open-circuit output per pascal of the lumped
model that the pipeline builds from the FE results (:mod:`diagap.lumped.response`: the diaphragm
on its static shape with the squeeze film, back volume, vent, radiation mass, electrostatic
spring at the bias point and the bias circuit), evaluated at the measured frequencies. Each
evaluation runs the pipeline's stages up to the lumped model for the design with the free values
θ replaced (:func:`diagap.evaluate._partial_run`), so it costs a pipeline run (seconds); values
repeated by the fit are kept in a small cache.
"""
from __future__ import annotations

import numpy as np

from diagap.design import DesignError

__all__ = ["PipelineResponse"]


class PipelineResponse:
    """``model(values, freqs_hz) -> level_db`` for the design ``design``."""

    def __init__(self, design):
        if design.acoustics is None or design.electrical is None:
            raise DesignError("--response: fitting a frequency response needs the design's "
                              "[acoustics] and [electrical] sections")
        self.design = design
        self._cache: dict = {}

    def __call__(self, values: dict, freqs_hz) -> np.ndarray:
        from diagap.design import with_overrides
        from diagap.evaluate import _partial_run
        from diagap.lumped.response import frequency_response

        key = tuple(sorted((k, float(v)) for k, v in values.items()))
        f = np.asarray(freqs_hz, float)
        if key not in self._cache:
            design = with_overrides(self.design, dict(key))
            result = _partial_run(design, {"response"})
            model = result.lumped_model
            if model is None:
                raise DesignError("the design collapses (bias at or above pull-in) for "
                                  f"{dict(key)}")
            self._cache = {key: model}  # one entry: the fit moves on
        h = frequency_response(self._cache[key], f).voltage_per_pa
        return 20.0 * np.log10(np.abs(h))
