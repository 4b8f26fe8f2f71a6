"""The engine: MNA assembly, operating point, transfers, band integration, totals."""
