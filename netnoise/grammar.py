"""Find the netlist grammar and build its parser (once).

The grammar lives in the top-level ``grammar/`` folder of the repository.  The
wheel carries it as ``netnoise/grammar_files/netlist.lark`` (see the hatch
``force-include`` in pyproject.toml); a source checkout has no such folder, so
we fall back to ``<checkout>/grammar/netlist.lark`` beside the package.
"""

from __future__ import annotations

import functools
from importlib import resources
from pathlib import Path

from lark import Lark

__all__ = ["GRAMMAR_FILE", "START_SYMBOLS", "grammar_path", "grammar_text", "netlist_parser"]

GRAMMAR_FILE = "netlist.lark"
START_SYMBOLS = ("netlist", "expression")


@functools.cache
def grammar_path() -> Path:
    """Where the grammar file was found (installed package first, then checkout)."""
    packaged = resources.files("netnoise").joinpath("grammar_files", GRAMMAR_FILE)
    if packaged.is_file():
        return Path(str(packaged))
    checkout = Path(__file__).resolve().parent.parent / "grammar" / GRAMMAR_FILE
    if checkout.is_file():
        return checkout
    raise FileNotFoundError(
        f"netnoise is installed without its grammar: looked for {packaged} and {checkout}"
    )


def grammar_text() -> str:
    return grammar_path().read_text(encoding="utf-8")


@functools.cache
def netlist_parser() -> Lark:
    """The LALR parser for netlists and stand-alone expressions (built once)."""
    return Lark(
        grammar_text(),
        parser="lalr",
        lexer="contextual",
        start=list(START_SYMBOLS),
        # positions come from the tokens (netnoise.parser finds a tree's first
        # and last token); propagating them into every tree costs a fifth of
        # the parse time of a large netlist
        propagate_positions=False,
        maybe_placeholders=False,
    )
