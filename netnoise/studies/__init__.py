"""Design studies on top of one analysis: the speed of the signal path, sensitivities of the
noise to every value, sweeps and the noise-speed trade-off, Monte Carlo over tolerances and
temperature; and where studies run (in-process, local processes, a Dask cluster)."""
