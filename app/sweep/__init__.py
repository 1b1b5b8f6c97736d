"""Design sweeps: the grid (spec), one point (point), executors (exec: local pool or Dask), the
resumable store (store), progress, plots, the sweep runner (run) and its command line (cli)."""
