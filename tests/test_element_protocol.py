"""The seams: every element kind behind one protocol, asked only through it."""

from __future__ import annotations

import ast
import inspect
import pathlib

import netnoise.circuit.elements as elements_package
from netnoise.circuit.elements.base import Element
from netnoise.circuit.registry import KINDS, kind_for_line, kinds_for

PACKAGE = pathlib.Path(elements_package.__file__).resolve().parents[2]  # .../netnoise
ELEMENTS = PACKAGE / "circuit" / "elements"


def _kind_classes() -> set[str]:
    return {kind.__name__ for kind in KINDS} | {"TwoTerminal", "Element"}


def test_no_isinstance_over_element_kinds_outside_the_element_modules():
    # the engine, the reader and the outputs ask the protocol, never "which class are you?"
    names = _kind_classes()
    offenders = []
    for path in PACKAGE.rglob("*.py"):
        if ELEMENTS in path.parents:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and getattr(node.func, "id", None) == "isinstance" and len(node.args) == 2:
                used = {
                    n.attr if isinstance(n, ast.Attribute) else getattr(n, "id", None) for n in ast.walk(node.args[1])
                }
                if used & names:
                    offenders.append(f"{path.relative_to(PACKAGE)}:{node.lineno}")
    assert offenders == []


def test_every_kind_module_is_registered_once():
    module_kinds = set()
    for path in ELEMENTS.glob("*.py"):
        if path.name in ("__init__.py", "base.py"):
            continue
        module = __import__(f"netnoise.circuit.elements.{path.stem}", fromlist=["*"])
        for _, obj in inspect.getmembers(module, inspect.isclass):
            if issubclass(obj, Element) and obj.__module__ == module.__name__ and obj.letter:
                module_kinds.add(obj)
    assert module_kinds == set(KINDS)
    assert len(KINDS) == len(set(KINDS))


def test_each_letter_has_one_plain_kind_and_selectors_pick_the_others():
    for letter in {kind.letter for kind in KINDS}:
        plain = [k for k in kinds_for(letter) if k.selector is None]
        assert len(plain) == 1, letter
        for kind in kinds_for(letter):
            if kind.selector is not None:
                assert kind_for_line(letter, lambda key, k=kind: key == k.selector) is kind


def test_every_kind_states_its_form_and_its_structure():
    for kind in KINDS:
        assert kind.form.startswith(kind.letter), kind
        assert kind.__doc__, kind
        assert kind.branch_count in (0, 1)
