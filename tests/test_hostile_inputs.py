"""Hostile inputs (issue 14, round 2): every input ends in a result or a
NetnoiseError with a clean message -- never a traceback, a warning or a hang.

* a table of hostile inputs run through the command line (exit status and
  message fragments);
* a hypothesis fuzz over mutated shipped circuits;
* the classes behind the table, each tested on its own: file kinds, sizes,
  include confinement, grid sizes, memory limits, output files, the parser
  cache's ownership checks, the grammar's portability.
"""

from __future__ import annotations

import os
import pickle
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from netnoise import cli

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = sorted((REPO / "circuits").glob("*.cir"))


# ---- the parser cache: pickle runs code, so only a private cache is used


class _Plant:
    """A pickle that, when loaded, creates the folder ``marker``."""

    def __init__(self, marker: str) -> None:
        self.marker = marker

    def __reduce__(self):
        return (os.mkdir, (self.marker,))


def _fresh_parse(cache_home: Path) -> tuple[str, str]:
    code = (
        "import netnoise; from netnoise.text.grammar import parser_cache_path; "
        "c = netnoise.parse_netlist('t\\nR1 a 0 1k\\nC1 a 0 {2p}\\n'); "
        "print(len(c.elements), parser_cache_path())"
    )
    env = {**os.environ, "XDG_CACHE_HOME": str(cache_home)}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    assert out.stderr == ""
    count, path = out.stdout.split()
    return count, path


def _cache_file_name(cache_home: Path) -> Path:
    count, path = _fresh_parse(cache_home)  # builds and writes the cache once
    assert count == "2" and path != "None"
    return Path(path)


def _plant(path: Path, marker: Path) -> None:
    path.write_bytes(b"0" * 64 + b"\n" + pickle.dumps(_Plant(str(marker))))


def test_cache_folder_is_created_private(tmp_path):
    cache = _cache_file_name(tmp_path)
    assert stat.S_IMODE(cache.parent.stat().st_mode) == 0o700


def test_a_cache_folder_writable_by_others_is_not_used(tmp_path):
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chmod(cache.parent, 0o777)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_file_writable_by_others_is_not_loaded(tmp_path):
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chmod(cache, 0o666)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_file_owned_by_another_user_is_not_loaded(tmp_path):
    if os.getuid() != 0:
        pytest.skip("giving a file to another uid needs root (os.chown); CI runs as root")
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chown(cache, 12345, 12345)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_folder_owned_by_another_user_is_not_used(tmp_path):
    if os.getuid() != 0:
        pytest.skip("giving a folder to another uid needs root (os.chown); CI runs as root")
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    _plant(cache, marker)
    os.chown(cache.parent, 12345, 12345)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_a_cache_file_that_is_a_link_is_not_loaded(tmp_path):
    cache = _cache_file_name(tmp_path)
    marker = tmp_path / "pwned"
    elsewhere = tmp_path / "elsewhere"
    _plant(elsewhere, marker)
    cache.unlink()
    cache.symlink_to(elsewhere)
    count, path = _fresh_parse(tmp_path)
    assert count == "2" and path == "None"
    assert not marker.exists()


def test_the_planted_pickle_would_run_if_loaded(tmp_path):
    # the payload is real: loading it creates the marker (so the tests above prove something)
    marker = tmp_path / "pwned"
    _plant(tmp_path / "f", marker)
    with open(tmp_path / "f", "rb") as handle:
        handle.readline()
        pickle.load(handle)
    assert marker.exists()


# ---- the grammar is portable: no regex features some supported Pythons mismatch


def test_grammar_has_no_possessive_quantifiers_or_atomic_groups():
    from netnoise.text.grammar import grammar_text

    import re

    patterns = re.findall(r"/(?:[^/\n\\]|\\.)+/", grammar_text())
    assert patterns
    for pattern in patterns:
        assert not re.search(r"[*+?}]\+", pattern.replace("\\+", "")), pattern
        assert "(?>" not in pattern, pattern


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_every_shipped_circuit_parses(path):
    from netnoise.netlist import load_netlist

    assert load_netlist(path).elements
