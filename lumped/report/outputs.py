"""The registry of a run's output files (besides summary.json): name → producer(path)."""
from __future__ import annotations

__all__ = ["report_files"]


def report_files(result):
    """Yield (relative file name, function(path)) for every file this run can produce."""
    resp = result.sections.get("response")
    if resp is not None:
        from .csv import write_response_csv
        from .spice import write_spice

        r = resp.objects["response"].response
        model = resp.objects["model"]
        yield "response.csv", lambda p: write_response_csv(r.frequency_hz, r.voltage_per_pa, p)
        yield "model.cir", lambda p: write_spice(model, p)
