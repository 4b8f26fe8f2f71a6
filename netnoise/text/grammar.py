"""Find the netlist grammar and build its parser (once).

The grammar lives in the top-level ``grammar/`` folder of the repository.  The
wheel carries it as ``netnoise/grammar_files/netlist.lark`` (see the hatch
``force-include`` in pyproject.toml); a source checkout has no such folder, so
we fall back to ``<checkout>/grammar/netlist.lark`` beside the package.
"""

from __future__ import annotations

import functools
import hashlib
import os
import stat
import sys
from importlib import resources
from pathlib import Path

import lark
from lark import Lark

__all__ = ["GRAMMAR_FILE", "START_SYMBOLS", "grammar_path", "grammar_text", "netlist_parser", "parser_cache_path"]

GRAMMAR_FILE = "netlist.lark"
START_SYMBOLS = ("netlist", "expression")


@functools.cache
def grammar_path() -> Path:
    """Where the grammar file was found (installed package first, then checkout)."""
    packaged = resources.files("netnoise").joinpath("grammar_files", GRAMMAR_FILE)
    if packaged.is_file():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parents[2] / "grammar" / GRAMMAR_FILE
    if checkout.is_file():
        return checkout
    raise FileNotFoundError(f"netnoise is installed without its grammar: looked for {packaged} and {checkout}")


def grammar_text() -> str:
    return grammar_path().read_text(encoding="utf-8")


def parser_cache_path(text: str | None = None) -> Path | None:
    """Where the built parser tables are kept between runs: the user's cache
    folder (``$XDG_CACHE_HOME``, else ``~/.cache``) under ``netnoise/``, named
    by the grammar's hash and the lark and Python versions; None if that
    folder cannot be made, or if it or the file could be written by another
    user (the parser is then built at every start: about 50 ms).
    ``text``: the grammar, if already read."""
    text = grammar_text() if text is None else text
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    folder = Path(base) / "netnoise"
    try:
        Path(base).mkdir(parents=True, exist_ok=True)
        folder.mkdir(mode=0o700, exist_ok=True)
    except OSError:
        return None
    if not _private_folder(folder):
        return None
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]
    path = folder / f"netlist-{digest}-lark{lark.__version__}-py{sys.version_info[0]}{sys.version_info[1]}.lark-cache"
    return path if _safe_cache_file(path) else None


# lark reads a cache file with pickle (before it checks the grammar's hash), so
# whoever can write the file, or the folder it is in, could run code as the next
# user of netnoise.  The cache is used only in a folder of this user's own that
# no one else can write (made 0700), and a file there only if this user owns it
# and no one else can write it; anything else: the parser is built without it.
_GROUP_OR_OTHERS_WRITE = stat.S_IWGRP | stat.S_IWOTH


def _own_uid() -> int | None:
    getuid = getattr(os, "getuid", None)
    return getuid() if getuid is not None else None


def _private_folder(folder: Path) -> bool:
    """True if ``folder`` is a real folder (not a link) owned by this user and
    not writable by group or others; one that is only readable by them is
    tightened to 0700."""
    uid = _own_uid()
    if uid is None:  # no owners to check (Windows): no cache
        return False
    try:
        info = os.lstat(folder)
        if not stat.S_ISDIR(info.st_mode) or info.st_uid != uid or info.st_mode & _GROUP_OR_OTHERS_WRITE:
            return False
        if stat.S_IMODE(info.st_mode) != 0o700:
            os.chmod(folder, 0o700)
    except OSError:
        return False
    return True


def _safe_cache_file(path: Path) -> bool:
    """True if ``path`` does not exist yet (lark will write it) or is a regular
    file (not a link) owned by this user and not writable by group or others."""
    try:
        info = os.lstat(path)
    except FileNotFoundError:
        return True
    except OSError:
        return False
    return stat.S_ISREG(info.st_mode) and info.st_uid == _own_uid() and not info.st_mode & _GROUP_OR_OTHERS_WRITE


@functools.cache
def netlist_parser() -> Lark:
    """The LALR parser for netlists and stand-alone expressions (built once).

    Building the LALR tables takes 30-60 ms, a tenth of the command's start-up;
    lark keeps them in :func:`parser_cache_path` and checks the grammar's hash
    when it loads them (a stale or broken file is rebuilt; a file that cannot
    be written is skipped)."""
    text = grammar_text()
    cache = parser_cache_path(text)
    return Lark(
        text,
        cache=str(cache) if cache is not None else False,
        parser="lalr",
        lexer="contextual",
        start=list(START_SYMBOLS),
        # positions come from the tokens (netnoise.parser finds a tree's first
        # and last token); propagating them into every tree costs a fifth of
        # the parse time of a large netlist
        propagate_positions=False,
        maybe_placeholders=False,
    )
