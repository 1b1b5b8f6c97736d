"""The second-core call (diagap.forked) and the pipeline's large-deflection lane.

Checks: a forked call returns what the inline call returns; inputs sent later arrive in order; a
child that fails (or dies) costs time, never results; the pipeline's summary is the same to the
last bit with and without the second process (the same code on the same inputs).
"""
from __future__ import annotations

import json
import os

import numpy as np
import pytest

from diagap import forked
from diagap.forked import ForkedCall, can_fork

needs_fork = pytest.mark.skipif(not can_fork(), reason="needs fork and two cores")


def _work(n, *, scale=1.0, receive):
    rng = np.random.default_rng(n)
    a = rng.standard_normal((60, 60))
    first = np.linalg.eigvalsh(a + a.T)
    extra = receive()
    more = receive()
    return {"pid": os.getpid(), "eig": first * scale, "extra": extra, "more": more}


def _fails_in_child(parent_pid, *, receive):
    if os.getpid() != parent_pid:
        raise RuntimeError("failure only in the child")
    return receive() * 2


def _dies_in_child(parent_pid, *, receive):
    if os.getpid() != parent_pid:
        os._exit(3)
    return "here"


@needs_fork
def test_forked_result_is_the_inline_result_and_inputs_arrive_in_order():
    call = ForkedCall(_work, 7, scale=2.0)
    assert call.forked
    call.send("a")
    call.send([1, 2])
    got = call.result()
    ref = ForkedCall(_work, 7, scale=2.0, fork=False)
    ref.send("a")
    ref.send([1, 2])
    want = ref.result()
    assert got["pid"] != os.getpid() and want["pid"] == os.getpid()
    assert np.array_equal(got["eig"], want["eig"])  # bit for bit
    assert (got["extra"], got["more"]) == ("a", [1, 2])


@needs_fork
def test_a_failing_child_is_replaced_by_the_inline_call():
    call = ForkedCall(_fails_in_child, os.getpid())
    assert call.forked
    call.send(21)
    assert call.result() == 42


@needs_fork
def test_a_child_that_dies_is_replaced_by_the_inline_call():
    call = ForkedCall(_dies_in_child, os.getpid())
    assert call.result(timeout_s=60.0) == "here"


def test_disabled_or_refused_fork_runs_inline(monkeypatch):
    monkeypatch.setattr(forked, "ENABLED", False)
    assert not can_fork()
    call = ForkedCall(_work, 3)
    assert not call.forked
    call.send(1)
    call.send(2)
    assert call.result()["pid"] == os.getpid()


def test_an_input_never_sent_is_an_error_inline():
    call = ForkedCall(_work, 3, fork=False)
    call.send(1)
    with pytest.raises(RuntimeError, match="never sent"):
        call.result()


def _strip(summary: dict) -> str:
    s = dict(summary)
    s.pop("timings_s", None)
    return json.dumps(s, sort_keys=True, default=str)


@needs_fork
def test_pipeline_with_the_second_process_gives_the_same_summary():
    from diagap.design import demo_design
    from diagap.pipeline import run_design

    design = demo_design().with_accuracy("draft")
    serial = run_design(design, parallel=False)
    both = run_design(design, parallel=True)
    assert "large_deflection" in both.sections
    assert both.sections["large_deflection"].data["thd_10pct_spl_db_quasistatic"] is not None
    assert _strip(serial.summary()) == _strip(both.summary())


def _line_plot(k):
    from diagap.report.plots import Plot, new_figure

    def draw():
        fig, ax = new_figure()
        x = np.linspace(0.0, 1.0, 50)
        ax.plot(x, x**k, label=f"x^{k}")
        ax.legend()
        return fig
    return Plot(f"p{k}", "mechanics", f"power {k}", "invented test curve", draw)


@needs_fork
def test_plots_drawn_on_two_processes_are_the_bytes_drawn_here():
    from diagap.report.plots import RenderedPlots

    plots = [_line_plot(k) for k in range(1, 6)]
    both = RenderedPlots(plots, parallel=True)
    both.start()
    assert both._call is not None and both._call.forked
    got = {p.name: b for p, b in both.items()}
    alone = {p.name: b for p, b in RenderedPlots(plots, parallel=False).items()}
    assert list(got) == [p.name for p in plots]
    assert got == alone


@needs_fork
def test_plots_drawn_while_waiting_are_the_bytes_of_the_finished_run(monkeypatch):
    """The early plots (sections no later stage changes) drawn from the run in progress equal
    those drawn from the finished run, and the report takes them."""
    from diagap.design import demo_design
    from diagap.pipeline import run_design
    from diagap.report.fields import cell_field
    from diagap.report.outputs import EARLY_SECTIONS, draw_early
    from diagap.report.plots import RenderedPlots, report_plots

    monkeypatch.setattr(ForkedCall, "busy", lambda self: True)  # always wait: draw them all
    drawn, calls = {}, []

    def meanwhile(partial, busy):
        calls.append(sorted(partial.sections))
        draw_early(partial, drawn, busy)
    result = run_design(demo_design().with_accuracy("draft"), parallel=True, on_wait=meanwhile)
    assert calls and "large_deflection" not in calls[0]
    plots = report_plots(result, cell_field(result.design))
    early = [p for p in plots if p.section in EARLY_SECTIONS]
    assert {p.name for p in early} == set(drawn) and len(drawn) >= 5
    final = dict((p.name, b) for p, b in RenderedPlots(early, parallel=False).items())
    assert drawn == final
    assert "while_waiting" in result.timings_s
