"""The tree reads like the pipeline: read -> connect -> recognise -> solve -> check ->
report -> serve. Each layer imports only layers below it (common practice for a layered
library; the order is the README's module map). The library never imports the service."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

from .conftest import ROOT

PACKAGE = ROOT / "schemcheck"

#: Layer of each module or sub-package, lowest first. A module may import its own layer
#: and the layers below.
LAYERS = [
    {"errors", "units", "model", "drawing", "rules", "settings", "partdata"},  # vocabulary
    {"io"},  # files in
    {"circuit"},  # drawing -> nets
    {"engine"},  # recognise, build the DC network, solve, budget
    {"results", "checks", "assumptions"},  # what an audit says; one module per rule
    {"audit"},  # the pure pipeline: netlist in, results out
    {"report"},  # results -> json, text, markdown, sarif
    {"run", "characterise"},  # the edges: batch, cache, settings, worker processes; lab
    {"cli", "__main__", "__init__"},
]


#: Wrong-way imports still to end, each named: (file, module).
STILL_WRONG: set[tuple[str, str]] = set()


def _layer(name: str) -> int:
    for i, names in enumerate(LAYERS):
        if name in names:
            return i
    raise AssertionError(f"schemcheck.{name} has no layer in tests/test_layers.py")


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module and not node.level:
            found.add(node.module)
        elif isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
    return found


def _modules():
    for path in sorted(PACKAGE.rglob("*.py")):
        yield path, path.relative_to(PACKAGE).parts[0].removesuffix(".py")


@pytest.mark.parametrize("path,top", list(_modules()), ids=lambda v: str(v)[-40:])
def test_imports_go_down_the_pipeline(path, top):
    mine = _layer(top)
    for module in _imports(path):
        parts = module.split(".")
        if parts[0] in ("api", "schemcheck_api"):
            # only the command line's `serve` starts the service; the library never uses it
            assert top == "cli", f"{path} imports the service"
        if parts[0] != "schemcheck" or len(parts) == 1:
            continue
        if (path.relative_to(PACKAGE).as_posix(), module) in STILL_WRONG:
            continue
        assert _layer(parts[1]) <= mine, f"{path.relative_to(ROOT)} imports {module}"


def test_no_relative_imports_hide_from_the_check():
    for path, _ in _modules():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        assert not any(isinstance(n, ast.ImportFrom) and n.level for n in ast.walk(tree)), path
