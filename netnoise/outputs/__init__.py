"""Outputs at the edge: the text report, JSON and CSV exports, plots, the progress line."""
