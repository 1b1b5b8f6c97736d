"""Design-space studies of one design: tolerances and yield, constrained optimisation, and
fitting design values to measured capacitance-versus-bias curves.

Each study evaluates many copies of a design (:mod:`diagap.evaluate`: the fast tables, or the
full FE pipeline) through the sweep machinery (local processes or a Dask cluster), keeps every
finished evaluation so that an interrupted study resumes, and writes its outputs at the end.
"""
