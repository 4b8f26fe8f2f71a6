"""Studies over many analyses of one circuit: Monte Carlo (later sweeps), and where they run."""
