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
    raise FileNotFoundError(
        f"netnoise is installed without its grammar: looked for {packaged} and {checkout}"
    )


def grammar_text() -> str:
    return grammar_path().read_text(encoding="utf-8")


def parser_cache_path(text: str | None = None) -> Path | None:
    """Where the built parser tables are kept between runs: the user's cache
    folder (``$XDG_CACHE_HOME``, else ``~/.cache``) under ``netnoise/``, named
    by the grammar's hash and the lark and Python versions; None if that
    folder cannot be made (the parser is then built at every start).
    ``text``: the grammar, if already read."""
    text = grammar_text() if text is None else text
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    folder = Path(base) / "netnoise"
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError:
        return None
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()[:16]
    return folder / f"netlist-{digest}-lark{lark.__version__}-py{sys.version_info[0]}{sys.version_info[1]}.lark-cache"


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
