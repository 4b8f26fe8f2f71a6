"""Design studies on top of one analysis: the speed of the signal path,
sensitivities of the noise to every value, sweeps and the noise-speed trade-off."""
