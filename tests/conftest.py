"""Shared test set-up: make the sibling helper modules importable under
pytest's importlib import mode, keep matplotlib off-screen, and keep the
parser's table cache (netnoise.grammar.parser_cache_path) out of the
user's home: in a folder of this session, inherited by CLI subprocesses."""

import os
import sys
import tempfile
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")
os.environ["XDG_CACHE_HOME"] = tempfile.mkdtemp(prefix="netnoise-test-cache-")
sys.path.insert(0, str(Path(__file__).parent))
