"""netnoise: noise budgets for linear analog circuits from SPICE-style netlists.

Results are design estimates.  For mains-connected or safety-related
equipment, follow local codes and licensed engineering practice.
"""

__version__ = "0.1.0"
