"""The large-deflection section computed on two processes beside the rest of the run.

The section (:mod:`diagap.overload`) has two independent traces of the von Kármán diaphragm:

- at bias (contact, C(p), quasi-static THD): needs only the electrostatic table, so it can start
  as soon as the electrostatics stage is done;
- without bias: the trace needs only the plate, but its last step, the deflection at the audit
  pressure, needs the response section (the overload SPL).

:class:`LargeDeflectionLanes` starts a forked child (:class:`diagap.forked.ForkedCall`) right
after the electrostatics stage. The child traces at bias while this process runs the coupled,
damping and response stages; whether the bias collapses the diaphragm is not known yet, so the
child computes the biased trace whenever the design has a bias, and the section keeps it only if
the coupled stage finds a stable bias point (a failure of that trace counts only if it is kept).
The trace without bias goes to whichever process gets to it first (a shared claim): the child
after its biased trace, or this process once the response is done. So the two cores stay busy
whichever lane is the longer one for a given design. The numbers are those of the serial
computation to the last bit: the same code on the same inputs.
"""
from __future__ import annotations

__all__ = ["LargeDeflectionLanes"]


class _Claim:
    """A flag that exactly one process can take (shared with a forked child when one exists)."""

    def __init__(self):
        import multiprocessing as mp

        try:
            self._value = mp.get_context("fork").Value("i", 0)
        except ValueError:  # no fork on this platform: everything runs in this process
            self._value = None
            self._taken = False

    def take(self) -> bool:
        if self._value is None:
            mine, self._taken = not self._taken, True
            return mine
        with self._value.get_lock():
            mine = self._value.value == 0
            self._value.value = 1
        return mine


def _lane(design, problem, es, claim: _Claim, *, receive):
    """The child's work: the biased trace if the design has a bias (its NewtonError returned,
    not raised), then the plain trace if not yet claimed (``receive()`` gives the audit (SPL,
    pressure) once the response is known)."""
    from diagap.fem.plate.vonkarman import NewtonError
    from diagap.overload import biased_part, plain_part

    biased = None
    if design.electrical is not None:
        try:
            biased = biased_part(design, problem, es)
        except NewtonError as exc:
            biased = exc
    plain = plain_part(design, problem, receive) if claim.take() else None
    return biased, plain


class LargeDeflectionLanes:
    """Start the section's traces (see the module docstring); :meth:`section` finishes it.

    Parameters
    ----------
    design, problem, es : the design, its plate problem and the electrostatics section
    parallel : bool or None
        False: no child, everything is computed in :meth:`section`; None: a child where
        :func:`diagap.forked.can_fork` allows.
    """

    def __init__(self, design, problem, es, parallel: bool | None = None):
        from diagap.forked import ForkedCall

        self.design, self.problem, self.es = design, problem, es
        self._claim = _Claim()
        self._call = ForkedCall(_lane, design, problem, es, self._claim, fork=parallel)

    def section(self, resp: dict | None, with_bias: bool, on_wait=None):
        """The ``large_deflection`` section, given the response section's summary (None if not
        computed) and whether the bias point is stable (the biased part is kept).

        ``on_wait(busy)``: called once if this process would otherwise wait for the child, with
        ``busy()`` telling whether the child is still working (for other work meanwhile).

        Raises
        ------
        NewtonError
            A trace that the section needs failed.
        """
        from diagap.overload import assemble_section, audit_pressure_pa, plain_part

        audit = audit_pressure_pa(resp)
        self._call.send(audit)
        try:
            plain = plain_part(self.design, self.problem, audit) if self._claim.take() else None
        except BaseException:
            self.cancel()
            raise
        if on_wait is not None and self._call.busy():
            on_wait(self._call.busy)
        biased, theirs = self._call.result()
        if plain is None:  # the child took it (or took it and failed: then it is computed here)
            plain = theirs or plain_part(self.design, self.problem, audit)
        if not with_bias:
            return assemble_section(plain)
        if isinstance(biased, Exception):
            raise biased
        return assemble_section(plain, biased)

    def cancel(self) -> None:
        """Stop the child without waiting for it."""
        self._call.cancel()
