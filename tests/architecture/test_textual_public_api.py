"""The screen uses Textual through its public API only: no private attribute of another object
(`super()._x`, `self.app._x`), and no private name of our own that a Textual base class also
uses (reading, overriding or shadowing Textual's internals, which change between releases
without notice). Checked on the source, against the installed Textual's own source."""

from __future__ import annotations

import ast
import importlib
import inspect
import re
from pathlib import Path

import pytest

TUI = Path(__file__).resolve().parents[2] / "linewatch" / "faces" / "tui"
MODULES = sorted(p for p in TUI.rglob("*.py") if p.name != "__init__.py")


def _private(name: str) -> bool:
    return name.startswith("_") and not name.startswith("__")


def _textual_private_names(cls: type) -> set[str]:
    """Private names Textual's classes in `cls`'s ancestry define or set on themselves."""
    names: set[str] = set()
    for base in cls.__mro__:
        module = getattr(base, "__module__", "")
        if module != "textual" and not module.startswith("textual."):
            continue
        try:
            source = inspect.getsource(base)
        except (OSError, TypeError):
            continue
        names |= set(re.findall(r"self\.(_[a-z]\w*)", source))
        names |= set(re.findall(r"def (_[a-z]\w*)", source))
        names |= set(re.findall(r"^\s+(_[a-z]\w*)\s*[:=]", source, re.M))
    return names


def _module_name(path: Path) -> str:
    parts = path.relative_to(TUI.parents[2]).with_suffix("").parts
    return ".".join(parts)


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(TUI)))
def test_no_private_attribute_of_another_object(path: Path) -> None:
    tree = ast.parse(path.read_text())
    found = [
        f"line {node.lineno}: .{node.attr}"
        for node in ast.walk(tree)
        if isinstance(node, ast.Attribute) and _private(node.attr)
        and not (isinstance(node.value, ast.Name) and node.value.id in ("self", "cls"))
        # textual-serve (the browser face) is another library, with no public hooks
        and path.name != "serving.py"
    ]
    assert found == []


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(TUI)))
def test_no_private_name_shared_with_a_textual_base_class(path: Path) -> None:
    module = importlib.import_module(_module_name(path))
    tree = ast.parse(path.read_text())
    found = []
    for node in ast.walk(tree):
        if not isinstance(node, ast.ClassDef):
            continue
        cls = getattr(module, node.name, None)
        if not isinstance(cls, type):
            continue
        mine = {n.attr for n in ast.walk(node) if isinstance(n, ast.Attribute)
                and isinstance(n.value, ast.Name) and n.value.id == "self" and _private(n.attr)}
        mine |= {n.name for n in node.body
                 if isinstance(n, ast.FunctionDef | ast.AsyncFunctionDef) and _private(n.name)}
        mine |= {t.id for n in node.body if isinstance(n, ast.Assign | ast.AnnAssign)
                 for t in (n.targets if isinstance(n, ast.Assign) else [n.target])
                 if isinstance(t, ast.Name) and _private(t.id)}
        found += [f"{node.name}.{name}" for name in sorted(mine & _textual_private_names(cls))]
    assert found == []
