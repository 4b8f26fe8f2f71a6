"""The ranges of values the engine computes with correctly (one place for every kind)."""

from __future__ import annotations

__all__ = ["RESISTANCE_RANGE", "VALUE_RANGE", "GAIN_LIMIT"]

# Ω: the resistances the engine computes with.  A resistor's noise enters as 4kT/R (≈ 1.7e-20/R
# A²/Hz) and leaves multiplied by a squared transfer impedance (up to the largest R squared), so
# products of about four such values must stay normal doubles (1e-308 .. 1e308); 1e±60 keeps
# them within 1e±260.  Beyond it (1e308 Ω: 4kT/R underflows to 0) the noise would be shown as 0.
RESISTANCE_RANGE = (1e-60, 1e60)
VALUE_RANGE = RESISTANCE_RANGE  # F and H: time constants R·C, L/R then stay within 1e±120 s

# the largest |gain| of a controlled source (V/V, A/A, S, Ω) and amplifier open-loop gain: the
# same span as RESISTANCE_RANGE, for the same reason (a gain near 1e308 overflows the matrix norms
# and the squared transfers)
GAIN_LIMIT = 1e60
