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


# --- relative tolerances are relative ---------------------------------------------
# pytest.approx(x, rel=r) also accepts anything within its default absolute
# tolerance, 1e-12, which is larger than every noise variance here (kT/C of
# 1 nF is 4e-12 V²): such a check would pass whatever the engine returned.
# Our checks state relative tolerances, so a `rel=` without an `abs=` means
# purely relative, in every test module.
import pytest  # noqa: E402

_pytest_approx = pytest.approx


def _relative_approx(expected, rel=None, abs=None, nan_ok=False):
    if rel is not None and abs is None:
        abs = 0.0
    return _pytest_approx(expected, rel=rel, abs=abs, nan_ok=nan_ok)


pytest.approx = _relative_approx
