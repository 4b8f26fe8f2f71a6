"""Results of an analysis, and the figures of merit derived from them."""
