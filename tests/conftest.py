"""Shared test set-up: make the sibling helper modules importable under
pytest's importlib import mode, and keep matplotlib off-screen."""

import os
import sys
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")
sys.path.insert(0, str(Path(__file__).parent))
