"""The error tree: every error linktriage raises on purpose is in linktriage.errors, and
the tree drawn in its docstring is the tree of the classes."""

from __future__ import annotations

import importlib
import pkgutil
import re

import linktriage
from linktriage import errors
from linktriage.errors import LinktriageError


def every_module() -> list[str]:
    return [m.name for m in pkgutil.walk_packages(linktriage.__path__, "linktriage.")]


def drawn_tree() -> dict[str, str | None]:
    """Class name -> its parent's name, as the docstring draws it (by indentation)."""
    parents: dict[str, str | None] = {}
    stack: list[tuple[int, str]] = []
    for line in (errors.__doc__ or "").splitlines():
        found = re.match(r"^(?P<lead>[\s│├└─]*)(?P<name>[A-Z]\w*Error)\b", line)
        if not found:
            continue
        depth = len(found["lead"])
        while stack and stack[-1][0] >= depth:
            stack.pop()
        parents[found["name"]] = stack[-1][1] if stack else None
        stack.append((depth, found["name"]))
    return parents


def class_tree() -> dict[str, str | None]:
    """Class name -> the name of its parent within the tree, for every subclass defined."""
    for name in every_module():
        importlib.import_module(name)
    tree: dict[str, str | None] = {LinktriageError.__name__: None}
    todo = [LinktriageError]
    while todo:
        cls = todo.pop()
        for sub in cls.__subclasses__():
            tree[sub.__name__] = cls.__name__
            todo.append(sub)
    return tree


def test_every_error_of_linktriage_is_defined_in_the_errors_module() -> None:
    for name in every_module():
        importlib.import_module(name)
    todo = [LinktriageError]
    while todo:
        cls = todo.pop()
        assert cls.__module__ == "linktriage.errors", f"{cls.__name__} is in {cls.__module__}"
        todo += cls.__subclasses__()


def test_the_drawn_tree_is_the_class_tree() -> None:
    assert drawn_tree() == class_tree()


def test_the_drawing_is_read_as_a_tree() -> None:
    # a check of the reader itself: nesting in the drawing is what makes a parent
    drawn = drawn_tree()
    assert drawn["LinktriageError"] is None
    assert drawn["DeviceTimeoutError"] == "CollectorError"
    assert drawn["CollectorError"] == "PollError"
    assert drawn["StoreError"] == "LinktriageError"
